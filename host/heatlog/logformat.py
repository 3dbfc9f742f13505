"""Decode a run log written by the board (format version 1; layout in firmware/LOGFORMAT.md).

Pure Python + numpy, independent of the firmware code: CRCs come from the standard library
(``binascii.crc_hqx`` with init 0xFFFF is CRC-16/CCITT-FALSE, ``zlib.crc32`` is CRC-32), so the
two implementations check each other through ``tests/vectors/run_log.bin``.

Every record's CRC is checked. A record or segment marker that fails is never returned: it is
counted (``bad_blocks``, ``bad_bytes``) and the decoder resynchronises on the next block whose
CRC is good. Records whose CRC is good are still checked for continuity: sequence numbers run
0, 1, 2 … through the file (a segment marker names the next one), so a record repeated, one
missing or two swapped are counted (``records_repeated``, ``records_missing``,
``records_out_of_order``), as is a time offset that does not increase (``time_backwards``).
Every header and marker field is bounded before use: a header field out of its documented range
raises ``LogCorrupt`` naming it; a clock anchor out of range (2000..2100) is ignored (the run
reads as clock-unset) and named in ``problems``. ``RunLog.damage()`` sums all of it up. Only a
file whose header is unusable raises ``LogCorrupt``.
"""

from __future__ import annotations

import binascii
import struct
import zlib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from heatlog.errors import HeatlogError

FORMAT_VERSION = 1
MAGIC = b"HLOG"
HEADER_FIXED = 64
CHANNEL_ENTRY = 24
MAX_CHANNELS = 8
RECORD_TAG = 0xA5
SEGMENT_TAG = 0x5E
SEGMENT_SIZE = 32

REC_SEGMENT_START = 0x01
REC_SLOTS_SKIPPED = 0x02
REC_CLOCK_UNSET = 0x04
REC_PROBE_FAULT = 0x08
REC_LAST = 0x10

SEG_REBOOT = 0x01
SEG_TORN_TAIL = 0x02
SEG_CLOCK_SET = 0x04
SEG_GAP_UNKNOWN = 0x08
SEG_CLOCK_VALID = 0x10

HDR_CLOCK_VALID = 0x01
# documented bounds of header fields (firmware/LOGFORMAT.md; the anchor: PROTOCOL.md set clock)
INTERVAL_MS = (100, 3_600_000)
OVERSAMPLE = (1, 256)
ANCHOR_MS = (946_684_800_000, 4_102_444_800_000)  # 2000-01-01 .. 2100-01-01 UTC
KIND_NAMES = {1: "adc_divider", 2: "ads1115", 3: "max31865", 4: "ina226", 5: "ina219"}
POWER_KIND_CODES = (4, 5)  # current/voltage monitors: mode 0 bus code, mode 1 shunt code
# mode bits of an on-chip ADC divider channel (kind 1)
MODE_NTC_HIGH = 0x01  # thermistor on the high side
MODE_UV_RATIO = 0x02  # raw is a Q15 ratio of calibrated read_uv() readings (ESP32)

_HDR = struct.Struct("<4sHHHBBIHHqI16s16s")
_CHAN = struct.Struct("<BBBBI16s")
_SEG = struct.Struct("<BBBBIIIqHH")


class LogCorrupt(HeatlogError, ValueError):
    """A run log cannot be decoded at all (not a log, unknown version, bad header)."""


class DamagedLog(HeatlogError, ValueError):
    """A run log decodes but is damaged, and the caller asked to refuse damaged data
    (``--strict``). Its own exit code, so a script can tell it from other errors."""

    exit_code = 4


def crc16_ccitt_false(data: bytes) -> int:
    """CRC-16/CCITT-FALSE (poly 0x1021, init 0xFFFF); check value 0x29B1 for b"123456789"."""
    return binascii.crc_hqx(data, 0xFFFF)


FAULT_NONE = 0
FAULT_OPEN = 1
FAULT_SHORT = 2
FAULT_RANGE = 3  # out of range, or another converter fault
FAULT_NAMES = {0: "ok", 1: "open", 2: "short", 3: "out of range"}


