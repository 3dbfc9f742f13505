"""`heatlog board install` end to end against the MicroPython unix port behind a pty.

The "board" is the unix-port interpreter at its REPL (tests/firmware/unixboard.py) with a littlefs
flash image and the fake `machine`. The command runs through click's CliRunner as a user runs it:
install with a generated config; a second install that changes nothing; refusals (an active
run, runs the archive does not hold, a broken config) that leave the board as it was; and each
time the firmware started from what was installed must answer identify.
"""

import json
import sys

import pytest
from click.testing import CliRunner

from heatlog.cli import main

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(sys.platform == "win32", reason="the unix port runs on POSIX ptys"),
]


def _cli(*args):
    r = CliRunner().invoke(main, list(args), catch_exceptions=False)
    return r.exit_code, r.output


def _install(port, *extra):
    code, out = _cli("board", "install", "--port", port, "--json", *extra)
    return code, (json.loads(out) if code == 0 else out)


def _board_call(port, fn):
    from heatlog.device.commands import Board
    from heatlog.device.link import Link

    with Link.open(port, timeout=1.0) as link:
        return fn(Board(link))


@pytest.fixture
def board(tmp_path):
    from unixboard import UnixBoard

    with UnixBoard(tmp_path / "flash.img") as b:
        yield b


def test_install_then_refusals_then_reinstall(board, tmp_path):
    cfg = tmp_path / "board.json"
    code, out = _cli("board", "config", "new", "--variant", "divider", "--board", "rp2040",
                     "--board-id", "unix-1", "--out", str(cfg))  # fmt: skip
    assert code == 0, out

    # 1. a bare MicroPython REPL: everything written, verified, and the firmware answers
    code, rep = _install(board.path, "--config", str(cfg))
    assert code == 0, rep
    from heatlog.device.install import mpy_cross_version

    have = mpy_cross_version()
    matches = have is not None and ".".join(map(str, have)) == rep["board"]["mpy_version"]
    assert rep["board"]["implementation"] == "micropython", rep
    assert rep["form"] == ("mpy" if matches else "source"), rep
    assert "/main.py" in rep["written"] and "/heatlog/config.json" in rep["written"]
    assert any(p.endswith("/logstore." + ("mpy" if matches else "py")) for p in rep["written"])
    assert rep["unchanged"] == [] and set(rep["verified"]) == set(rep["written"])
    ident = rep["identify"]
    assert ident["board_id"] == "unix-1" and ident["config_errors"] == [], ident
    assert ident["protocol"] == 1 and ident["run"] is None

    # 2. the same install again onto the running firmware: nothing changes
    code, rep2 = _install(board.path, "--config", str(cfg))
    assert code == 0, rep2
    assert rep2["written"] == [] and rep2["removed"] == [], rep2
    assert sorted(rep2["unchanged"]) == sorted(rep["written"])
    assert rep2["left_repl"].startswith("logger loop left")
    assert rep2["identify"]["board_id"] == "unix-1"

    # 3. an active run: refused, the run goes on
    run = _board_call(board.path, lambda b: b.start_run())
    code, out = _install(board.path, "--config", str(cfg))
    assert code == 2 and f"run {run} is active" in out, out
    assert _board_call(board.path, lambda b: b.identify()).run == run

    # 4. a run was logged since boot, so the watchdog runs: asked for the REPL, the board resets
    # and the host stops it with Ctrl-C in the boot's abort window (the fake machine.reset() ends
    # the interpreter; the harness starts it again, as a board restarts). --force: the run is
    # not archived, and stays on the board
    _board_call(board.path, lambda b: b.stop_run())
    empty = tmp_path / "empty"
    empty.mkdir()
    code, rep_wd = _install(board.path, "--archive", str(empty), "--force")
    assert code == 0, rep_wd
    assert rep_wd["left_repl"].startswith("reset"), rep_wd["left_repl"]
    assert rep_wd["written"] == [] and rep_wd["identify"]["board_id"] == "unix-1"

    # 5. a finished run the archive does not hold: refused, nothing written
    other = tmp_path / "other.json"
    other.write_text(cfg.read_text().replace("unix-1", "unix-2"))
    code, out = _install(board.path, "--config", str(other))
    assert code == 2 and "not in the archive" in out and "r0001.hlg" in out, out
    # the refusal restarted the firmware with the board as it was; an archive folder without
    # the run is refused too
    from heatlog.device.install import _identify_after_boot

    assert _identify_after_boot(board.path, 115200, 20)["board_id"] == "unix-1"
    code, out = _install(board.path, "--config", str(other), "--archive", str(empty))
    assert code == 2 and "not in the archive" in out, out
    assert _identify_after_boot(board.path, 115200, 20)["board_id"] == "unix-1"

    # 6. a broken config: refused before anything is written
    bad = tmp_path / "bad.json"
    bad.write_text(cfg.read_text().replace('"pin": 26', '"pin": 5'))
    code, out = _install(board.path, "--config", str(bad))
    assert code == 2 and "config refused, nothing written" in out and "GPIO 5" in out, out

    # 7. --force without the run archived, then pulled into the archive: the install goes ahead
    code, rep3 = _install(board.path, "--archive", str(empty), "--force")
    assert code == 0, rep3
    assert rep3["written"] == [] and rep3["config"] == "kept"
    assert rep3["identify"]["board_id"] == "unix-1"
    runs, _ = _board_call(board.path, lambda b: b.list_runs())
    assert [r.run for r in runs] == [run]

    from heatlog.device.archive import Archive
    from heatlog.device.pull import pull

    _board_call(board.path, lambda b: pull(b, Archive(tmp_path / "pulled")))
    code, rep4 = _install(board.path, "--config", str(other), "--archive", str(tmp_path / "pulled"))
    assert code == 0, rep4
    assert rep4["written"] == ["/heatlog/config.json"] and rep4["identify"]["board_id"] == "unix-2"
