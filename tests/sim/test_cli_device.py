"""The board commands through click's CliRunner against the simulator on a pty and over TCP: JSON output,
one-line errors, progress only on request and never on stdout."""

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.sim import scenarios as sc
from heatlog.sim.board import PtyServer, TcpServer, pty_available


@pytest.fixture(autouse=True)
def run_archive(tmp_path, monkeypatch):
    """Every pull records into the run archive: keep it inside the test's folder."""
    path = tmp_path / "runs.sqlite"
    monkeypatch.setenv("HEATLOG_DB", str(path))
    return path


@pytest.fixture(params=["pty", "tcp"])
def port(request, board, tmp_path):
    """The simulator on a pseudo-terminal (Linux, macOS) and on a local TCP socket (any system):
    every board command works the same over both."""
    if request.param == "pty":
        if not pty_available():
            pytest.skip("no pseudo-terminals on this system (or tty hidden)")
        server = PtyServer(board, tmp_path / "board.link", speed=20.0)
    else:
        server = TcpServer(board, 0, speed=20.0)
    server.start()
    yield server.path
    server.close()


def run(*args):
    r = CliRunner().invoke(main, list(args))
    return r


def test_status_clock_start_stop_as_json(port):
    r = run("status", "--port", port, "--json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert d["board"]["board_id"] == "sim-1" and [x["run"] for x in d["runs"]] == [1, 2]
    first = json.loads(run("clock", "--port", port, "--json").output)
    assert first["previous_offset_s"] is None  # a freshly booted board has no time
    r = run("clock", "--port", port, "--json")
    assert r.exit_code == 0, r.output
    # the virtual clock runs 20x: the board gained time since the first setting
    assert json.loads(r.output)["previous_offset_s"] > 0
    started = json.loads(run("start", "--port", port, "--json").output)["run"]
    assert started == 3
    assert json.loads(run("stop", "--port", port, "--json").output)["run"] == 3


def test_pull_json_is_clean_progress_goes_to_stderr_and_erase_after(port, tmp_path, board):
    out = tmp_path / "arch"
    r = CliRunner().invoke(
        main, ["pull", "--port", port, "--out", str(out), "--progress", "--json"]
    )
    assert r.exit_code == 0, r.stderr
    d = json.loads(r.stdout)  # stdout is only the JSON object
    assert len(d["pulled"]) == 2 and "bytes" in r.stderr and "ETA" in r.stderr
    assert all((tmp_path / "arch" / e["name"]).is_file() for e in d["pulled"])
    csv = d["exports"][0]["csv"]
    assert Path(csv).read_text().startswith("# heatlog run")
    assert [r["new"] for r in d["recorded"]] == [True, True]  # verified runs go into the archive
    again = json.loads(run("pull", "--port", port, "--out", str(out), "--json").output)
    assert again["pulled"] == [] and len(again["already_archived"]) == 2
    assert [r["new"] for r in again["recorded"]] == [False, False]
    listed = json.loads(run("runs", "list", "--json").output)
    assert len(listed["runs"]) == 2, listed
    r = run("erase", "--port", port, "--out", str(out), "1", "--json")
    assert r.exit_code == 0, r.output
    assert not (board.root / "r0001.hlg").exists() and (board.root / "r0002.hlg").exists()


def test_erase_without_an_archive_copy_is_one_line_and_erases_nothing(port, tmp_path, board):
    (tmp_path / "empty").mkdir()
    r = run("erase", "--port", port, "--out", str(tmp_path / "empty"), "1")
    assert r.exit_code != 0 and r.output.startswith("Error:") and "pull it first" in r.output
    assert len(r.output.strip().splitlines()) == 1
    assert (board.root / "r0001.hlg").exists()


def test_watch_gives_calibrated_live_readings(port, tmp_path):
    from heatlog.demo import _write_probe

    _write_probe(tmp_path)
    r = run("watch", "--port", port, "--probes", str(tmp_path / "probes"), "--count", "2", "--json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert len(d["readings"]) == 2 and d["channels"][0]["calibrated"]
    t = d["readings"][0]["temp_C"][0]
    assert 15.0 < t < 30.0  # the idle cup sits near the invented room temperature of 22.5 °C


def test_a_missing_port_is_one_error_line(tmp_path):
    r = run("status", "--port", str(tmp_path / "none"))
    assert r.exit_code == 3 and r.output.startswith("Error: cannot open")


def test_ports_lists_as_json():
    r = run("ports", "--json")
    assert r.exit_code == 0 and isinstance(json.loads(r.output)["ports"], list)


@pytest.mark.parametrize("how", ["pty", "tcp"])
def test_sim_command_serves_for_a_while_and_reports_its_truth(tmp_path, how):
    if how == "pty" and not pty_available():
        pytest.skip("no pseudo-terminals on this system (or tty hidden)")
    where = ["--link", str(tmp_path / "l")] if how == "pty" else ["--tcp", "0"]
    truth = tmp_path / "truth.json"
    r = run("sim", *where, "--scenario", "exothermic", "--seconds", "0.3",
            "--truth", str(truth), "--json")  # fmt: skip
    assert r.exit_code == 0, r.output
    assert json.loads(r.stdout)["scenario"] == "exothermic" and truth.is_file()
    if how == "tcp":  # the address a host needs, on stderr beside the clean JSON
        assert "socket://127.0.0.1:" in r.stderr
    r = run("sim", *where, "--scenario", "nope", "--seconds", "0.1")
    assert r.exit_code == 2 and "choose one of" in r.output


def test_sim_needs_exactly_one_of_link_and_tcp(tmp_path):
    for args in ([], ["--link", str(tmp_path / "l"), "--tcp", "0"]):
        r = run("sim", "--seconds", "0.1", *args)
        assert r.exit_code == 2 and "--link PATH" in r.output and "--tcp PORT" in r.output


def test_a_pulled_and_calibrated_csv_goes_straight_into_reduce(port, tmp_path):
    from heatlog.demo import _write_probe

    _write_probe(tmp_path)
    out = tmp_path / "arch"
    r = run(
        "pull",
        "--port",
        port,
        "--out",
        str(out),
        "--run",
        "1",
        "--probes",
        str(tmp_path / "probes"),
        "--json",
    )
    assert r.exit_code == 0, r.output
    csv = json.loads(r.output)["exports"][0]["csv"]
    r = run("reduce", csv, "--json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    # run 1 of the demo scenario: about 1467 J of heater into about 669 J/K (invented data), a
    # rise of about 2.19 K; the first hour holds the whole event and its after-period
    assert d["delta_t_K"] == pytest.approx(sc.HEATER.total_J / 669.4, rel=0.02)


def test_sim_on_a_port_already_taken_is_one_line():
    import socket

    with socket.socket() as taken:
        taken.bind(("127.0.0.1", 0))
        taken.listen(1)
        r = run("sim", "--tcp", str(taken.getsockname()[1]), "--seconds", "0.1")
    assert r.exit_code != 0 and "Traceback" not in r.output
    assert len(r.output.strip().splitlines()) == 1 and "choose another port" in r.output
