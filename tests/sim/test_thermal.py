"""The simulator's vessel model against closed-form solutions of Newton's-law cooling
(docs/REFERENCES.md: NEWTON-VESSEL), and every scenario on the virtual board."""

import math

import numpy as np
import pytest
from scipy.integrate import quad

from heatlog.logformat import read_log
from heatlog.probes import VoltageDivider
from heatlog.sim.board import VirtualBoard
from heatlog.sim.scenarios import PROBE_TRUTH, SCENARIOS
from heatlog.sim.thermal import Heater, Hydration, Reaction, ThermalModel, Vessel


def test_adiabatic_heater_raises_the_temperature_by_q_over_c():
    m = ThermalModel(Vessel(500.0, 0.0, 20.0, 20.0, probe_lag_s=0.0), (Heater(10.0, 100.0, 5.0),))
    m.advance(200.0)
    assert m.temp_C == pytest.approx(20.0 + 500.0 / 500.0, abs=1e-9)  # q = 5 W · 100 s
    assert m.released_J() == pytest.approx(500.0, abs=1e-9)


def test_newtonian_relaxation_matches_the_exponential_and_stirring_shifts_t_infinity():
    c, g, stir = 600.0, 0.3, 0.06
    m = ThermalModel(Vessel(c, g, 20.0, 25.0, stir_W=stir, probe_lag_s=0.0))
    m.advance(1000.0)
    t_inf = 20.0 + stir / g  # T∞ = T_room + u/k
    assert m.temp_C == pytest.approx(t_inf + (25.0 - t_inf) * math.exp(-g * 1000.0 / c), abs=1e-9)


def test_probe_lag_follows_a_first_order_response_to_a_step():
    m = ThermalModel(Vessel(1.0, 0.0, 20.0, 30.0, probe_lag_s=5.0))
    m.probe_C = 20.0
    m.advance(5.0)
    assert m.probe_C == pytest.approx(30.0 - 10.0 * math.exp(-1.0), abs=1e-9)


@pytest.mark.parametrize(
    "src", [Reaction(5.0, -2500.0, 35.0), Hydration(0.0, 30_000.0, 36000.0, 1.3)]
)
def test_source_energy_is_the_integral_of_its_power(src):
    end = 5 * 3600.0 if isinstance(src, Hydration) else 300.0
    integral, _ = quad(src.power, 0.0, end, limit=400, points=[src.start_s + 1e-9])
    assert src.energy(end) == pytest.approx(integral, rel=1e-6)


def test_adiabatic_reaction_rise_is_its_heat_over_c_within_the_step_error():
    r = Reaction(0.0, 1000.0, 20.0)
    m = ThermalModel(Vessel(400.0, 0.0, 20.0, 20.0, probe_lag_s=0.0), (r,))
    m.advance(600.0)
    assert m.temp_C - 20.0 == pytest.approx(r.energy(600.0) / 400.0, rel=1e-3)


@pytest.mark.parametrize("name", sorted(SCENARIOS))
def test_every_scenario_logs_a_decodable_run_whose_counts_follow_the_model(name, tmp_path):
    scn = SCENARIOS[name]
    board = VirtualBoard(scn, tmp_path, seed=1)
    minutes = 30 if scn.interval_ms < 10_000 else 600
    board.log_run(minutes * 60)
    log = read_log(board.root / "r0001.hlg")
    assert log.n_records == pytest.approx(minutes * 60_000 / scn.interval_ms, abs=2)
    chain = VoltageDivider(10_000.0, "low", bits=12, oversample=scn.oversample)
    temps = PROBE_TRUTH.resistance_to_temperature(chain.to_resistance(log.raw[:, 0]))
    model = board.runs[0]["model"]
    assert np.all(np.isfinite(temps)) and temps.min() > -5.0 and temps.max() < 95.0
    # the last reading matches the model's probe temperature within ADC noise (1 LSB per read)
    assert temps[-1] == pytest.approx(model.probe_C, abs=0.05)
    assert board.truth()["runs"][0]["experiment"] == scn.experiments[0].name
