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


def _pack(probe_tau_s=15.0, seed=3):
    """Invented fast cold pack: −60 W for 60 s, then decaying over 60 s, after a 5-min baseline,
    in a 400 J/K pouch losing 0.2 W/K to air at 22 °C; read by a probe lagging by τ."""
    return long_run(
        PlateauDecay(-60.0, 60.0, 60.0, 300.0),
        duration_s=2 * 3600.0,
        dt_s=2.0,
        heat_capacity_J_per_K=400.0,
        loss_W_per_K=0.2,
        env_C=22.0,
        noise_K=0.01,
        seed=seed,
        probe_tau_s=probe_tau_s,
    )


def _pack_settings(tau=None):
    return ProfileSettings(
        heat_capacity=Input(400.0, 4.0, "J/K"),
        loss=Input(0.2, 0.004, "W/K"),
        env_C=22.0,
        u_env_K=0.02,
        u_temp_K=0.02,
        kind="pack",
        probe_tau=tau,
    )


def _along_curve(run):
    """80 instants from the event's start to the end, log-spaced (dense where Q changes)."""
    t = 300.0 + np.geomspace(2.0, run.time_s[-1] - 300.0, 80)
    return np.unique(np.searchsorted(run.time_s, t))[:-1]


def test_probe_lag_corrected_and_budgeted():
    """Without τ the k = 2 band misses the truth along half the curve and a warning names
    --probe-tau; with τ = 15 s (u 1.5 s) it covers every point and u(τ) is a budget row."""
    run = _pack()
    idx = _along_curve(run)
    raw = analyse_profile(run.time_s, run.temp_C, _pack_settings())
    fixed = analyse_profile(run.time_s, run.temp_C, _pack_settings(Input(15.0, 1.5, "s")))

    def coverage(r):
        err = np.abs(r.heat.heat_J[idx] - run.true_heat_J[idx])
        return float(np.mean(err <= 2.0 * r.heat.u_heat_J[idx]))

    assert coverage(raw) < 0.7
    assert any("--probe-tau" in n for n in raw.notes)
    assert coverage(fixed) == 1.0
    names = [c.name for c in fixed.heat.budget(int(idx[5])).components]
    assert "probe time constant τ" in names
    assert fixed.to_dict()["probe_lag"]["probe_time_constant_s"] == 15.0


