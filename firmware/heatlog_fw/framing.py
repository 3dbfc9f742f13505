"""Frames on the USB serial link (protocol version 1); see firmware/PROTOCOL.md.

    0xA7 | version | type | request id | length (u16 LE) | payload | CRC-16/CCITT-FALSE (u16 LE)

The CRC covers version..payload. Payloads are at most MAX_PAYLOAD bytes. The host package
holds a separate implementation; both are checked against tests/vectors/frames.json.
"""

import struct

from .crc import crc16

try:
    from micropython import const  # pyright: ignore[reportAssignmentType]
except ImportError:

    def const(x):
        return x


SOF = const(0xA7)
VERSION = const(1)
MAX_PAYLOAD = const(1024)
OVERHEAD = const(8)
BAD = const(-1)  # frame type reported by the parser for a malformed frame

# reasons carried by a BAD frame (payload of the parser's report)
R_CRC = b"crc"
R_VERSION = b"version"
R_LENGTH = b"length"
R_TIMEOUT = b"timeout"
R_JUNK = b"junk"


def encode(ftype, rid, payload=None):
    """One frame as a bytearray; payload is any bytes-like object (None: empty)."""
    if payload is None:
        payload = b""
    n = len(payload)
    if n > MAX_PAYLOAD:
        raise ValueError("payload too long")
    buf = bytearray(OVERHEAD + n)
    struct.pack_into("<BBBBH", buf, 0, SOF, VERSION, ftype, rid, n)
    buf[6 : 6 + n] = payload
    struct.pack_into("<H", buf, 6 + n, crc16(buf, 0xFFFF, 1, 6 + n))
    return buf


class Parser:
    """Fed with bytes; yields (type, request id, payload) per complete frame, and
    (BAD, request id or 0, reason) for a malformed one. Never raises on input, never grows
    past one maximal frame, and resynchronises on the next start byte."""

    def __init__(self):
        self.buf = bytearray(OVERHEAD + MAX_PAYLOAD)
        self.n = 0
        self.junk = 0
        self.quiet = False

    def reset(self):
        """Drop a partial frame (call after an idle gap); returns a BAD report if one was held."""
        had = self.n
        self.n = 0
        if had:
            return (BAD, 0, R_TIMEOUT)
        return None

    def feed(self, data):
        buf = self.buf
        cap = len(buf)
        src = data
        i = 0
        while i < len(src):
            b = src[i]
            i += 1
            if self.n == 0:
                if b != SOF:
                    self.junk += 1
                    continue
                if self.junk:
                    self.junk = 0
                    if not self.quiet:
                        yield (BAD, 0, R_JUNK)
            if self.n < cap:
                buf[self.n] = b
                self.n += 1
            out = self._check()
            if out is None:
                continue
            if out[0] == BAD:
                # re-scan the bytes after the bad frame's start byte (iteratively: no recursion)
                src = bytes(buf[1 : self.n]) + bytes(src[i:])
                i = 0
                self.junk = 0
                self.quiet = True
            else:
                self.quiet = False
            self.n = 0
            yield out
        if self.junk:
            if not self.quiet:
                yield (BAD, 0, R_JUNK)
            self.junk = 0
        self.quiet = False

    def _check(self):
        """None while a frame is incomplete, else a frame or a BAD report (caller resets)."""
        n = self.n
        buf = self.buf
        if n == 2 and buf[1] != VERSION:
            return (BAD, 0, R_VERSION)
        if n < 6:
            return None
        length = buf[4] | (buf[5] << 8)
        if length > MAX_PAYLOAD:
            return (BAD, buf[3], R_LENGTH)
        if n < OVERHEAD + length:
            return None
        end = 6 + length
        if crc16(buf, 0xFFFF, 1, end) != buf[end] | (buf[end + 1] << 8):
            return (BAD, buf[3], R_CRC)
        return (buf[2], buf[3], bytes(buf[6:end]))
