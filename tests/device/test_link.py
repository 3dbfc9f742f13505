"""The link primitives over loop:// and scripted in-memory ports: request ids, junk before the
first frame, stale replies, garbled requests, error replies, timeouts, a wrong device, a lost
link. No board involved: replies are made with the host frame codec."""

import json
import struct

import pytest
import serial
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog.device import framing as fr
from heatlog.device.commands import BadReply, Board
from heatlog.device.link import (
    BoardError,
    Link,
    LinkGarbled,
    LinkLost,
    LinkTimeout,
    NotABoard,
    open_port,
)
from heatlog.errors import LinkError
from heatlog.sim.faults import WrongDevice


class Scripted:
    """A port whose answer to each request frame is computed by ``respond(frame) -> bytes``."""

    def __init__(self, respond):
        self.respond = respond
        self.out = bytearray()
        self.timeout = 0.0
        self.parser = fr.FrameParser()
        self.requests = []

    @property
    def in_waiting(self):
        return len(self.out)

    def read(self, n=1):
        b = bytes(self.out[:n])
        del self.out[:n]
        return b

    def write(self, data):
        for f in self.parser.feed(data):
            if isinstance(f, fr.Frame):
                self.requests.append(f)
                self.out += self.respond(f)
        return len(data)

    def reset_input_buffer(self):
        self.out.clear()

    def close(self):
        pass


def identify_reply(f, board_id="b1"):
    body = {"board_id": board_id, "firmware": "0.1.0", "protocol": 1, "clock_ms": None, "run": None}
    return fr.encode(f.type | 0x80, f.request_id, json.dumps(body).encode())


def test_loop_url_round_trips_a_frame_through_the_primitives():
    # loop:// echoes what is written: the request comes back as a frame with its own id
    link = Link(open_port("loop://"), timeout=0.2)
    rid = link.send(fr.IDENTIFY, b"abc")
    f = link.receive(__import__("time").monotonic() + 0.5)
    assert f == fr.Frame(fr.IDENTIFY, rid, b"abc")


def test_request_ids_cycle_through_1_to_255_never_0():
    link = Link(open_port("loop://"))
    ids = [link.next_rid() for _ in range(600)]
    assert min(ids) == 1 and max(ids) == 255 and 0 not in ids


def test_junk_and_stale_replies_before_the_answer_are_discarded():
    def respond(f):
        stale = fr.encode(f.type | 0x80, (f.request_id + 7) % 255 + 1, b"{}")
        return b"heatlog: boot, reset cause 1\r\n" + stale + identify_reply(f)

    link = Link(Scripted(respond), timeout=0.5)
    assert Board(link).identify().board_id == "b1"
    assert link.stats.stale == 1 and link.stats.junk_reports >= 1


def test_a_garbled_request_is_sent_again():
    calls = []

    def respond(f):
        calls.append(f)
        if len(calls) == 1:
            return fr.encode(fr.ERROR, f.request_id, b"\x01bad frame: crc")
        return identify_reply(f)

    link = Link(Scripted(respond), timeout=0.5)
    Board(link).identify()
    assert len(calls) == 2 and link.last_attempts == 2


def test_a_damaged_reply_is_retried_without_waiting_for_the_timeout():
    calls = []

    def respond(f):
        calls.append(f)
        good = bytearray(identify_reply(f))
        if len(calls) == 1:
            good[-1] ^= 0xFF  # CRC broken: the parser reports the reply's request id
        return bytes(good)

    link = Link(Scripted(respond), timeout=30.0)
    Board(link).identify()
    assert len(calls) == 2 and link.stats.timeouts == 0


def test_error_reply_becomes_a_board_error_with_its_code():
    link = Link(Scripted(lambda f: fr.encode(fr.ERROR, f.request_id, b"\x04a run is active")))
    with pytest.raises(BoardError) as e:
        Board(link).erase_run(1, 10, 0)
    assert e.value.code == 4 and "wrong state: a run is active" in str(e.value)


def test_silence_ends_in_a_bounded_number_of_tries():
    port = Scripted(lambda f: b"")
    link = Link(port, timeout=0.05, retries=2)
    with pytest.raises(LinkTimeout, match="no answer from the board.*silent for 3 tries"):
        Board(link).identify()
    assert len(port.requests) == 3


def test_a_wrong_device_on_the_port_is_named_as_such():
    link = Link(WrongDevice(), timeout=0.05, retries=1)
    with pytest.raises(NotABoard, match="not a heatlog board"):
        Board(link).identify()


class Unplugged(Scripted):
    def read(self, n=1):
        raise serial.SerialException("device reports readiness to read but returned no data")


def test_a_lost_port_is_a_link_error_with_what_to_do():
    link = Link(Unplugged(lambda f: b""), timeout=0.2)
    with pytest.raises(LinkLost, match="reconnect"):
        Board(link).identify()


def test_opening_a_missing_port_is_one_clear_error(tmp_path):
    with pytest.raises(LinkError, match="heatlog ports"):
        open_port(str(tmp_path / "nothing"))


@pytest.mark.parametrize(
    "payload",
    [b"", b"\x00" * 11, struct.pack("<III", 2, 0, 100) + b"x", struct.pack("<III", 1, 512, 100),
     struct.pack("<III", 1, 0, 1 << 30) + b"x" * 4, struct.pack("<III", 1, 0, 100) + b"x" * 600],
    ids=["empty", "short", "other-run", "other-offset", "huge-size", "too-long"],
)  # fmt: skip
def test_read_replies_that_do_not_match_the_request_are_refused(payload):
    with pytest.raises(BadReply):
        Board.parse_read(payload, 1, 0, 512)