@dataclass(frozen=True)
class Channel:
    """One row of the header's channel table.

    mode: wires (2/3/4) for max31865; for the dividers bit 0: 0 = thermistor on the low side,
    1 = on the high side; on-chip ADC divider bit 1 (``MODE_UV_RATIO``): raw is a Q15 ratio of
    calibrated microvolt readings (ESP32) rather than a sum of codes, bits 2..3 = excitation
    divider k − 1. source: ADC pin, ADS1115 (signal mux << 4 | excitation mux), or the
    MAX31865 chip-select pin. gain: ADS1115 PGA setting (0..5); the excitation ADC pin of a
    ``MODE_UV_RATIO`` divider; else 0. ref_ohm: fixed divider resistor, MAX31865 reference or monitor shunt
    resistor.
    """

    kind: str
    kind_code: int
    mode: int
    source: int
    gain: int
    ref_ohm: float
    probe_id: str

    @property
    def is_power(self) -> bool:
        """A heater's current/voltage monitor (``heatlog.monitorlog``), not a probe."""
        return self.kind_code in POWER_KIND_CODES

    @property
    def q15_ratio(self) -> bool:
        """Raw is a Q15 ratio (ADS1115, ESP32 microvolt divider), not a sum of n readings."""
        return self.kind_code == 2 or (self.kind_code == 1 and bool(self.mode & MODE_UV_RATIO))

    @property
    def ntc_side(self) -> str:
        """Divider channels: which side of the divider the thermistor sits on."""
        return "high" if self.mode & MODE_NTC_HIGH else "low"

    def chain_spec(self, oversample: int, lead_ohm: float = 0.0) -> str:
        """The reading-chain spec (``heatlog.probes.chain_from_spec``) that turns this channel's
        logged raw values into probe resistance; oversample is the header's. lead_ohm: loop
        resistance of a 2-wire RTD's leads (the log does not know it)."""
        ref = f"{self.ref_ohm:g}"
        if self.is_power:
            raise LogCorrupt(f"channel {self.probe_id!r} is a power monitor, not a probe")
        if self.kind_code == 3:
            return f"max31865:rref={ref},lead={lead_ohm:g},n={oversample}"
        if self.kind_code not in (1, 2):
            raise LogCorrupt(f"channel kind {self.kind_code} has no reading chain; update heatlog")
        if self.q15_ratio:
            return f"ratio:rs={ref},side={self.ntc_side}"
        return f"divider:rs={ref},side={self.ntc_side},bits=12,oversample={oversample}"

    @property
    def full_scale(self) -> int:
        """Raw value that means ratio 1 for one reading (multiply by oversample for sums)."""
        if self.q15_ratio:
            return 32768
        return {1: 4096, 3: 32768}.get(self.kind_code, 1)


@dataclass(frozen=True)
class LogHeader:
    format_version: int
    header_size: int
    record_size: int
    board_id: str
    firmware: str
    run: int
    interval_ms: int
    oversample: int
    anchor_ms: int | None
    channels: tuple[Channel, ...]
    problems: tuple[str, ...] = ()  # fields found out of range and ignored

    @property
    def clock_set(self) -> bool:
        return self.anchor_ms is not None


@dataclass(frozen=True)
class Segment:
    byte_offset: int
    first_record: int
    cause: int
    reset_cause: int
    segment_no: int
    next_seq: int
    offset_ms: int
    anchor_ms: int | None

    @property
    def reboot(self) -> bool:
        return bool(self.cause & SEG_REBOOT)

    @property
    def torn_tail(self) -> bool:
        return bool(self.cause & SEG_TORN_TAIL)

    @property
    def clock_set(self) -> bool:
        return bool(self.cause & SEG_CLOCK_SET)

    @property
    def gap_unknown(self) -> bool:
        return bool(self.cause & SEG_GAP_UNKNOWN)


