"""Host framing codec against tests/vectors/frames.json, plus round trips and garbage."""

import json
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from heatlog.device import framing as fr

VECTORS = json.loads((Path(__file__).resolve().parents[1] / "vectors" / "frames.json").read_text())


@pytest.mark.parametrize("case", VECTORS["encode"], ids=lambda c: c["name"])
def test_encode_vectors(case):
    got = fr.encode(case["type"], case["request_id"], bytes.fromhex(case["payload"]))
    assert got.hex() == case["frame"]


def _items(parser, chunks):
    out = []
    for c in chunks:
        for item in parser.feed(c):
            if isinstance(item, fr.BadFrame):
                out.append(["bad", item.reason, item.request_id])
            else:
                out.append(["frame", item.type, item.request_id, item.payload.hex()])
    return out


@pytest.mark.parametrize("case", VECTORS["streams"], ids=lambda c: c["name"])
def test_stream_vectors(case):
    assert _items(fr.FrameParser(), [bytes.fromhex(c) for c in case["chunks"]]) == case["expect"]


@given(
    st.integers(0, 255),
    st.integers(0, 255),
    st.binary(max_size=fr.MAX_PAYLOAD),
    st.binary(max_size=40),
)
def test_round_trip_with_split_and_junk(ftype, rid, payload, junk):
    data = junk.replace(bytes([fr.SOF]), b"") + fr.encode(ftype, rid, payload)
    p = fr.FrameParser()
    frames = [
        x
        for i in range(0, len(data), 7)
        for x in p.feed(data[i : i + 7])
        if isinstance(x, fr.Frame)
    ]
    assert frames == [fr.Frame(ftype, rid, payload)]


@given(st.binary(max_size=3000))
def test_garbage_never_raises_and_stays_bounded(data):
    p = fr.FrameParser()
    for _ in p.feed(data):
        pass
    assert len(p._buf) <= fr.OVERHEAD + fr.MAX_PAYLOAD
    good = fr.encode(1, 2, b"ok")
    p.reset()
    assert [x for x in p.feed(good) if isinstance(x, fr.Frame)] == [fr.Frame(1, 2, b"ok")]


def test_encode_rejects_oversize():
    with pytest.raises(ValueError, match="exceeds 1024"):
        fr.encode(1, 0, bytes(1025))


def test_reset_reports_partial_frame():
    p = fr.FrameParser()
    list(p.feed(fr.encode(1, 0, b"abc")[:4]))
    assert p.reset() == fr.BadFrame("timeout")
    assert p.reset() is None
