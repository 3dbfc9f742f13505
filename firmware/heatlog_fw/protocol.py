"""Command handling for the serial link (protocol version 1; firmware/PROTOCOL.md).

`handle` maps one parsed frame to reply frames. Payloads are fixed binary structs or JSON data;
nothing the host sends is ever executed. Every failure becomes an ERROR reply.
"""

import json
import struct

from . import framing
from .logstore import StoreError, StoreFull

try:
    from micropython import const  # pyright: ignore[reportAssignmentType]
except ImportError:

    def const(x):
        return x


PROTOCOL_VERSION = const(1)
IDENTIFY = const(0x01)
SET_CLOCK = const(0x02)
LIST_RUNS = const(0x03)
READ_RUN = const(0x04)
START_RUN = const(0x05)
STOP_RUN = const(0x06)
STREAM = const(0x07)
ERASE_RUN = const(0x08)
GET_CONFIG = const(0x09)
PUT_CONFIG = const(0x0A)
RUN_CHECKSUM = const(0x0B)
TO_REPL = const(0x0C)
REPLY = const(0x80)
LIVE = const(0xC0)
ERROR = const(0xFF)

E_BAD_FRAME = const(1)
E_UNKNOWN = const(2)
E_PAYLOAD = const(3)
E_STATE = const(4)
E_NOT_FOUND = const(5)
E_CHECKSUM = const(6)
E_FULL = const(7)
E_CONFIG = const(8)
E_INTERNAL = const(9)

READ_CHUNK = const(512)
RUNS_PER_PAGE = const(40)


class PayloadError(Exception):
    pass


def error(rid, code, msg):
    return framing.encode(ERROR, rid, bytes([code]) + msg.encode()[:200])


def _unpack(fmt, payload):
    if len(payload) != struct.calcsize(fmt):
        raise PayloadError("payload must be " + str(struct.calcsize(fmt)) + " bytes")
    return struct.unpack(fmt, payload)


def handle(lg, ftype, rid, payload, now):
    """Reply frames (list of bytearrays) for one frame from the parser."""
    if ftype == framing.BAD:
        return [error(rid, E_BAD_FRAME, "bad frame: " + payload.decode())]
    try:
        return [_dispatch(lg, ftype, rid, payload, now)]
    except PayloadError as e:
        return [error(rid, E_PAYLOAD, str(e))]
    except StoreFull as e:
        return [error(rid, E_FULL, str(e))]
    except StoreError as e:
        msg = str(e)
        code = E_CHECKSUM if "checksum" in msg else E_NOT_FOUND if "no such" in msg else E_STATE
        return [error(rid, code, msg)]
    except Exception as e:  # a bug must not kill the logger: report it and carry on
        return [error(rid, E_INTERNAL, type(e).__name__ + ": " + str(e))]


def _reply(ftype, rid, payload):
    return framing.encode(ftype | REPLY, rid, payload)


def _dispatch(lg, t, rid, p, now):
    if t == IDENTIFY:
        _unpack("", p)
        return _reply(t, rid, json.dumps(lg.identify(now)).encode())
    if t == SET_CLOCK:
        (ms,) = _unpack("<q", p)
        if ms < 946684800000 or ms > 4102444800000:  # 2000-01-01 .. 2100-01-01
            raise PayloadError("clock must be epoch ms between 2000 and 2100")
        prev = lg.set_clock(ms, now)
        return _reply(t, rid, struct.pack("<qq", ms, prev))
    if t == LIST_RUNS:
        (start,) = _unpack("<H", p)
        runs = lg.store.runs()
        page = runs[start : start + RUNS_PER_PAGE]
        body = {"runs": [[r, s] for r, s in page], "more": start + RUNS_PER_PAGE < len(runs)}
        body["active"] = lg.store.run_no if lg.store.active else None
        return _reply(t, rid, json.dumps(body).encode())
    if t == READ_RUN:
        run, offset, n = _unpack("<IIH", p)
        if n == 0 or n > READ_CHUNK:
            raise PayloadError("length must be 1.." + str(READ_CHUNK))
        buf = lg.read_buf
        got, size = lg.store.read(run, offset, memoryview(buf)[:n])
        return _reply(t, rid, struct.pack("<III", run, offset, size) + bytes(buf[:got]))
    if t == RUN_CHECKSUM:
        (run,) = _unpack("<I", p)
        size, crc = lg.store.checksum(run)
        return _reply(t, rid, struct.pack("<III", run, size, crc))
    if t == START_RUN:
        _unpack("", p)
        return _reply(t, rid, struct.pack("<I", lg.start_run(now)))
    if t == STOP_RUN:
        _unpack("", p)
        return _reply(t, rid, struct.pack("<I", lg.stop_run(now)))
    if t == STREAM:
        (on,) = _unpack("<B", p)
        if on > 1:
            raise PayloadError("stream flag must be 0 or 1")
        return _reply(t, rid, struct.pack("<BH", on, lg.stream(bool(on), now)))
    if t == ERASE_RUN:
        run, size, crc = _unpack("<III", p)
        lg.store.erase(run, size, crc)
        return _reply(t, rid, struct.pack("<I", run))
    if t == GET_CONFIG:
        _unpack("", p)
        return _reply(t, rid, lg.config_text.encode())
    if t == TO_REPL:
        _unpack("", p)
        return _reply(t, rid, bytes([lg.leave_to_repl()]))
    if t == PUT_CONFIG:
        errs = lg.put_config(p, now)
        if errs:
            return error(rid, E_CONFIG, "; ".join(errs))
        return _reply(t, rid, b"")
    return error(rid, E_UNKNOWN, "unknown command " + str(t))
