"""Byte layout of a run log (format version 1); see firmware/LOGFORMAT.md for the table.

All integers little-endian. A file is: header, then blocks. A block is either a record
(tag 0xA5, fixed length 14 + 4*N) or a segment marker (tag 0x5E, 32 bytes). Every block ends
with CRC-16/CCITT-FALSE over its other bytes; the header ends with a CRC-32.
"""

import struct

from .crc import crc16, crc32

try:
    from micropython import const  # pyright: ignore[reportAssignmentType]
except ImportError:

    def const(x):
        return x


FORMAT_VERSION = const(1)
MAGIC = b"HLOG"
HEADER_FIXED = const(64)
CHANNEL_ENTRY = const(24)
MAX_CHANNELS = const(8)
RECORD_TAG = const(0xA5)
SEGMENT_TAG = const(0x5E)
SEGMENT_SIZE = const(32)
ID_LEN = const(16)

# record flags (byte 1)
REC_SEGMENT_START = const(0x01)  # first record of a segment (after boot resume)
REC_SLOTS_SKIPPED = const(0x02)  # one or more sample slots were missed just before this one
REC_CLOCK_UNSET = const(0x04)  # host never set the clock for this run so far
REC_PROBE_FAULT = const(0x08)  # at least one bit set in the channel fault mask
REC_LAST = const(0x10)  # last record: storage floor reached, logging stopped

# segment cause flags (byte 1 of a segment marker)
SEG_REBOOT = const(0x01)  # logging resumed after a reset
SEG_TORN_TAIL = const(0x02)  # an incomplete or bad block precedes this marker
SEG_CLOCK_SET = const(0x04)  # the host set the clock; anchor is the new one
SEG_GAP_UNKNOWN = const(0x08)  # outage length unknown (clock not set): offsets continue nominally
SEG_CLOCK_VALID = const(0x10)  # anchor_ms holds a host-set epoch time

# channel kinds
KIND_ADC_DIVIDER = const(1)
KIND_ADS1115 = const(2)
KIND_MAX31865 = const(3)
KIND_INA226 = const(4)  # power monitor: mode 0 bus code, mode 1 shunt code; ref = shunt in uohm
KIND_INA219 = const(5)  # the same for an INA219; the entry's gain byte holds its PGA index
KIND_NAMES = {1: "adc_divider", 2: "ads1115", 3: "max31865", 4: "ina226", 5: "ina219"}
MODE_BUS = const(0)
MODE_SHUNT = const(1)
# channel-entry mode bits of an on-chip ADC divider (kind 1)
MODE_NTC_HIGH = const(0x01)  # thermistor on the high side
MODE_UV_RATIO = const(0x02)  # raw is a Q15 ratio of read_uv() readings (ESP32), not a code sum
# bits 2..3: excitation divider k - 1 (with MODE_UV_RATIO); the entry's gain byte: excitation pin

_HDR = "<4sHHHBBIHHqI16s16s"  # 64 bytes
_CHAN = "<BBBBI16s"  # 24 bytes
_SEG = "<BBBBIIIqHH"  # 30 bytes + CRC-16
HDR_CLOCK_VALID = const(0x01)


def record_size(n_channels):
    return 14 + 4 * n_channels


def header_size(n_channels):
    return HEADER_FIXED + CHANNEL_ENTRY * n_channels + 4


def _fixed(text):
    b = text.encode() if isinstance(text, str) else bytes(text)
    return b[:ID_LEN]


def pack_header(board_id, firmware, interval_ms, oversample, anchor_ms, run_no, channels):
    """Header bytes. channels: list of (kind, wires, source, gain, ref_mohm, probe_id)."""
    n = len(channels)
    size = header_size(n)
    buf = bytearray(size)
    flags = HDR_CLOCK_VALID if anchor_ms else 0
    struct.pack_into(
        _HDR, buf, 0, MAGIC, FORMAT_VERSION, size, record_size(n), n, flags,
        interval_ms, oversample, 0, anchor_ms, run_no, _fixed(board_id), _fixed(firmware),
    )  # fmt: skip
    for i, (kind, wires, source, gain, ref_mohm, probe_id) in enumerate(channels):
        struct.pack_into(
            _CHAN, buf, HEADER_FIXED + CHANNEL_ENTRY * i,
            kind, wires, source, gain, ref_mohm, _fixed(probe_id),
        )  # fmt: skip
    struct.pack_into("<I", buf, size - 4, crc32(memoryview(buf)[: size - 4]))
    return buf


def pack_segment(buf, cause, reset_cause, segment_no, next_seq, offset_ms, anchor_ms):
    """Fill the 32-byte bytearray buf with a segment marker."""
    struct.pack_into(
        _SEG, buf, 0, SEGMENT_TAG, cause, reset_cause & 0xFF, 0, segment_no, next_seq,
        offset_ms, anchor_ms, 0, 0,
    )  # fmt: skip
    struct.pack_into("<H", buf, 30, crc16(buf, 0xFFFF, 0, 30))
    return buf


def unpack_header(buf):
    """Header fields as a dict; raises ValueError if the bytes are not a valid header."""
    if len(buf) < HEADER_FIXED + 4 or bytes(buf[0:4]) != MAGIC:
        raise ValueError("not a heatlog run file")
    f = struct.unpack_from(_HDR, buf, 0)
    size = f[2]
    n = f[4]
    if f[1] != FORMAT_VERSION or n > MAX_CHANNELS or size != header_size(n) or len(buf) < size:
        raise ValueError("unsupported or truncated header")
    if struct.unpack_from("<I", buf, size - 4)[0] != crc32(memoryview(buf)[: size - 4]):
        raise ValueError("header CRC mismatch")
    return {
        "format": f[1],
        "header_size": size,
        "record_size": f[3],
        "n_channels": n,
        "flags": f[5],
        "interval_ms": f[6],
        "oversample": f[7],
        "anchor_ms": f[9],
        "run": f[10],
        "board_id": bytes(f[11]).rstrip(b"\0").decode(),
        "firmware": bytes(f[12]).rstrip(b"\0").decode(),
    }


class RecordPacker:
    """Packs records into a caller's buffer without allocating (the sampling hot path)."""

    def __init__(self, n_channels):
        self.n = n_channels
        self.size = record_size(n_channels)

    def pack(self, buf, pos, seq, offset_ms, flags, fault_mask, raw):
        """Write one record at buf[pos:pos+size]; raw is a sequence of n ints (int32)."""
        buf[pos] = RECORD_TAG
        buf[pos + 1] = flags
        struct.pack_into("<HII", buf, pos + 2, fault_mask, seq, offset_ms)
        p = pos + 12
        for i in range(self.n):
            struct.pack_into("<i", buf, p, raw[i])
            p += 4
        struct.pack_into("<H", buf, p, crc16(buf, 0xFFFF, pos, p))
        return pos + self.size
