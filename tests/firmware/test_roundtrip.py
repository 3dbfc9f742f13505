"""Firmware writer -> host decoder round trip on random runs (hypothesis)."""

import numpy as np
from heatlog_fw import logformat as fw
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog import logformat as host

u32 = st.integers(0, 2**32 - 1)
i32 = st.integers(-(2**31), 2**31 - 1)


@st.composite
def runs(draw):
    n = draw(st.integers(1, 8))
    chans = [
        (
            draw(st.sampled_from([1, 2, 3])),
            draw(st.integers(0, 4)),
            draw(st.integers(0, 255)),
            draw(st.integers(0, 5)),
            draw(st.integers(1, 2**32 - 1)),  # 0 ohm is refused (test_logformat)
            draw(st.text("ABCXYZ-0123456789", min_size=1, max_size=16)),
        )
        for _ in range(n)
    ]
    recs = draw(
        st.lists(
            st.tuples(
                u32,
                u32,
                st.integers(0, 255),
                st.integers(0, 0xFFFF),
                st.lists(i32, min_size=n, max_size=n),
            ),
            max_size=30,
        )
    )
    anchor = draw(st.one_of(st.just(0), st.integers(*host.ANCHOR_MS), st.integers(1, 2**62)))
    return chans, recs, anchor


@settings(max_examples=150, deadline=None)
@given(runs(), st.text("abc-_0123456789", min_size=1, max_size=16))
def test_firmware_written_runs_decode_exactly(run, board):
    chans, recs, anchor = run
    head = fw.pack_header(board, "0.1.0", 250, 16, anchor, 42, chans)
    p = fw.RecordPacker(len(chans))
    body = bytearray(p.size * len(recs))
    for i, (seq, off, flags, fault, raw) in enumerate(recs):
        p.pack(body, i * p.size, seq, off, flags, fault, raw)
    log = host.decode(bytes(head) + bytes(body))
    h = log.header
    assert (h.board_id, h.run, h.interval_ms, h.oversample) == (board, 42, 250, 16)
    in_range = host.ANCHOR_MS[0] <= anchor <= host.ANCHOR_MS[1] - 1
    assert h.anchor_ms == (anchor if in_range else None)  # out of 2000..2100: ignored, named
    assert bool(h.problems) == (anchor != 0 and not in_range)
    assert [
        (c.kind_code, c.mode, c.source, c.gain, round(c.ref_ohm * 1000), c.probe_id)
        for c in h.channels
    ] == chans
    assert log.bad_blocks == log.trailing_bytes == 0 and log.n_records == len(recs)
    regular = [r[0] for r in recs] == list(range(len(recs))) and all(
        a[1] < b[1] for a, b in zip(recs, recs[1:], strict=False)
    )  # sequence 0, 1, 2 … and time going forward: anything else is named as damage
    assert log.damaged == (not regular or bool(h.problems))
    assert log.seq.tolist() == [r[0] for r in recs]
    assert log.offset_ms.tolist() == [r[1] for r in recs]
    assert log.flags.tolist() == [r[2] for r in recs]
    assert log.fault_mask.tolist() == [r[3] for r in recs]
    assert np.array_equal(
        log.raw, np.array([r[4] for r in recs], dtype=np.int32).reshape(-1, len(chans))
    )
