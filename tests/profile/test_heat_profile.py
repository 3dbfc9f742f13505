"""Q(t) and P(t) against invented long runs with a known heat release.

The truth comes from integrating C·dT/dt = P(t) − G·(T − T_env) with scipy's solve_ivp (DOP853,
rtol 1e-11) in heatlog.profile.synthetic; the recovered cumulative heat must match ∫P dt within
1 % at every hour (the acceptance figure of issue 7).
"""

import math

import numpy as np
import pytest

from heatlog.gum import Input
from heatlog.profile import (
    GapPolicy,
    ProfileSettings,
    analyse_profile,
    check_log,
    given_loss,
    heat_profile,
    reading_noise,
)
from heatlog.profile.synthetic import HydrationCurve, PlateauDecay, long_run
from heatlog.profile.synthetic import warmer_run as invented_warmer

DAY = 86400.0


def _field_env(t):
    """A field box: the air swings ±3 K over the day (invented)."""
    return 20.0 + 3.0 * np.sin(2.0 * np.pi * np.asarray(t) / DAY)


@pytest.fixture(scope="module")
def cement_run():
    # Invented mortar in an insulated box: 100 g binder, Q∞ 350 J/g, τ 15 h, β 1.2, C 2500 J/K.
    return long_run(
        HydrationCurve(350.0, 15 * 3600.0, 1.2, 100.0),
        duration_s=7 * DAY,
        dt_s=60.0,
        heat_capacity_J_per_K=2500.0,
        loss_W_per_K=0.03,
        env_C=_field_env,
    )


@pytest.fixture(scope="module")
def warmer_run():
    # Invented hand warmer: 1.5 W for 5 h, then decaying with τ = 2 h, in a 60 J/K pouch.
    return invented_warmer(
        duration_s=14 * 3600.0, dt_s=10.0, noise_K=0.02, resolution_K=0.01, seed=3
    )


def _hourly(run):
    hours = np.arange(3600.0, run.time_s[-1] + 1.0, 3600.0)
    return np.searchsorted(run.time_s, hours)


def _settings(run, **kw):
    base = dict(
        heat_capacity=Input(run.heat_capacity_J_per_K, 0.01 * run.heat_capacity_J_per_K, "J/K"),
        loss=Input(run.loss_W_per_K, 0.03 * run.loss_W_per_K, "W/K"),
        u_env_K=0.2,
    )
    base.update(kw)
    return ProfileSettings(**base)


def test_cement_heat_within_one_percent_every_hour(cement_run):
    """Synthetic truth (solve_ivp); 1 % at every hour once Q exceeds 1 % of the final heat."""
    run = cement_run
    r = analyse_profile(
        run.time_s,
        run.temp_C,
        _settings(run, kind="cement", sample_g=Input(100.0, 0.1, "g")),
        env_C=run.env_C,
    )
    idx = _hourly(run)
    q, truth = r.heat.heat_J[idx], run.true_heat_J[idx]
    big = truth > 0.01 * run.true_heat_J[-1]
    assert big.sum() > 150
    np.testing.assert_allclose(q[big], truth[big], rtol=0.01)
    # Early hours, where Q is tiny: the absolute error stays below 1 % of the final heat.
    assert np.max(np.abs(q - truth)) < 0.01 * run.true_heat_J[-1]
    per_g = r.budget_per_g
    assert per_g is not None
    assert math.isclose(per_g.value, run.true_heat_J[-1] / 100.0, rel_tol=0.01)


def test_warmer_heat_within_one_percent_every_hour_with_noise(warmer_run):
    """Noisy, rounded readings (σ 0.02 K, step 0.01 K): still 1 % at every hour."""
    run = warmer_run
    r = analyse_profile(run.time_s, run.temp_C, _settings(run, kind="warmer"), env_C=run.env_C)
    idx = _hourly(run)
    np.testing.assert_allclose(r.heat.heat_J[idx], run.true_heat_J[idx], rtol=0.01)
    # The noise estimate from second differences finds σ ≈ 0.02 K (rounding adds 0.01/√12).
    assert reading_noise(run.temp_C) == pytest.approx(
        math.hypot(0.02, 0.01 / math.sqrt(12)), rel=0.15
    )