@dataclass(frozen=True)
class RunLog:
    """Decoded run: header, per-record arrays (one row per good record) and the damage found."""

    header: LogHeader
    seq: np.ndarray  # uint32
    offset_ms: np.ndarray  # int64, from run start
    flags: np.ndarray  # uint8
    fault_mask: np.ndarray  # uint16, bits 2i..2i+1 = fault code of channel i (see channel_faults)
    raw: np.ndarray  # int32, shape (n_records, n_channels)
    segment: np.ndarray  # int32, index into `segments` (-1 = before any marker)
    segments: tuple[Segment, ...]
    bad_blocks: int
    bad_bytes: int
    trailing_bytes: int  # incomplete block at the end of the file (torn tail)
    records_repeated: int = 0  # a sequence number seen before
    records_missing: int = 0  # sequence numbers skipped (not explained by a segment marker)
    records_out_of_order: int = 0  # a sequence number that arrives after a later one
    time_backwards: int = 0  # records in sequence whose time offset does not increase
    problems: tuple[str, ...] = ()  # header and marker fields out of range (ignored)

    @property
    def n_records(self) -> int:
        return int(self.seq.size)

    @property
    def damaged(self) -> bool:
        return self.damage().damaged

    def damage(self) -> Damage:
        return Damage(
            self.bad_blocks,
            self.bad_bytes,
            self.trailing_bytes,
            self.records_repeated,
            self.records_missing,
            self.records_out_of_order,
            self.time_backwards,
            self.problems,
        )

    def channel_faults(self) -> np.ndarray:
        """Fault code per record and channel (uint8, FAULT_NONE/OPEN/SHORT/RANGE)."""
        shifts = 2 * np.arange(len(self.header.channels), dtype=np.uint16)
        return ((self.fault_mask[:, None] >> shifts) & 3).astype(np.uint8)

    def ratio(self) -> np.ndarray:
        """Raw values as fractions of full scale (rp2 ADC divider: sum/(4096 n); ADS1115 and
        ESP32 microvolt divider: Q15, raw/32768; MAX31865: code sum/(32768 n), i.e. R/R_ref).
        float64, shape (n_records, n_channels)."""
        h = self.header
        scale = np.array(
            [c.full_scale * (1 if c.q15_ratio else h.oversample) for c in h.channels],
            dtype=float,
        )
        return self.raw / scale

    def epoch_ms(self) -> np.ndarray:
        """Wall-clock time (ms since 1970-01-01 UTC) per record; NaN where no clock was set."""
        anchors = [self.header.anchor_ms] + [s.anchor_ms for s in self.segments]
        anchor = np.array([np.nan if a is None else float(a) for a in anchors])
        return anchor[self.segment + 1] + self.offset_ms.astype(float)


@dataclass(frozen=True)
class Damage:
    """What the decoder found wrong in a run file (all zero: no damage found)."""

    bad_blocks: int = 0
    bytes_skipped: int = 0
    trailing_bytes: int = 0
    records_repeated: int = 0
    records_missing: int = 0
    records_out_of_order: int = 0
    time_backwards: int = 0
    problems: tuple[str, ...] = ()

    @property
    def damaged(self) -> bool:
        return bool(
            self.bad_blocks or self.bytes_skipped or self.trailing_bytes or self.records_repeated
            or self.records_missing or self.records_out_of_order or self.time_backwards
            or self.problems
        )  # fmt: skip

    def to_dict(self) -> dict[str, object]:
        d: dict[str, object] = {"damaged": self.damaged}
        d.update({k: v for k, v in self.__dict__.items() if k != "problems"})
        d["problems"] = list(self.problems)
        return d

    def describe(self) -> str:
        """One line: ``no damage found`` or what was found."""
        if not self.damaged:
            return "no damage found"
        parts = []
        if self.bad_blocks or self.bytes_skipped:
            parts.append(f"{self.bad_blocks} bad block(s), {self.bytes_skipped} bytes skipped")
        for n, what in (
            (self.trailing_bytes, "trailing bytes (an incomplete block at the end)"),
            (self.records_repeated, "record(s) repeated"),
            (self.records_missing, "record(s) missing"),
            (self.records_out_of_order, "record(s) out of order"),
            (self.time_backwards, "time step(s) that do not go forward"),
        ):
            if n:
                parts.append(f"{n} {what}")
        parts += list(self.problems)
        return "DAMAGED: " + "; ".join(parts)


def _field(name: str, value: int, bounds: tuple[int, int]) -> int:
    if not bounds[0] <= value <= bounds[1]:
        raise LogCorrupt(
            f"run file header: {name} = {value} is outside {bounds[0]}..{bounds[1]}; the file "
            "is damaged or not from a heatlog board"
        )
    return value


def _anchor(value: int, valid: bool, where: str, problems: list[str]) -> int | None:
    if not valid:
        return None
    if ANCHOR_MS[0] <= value < ANCHOR_MS[1]:
        return value
    problems.append(f"{where} clock anchor {value} ms is outside 2000..2100 UTC (ignored)")
    return None


