"""The read window's bookkeeping under random schedules of replies, losses and damage
(hypothesis): its invariants hold after every step, and the bytes it hands out, in order, are
exactly the file, whatever the order replies arrive in and however often ranges are asked again."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog.device.readwindow import MIN_CHUNK, PipelineError, ReadWindow


@settings(max_examples=200, deadline=None)
@given(
    size=st.integers(1, 5000),
    start=st.integers(0, 5000),
    window=st.integers(1, 16),
    ops=st.lists(st.tuples(st.sampled_from("rld"), st.integers(0, 1000)), max_size=400),
)
def test_invariants_hold_and_the_output_is_the_file(size, start, window, ops):
    start = min(start, size)
    data = bytes((i * 7 + 3) % 251 for i in range(size))
    w = ReadWindow(start, size, window)
    out = bytearray()
    rid = 0

    def fill():
        nonlocal rid
        while w.wants():
            off, n = w.take()
            rid = rid % 255 + 1
            while rid in w.pending:
                rid = rid % 255 + 1
            w.asked(rid, off, n, 0.0)

    def reply(k):
        a = w.pending[k]
        hit = w.match(k, a.off)
        assert hit is not None and hit[0] == k
        out.extend(b"".join(w.arrived(k, data[a.off : a.off + a.n])))

    for op, pick in ops:
        fill()
        w.check()
        if w.done:
            break
        k = sorted(w.pending)[pick % len(w.pending)]
        if op == "r":  # an intact reply, in any order
            reply(k)
        else:  # lost ("l") or damaged ("d"): ask again
            w.again(k, damaged=op == "d")
            assert w.chunk >= MIN_CHUNK
        w.check()
    while not w.done:  # then a clean line
        fill()
        w.check()
        reply(min(w.pending, key=lambda k: w.pending[k].off))
    w.check()
    assert bytes(out) == data[start:] and w.write_off == size


def test_a_late_reply_to_a_request_asked_again_is_used():
    w = ReadWindow(0, 1000, 2)
    off, n = w.take()
    w.asked(7, off, n, 0.0)
    w.again(7)
    off2, n2 = w.take()
    w.asked(8, off2, n2, 1.0)
    hit = w.match(7, 0)  # id 7 is gone, but its reply is for the range id 8 now asks
    assert hit is not None and hit[0] == 8


def test_an_outstanding_id_handed_out_again_is_caught():
    w = ReadWindow(0, 1000, 4)
    w.asked(5, *w.take(), 0.0)
    with pytest.raises(PipelineError, match="still outstanding"):
        w.asked(5, *w.take(), 0.0)


def test_a_broken_tiling_is_caught():
    w = ReadWindow(0, 1000, 4)
    w.asked(1, *w.take(), 0.0)
    w.todo.append((900, 10))  # a range that does not belong
    with pytest.raises(PipelineError, match="bookkeeping error"):
        w.check()


def test_requests_sent_before_an_answered_one_are_known_lost():
    w = ReadWindow(0, 5000, 4)
    for rid in (10, 11, 12, 13):
        w.asked(rid, *w.take(), 0.0)
    # the board answers in order: the reply to 12 means 10 and 11 will never be answered
    assert sorted(w.sent_before(w.pending[12].order)) == [10, 11]
    for rid in w.sent_before(w.pending[12].order):
        w.again(rid)
    w.check()
    assert sorted(w.pending) == [12, 13] and w.todo == [(0, 512), (512, 512)]