def test_rate_follows_the_true_power(warmer_run):
    """P(t) over its window matches the true power on the plateau within 2 %."""
    run = warmer_run
    seg = check_log(run.time_s, run.temp_C, run.env_C).segments[0]
    h = heat_profile(
        seg, Input(60.0, 0.0), given_loss(Input(0.06, 0.0)), u_env_K=0.0, rate_window_s=1800.0
    )
    plateau = (run.time_s > 1800.0) & (run.time_s < 4 * 3600.0)
    assert np.max(np.abs(h.rate_W[plateau] - 1.5)) < 0.02 * 1.5


def test_uncertainty_band_grows_with_the_integral_and_covers_a_biased_env(warmer_run):
    """u(G) and u(T_env) terms grow with ∫(T − T_env)dt and with time (GUM sensitivities)."""
    run = warmer_run
    seg = check_log(run.time_s, run.temp_C, run.env_C).segments[0]
    h = heat_profile(seg, Input(60.0, 0.0), given_loss(Input(0.06, 0.003)), u_env_K=0.3)
    u = h.u_heat_J
    assert np.all(np.diff(u[::360]) > 0)
    b = h.budget()
    names = [c.name for c in b.components]
    assert "G (heat-loss coefficient)" in names and "T_env offset vs sample probe" in names
    assert math.isclose(b.u, u[-1], rel_tol=1e-12)
    g_row = b.components[names.index("G (heat-loss coefficient)")]
    assert math.isclose(g_row.sensitivity, h.loss_integral_Ks[-1], rel_tol=1e-12)
    env_row = b.components[names.index("T_env offset vs sample probe")]
    assert math.isclose(abs(env_row.sensitivity), 0.06 * run.time_s[-1], rel_tol=1e-9)
    # A real 0.3 K offset of the environment reading moves Q by about one u(T_env) contribution.
    biased = heat_profile(
        check_log(run.time_s, run.temp_C, run.env_C + 0.3).segments[0],
        Input(60.0, 0.0),
        given_loss(Input(0.06, 0.0)),
        u_env_K=0.0,
    )
    shift = abs(biased.heat_J[-1] - h.heat_J[-1])
    assert math.isclose(shift, env_row.contribution, rel_tol=1e-6)


def test_gap_is_skipped_by_default_and_bridged_on_request(warmer_run):
    run = warmer_run
    keep = (run.time_s < 3 * 3600.0) | (run.time_s > 3.5 * 3600.0)  # a 30-min hole
    t, y = run.time_s[keep], run.temp_C[keep]
    skipped = analyse_profile(t, y, _settings(run, kind="warmer"), env_C=run.env_C[keep])
    bridged = analyse_profile(
        t, y, _settings(run, kind="warmer", gap_policy=GapPolicy.INTERPOLATE), env_C=run.env_C[keep]
    )
    truth = run.true_heat_J[-1]
    assert not skipped.complete and bridged.complete
    lost = 0.06 * float(skipped.heat.skipped_Ks[-1])
    # The skipped gap's loss is missing from Q, and reported: Q + reported loss ≈ truth.
    assert skipped.heat.heat_J[-1] < truth * 0.99
    assert math.isclose(skipped.heat.heat_J[-1] + lost, truth, rel_tol=0.01)
    assert math.isclose(bridged.heat.heat_J[-1], truth, rel_tol=0.01)
    assert any("gap of" in n for n in skipped.notes)
    assert "bridged gaps" in [c.name for c in bridged.budget.components]
    # The rate is undefined where its window meets the skipped gap.
    assert np.isnan(skipped.heat.rate_W).any() and not np.isnan(bridged.heat.rate_W).any()


def test_pack_absorbs_heat(tmp_path):
    """An invented cold pack: −2 W for 10 min then decaying; Q < 0 and recovered within 1 %."""
    run = long_run(
        PlateauDecay(-2.0, 600.0, 900.0),
        duration_s=3 * 3600.0,
        dt_s=2.0,
        heat_capacity_J_per_K=400.0,
        loss_W_per_K=0.15,
        env_C=22.0,
    )
    r = analyse_profile(run.time_s, run.temp_C, _settings(run, kind="pack"), env_C=run.env_C)
    assert r.budget.value < 0
    assert math.isclose(r.budget.value, run.true_heat_J[-1], rel_tol=0.01)
    assert r.peak_rate()[0] < 0