def parse_header(data: bytes) -> LogHeader:
    """Decode and CRC-check the header at the start of ``data``; raises LogCorrupt."""
    if len(data) < HEADER_FIXED + 4 or data[:4] != MAGIC:
        raise LogCorrupt("not a heatlog run file (no HLOG magic); pull the run again")
    f = _HDR.unpack_from(data, 0)
    version, size, rsize, n = f[1], f[2], f[3], f[4]
    if version != FORMAT_VERSION:
        raise LogCorrupt(f"log format version {version} is not supported; update heatlog")
    if n < 1 or n > MAX_CHANNELS or size != HEADER_FIXED + CHANNEL_ENTRY * n + 4:
        raise LogCorrupt(f"header declares {n} channels in {size} bytes; the file is damaged")
    if rsize != 14 + 4 * n:
        raise LogCorrupt(f"record size {rsize} does not fit {n} channels; the file is damaged")
    if len(data) < size:
        raise LogCorrupt("file ends inside its header; pull the run again")
    (stored,) = struct.unpack_from("<I", data, size - 4)
    if stored != zlib.crc32(data[: size - 4]):
        raise LogCorrupt("header CRC mismatch; pull the run again")
    _field("sample interval (ms)", f[6], INTERVAL_MS)
    _field("oversampling count", f[7], OVERSAMPLE)
    problems: list[str] = []
    anchor = _anchor(f[9], bool(f[5] & HDR_CLOCK_VALID), "header", problems)
    channels = []
    for i in range(n):
        kind, wires, source, gain, ref_mohm, pid = _CHAN.unpack_from(
            data, HEADER_FIXED + CHANNEL_ENTRY * i
        )
        _field(f"channel {i} reference resistor (milliohm)", ref_mohm, (1, 0xFFFFFFFF))
        channels.append(
            Channel(
                kind=KIND_NAMES.get(kind, f"unknown-{kind}"),
                kind_code=kind,
                mode=wires,
                source=source,
                gain=gain,
                ref_ohm=ref_mohm / (1e6 if kind in POWER_KIND_CODES else 1e3),  # shunt: µΩ
                probe_id=_text(pid),
            )
        )
    return LogHeader(
        format_version=version,
        header_size=size,
        record_size=rsize,
        board_id=_text(f[11]),
        firmware=_text(f[12]),
        run=f[10],
        interval_ms=f[6],
        oversample=f[7],
        anchor_ms=anchor,
        channels=tuple(channels),
        problems=tuple(problems),
    )


def _text(raw: bytes) -> str:
    """A 16-byte ASCII name field: printable ASCII kept, anything else shown as '?'."""
    return "".join(chr(b) if 0x20 <= b < 0x7F else "?" for b in raw.rstrip(b"\0"))


def _block_ok(data: bytes, pos: int, rsize: int) -> int:
    """Length of a CRC-valid block starting at pos, or 0."""
    tag = data[pos]
    size = rsize if tag == RECORD_TAG else SEGMENT_SIZE if tag == SEGMENT_TAG else 0
    if not size or pos + size > len(data):
        return 0
    (stored,) = struct.unpack_from("<H", data, pos + size - 2)
    return size if crc16_ccitt_false(data[pos : pos + size - 2]) == stored else 0


def _resync(data: bytes, pos: int, rsize: int) -> int:
    """Next position after pos holding a CRC-valid block, or len(data)."""
    n = len(data)
    p = pos + 1
    while p < n:
        r = data.find(bytes([RECORD_TAG]), p)
        s = data.find(bytes([SEGMENT_TAG]), p)
        cands = [c for c in (r, s) if c >= 0]
        if not cands:
            return n
        p = min(cands)
        if _block_ok(data, p, rsize):
            return p
        p += 1
    return n


