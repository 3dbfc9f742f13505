"""Long-run corrections that hold: cooling-fit time base and quality, u(G) stated, probe lag,
peak-rate window, Q(t) drift. Invented runs (profile/synthetic.py) with a known truth."""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.errors import InputError, ReductionError
from heatlog.gum import Input
from heatlog.profile import ProfileSettings, analyse_profile, cooling_fit, heating_curve_fit
from heatlog.profile.synthetic import PlateauDecay, long_run


def _warmer(tau_release_s=400.0, offset_s=0.0, noise_K=0.005, seed=2, **kw):
    run = long_run(
        PlateauDecay(1.5, 4 * 3600.0, tau_release_s),
        duration_s=7 * 3600.0,
        dt_s=10.0,
        heat_capacity_J_per_K=60.0,
        loss_W_per_K=0.06,  # k = G/C = 1e-3 1/s
        env_C=20.0,
        noise_K=noise_K,
        seed=seed,
        **kw,
    )
    return run, run.time_s + offset_s


def _settings(after_s, **kw):
    return ProfileSettings(
        heat_capacity=Input(60.0, 0.06, "J/K"),
        cooling_fit_after_s=after_s,
        env_C=20.0,
        u_env_K=0.01,
        u_temp_K=0.01,
        kind="warmer",
        **kw,
    )


def _write(path, cols):
    np.savetxt(
        path, np.column_stack(list(cols.values())), delimiter=",", header=",".join(cols),
        comments="", fmt="%.6f",
    )  # fmt: skip


def test_cooling_fit_counts_from_the_segment_start(tmp_path):
    """A log whose clock starts at 2e6 s gives the same answer as one starting at 0."""
    run, t = _warmer(offset_s=2.0e6)
    zero = analyse_profile(run.time_s, run.temp_C, _settings(5 * 3600.0))
    late = analyse_profile(t, run.temp_C, _settings(5 * 3600.0))
    assert late.budget.value == pytest.approx(zero.budget.value, rel=1e-9)
    assert late.budget.value == pytest.approx(run.true_heat_J[-1], rel=0.005)
    assert late.cooling.start_s - t[0] == pytest.approx(5 * 3600.0, abs=10.0)
    path = tmp_path / "late_clock.csv"
    _write(path, {"time_s": t, "temp_C": run.temp_C})
    r = CliRunner().invoke(
        main,
        ["profile", str(path), "--heat-capacity", "60", "--u-heat-capacity", "0.06",
         "--cooling-fit", str(5 * 3600), "--env-temp", "20", "--json"],
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    assert json.loads(r.output)["heat_J"] == pytest.approx(run.true_heat_J[-1], rel=0.005)


def test_cooling_fit_start_beyond_the_segment_is_refused():
    run, t = _warmer(offset_s=2.0e6)
    with pytest.raises(InputError, match="counted from the segment start"):
        analyse_profile(t, run.temp_C, _settings(2.0e6 + 5 * 3600.0))


def test_cooling_fit_on_the_release_is_refused():
    """Starting the fit 6 min after the warmer's plateau ends: the residuals are 50× the noise."""
    run, _ = _warmer()
    with pytest.raises(ReductionError, match="does not follow its model"):
        analyse_profile(run.time_s, run.temp_C, _settings(4.1 * 3600.0))


def test_residual_release_bias_is_in_u_G():
    """Release (τ 400 s) still under way at the fit's start biases k by −1.0 %; the release term
    is found, the result warned, and U(k=2) covers the error (it was 0.15 % before)."""
    run, _ = _warmer()
    r = analyse_profile(run.time_s, run.temp_C, _settings(4.5 * 3600.0))
    err = r.budget.value - run.true_heat_J[-1]
    assert err / run.true_heat_J[-1] == pytest.approx(-0.010, abs=0.002)
    assert abs(err) < r.budget.expanded
    assert r.cooling.u_release_per_s > 0.005 * r.cooling.rate_per_s
    assert any("still released" in n for n in r.notes)


def test_quiet_tail_adds_no_release_bias():
    run, _ = _warmer()
    r = analyse_profile(run.time_s, run.temp_C, _settings(5.0 * 3600.0))
    assert r.cooling.u_release_per_s == 0.0
    assert not r.cooling.warnings
    assert abs(r.budget.value - run.true_heat_J[-1]) < r.budget.expanded


def test_large_release_change_is_refused():
    """Release decaying over 600 s, fit from 4.5 h: the release term moves k by over 5 %."""
    run, _ = _warmer(tau_release_s=600.0)
    with pytest.raises(ReductionError):
        analyse_profile(run.time_s, run.temp_C, _settings(4.5 * 3600.0))


def test_cooling_fit_refused_alone():
    run, _ = _warmer(tau_release_s=2400.0)
    with pytest.raises(ReductionError, match="reading noise"):
        cooling_fit(run.time_s, run.temp_C, run.env_C, start_s=4.5 * 3600.0)


def test_heating_curve_fit_checked_against_the_noise():
    """Balance fit with the heater's power logged wrong by a time shift: refused."""
    run = long_run(
        PlateauDecay(2.0, 2 * 3600.0, 1.0),
        duration_s=5 * 3600.0,
        dt_s=10.0,
        heat_capacity_J_per_K=500.0,
        loss_W_per_K=0.1,
        noise_K=0.005,
        seed=4,
    )
    power = np.where(run.time_s < 2 * 3600.0, 2.0, 0.0)
    good = heating_curve_fit(run.time_s, run.temp_C, run.env_C, power)
    assert good.residual_ratio < 1.5 and not good.warnings
    assert good.loss.G_W_per_K == pytest.approx(0.1, rel=0.01)
    shifted = np.where(run.time_s < 3 * 3600.0, 2.0, 0.0)
    with pytest.raises(ReductionError, match="reading noise"):
        heating_curve_fit(run.time_s, run.temp_C, run.env_C, shifted)


def test_u_loss_is_required_or_explicitly_zero(tmp_path):
    run, _ = _warmer()
    path = tmp_path / "w.csv"
    _write(path, {"time_s": run.time_s, "temp_C": run.temp_C})
    base = ["profile", str(path), "--heat-capacity", "60", "--loss", "0.06", "--env-temp", "20"]
    r = CliRunner().invoke(main, base)
    assert r.exit_code == 2 and "--u-loss" in r.output and r.output.count("\n") == 1
    r = CliRunner().invoke(main, [*base, "--u-loss", "0", "--json"])
    assert r.exit_code == 0, r.output
    assert any("u(G) explicitly set to 0" in n for n in json.loads(r.output)["notes"])
    toml = tmp_path / "run.toml"
    toml.write_text(
        f'[log]\nfile = "{path.as_posix()}"\n[profile]\nheat_capacity_J_per_K = 60.0\n'
        "loss_W_per_K = 0.06\nenv_temp_C = 20.0\n"
    )
    r = CliRunner().invoke(main, ["profile", str(toml)])
    assert r.exit_code == 2 and "u_loss_W_per_K" in r.output
