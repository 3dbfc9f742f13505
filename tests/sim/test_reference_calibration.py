"""A reference-process calibration simulated at 20 °C and at 30 °C, on the virtual board (the
real firmware), recovers the simulator's C_cal within the stated U; taking the 25 °C enthalpy
instead would not. Invented data; tris enthalpy and ΔCp from Prosen & Kilday 1973
(docs/REFERENCES.md: PROSEN1973)."""

import numpy as np
import pytest

from heatlog.energetics import Content, water_cp_input
from heatlog.energetics.calorimeter import REFERENCE_PROCESSES, reaction_calibration
from heatlog.gum import Input
from heatlog.logformat import read_log
from heatlog.probes import VoltageDivider
from heatlog.reduce import reduce_thermogram
from heatlog.sim import scenarios as sc
from heatlog.sim.board import VirtualBoard
from heatlog.thermogram import Thermogram


def _calibrate(name, tmp_path, *, at_25=False):
    scn = sc.SCENARIOS[name]
    exp = scn.experiments[0]
    board = VirtualBoard(scn, tmp_path, seed=3)
    board.log_run(exp.duration_s)
    log = read_log(board.root / "r0001.hlg")
    chain = VoltageDivider(sc.R_FIXED_OHM, "low", bits=12, oversample=scn.oversample)
    temps = sc.PROBE_TRUTH.resistance_to_temperature(chain.to_resistance(log.raw[:, 0]))
    times = np.arange(len(temps)) * scn.interval_ms / 1000.0
    red = reduce_thermogram(Thermogram(times, np.asarray(temps, dtype=float)))
    mask = (times >= red.fore_start_s) & (times <= red.after_end_s)
    mean_t = float(np.mean(np.asarray(temps)[mask]))
    tris = REFERENCE_PROCESSES["tris-hcl"]
    water = Content("water", Input(sc.WATER_G, 0.05, "g"), water_cp_input(mean_t))
    b = reaction_calibration(
        tris,
        Input(sc.TRIS_G, 0.0005, "g"),
        Input(red.delta_t_K, red.u_delta_t_K, "K"),
        [water],
        t_c=25.0 if at_25 else mean_t,
        concentration=tris.concentration(sc.TRIS_G, sc.WATER_G),
    )
    return b, mean_t


@pytest.mark.parametrize(("name", "temp"), [("tris-20", 20.2), ("tris-30", 29.7)])
def test_tris_calibration_away_from_25c_recovers_c_cal_within_u(name, temp, tmp_path):
    b, mean_t = _calibrate(name, tmp_path)
    assert mean_t == pytest.approx(temp, abs=0.5)  # inside 293–303 K, 5 K from 25 °C
    truth = sc.CUP_C_J_PER_K
    assert abs(b.value - truth) <= b.expanded, (b.value, b.expanded)
    # the stated U is not so wide that it hides the 25 °C error (≈ 7 J/g · 0.9 g / ΔT)
    wrong, _ = _calibrate(name, tmp_path / "again", at_25=True)
    assert abs(wrong.value - truth) > 2 * b.expanded, (wrong.value, b.expanded)