def test_probe_tau_from_the_probe_file_and_cli(tmp_path):
    from heatlog.probes.probefile import load_probe

    run = _pack()
    path = tmp_path / "pack.csv"
    _write(path, {"time_s": run.time_s, "temp_C": run.temp_C})
    probe = tmp_path / "ntc.toml"
    probe.write_text(
        'id = "ntc-9"\nkind = "thermistor"\nmodel = "beta"\ncalibration_date = 2026-11-30\n'
        'reference = "invented"\nvalid_range_C = [-20.0, 80.0]\nuncertainty_K = 0.05\n'
        "time_constant_s = 15.0\nu_time_constant_s = 1.5\n"
        "[coefficients]\nR25 = 10000.0\nbeta = 3950.0\n"
    )
    assert load_probe(probe).time_constant_s == 15.0
    base = ["profile", str(path), "--heat-capacity", "400", "--u-heat-capacity", "4",
            "--loss", "0.2", "--u-loss", "0.004", "--env-temp", "22", "--kind", "pack"]  # fmt: skip
    r = CliRunner().invoke(main, [*base, "--probe", str(probe), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert d["probe_lag"]["source"] == "probe file ntc-9"
    r = CliRunner().invoke(main, [*base, "--probe-tau", "15"])
    assert r.exit_code == 2 and "--u-probe-tau" in r.output
    probe.write_text(probe.read_text().replace("u_time_constant_s = 1.5\n", ""))
    r = CliRunner().invoke(main, [*base, "--probe", str(probe)])
    assert r.exit_code == 2 and "together" in r.output and r.output.count("\n") == 1


@pytest.mark.parametrize(
    "plateau_s, dt_s, resolved", [(5.0, 2.0, False), (20.0, 2.0, True), (60.0, 10.0, True)]
)
def test_peak_rate_window_follows_the_event(plateau_s, dt_s, resolved):
    """Cold packs of −100 W dissolving over 5–60 s: the fixed default window read 14–89 % of the
    peak; the adaptive one covers −100 W within U(k=2), and flags the 6-s event as unresolved."""
    run = long_run(
        PlateauDecay(-100.0, plateau_s, plateau_s, 300.0),
        duration_s=4 * 3600.0,
        dt_s=dt_s,
        heat_capacity_J_per_K=400.0,
        loss_W_per_K=0.2,
        env_C=22.0,
        noise_K=0.01,
        seed=1,
    )
    r = analyse_profile(run.time_s, run.temp_C, _pack_settings())
    p = r.peak
    if resolved:
        assert abs(p.rate_W + 100.0) <= 2.0 * p.u_rate_W
        assert not p.warnings
    else:
        assert "not resolved" in p.warnings[0]
    assert r.to_dict()["peak_rate"]["peak_rate_window_s"] == p.window_s


def test_cement_peak_rate_not_the_noise_maximum():
    """Invented cement (Q∞ 390 J/g, τ 12 h, β 1.5), noise 0.01 K every minute: the largest sample
    of the rate is biased high by the noise; the fitted peak covers the truth."""
    from heatlog.profile.synthetic import HydrationCurve

    hc = HydrationCurve(q_inf_J_per_g=390.0, tau_s=12 * 3600.0, beta=1.5)
    true_peak = float(hc.power(np.linspace(1.0, 3 * 86400.0, 200_000)).max())
    run = long_run(
        hc,
        duration_s=7 * 86400.0,
        dt_s=60.0,
        heat_capacity_J_per_K=2500.0,
        loss_W_per_K=0.03,
        noise_K=0.01,
        seed=5,
    )
    s = ProfileSettings(
        heat_capacity=Input(2500.0, 25.0),
        loss=Input(0.03, 0.0006),
        env_C=20.0,
        u_env_K=0.05,
        kind="cement",
    )
    r = analyse_profile(run.time_s, run.temp_C, s)
    assert abs(r.peak.rate_W - true_peak) <= 2.0 * r.peak.u_rate_W
    assert np.nanmax(r.heat.rate_W) > true_peak * 1.02  # what the fixed window reported


@pytest.mark.parametrize("factor, flagged", [(1.0, False), (0.9, True), (1.1, True)])
def test_q_drifting_after_the_release_flags_a_wrong_G(factor, flagged):
    """The cold pack's release is over after 10 min; with G 10 % off Q(t) keeps moving over the
    last half hour and the warning names the G that levels it (0.2 W/K, the truth)."""
    run = _pack(probe_tau_s=0.0)
    s = ProfileSettings(
        heat_capacity=Input(400.0, 4.0, "J/K"),
        loss=Input(0.2 * factor, 0.004, "W/K"),
        env_C=22.0,
        u_env_K=0.02,
        u_temp_K=0.02,
        kind="pack",
    )
    r = analyse_profile(run.time_s, run.temp_C, s)
    assert (r.drift is not None) is flagged
    if flagged:
        assert r.drift.G_levelling_W_per_K == pytest.approx(0.2, rel=0.02)
        assert any("G is wrong" in n for n in r.to_dict()["notes"])


_NTC = (
    'id = "ntc-9"\nkind = "thermistor"\nmodel = "beta"\ncalibration_date = 2026-11-30\n'
    'reference = "invented"\nvalid_range_C = [-20.0, 80.0]\nuncertainty_K = 0.05\n'
    "time_constant_s = 15.0\nu_time_constant_s = 1.5\n"
    "[coefficients]\nR25 = 10000.0\nbeta = 3950.0\n"
)


def test_run_file_takes_tau_from_the_logs_probe_file(tmp_path):
    """A raw (ohm) log read through a probe file with time_constant_s: the lag is corrected."""
    from heatlog.probes.probefile import parse_probe

    run = _pack()
    probe = parse_probe(_NTC)
    ohm = probe.model.temperature_to_resistance(run.temp_C)
    _write(tmp_path / "pack.csv", {"time_s": run.time_s, "ohm": ohm})
    (tmp_path / "ntc.toml").write_text(_NTC)
    toml = tmp_path / "pack.toml"
    table = (
        "heat_capacity_J_per_K = 400.0\nu_heat_capacity_J_per_K = 4.0\nloss_W_per_K = 0.2\n"
        'u_loss_W_per_K = 0.004\nenv_temp_C = 22.0\nkind = "pack"\n'
    )
    toml.write_text(
        '[log]\nfile = "pack.csv"\nraw_col = "ohm"\nprobe = "ntc.toml"\n[profile]\n' + table
    )
    r = CliRunner().invoke(main, ["profile", str(toml), "--json"])
    assert r.exit_code == 0, r.output
    lag = json.loads(r.output)["probe_lag"]
    assert lag["probe_time_constant_s"] == 15.0 and lag["source"] == "ntc-9"
    toml.write_text(
        f'[log]\nfile = "pack.csv"\nraw_col = "ohm"\nprobe = "ntc.toml"\n[profile]\n{table}'
        "probe_time_constant_s = 12.0\n"
    )
    r = CliRunner().invoke(main, ["profile", str(toml)])
    assert r.exit_code == 2 and "u_probe_time_constant_s" in r.output


def test_cement_cooling_fit_carries_the_calibration_warning():
    """Even an accepted cooling fit on a setting material's tail warns to calibrate the box."""
    from heatlog.profile.synthetic import HydrationCurve

    run = long_run(
        HydrationCurve(q_inf_J_per_g=300.0, tau_s=3600.0, beta=4.0, mass_g=100.0),
        duration_s=2 * 86400.0,
        dt_s=120.0,
        heat_capacity_J_per_K=2500.0,
        loss_W_per_K=0.1,
        noise_K=0.005,
        seed=2,
    )
    s = ProfileSettings(
        heat_capacity=Input(2500.0, 25.0, "J/K"),
        cooling_fit_after_s=6 * 3600.0,
        env_C=20.0,
        u_env_K=0.02,
        kind="cement",
    )
    r = analyse_profile(run.time_s, run.temp_C, s)
    assert any("Calibrate the box with a heater" in n for n in r.notes)
    assert abs(r.budget.value - run.true_heat_J[-1]) <= r.budget.expanded
