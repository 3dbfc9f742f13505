"""The board's commands (firmware/PROTOCOL.md) on top of :class:`~heatlog.device.link.Link`.

Every reply is checked before use: exact struct sizes, echoed fields, JSON of the expected
shape, numbers in range. Nothing from the board is executed or evaluated.
"""

from __future__ import annotations

import json
import struct
import time
from collections.abc import Container, Iterator
from dataclasses import dataclass
from typing import Any

from heatlog.device import framing as fr
from heatlog.device.link import BoardError, Link
from heatlog.errors import LinkError

MAX_RUN_NO = 0xFFFFFFFF
MAX_RUN_BYTES = 256 << 20  # no board flash is larger; a bigger size is a bad reply
MAX_LIST_PAGES = 256
READ_CHUNK = 512


class BadReply(LinkError):
    """The board's reply does not have the documented shape."""


def _unpack(fmt: str, payload: bytes, what: str) -> tuple[Any, ...]:
    if len(payload) != struct.calcsize(fmt):
        raise BadReply(f"{what}: reply of {len(payload)} bytes, expected {struct.calcsize(fmt)}")
    return struct.unpack(fmt, payload)


def _json(payload: bytes, what: str) -> Any:
    try:
        return json.loads(payload.decode("utf-8"))
    except (UnicodeDecodeError, ValueError):
        raise BadReply(f"{what}: the board's reply is not JSON") from None


@dataclass(frozen=True)
class RunEntry:
    run: int
    size: int


@dataclass(frozen=True)
class BoardInfo:
    board_id: str | None
    firmware: str
    protocol: int
    clock_ms: int | None
    run: int | None
    free_bytes: int | None
    total_bytes: int | None
    record_size: int | None
    config_errors: tuple[str, ...]
    raw: dict[str, Any]

    def to_dict(self) -> dict[str, Any]:
        return dict(self.raw)


MAX_CLOCK_MS = 4_102_444_800_000  # 2100-01-01 UTC: the protocol's clock range ends there
MAX_FLASH_BYTES = 1 << 40
MAX_RECORD_SIZE = 14 + 4 * 8  # eight channels (firmware/LOGFORMAT.md)


def _opt_int(d: dict[str, Any], key: str, hi: int) -> int | None:
    v = d.get(key)
    if v is None:
        return None
    if isinstance(v, bool) or not isinstance(v, int):
        raise BadReply(f"identify: {key} must be an integer")
    return _bounded(f"identify: {key}", v, 0, hi)


def _bounded(what: str, v: int, lo: int, hi: int) -> int:
    if not lo <= v <= hi:
        raise BadReply(f"{what} = {v} is outside {lo}..{hi}; the board's reply is unusable")
    return v


def _printable(text: object, limit: int) -> str:
    """Board text shown to a user: printable characters only (no terminal escapes)."""
    return "".join(c if c.isprintable() else "?" for c in str(text)[:limit])


