"""The synthetic run generator against an independent ODE solution (invented data)."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from heatlog.reduce.synthetic import Release, random_run, synthetic_run


def test_matches_newtons_law_solved_numerically():
    # Newton's-law vessel (docs/REFERENCES.md: NEWTON-VESSEL) with a first-order release
    # and a first-order probe lag, integrated by scipy's Radau at tight tolerance.
    k, tinf, dtk, tau, lag, ts = 4e-4, 23.0, 3.0, 25.0, 6.0, 300.0
    run = synthetic_run(
        releases=(Release(ts, dtk, tau),),
        duration_s=1500,
        dt_s=2.0,
        k_per_s=k,
        jacket_C=tinf,
        start_C=20.0,
        probe_lag_s=lag,
    )

    def rhs(t, x):
        temp, probe = x
        release = dtk / tau * np.exp(-(t - ts) / tau) if t >= ts else 0.0
        return [k * (tinf - temp) + release, (temp - probe) / lag]

    probe0 = tinf + (20.0 - tinf) / (1 - k * lag)
    t = run.thermogram.time_s
    first = solve_ivp(
        rhs,
        (0, ts),
        [20.0, probe0],
        method="Radau",
        rtol=1e-11,
        atol=1e-12,
        t_eval=t[t <= ts],
        max_step=5.0,
    )
    second = solve_ivp(
        rhs,
        (ts, t[-1]),
        first.y[:, -1],
        method="Radau",
        rtol=1e-11,
        atol=1e-12,
        t_eval=t[t >= ts],
        max_step=2.0,
    )
    expected = np.concatenate([first.y[1], second.y[1][1:]])
    np.testing.assert_allclose(run.thermogram.temp_C, expected, atol=1e-7)


def test_adiabatic_vessel_rises_by_the_given_change():
    run = synthetic_run(
        releases=(Release(100, -2.5, 10.0), Release(900, 4.0, 200.0, "heater")),
        duration_s=2000,
        dt_s=1.0,
        k_per_s=1e-12,
        start_C=21.0,
    )
    y = run.thermogram.temp_C
    assert y[0] == pytest.approx(21.0)
    assert y[-1] - y[0] == pytest.approx(1.5, abs=1e-8)
    assert run.truth.delta_t_K == (-2.5, 4.0)


def test_noise_and_resolution_are_applied_and_seeded():
    a = synthetic_run(noise_K=0.02, resolution_K=0.01, seed=5)
    b = synthetic_run(noise_K=0.02, resolution_K=0.01, seed=5)
    np.testing.assert_array_equal(a.thermogram.temp_C, b.thermogram.temp_C)
    steps = a.thermogram.temp_C / 0.01
    np.testing.assert_allclose(steps, np.round(steps), atol=1e-6)
    clean = synthetic_run()
    resid = a.thermogram.temp_C - clean.thermogram.temp_C
    assert 0.015 < resid.std() < 0.025


def test_random_runs_stay_in_the_specified_ranges():
    for seed in range(30):
        tr = random_run(seed).truth
        assert 2e-5 <= tr.k_per_s <= 1e-3
        assert 1.0 <= abs(tr.delta_t_K[0]) <= 14.0
        assert 3.0 <= tr.releases[0].tau_s <= 150.0
        assert 0.0 <= tr.noise_K <= 0.03 and 0.0 <= tr.probe_lag_s <= 8.0
        assert 0.5 <= tr.dt_s <= 5.0