def decode(data: bytes) -> RunLog:
    """Decode a whole run file held in memory."""
    data = bytes(data)
    hdr = parse_header(data)
    rsize = hdr.record_size
    nch = len(hdr.channels)
    rows: list[bytes] = []
    seg_of: list[int] = []
    segments: list[Segment] = []
    problems = list(hdr.problems)
    bad_blocks = bad_bytes = trailing = 0
    pos = hdr.header_size
    n = len(data)
    while pos < n:
        size = _block_ok(data, pos, rsize)
        if size == rsize and data[pos] == RECORD_TAG:
            rows.append(data[pos : pos + rsize])
            seg_of.append(len(segments) - 1)
            pos += size
            continue
        if size == SEGMENT_SIZE:
            s = _SEG.unpack_from(data, pos)
            where = f"segment marker at byte {pos}:"
            segments.append(
                Segment(
                    byte_offset=pos,
                    first_record=len(rows),
                    cause=s[1],
                    reset_cause=s[2],
                    segment_no=s[4],
                    next_seq=s[5],
                    offset_ms=s[6],
                    anchor_ms=_anchor(s[7], bool(s[1] & SEG_CLOCK_VALID), where, problems),
                )
            )
            pos += size
            continue
        nxt = _resync(data, pos, rsize)
        if nxt == n:
            trailing = n - pos
        else:
            bad_blocks += 1
            bad_bytes += nxt - pos
        pos = nxt
    dt = record_dtype(nch)
    rec = np.frombuffer(b"".join(rows), dtype=dt) if rows else np.zeros(0, dtype=dt)
    cont = _continuity(rec["seq"].tolist(), rec["off"].tolist(), seg_of, segments)
    return RunLog(
        header=hdr,
        seq=rec["seq"].astype(np.uint32),
        offset_ms=rec["off"].astype(np.int64),
        flags=rec["flags"].astype(np.uint8),
        fault_mask=rec["fault"].astype(np.uint16),
        raw=rec["raw"].astype(np.int32).reshape(-1, nch),
        segment=np.asarray(seg_of, dtype=np.int32),
        segments=tuple(segments),
        bad_blocks=bad_blocks,
        bad_bytes=bad_bytes,
        trailing_bytes=trailing,
        records_repeated=cont[0],
        records_missing=cont[1],
        records_out_of_order=cont[2],
        time_backwards=cont[3],
        problems=tuple(problems),
    )


def _continuity(
    seqs: list[int], offs: list[int], seg_of: list[int], segments: list[Segment]
) -> tuple[int, int, int, int]:
    """(repeated, missing, out of order, time steps back) of records in file order: sequence
    numbers must run 0, 1, 2 … (a segment marker names the next one: records lost in RAM at a
    reset are not missing from the file), and time offsets must increase along them."""
    repeated = missing = reordered = backwards = 0
    expected = 0
    seen: set[int] = set()
    skipped: set[int] = set()  # counted missing so far; a late arrival is out of order instead
    last_off = -1
    seg = -1
    for seq, off, sg in zip(seqs, offs, seg_of, strict=True):
        if sg != seg:  # the first record after a marker
            seg = sg
            nxt = segments[sg].next_seq
            if nxt >= expected:
                expected = nxt
        if seq in seen:
            repeated += 1
            continue
        seen.add(seq)
        if seq < expected:
            if seq in skipped:
                skipped.discard(seq)
                missing -= 1
            reordered += 1
            continue
        if seq > expected:
            gap = seq - expected
            missing += gap
            if gap <= 100_000:
                skipped.update(range(expected, seq))
        if off <= last_off:
            backwards += 1
        last_off = off
        expected = seq + 1
    return repeated, missing, reordered, backwards


def record_dtype(n_channels: int) -> np.dtype:
    """numpy dtype of one record (little-endian), also used for live-stream payloads."""
    return np.dtype(
        [("tag", "u1"), ("flags", "u1"), ("fault", "<u2"), ("seq", "<u4"), ("off", "<u4"),
         ("raw", "<i4", (n_channels,)), ("crc", "<u2")]
    )  # fmt: skip


def decode_record(payload: bytes, n_channels: int) -> tuple[int, int, int, int, tuple[int, ...]]:
    """(seq, offset_ms, flags, fault_mask, raw values) of one record, e.g. a live-stream frame's
    payload; raises LogCorrupt if its tag, length or CRC is wrong."""
    size = 14 + 4 * n_channels
    if len(payload) != size or payload[0] != RECORD_TAG:
        raise LogCorrupt(f"record must be {size} bytes starting with 0xA5, got {len(payload)}")
    (stored,) = struct.unpack_from("<H", payload, size - 2)
    if crc16_ccitt_false(payload[: size - 2]) != stored:
        raise LogCorrupt("record CRC mismatch")
    fault, seq, off = struct.unpack_from("<HII", payload, 2)
    raw = struct.unpack_from(f"<{n_channels}i", payload, 12)
    return seq, off, payload[1], fault, raw


def read_log(path: str | Path) -> RunLog:
    """Read and decode a run file; a missing or unreadable file raises LogCorrupt."""
    try:
        data = Path(path).read_bytes()
    except OSError as e:
        raise LogCorrupt(f"cannot read run log {path}: {e.strerror}") from None
    return decode(data)