class Board:
    """A heatlog board reached through a Link."""

    def __init__(self, link: Link):
        self.link = link

    def identify(self) -> BoardInfo:
        d = _json(self.link.request(fr.IDENTIFY), "identify")
        if not isinstance(d, dict) or d.get("protocol") != 1:
            raise BadReply(
                "identify: not a heatlog protocol 1 board; update heatlog or the firmware"
            )
        bid = d.get("board_id")
        if bid is not None and not isinstance(bid, str):
            raise BadReply("identify: board_id must be text")
        errs = d.get("config_errors") or []
        if not isinstance(errs, list):
            errs = [str(errs)]
        return BoardInfo(
            board_id=_printable(bid, 64) if bid else None,
            firmware=_printable(d.get("firmware", ""), 32),
            protocol=1,
            clock_ms=_opt_int(d, "clock_ms", MAX_CLOCK_MS),
            run=_opt_int(d, "run", MAX_RUN_NO),
            free_bytes=_opt_int(d, "free_bytes", MAX_FLASH_BYTES),
            total_bytes=_opt_int(d, "total_bytes", MAX_FLASH_BYTES),
            record_size=_opt_int(d, "record_size", MAX_RECORD_SIZE),
            config_errors=tuple(_printable(e, 200) for e in errs[:20]),
            raw=d,
        )

    def set_clock(self, epoch_ms: int) -> tuple[int, int]:
        """Set the board clock; returns (new, previous reading; 0 if it was never set)."""
        new, prev = _unpack(
            "<qq", self.link.request(fr.SET_CLOCK, struct.pack("<q", epoch_ms)), "set clock"
        )
        _bounded("set clock: new reading (ms)", new, 0, MAX_CLOCK_MS)
        _bounded("set clock: previous reading (ms)", prev, 0, MAX_CLOCK_MS)
        return new, prev

    def list_runs(self) -> tuple[list[RunEntry], int | None]:
        """Every run on the board (run number, size) and the active run (or None)."""
        out: list[RunEntry] = []
        active = None
        start = 0
        for _ in range(MAX_LIST_PAGES):
            d = _json(self.link.request(fr.LIST_RUNS, struct.pack("<H", start)), "list runs")
            if not isinstance(d, dict) or not isinstance(d.get("runs"), list):
                raise BadReply("list runs: expected {runs: [...]}")
            for item in d["runs"]:
                if (
                    not isinstance(item, list)
                    or len(item) != 2
                    or not all(isinstance(v, int) and not isinstance(v, bool) for v in item)
                    or not 0 <= item[0] <= MAX_RUN_NO
                    or not 0 <= item[1] <= MAX_RUN_BYTES
                ):
                    raise BadReply(f"list runs: bad entry {str(item)[:40]}")
                out.append(RunEntry(item[0], item[1]))
            a = d.get("active")
            active = a if isinstance(a, int) and not isinstance(a, bool) else None
            if active is not None:
                _bounded("list runs: active", active, 0, MAX_RUN_NO)
            if d.get("more") is not True or not d["runs"]:
                return out, active
            start += len(d["runs"])
            if start > 0xFFFF:
                break
        raise BadReply("list runs: the board keeps saying there are more runs")

    def checksum(self, run: int) -> tuple[int, int]:
        """(size, CRC-32) of a run file as the board has it now."""
        r, size, crc = _unpack(
            "<III", self.link.request(fr.RUN_CHECKSUM, struct.pack("<I", run)), "run checksum"
        )
        if r != run:
            raise BadReply(f"run checksum: asked for run {run}, got {r}")
        return _bounded("run checksum: size", size, 0, MAX_RUN_BYTES), crc

    def start_run(self) -> int:
        try:
            (run,) = _unpack("<I", self.link.request(fr.START_RUN), "start run")
        except BoardError as exc:
            # a retried start whose first try got through: the run is active now
            if (
                exc.code == 4
                and self.link.last_attempts > 1
                and (info := self.identify()).run is not None
            ):
                return info.run
            raise
        return int(run)

    def stop_run(self, run: int | None = None) -> int:
        """Stop the active run; returns its number. ``run``: the run the caller started, so a
        stop whose reply was lost (the retry finds no run active) still knows what it stopped."""
        try:
            (stopped,) = _unpack("<I", self.link.request(fr.STOP_RUN), "stop run")
        except BoardError as exc:
            if exc.code == 4 and self.link.last_attempts > 1:
                # a retried stop whose first try got through: no run is active now
                runs, active = self.list_runs()
                if active is None and runs:
                    return run if run is not None else max(r.run for r in runs)
                raise LinkError(
                    "the run was stopped, but its reply was lost; check `heatlog status`"
                ) from None
            raise
        return int(stopped)

    def erase_run(self, run: int, size: int, crc: int) -> None:
        try:
            (r,) = _unpack(
                "<I", self.link.request(fr.ERASE_RUN, struct.pack("<III", run, size, crc)), "erase"
            )
        except BoardError as exc:
            if exc.code == 5 and self.link.last_attempts > 1:
                return  # the first try erased it; the reply was lost
            raise
        if r != run:
            raise BadReply(f"erase: asked for run {run}, got {r}")

    def stream(self, on: bool) -> int:
        """Turn live records on/off; returns the record size."""
        state, rsize = _unpack(
            "<BH", self.link.request(fr.STREAM, bytes([1 if on else 0])), "stream"
        )
        return _bounded("stream: record size", rsize, 0, MAX_RECORD_SIZE)

    def get_config(self) -> dict[str, Any]:
        d = _json(self.link.request(fr.GET_CONFIG), "get config")
        if not isinstance(d, dict):
            raise BadReply("get config: expected a JSON object")
        return d

    def read_request(self, run: int, offset: int, length: int, busy: Container[int] = ()) -> int:
        """Send one read request (no wait) under a request id not in ``busy``; returns the id.
        See :meth:`parse_read`."""
        return self.link.send(fr.READ_RUN, struct.pack("<IIH", run, offset, length), busy=busy)

    @staticmethod
    def parse_read(payload: bytes, run: int, offset: int, length: int) -> tuple[int, bytes]:
        """(file size, data) from a read reply, checked against the request."""
        if len(payload) < 12:
            raise BadReply("read run: reply too short")
        r, off, size = struct.unpack_from("<III", payload, 0)
        data = payload[12:]
        if r != run or off != offset or len(data) > length or size > MAX_RUN_BYTES:
            raise BadReply("read run: reply does not match the request")
        if offset + len(data) > size or (len(data) < length and offset + len(data) != size):
            raise BadReply("read run: short chunk inside the file")
        return size, data

    def live_records(self, seconds: float) -> Iterator[bytes]:
        """Live record payloads arriving within ``seconds``."""
        end = time.monotonic() + seconds
        while time.monotonic() < end:
            while self.link.live:
                yield self.link.live.popleft()
            f = self.link.receive(min(end, time.monotonic() + 0.1))
            if f is not None:
                self.link.stats.stale += 1
        while self.link.live:
            yield self.link.live.popleft()
