"""Host-side codec for the board's serial frames (protocol version 1; firmware/PROTOCOL.md).

    0xA7 | version | type | request id | length (u16 LE) | payload | CRC-16/CCITT-FALSE (u16 LE)

Independent of the firmware's implementation (the host package installs without firmware/);
both are checked against tests/vectors/frames.json.
"""

from __future__ import annotations

import binascii
import struct
from collections.abc import Iterator
from dataclasses import dataclass

SOF = 0xA7
VERSION = 1
MAX_PAYLOAD = 1024
OVERHEAD = 8

# request types; a successful reply has type | 0x80
IDENTIFY = 0x01
SET_CLOCK = 0x02
LIST_RUNS = 0x03
READ_RUN = 0x04
START_RUN = 0x05
STOP_RUN = 0x06
STREAM = 0x07
ERASE_RUN = 0x08
GET_CONFIG = 0x09
PUT_CONFIG = 0x0A
RUN_CHECKSUM = 0x0B
REPLY = 0x80
LIVE = 0xC0  # unsolicited live record
ERROR = 0xFF  # payload: u8 error code + UTF-8 message

ERROR_CODES = {
    1: "bad frame",
    2: "unknown command",
    3: "bad payload",
    4: "wrong state",
    5: "not found",
    6: "checksum mismatch",
    7: "storage full",
    8: "invalid config",
    9: "internal error",
}


@dataclass(frozen=True)
class Frame:
    type: int
    request_id: int
    payload: bytes


@dataclass(frozen=True)
class BadFrame:
    """Something that was not a valid frame: reason is crc, version, length, timeout or junk."""

    reason: str
    request_id: int = 0


def _crc(data: bytes) -> int:
    return binascii.crc_hqx(data, 0xFFFF)


def encode(ftype: int, request_id: int, payload: bytes = b"") -> bytes:
    if not 0 <= ftype <= 0xFF or not 0 <= request_id <= 0xFF:
        raise ValueError(f"type and request id must be bytes, got {ftype!r}, {request_id!r}")
    if len(payload) > MAX_PAYLOAD:
        raise ValueError(f"payload of {len(payload)} bytes exceeds {MAX_PAYLOAD}")
    body = struct.pack("<BBBH", VERSION, ftype, request_id, len(payload)) + bytes(payload)
    return bytes([SOF]) + body + struct.pack("<H", _crc(body))


class FrameParser:
    """Feed bytes, get Frame and BadFrame items. Bounded buffer; resynchronises after errors."""

    def __init__(self) -> None:
        self._buf = bytearray()
        self._junk = 0
        self._quiet = False

    def reset(self) -> BadFrame | None:
        """Drop a partial frame (after an idle gap)."""
        had = bool(self._buf)
        self._buf.clear()
        return BadFrame("timeout") if had else None

    def feed(self, data: bytes) -> Iterator[Frame | BadFrame]:
        src = bytes(data)
        i = 0
        buf = self._buf
        while i < len(src):
            if not buf:
                j = src.find(SOF, i)
                skipped = (len(src) if j < 0 else j) - i
                self._junk += skipped
                if j < 0:
                    break
                i = j
                if self._junk:
                    if not self._quiet:
                        yield BadFrame("junk")
                    self._junk = 0
            buf.append(src[i])
            i += 1
            out = self._check()
            if out is None:
                continue
            if isinstance(out, BadFrame):
                src = bytes(buf[1:]) + src[i:]
                i = 0
                self._junk = 0
                self._quiet = True
            else:
                self._quiet = False
            buf.clear()
            yield out
        if self._junk:
            if not self._quiet:
                yield BadFrame("junk")
            self._junk = 0
        self._quiet = False

    def _check(self) -> Frame | BadFrame | None:
        buf = self._buf
        n = len(buf)
        if n == 2 and buf[1] != VERSION:
            return BadFrame("version")
        if n < 6:
            return None
        length = buf[4] | buf[5] << 8
        if length > MAX_PAYLOAD:
            return BadFrame("length", buf[3])
        if n < OVERHEAD + length:
            return None
        end = 6 + length
        if _crc(bytes(buf[1:end])) != buf[end] | buf[end + 1] << 8:
            return BadFrame("crc", buf[3])
        return Frame(buf[2], buf[3], bytes(buf[6:end]))