@pytest.mark.parametrize(
    "body",
    [b"not json", b"[1, 2]", b'{"runs": [[1]]}', b'{"runs": [["1", 2]]}', b'{"runs": [[1, -5]]}',
     b'{"runs": [[1, 99999999999]]}', b'{"runs": [[true, 2]]}'],
)  # fmt: skip
def test_list_replies_of_the_wrong_shape_are_refused(body):
    link = Link(Scripted(lambda f: fr.encode(f.type | 0x80, f.request_id, body)))
    with pytest.raises(BadReply):
        Board(link).list_runs()


def test_a_board_that_always_says_more_runs_is_stopped():
    body = json.dumps({"runs": [[1, 100]], "more": True}).encode()
    link = Link(Scripted(lambda f: fr.encode(f.type | 0x80, f.request_id, body)))
    with pytest.raises(BadReply, match="more runs"):
        Board(link).list_runs()


@given(st.binary(max_size=300))
@settings(max_examples=200, deadline=None)
def test_any_reply_bytes_end_in_a_result_or_a_link_error(body):
    # whatever a board (or an impostor) answers, the host parses it as data or refuses it cleanly
    def respond(f):
        return fr.encode(f.type | 0x80, f.request_id, body)

    b = Board(Link(Scripted(respond), timeout=0.05, retries=0))
    for call in (b.identify, b.list_runs, lambda: b.checksum(1), lambda: b.set_clock(0), b.get_config,
                 lambda: b.stream(True), b.start_run, lambda: Board.parse_read(body, 1, 0, 512)):  # fmt: skip
        try:
            call()
        except LinkError:
            pass


def test_garbled_answers_are_told_apart_from_silence():
    # the board answers every request, but each reply's CRC is broken: "garbled", not "no answer"
    def respond(f):
        bad = bytearray(identify_reply(f))
        bad[-1] ^= 0xFF
        return bytes(bad)

    link = Link(Scripted(respond), timeout=0.05, retries=2, stall_s=0.2)
    with pytest.raises(LinkGarbled, match="answers, but garbled") as e:
        Board(link).identify()
    assert "no answer" not in str(e.value) and link.last_attempts >= 3


def test_a_garbled_line_gets_the_time_budget_not_a_fixed_count():
    # 9 garbled replies, then a good one: more tries than `retries`, inside the stall budget
    calls = []

    def respond(f):
        calls.append(f)
        good = bytearray(identify_reply(f))
        if len(calls) < 10:
            good[-1] ^= 0xFF
        return bytes(good)

    link = Link(Scripted(respond), timeout=0.05, retries=2, stall_s=30.0)
    assert Board(link).identify().board_id == "b1" and len(calls) == 10


def test_silence_after_garbled_answers_says_both():
    calls = []

    def respond(f):
        calls.append(f)
        if len(calls) > 1:
            return b""
        bad = bytearray(identify_reply(f))
        bad[-1] ^= 0xFF
        return bytes(bad)

    link = Link(Scripted(respond), timeout=0.05, retries=2)
    with pytest.raises(LinkTimeout, match="silent for 3 tries.*1 earlier answers arrived garbled"):
        Board(link).identify()


def test_request_ids_skip_the_outstanding_ones_and_come_back_last():
    link = Link(open_port("loop://"))
    busy = {2, 3, 4}
    ids = [link.next_rid(busy) for _ in range(300)]
    assert not busy & set(ids) and ids[:3] == [1, 5, 6]
    # a freed id comes back only after every other free id was used once
    assert ids.index(1, 1) == 252
    with pytest.raises(ValueError, match="all 255"):
        link.next_rid(set(range(256)))


@pytest.mark.parametrize(
    "field, value",
    [("clock_ms", 2**63 - 1), ("clock_ms", -5), ("run", 2**40), ("free_bytes", 2**62)],
)
def test_identify_fields_out_of_range_are_one_line_naming_the_field(field, value):
    def respond(f):
        body = {"board_id": "b1", "firmware": "0.1.0", "protocol": 1, field: value}
        return fr.encode(f.type | 0x80, f.request_id, json.dumps(body).encode())

    with pytest.raises(BadReply, match=f"identify: {field} = {value} is outside"):
        Board(Link(Scripted(respond))).identify()


def test_board_text_with_terminal_escapes_is_shown_harmless():
    def respond(f):
        body = {"board_id": "b\x1b[2J1", "firmware": "0.1\x07", "protocol": 1}
        return fr.encode(f.type | 0x80, f.request_id, json.dumps(body).encode())

    info = Board(Link(Scripted(respond))).identify()
    assert info.board_id == "b?[2J1" and info.firmware == "0.1?"


def test_a_stop_whose_reply_was_lost_still_reports_the_run():
    # The board stops run 7 but its reply is lost; the retry finds no run active (error code 4)
    # and the run list shows 7 stopped: the stop succeeded, not "check heatlog status".
    state = {"stopped": False, "stops": 0}

    def respond(f):
        if f.type == fr.STOP_RUN:
            state["stops"] += 1
            if not state["stopped"]:
                state["stopped"] = True
                return b""  # the reply is lost
            return fr.encode(fr.ERROR, f.request_id, b"\x04no active run")
        if f.type == fr.LIST_RUNS:
            payload = json.dumps({"runs": [[6, 100], [7, 200]], "active": None}).encode()
            return fr.encode(fr.LIST_RUNS | 0x80, f.request_id, payload)
        raise AssertionError(f.type)

    board = Board(Link(Scripted(respond), timeout=0.2, retries=2))
    assert board.stop_run(7) == 7 and state["stops"] == 2
    state.update(stopped=False, stops=0)
    assert board.stop_run() == 7  # the newest run on the board
