"""Random garbage into the firmware parser and the whole command loop (CPython, hypothesis),
and the firmware parser against the independent host parser on the same byte streams."""

import json

import portable_checks as pc
from heatlog_fw import framing as fw
from heatlog_fw import protocol as pr
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog.device import framing as host


def _fw_items(chunks):
    p = fw.Parser()
    out = []
    for c in chunks:
        for t, rid, payload in p.feed(c):
            out.append(
                ("bad", payload.decode(), rid) if t == fw.BAD else ("frame", t, rid, payload)
            )
    return out


def _host_items(chunks):
    p = host.FrameParser()
    out = []
    for c in chunks:
        for x in p.feed(c):
            if isinstance(x, host.BadFrame):
                out.append(("bad", x.reason, x.request_id))
            else:
                out.append(("frame", x.type, x.request_id, x.payload))
    return out


frame_bytes = st.builds(
    lambda t, r, p: host.encode(t, r, p),
    st.integers(0, 255),
    st.integers(0, 255),
    st.binary(max_size=60),
)
pieces = st.lists(
    st.one_of(st.binary(max_size=30), frame_bytes, st.just(bytes([0xA7, 1]))), max_size=8
)


@settings(max_examples=200, deadline=None)
@given(pieces, st.integers(1, 17))
def test_firmware_and_host_parsers_agree(parts, step):
    data = b"".join(parts)
    chunks = [data[i : i + step] for i in range(0, len(data), step)]
    assert _fw_items(chunks) == _host_items(chunks)


@settings(max_examples=200, deadline=None)
@given(pieces)
def test_every_whole_frame_survives_garbage_before_it(parts):
    data = b"".join(parts)
    good = host.encode(0x42, 7, b"payload")
    items = _fw_items([data + good])
    # after any garbage the next whole frame is found, unless a garbage "frame" header still
    # waits for its announced length (bounded: at most MAX_PAYLOAD bytes) - then reset() frees it
    if ("frame", 0x42, 7, b"payload") not in items:
        p = fw.Parser()
        list(p.feed(data))
        p.reset()
        assert (0x42, 7, b"payload") in list(p.feed(good))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.one_of(st.binary(max_size=40), frame_bytes), max_size=6))
def test_logger_answers_garbage_without_crashing(parts):
    lg, link, fs = pc._logger(pc.EXAMPLE_CONFIG)
    lg.boot(0)
    now = 0
    for part in parts:
        lg.poll(part, now)
        now += 100
    for t, _rid, payload in link.frames():
        assert t != fw.BAD
        if t == pr.ERROR:
            assert 1 <= payload[0] <= 9 and payload[0] != pr.E_INTERNAL, payload
    # still answers afterwards
    lg.parser.reset()
    t, p = link.ask(pr.IDENTIFY, b"", now)
    assert t == pr.IDENTIFY | 0x80 and json.loads(p)["firmware"]
