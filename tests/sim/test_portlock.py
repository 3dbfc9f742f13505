"""The port lock: one heatlog process per port, stale locks taken over, on any system."""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.device.portlock import PortBusy, PortLock, lock_path, pid_alive, port_key

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(autouse=True)
def lock_dir(tmp_path, monkeypatch):
    monkeypatch.setenv("HEATLOG_LOCK_DIR", str(tmp_path / "locks"))
    return tmp_path / "locks"


def _dead_pid() -> int:
    p = subprocess.Popen([sys.executable, "-c", "pass"])
    p.wait()
    return p.pid


def test_acquire_release_and_a_second_holder_in_this_process_is_refused():
    url = "socket://127.0.0.1:7001"
    with PortLock(url) as held:
        assert held.path.is_file() and json.loads(held.path.read_text())["pid"] == os.getpid()
        with pytest.raises(PortBusy, match=f"pid {os.getpid()}"):
            PortLock(url).acquire()
    assert not held.path.exists()
    PortLock(url).acquire().release()  # free again


def test_a_stale_lock_of_a_dead_process_is_taken_over(lock_dir):
    url = "socket://127.0.0.1:7002"
    path = lock_path(port_key(url))
    path.parent.mkdir(parents=True)
    dead = _dead_pid()
    assert not pid_alive(dead) and pid_alive(os.getpid())
    path.write_text(json.dumps({"pid": dead, "command": "heatlog watch"}))
    with PortLock(url):
        assert json.loads(path.read_text())["pid"] == os.getpid()
    # a damaged lock file (old, unreadable) is stale too
    path.write_text("\x00garbage")
    os.utime(path, (0, 0))
    PortLock(url).acquire().release()


def test_a_pty_symlink_and_its_target_are_one_port(tmp_path):
    target = tmp_path / "ttyFAKE0"
    target.touch()
    link = tmp_path / "board.link"
    try:
        link.symlink_to(target)
    except OSError:
        pytest.skip("no symlinks here")
    assert port_key(str(link)) == port_key(str(target))
    assert (
        port_key("loop://") is None and port_key("SOCKET://127.0.0.1:5") == "socket://127.0.0.1:5"
    )


def test_a_command_refuses_a_port_another_process_holds_with_one_line(lock_dir):
    """Another live process (here a small Python one) holds the port: `status` says who."""
    url = "socket://127.0.0.1:7003"
    env = dict(os.environ, PYTHONPATH=str(ROOT / "host"), HEATLOG_LOCK_DIR=str(lock_dir))
    holder = subprocess.Popen(
        [sys.executable, "-c", "import sys\nfrom heatlog.device.portlock import PortLock\n"
         f"lock = PortLock({url!r}, 'heatlog watch').acquire()\nprint('held', flush=True)\n"
         "sys.stdin.read()\nlock.release()"],
        env=env, stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True,
    )  # fmt: skip
    try:
        assert holder.stdout.readline().strip() == "held"
        r = CliRunner().invoke(main, ["status", "--port", url])
        assert r.exit_code != 0 and "Traceback" not in r.output
        lines = r.output.strip().splitlines()
        assert len(lines) == 1 and f"pid {holder.pid}" in lines[0] and "heatlog watch" in lines[0]
    finally:
        holder.stdin.close()
        holder.wait(timeout=30)
    # the holder ended: the port is free again (no server there: now the open fails instead)
    r = CliRunner().invoke(main, ["status", "--port", url, "--timeout", "0.2"])
    assert "in use" not in r.output and r.exit_code != 0


def test_watch_holds_the_port_while_it_runs_and_frees_it_after(board, tmp_path):
    from heatlog.sim.board import TcpServer

    server = TcpServer(board, 0, speed=20.0).start()
    try:
        r = CliRunner().invoke(main, ["watch", "--port", server.url, "--count", "1", "--json"])
        assert r.exit_code == 0, r.output
        assert not list((tmp_path / "locks").glob("*.lock"))  # released at the end
        lock = PortLock(server.url).acquire()  # what a running watch holds
        try:
            r = CliRunner().invoke(main, ["status", "--port", server.url])
            assert r.exit_code != 0 and "in use by another heatlog process" in r.output
        finally:
            lock.release()
        assert CliRunner().invoke(main, ["status", "--port", server.url]).exit_code == 0
    finally:
        server.close()


def test_damaged_lock_files_never_end_in_a_traceback(lock_dir):
    """Seeded mutations of a valid lock file (cut, flipped, junk, wrong types): each one is
    either taken over as stale or refused with one PortBusy line naming a pid."""
    import random

    rng = random.Random(19)
    url = "socket://127.0.0.1:7004"
    path = lock_path(port_key(url))
    path.parent.mkdir(parents=True, exist_ok=True)
    good = json.dumps({"pid": os.getppid(), "command": "heatlog watch", "token": "x"}).encode()
    outcomes = set()
    for _ in range(60):
        data = bytearray(good)
        kind = rng.choice(["cut", "flip", "junk", "types"])
        if kind == "cut":
            data = data[: rng.randrange(len(data))]
        elif kind == "flip":
            for _ in range(rng.randint(1, 4)):
                data[rng.randrange(len(data))] ^= 1 << rng.randrange(8)
        elif kind == "junk":
            data = bytearray(rng.randbytes(rng.randint(0, 40)))
        else:
            data = json.dumps({"pid": rng.choice(["7", None, -3, 0, 2**40, [1]])}).encode()
        path.write_bytes(bytes(data))
        os.utime(path, (0, 0))  # old: an unreadable lock is not one being written right now
        try:
            PortLock(url).acquire().release()
            outcomes.add("taken")
        except PortBusy as exc:
            assert "pid" in str(exc) and "\n" not in str(exc)
            outcomes.add("busy")
        if path.exists():
            path.unlink()
    assert "taken" in outcomes
