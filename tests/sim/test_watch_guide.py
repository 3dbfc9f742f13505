"""``heatlog watch --guide`` against the simulator: the start and enough signals come at sensible
times around the simulator's known event (invented data: the NH4NO3 dissolution scenario)."""

import json

import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.sim.board import PtyServer, VirtualBoard
from heatlog.sim.scenarios import SCENARIOS


@pytest.fixture(autouse=True)
def run_archive(tmp_path, monkeypatch):
    monkeypatch.setenv("HEATLOG_DB", str(tmp_path / "runs.sqlite"))


@pytest.mark.slow
def test_guided_watch_signals_start_before_the_event_and_enough_after_it(tmp_path):
    from heatlog.demo import _write_probe

    _write_probe(tmp_path)
    scn = SCENARIOS["endothermic"]
    exp = scn.experiments[0]
    event_s = exp.sources[0].start_s  # the simulator's own event time, from the run start
    tau_s = exp.sources[0].tau_s
    board = VirtualBoard(scn, tmp_path / "flash", seed=5)
    server = PtyServer(board, tmp_path / "board.link", speed=60.0).start()
    try:
        port = str(tmp_path / "board.link")
        assert CliRunner().invoke(main, ["start", "--port", port]).exit_code == 0
        save = tmp_path / "guided.csv"
        r = CliRunner().invoke(main, [
            "watch", "--port", port, "--probes", str(tmp_path / "probes"), "--guide",
            "--stop-when-enough", "--count", "1200", "--save", str(save), "--json",
        ])  # fmt: skip
        assert r.exit_code == 0, r.output
    finally:
        server.close()
    g = json.loads(r.output)["guide"]
    sig = g["signals"]
    assert sig["start_s"] is not None and sig["enough_s"] is not None, g["state"]["message"]
    assert sig["start_s"] < event_s  # stable fore-period found before the salt went in
    assert abs(sig["event_s"] - event_s) < 60.0
    assert sig["enough_s"] > event_s + 5 * tau_s  # only after the release has died out
    assert g["state"]["u_delta_t_K"] <= 0.005
    r = CliRunner().invoke(main, ["reduce", str(save), "--json"])
    assert r.exit_code == 0, r.output
    assert json.loads(r.output)["delta_t_K"] < -1.0  # the dissolution cools the cup


def test_guide_needs_probe_files_and_save_needs_guide(tmp_path):
    r = CliRunner().invoke(main, ["watch", "--port", str(tmp_path / "x"), "--guide"])
    assert r.exit_code != 0 and "--guide needs --probes" in r.output
    r = CliRunner().invoke(main, ["watch", "--port", str(tmp_path / "x"), "--save", "a.csv"])
    assert r.exit_code != 0 and "--save goes with --guide" in r.output
