"""Long runs end to end: the simulator's hand-warmer and cement scenarios (invented data), logged
by the real firmware, exported through a fitted probe file and profiled by ``heatlog profile``,
must give the heat per gram the simulator really released within 1 % (the target of the
long-run profile work; method family EN 196-9 / RILEM TC 119 / NT BUILD 388)."""

import datetime as dt
import json
from importlib import resources
from pathlib import Path

import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.csvtable import read_columns
from heatlog.device.export import export_run
from heatlog.probes import fit_resistance, probe_from_fit, save_probe
from heatlog.sim import scenarios as sc
from heatlog.sim.board import VirtualBoard

CASES = {
    # scenario: (kind, sample mass in g as the scenario states it, hours logged)
    "hand-warmer": ("warmer", 40.0, 6.0),
    "cement": ("cement", 100.0, 48.0),
}


def _probe_dir(tmp: Path) -> Path:
    points = Path(str(resources.files("heatlog") / "data" / "examples" / "ntc_10k_calibration.csv"))
    pts = read_columns(points, ["temp_C", "resistance_ohm"])
    fit = fit_resistance(pts["temp_C"], pts["resistance_ohm"], "steinhart-hart", ref_u_K=0.01)
    probe = probe_from_fit(
        fit,
        sc.PROBE_ID,
        reference="invented reference, u = 0.01 K",
        calibration_date=dt.date(2026, 11, 30),
    )
    folder = tmp / "probes"
    folder.mkdir()
    save_probe(probe, folder / f"{sc.PROBE_ID}.toml")
    return folder


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(CASES))
def test_profile_recovers_the_simulated_heat_per_gram(name, tmp_path):
    kind, sample_g, hours = CASES[name]
    scn = sc.SCENARIOS[name]
    vessel = scn.experiments[0].vessel
    board = VirtualBoard(scn, tmp_path / "flash", seed=3)
    board.log_run(hours * 3600.0)
    truth = board.truth()["runs"][0]
    csv, _ = export_run(board.root / "r0001.hlg", _probe_dir(tmp_path))
    r = CliRunner().invoke(main, [
        "profile", str(csv), "--heat-capacity", str(vessel.heat_capacity_J_per_K),
        "--loss", str(vessel.exchange_W_per_K), "--u-loss", "0", "--env-temp", str(vessel.room_C),
        "--sample-g", str(sample_g), "--kind", kind, "--json",
    ])  # fmt: skip
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    true_per_g = truth["released_so_far_J"] / sample_g
    assert d["heat_J_per_g"] == pytest.approx(true_per_g, rel=0.01)
    assert d["u_heat_J_per_g"] > 0
    assert d["safety"], "every profile carries its safety flags and cautions"
