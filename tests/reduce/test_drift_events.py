"""Drift models (Newton's law vs straight lines) and event detection (invented data)."""

import numpy as np
import pytest

from heatlog.reduce.drift import fit_drift
from heatlog.reduce.events import detect_events
from heatlog.reduce.synthetic import Release, synthetic_run


def _newtonian(t, t_inf, start, k):
    return t_inf + (start - t_inf) * np.exp(-k * t)


def test_newtonian_drift_recovers_k_and_t_inf():
    # Exact exponentials dT/dt = k(T_inf - T) (docs/REFERENCES.md: NEWTON-VESSEL).
    k, t_inf = 6e-4, 24.0
    ft = np.arange(0.0, 600.0, 2.0)
    at = np.arange(1500.0, 2400.0, 2.0)
    fy = _newtonian(ft, t_inf, 20.0, k)
    ay = _newtonian(at - 1500.0, t_inf, 26.5, k)
    choice = fit_drift(ft, fy, at, ay)
    assert choice.chosen.model == "newtonian"
    k_fit, u_k, t_fit, u_t = choice.chosen.k_and_t_inf()
    assert k_fit == pytest.approx(k, rel=1e-6)
    assert t_fit == pytest.approx(t_inf, abs=1e-5)
    assert u_k < 1e-9 and u_t < 1e-5
    # the drift rate is a straight line in temperature
    assert choice.chosen.rate(25.0) == pytest.approx(k * (t_inf - 25.0), rel=1e-6)


def test_straight_drifts_that_contradict_newton_choose_linear():
    # Parallel straight drifts 2 K apart with opposite slopes: the chord k of Regnault-Pfaundler
    # would be 2e-3 1/s, which must bend the periods visibly; the data do not bend.
    rng = np.random.default_rng(3)
    ft = np.arange(0.0, 900.0, 3.0)
    at = np.arange(1500.0, 2400.0, 3.0)
    fy = 20.0 + 2e-3 * (ft - 450) + rng.normal(0, 0.002, ft.size)
    ay = 22.0 - 2e-3 * (at - 1950) + rng.normal(0, 0.002, at.size)
    choice = fit_drift(ft, fy, at, ay)
    assert choice.chosen.model == "linear"
    assert "linear" in choice.criterion
    assert choice.chosen.k_per_s == pytest.approx(2e-3, rel=0.01)


def test_uncertainty_split_matches_repeated_noise():
    # The sandwich standard uncertainty of k agrees with the scatter over noisy repeats (20 %).
    k, t_inf = 4e-4, 23.0
    ft = np.arange(0.0, 600.0, 2.0)
    at = np.arange(1200.0, 2400.0, 2.0)
    ks, us = [], []
    for seed in range(40):
        rng = np.random.default_rng(seed)
        fy = _newtonian(ft, t_inf, 20.0, k) + rng.normal(0, 0.01, ft.size)
        ay = _newtonian(at - 1200, t_inf, 26.0, k) + rng.normal(0, 0.01, at.size)
        fit = fit_drift(ft, fy, at, ay, model="newtonian").chosen
        k_fit, u_k, _, _ = fit.k_and_t_inf()
        ks.append(k_fit)
        us.append(u_k)
    assert np.std(ks, ddof=1) == pytest.approx(np.mean(us), rel=0.25)


@pytest.mark.parametrize("sign", [1.0, -1.0], ids=["rising", "falling"])
def test_detects_rising_and_falling_events_under_noise_and_lag(sign):
    run = synthetic_run(
        releases=(Release(600.0, sign * 2.0, 40.0),),
        duration_s=2400.0,
        dt_s=5.0,
        k_per_s=5e-4,
        probe_lag_s=8.0,
        noise_K=0.03,
        seed=11,
    )
    events, _ = detect_events(run.thermogram.time_s, run.thermogram.temp_C)
    assert len(events) == 1
    ev = events[0]
    assert ev.direction == int(sign)
    assert 450.0 < ev.start_s < 600.0  # before the true start, not far before
    assert ev.after_start_s > 600.0 + 5 * 40.0  # release 99 % done
    assert ev.after_start_s < 2400.0 - 300.0
    assert ev.size_K == pytest.approx(sign * 2.0, rel=0.2)


def test_two_events_heater_then_reaction_are_listed_in_order(heater_then_reaction):
    run = heater_then_reaction
    events, _ = detect_events(run.thermogram.time_s, run.thermogram.temp_C)
    assert [e.direction for e in events] == [1, -1]
    assert events[0].start_s < 400.0 < events[0].after_start_s < events[1].start_s < 1800.0


def test_no_event_in_a_plain_drift():
    t = np.arange(0.0, 1800.0, 2.0)
    y = _newtonian(t, 24.0, 20.0, 3e-4) + np.random.default_rng(0).normal(0, 0.02, t.size)
    events, _ = detect_events(t, y)
    assert events == ()
