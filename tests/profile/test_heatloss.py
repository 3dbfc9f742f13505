"""Heat-loss coefficient: steady state, heating-and-cooling curve, Newton's-law cooling fit."""

import math

import numpy as np
import pytest

from heatlog.errors import InputError, ReductionError
from heatlog.gum import Input
from heatlog.profile import (
    cooling_fit,
    heating_curve_fit,
    loss_from_cooling,
    steady_state_loss,
)
from heatlog.profile.synthetic import PlateauDecay, long_run


def test_steady_state_loss_and_its_budget():
    """G = P/(T_ss − T_env): 5 W holding 45 °C in 20 °C air gives 0.2 W/K (the defining formula)."""
    g = steady_state_loss(Input(5.0, 0.05, "W"), Input(45.0, 0.1, "°C"), Input(20.0, 0.1, "°C"))
    assert math.isclose(g.G_W_per_K, 0.2, rel_tol=1e-12)
    # GUM: u²(G)/G² = (u_P/P)² + 2·(u_T/ΔT)² for these uncorrelated inputs.
    expected = 0.2 * math.sqrt((0.05 / 5.0) ** 2 + 2 * (0.1 / 25.0) ** 2)
    assert math.isclose(g.u_G_W_per_K, expected, rel_tol=1e-6)
    with pytest.raises(InputError, match="must lie above"):
        steady_state_loss(Input(5.0, 0.0), Input(19.0, 0.0), Input(20.0, 0.0))


def test_cooling_fit_recovers_rate_from_an_exact_exponential():
    """Newton's law T − T_env = ΔT₀·e^(−kt) (exact curve, noise 0.01 K): k within 1 %."""
    k = 1.0 / 5000.0
    t = np.arange(0.0, 20000.0, 5.0)
    rng = np.random.default_rng(7)
    y = 20.0 + 25.0 * np.exp(-k * t) + rng.normal(0.0, 0.01, t.size)
    fit = cooling_fit(t, y, 20.0)
    assert math.isclose(fit.rate_per_s, k, rel_tol=0.01)
    assert abs(fit.rate_per_s - k) < 4 * fit.u_rate_per_s + 1e-12
    assert math.isclose(fit.time_constant_s, 5000.0, rel_tol=0.01)


def test_cooling_fit_on_a_run_tail_with_a_swinging_environment():
    """Warmer switched off after 2 h (τ 60 s decay), field air ±3 K daily; fit G/C after 3 h.

    Truth: G/C = 0.06/60 = 1e-3 1/s, from the solve_ivp run.
    """

    def env(t):
        return 15.0 + 3.0 * np.sin(2.0 * np.pi * np.asarray(t) / 86400.0)

    run = long_run(
        PlateauDecay(1.0, 7200.0, 60.0),
        duration_s=5 * 3600.0,
        dt_s=5.0,
        heat_capacity_J_per_K=60.0,
        loss_W_per_K=0.06,
        env_C=env,
        noise_K=0.005,
        seed=2,
    )
    fit = cooling_fit(run.time_s, run.temp_C, run.env_C, start_s=3 * 3600.0, end_s=4 * 3600.0)
    assert math.isclose(fit.rate_per_s, 1e-3, rel_tol=0.01)
    loss = loss_from_cooling(fit, Input(60.0, 1.2, "J/K"))
    assert math.isclose(loss.G_W_per_K, 0.06, rel_tol=0.01)
    # u(G)/G combines u(k)/k and u(C)/C = 2 %.
    assert loss.u_G_W_per_K >= 0.02 * loss.G_W_per_K * 0.999


def test_cooling_fit_refuses_a_warming_stretch():
    t = np.arange(0.0, 3600.0, 10.0)
    with pytest.raises(ReductionError, match="does not cool"):
        cooling_fit(t, 20.0 + t / 3600.0, 15.0)
    with pytest.raises(ReductionError, match="choose an earlier start"):
        cooling_fit(t, 20.0 + np.exp(-t / 1000.0), 20.0, start_s=3550.0)


def test_heating_curve_fit_recovers_c_and_g():
    """Heater 2 W for 3 h then off (τ 1 s), solve_ivp truth C = 500 J/K, G = 0.1 W/K; within 1 %."""
    src = PlateauDecay(2.0, 3 * 3600.0, 1.0)
    run = long_run(
        src,
        duration_s=8 * 3600.0,
        dt_s=10.0,
        heat_capacity_J_per_K=500.0,
        loss_W_per_K=0.1,
        env_C=21.0,
        noise_K=0.01,
        seed=5,
    )
    fit = heating_curve_fit(
        run.time_s, run.temp_C, run.env_C, src.power(run.time_s), u_power_rel=0.005
    )
    assert math.isclose(fit.heat_capacity.value, 500.0, rel_tol=0.01)
    assert math.isclose(fit.loss.G_W_per_K, 0.1, rel_tol=0.01)
    assert fit.heat_capacity.u >= 0.005 * 500.0 * 0.999
    with pytest.raises(InputError, match="zero throughout"):
        heating_curve_fit(run.time_s, run.temp_C, run.env_C, 0.0 * run.time_s)
