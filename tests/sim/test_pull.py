"""Pulls from the virtual board (the real firmware) over an in-memory port and a pty: files
identical to the board's flash, resumable, idempotent; erase only with a verified copy."""

import socket
import time

import pytest
from conftest import flash_runs

from heatlog.device.archive import Archive
from heatlog.device.commands import Board
from heatlog.device.link import Link
from heatlog.device.pull import erase, pull
from heatlog.errors import InputError
from heatlog.logformat import read_log
from heatlog.sim.board import DirectPort, PtyServer, TcpServer, VirtualBoard
from heatlog.sim.scenarios import scenario


def archived(out):
    return {read_log(p).header.run: p.read_bytes() for p in sorted(out.glob("*.hlg"))}


def test_pull_copies_every_run_byte_for_byte_and_a_second_pull_fetches_nothing(board, tmp_path):
    b = Board(Link(DirectPort(board), timeout=0.5))
    first = pull(b, Archive(tmp_path / "a"))
    assert archived(tmp_path / "a") == flash_runs(board)
    assert len(first.pulled) == 2 and first.bytes == sum(map(len, flash_runs(board).values()))
    second = pull(b, Archive(tmp_path / "a"))
    assert second.pulled == [] and len(second.already) == 2 and second.bytes == 0


def test_pull_of_chosen_runs_and_the_active_run_is_left_alone(board, tmp_path):
    b = Board(Link(DirectPort(board), timeout=0.5))
    b.start_run()
    rep = pull(b, Archive(tmp_path / "a"), runs=[2, 3])
    assert [e.run for e in rep.pulled] == [2]
    assert rep.skipped and rep.skipped[0]["run"] == 3 and "active" in rep.skipped[0]["reason"]
    with pytest.raises(InputError, match="no run 9"):
        pull(b, Archive(tmp_path / "a"), runs=[9])


def test_a_partial_download_resumes_from_its_verified_length(board, tmp_path):
    a = Archive(tmp_path / "a")
    data = flash_runs(board)[1]
    part, _ = a.start_partial("sim-1", 1, len(data))
    part.write_bytes(data[:5000])
    b = Board(Link(DirectPort(board), timeout=0.5))
    rep = pull(b, a, runs=[1])
    assert rep.bytes == len(data) - 5000 and archived(tmp_path / "a")[1] == data


def test_a_wrong_partial_is_caught_by_the_whole_run_crc_and_fetched_again(board, tmp_path):
    a = Archive(tmp_path / "a")
    data = flash_runs(board)[1]
    part, _ = a.start_partial("sim-1", 1, len(data))
    part.write_bytes(b"\x00" * 5000)  # passes no check but its length: the CRC-32 must catch it
    rep = pull(Board(Link(DirectPort(board), timeout=0.5)), a, runs=[1])
    assert archived(tmp_path / "a")[1] == data and rep.bytes == len(data) - 5000 + len(data)


def test_erase_needs_a_verified_archive_copy(board, tmp_path):
    b = Board(Link(DirectPort(board), timeout=0.5))
    a = Archive(tmp_path / "a")
    with pytest.raises(InputError, match="pull it first"):
        erase(b, a, 1)
    pull(b, a)
    victim = next(p for p in (tmp_path / "a").glob("*.hlg") if read_log(p).header.run == 1)
    victim.chmod(0o644)
    victim.write_bytes(victim.read_bytes()[:-1] + b"\x00")
    with pytest.raises(InputError, match="SHA-256"):
        erase(b, a, 1)
    assert 1 in flash_runs(board)  # nothing erased
    entry = erase(b, a, 2)
    assert entry.run == 2 and 2 not in flash_runs(board) and 1 in flash_runs(board)


def test_erase_refuses_when_the_board_copy_differs(board, tmp_path):
    b = Board(Link(DirectPort(board), timeout=0.5))
    a = Archive(tmp_path / "a")
    pull(b, a)
    path = board.root / "r0002.hlg"
    path.write_bytes(path.read_bytes() + b"\x00")  # the board's file changed since the pull
    with pytest.raises(InputError, match="nothing was erased"):
        erase(b, a, 2)
    assert path.exists()


@pytest.mark.parametrize("bad_id", ["../../etc", "/abs"])
def test_a_malicious_board_id_stays_inside_the_archive(tmp_path, bad_id):
    board = VirtualBoard(scenario("demo"), tmp_path / "flash", board_id=bad_id)  # valid config text
    assert board.logger.cfg["board_id"] == bad_id
    board.log_run(60)
    out = tmp_path / "out" / "a"
    rep = pull(Board(Link(DirectPort(board), timeout=0.5)), Archive(out))
    files = [p for p in tmp_path.rglob("*") if p.is_file() and "flash" not in p.parts]
    assert files and all(out in p.parents for p in files), files
    assert "/" not in rep.pulled[0].name


def test_pull_over_a_pty_to_the_running_simulator(board, tmp_path):
    server = PtyServer(board, tmp_path / "board.link", speed=10.0).start()
    try:
        with Link.open(str(tmp_path / "board.link")) as link:
            rep = pull(Board(link), Archive(tmp_path / "a"))
    finally:
        server.close()
    assert archived(tmp_path / "a") == flash_runs(board) and len(rep.pulled) == 2


def test_pull_over_tcp_to_the_running_simulator(board, tmp_path):
    """The path every system has: pyserial's socket:// URL to the simulator's TCP server."""
    server = TcpServer(board, 0, speed=10.0).start()
    try:
        assert server.url.startswith("socket://127.0.0.1:")
        with Link.open(server.url) as link:
            rep = pull(Board(link), Archive(tmp_path / "a"))
        with Link.open(server.url) as link:  # a second session after the first closed
            again = pull(Board(link), Archive(tmp_path / "a"))
    finally:
        server.close()
    assert archived(tmp_path / "a") == flash_runs(board) and len(rep.pulled) == 2
    assert not again.pulled and len(again.already) == 2
    assert server.connections == 2


def test_tcp_server_refuses_a_second_host_like_a_busy_port(board):
    server = TcpServer(board, 0, speed=10.0).start()
    try:
        with Link.open(server.url, timeout=0.5) as link:
            Board(link).identify()
            second = socket.create_connection(("127.0.0.1", server.port), timeout=2)
            second.settimeout(2)
            assert second.recv(10) == b""  # closed at once: the first host keeps the board
            second.close()
            assert Board(link).identify().board_id
    finally:
        server.close()


def test_a_board_reset_mid_pull_resumes_to_identical_files(board, tmp_path):
    server = PtyServer(board, tmp_path / "board.link", speed=10.0).start()
    seen = []

    def progress(run, done, total):
        seen.append(done)
        if len(seen) == 10:
            server.request_reset()  # watchdog-style restart of the firmware app
            time.sleep(0.05)

    try:
        with Link.open(str(tmp_path / "board.link"), timeout=0.5) as link:
            rep = pull(Board(link), Archive(tmp_path / "a"), progress=progress)
    finally:
        server.close()
    assert board.resets == 1
    assert archived(tmp_path / "a") == flash_runs(board) and len(rep.pulled) == 2


def test_a_run_too_short_for_a_header_is_skipped_with_a_reason(board, tmp_path):
    (board.root / "r0007.hlg").write_bytes(b"HLOG")  # e.g. a run file cut by power loss at creation
    rep = pull(Board(Link(DirectPort(board), timeout=0.5)), Archive(tmp_path / "a"))
    assert [e.run for e in rep.pulled] == [1, 2]
    assert rep.skipped == [{"run": 7, "reason": "only 4 bytes: no complete header"}]
