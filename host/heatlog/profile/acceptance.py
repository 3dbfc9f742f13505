"""Seeded acceptance runs for long-run profiles: invented runs of three kinds with a known truth,
and how well the k = 2 band of Q(t) covers that truth along the curve.

Used by ``bench/bench_longrun.py`` (figures) and the ``slow`` tests (thresholds). Every scenario
is invented data; the probe lags the contents with a first-order time constant, as in the
simulator's thermal model (:mod:`heatlog.sim.thermal`), and the log's clock starts at an
arbitrary value, as a board's does.

* hand warmer: 1.5 W for 3 h, then decaying over 10 min, in a 60 J/K pouch losing 0.06 W/K;
  probe τ 20 s; G from a cooling fit on the tail;
* cold pack: −60 W for 1 min, then decaying over 1 min (a fast dissolution) in a 400 J/K pouch
  losing 0.2 W/K; probe τ 15 s; G from a cooling fit on the rewarming tail;
* cement: Q∞ 390 J/g, τ 12 h, β 1.5 for 100 g in a 2500 J/K box losing 0.03 W/K; probe τ 60 s;
  G (and C) from an electrical heating-curve calibration of the same box.

* cold pack on the simulator's thermal model (``pack-sim``): the same pouch and probe stepped by
  :class:`heatlog.sim.thermal.ThermalModel` (the model behind ``heatlog sim``), −7.2 kJ
  released first-order over 40 s.

"Before" is the analysis without the probe's time constant; "after" with it. Both use the
cooling fit as it now stands (on the segment's time base, quality-checked).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from heatlog.gum import Input
from heatlog.profile.analysis import ProfileResult, ProfileSettings, analyse_profile
from heatlog.profile.heatloss import heating_curve_fit
from heatlog.profile.synthetic import HydrationCurve, LongRun, PlateauDecay, long_run

KINDS = ("warmer", "pack", "cement", "pack-sim")
#: The log's clock at the first sample (a board counts from its own power-up).
CLOCK_OFFSET_S = 1_234_567.0
POINTS = 80


@dataclass(frozen=True, eq=False)
class Scenario:
    kind: str
    run: LongRun
    settings: ProfileSettings  # without the probe's time constant
    tau: Input  # the probe's time constant as a user would state it
    event_start_s: float
    true_peak_W: float


def _tau(value: float) -> Input:
    # stated with 10 % standard uncertainty, as from a plunge test (common practice, no source)
    return Input(value, 0.1 * value, "s", note="plunge test (invented)")


def scenario(kind: str, seed: int) -> Scenario:
    """One invented run of ``kind`` with noise seeded by ``seed`` (module docstring)."""
    rng = np.random.default_rng(seed)
    if kind == "warmer":
        tau = 20.0 * (1 + 0.05 * rng.standard_normal())
        src = PlateauDecay(1.5, 3 * 3600.0, 600.0, 600.0)
        run = long_run(
            src, duration_s=9 * 3600.0, dt_s=10.0, heat_capacity_J_per_K=60.0,
            loss_W_per_K=0.06, env_C=20.0, noise_K=0.01, seed=seed, probe_tau_s=tau,
        )  # fmt: skip
        settings = ProfileSettings(
            heat_capacity=Input(60.0, 0.6, "J/K"), cooling_fit_after_s=4.5 * 3600.0,
            env_C=20.0, u_env_K=0.02, u_temp_K=0.02, kind="warmer",
        )  # fmt: skip
        return Scenario(kind, run, settings, _tau(20.0), 600.0, 1.5)
    if kind == "pack":
        tau = 15.0 * (1 + 0.05 * rng.standard_normal())
        src = PlateauDecay(-60.0, 60.0, 60.0, 300.0)
        run = long_run(
            src, duration_s=3 * 3600.0, dt_s=2.0, heat_capacity_J_per_K=400.0,
            loss_W_per_K=0.2, env_C=22.0, noise_K=0.01, seed=seed, probe_tau_s=tau,
        )  # fmt: skip
        settings = ProfileSettings(
            heat_capacity=Input(400.0, 4.0, "J/K"), cooling_fit_after_s=1800.0,
            env_C=22.0, u_env_K=0.02, u_temp_K=0.02, kind="pack",
        )  # fmt: skip
        return Scenario(kind, run, settings, _tau(15.0), 300.0, -60.0)
    if kind == "cement":
        tau = 60.0 * (1 + 0.05 * rng.standard_normal())
        hc = HydrationCurve(q_inf_J_per_g=390.0, tau_s=12 * 3600.0, beta=1.5, mass_g=100.0)
        run = long_run(
            hc, duration_s=5 * 86400.0, dt_s=60.0, heat_capacity_J_per_K=2500.0,
            loss_W_per_K=0.03, env_C=20.0, noise_K=0.01, seed=seed, probe_tau_s=tau,
        )  # fmt: skip
        cal = _box_calibration(seed)
        settings = ProfileSettings(
            heat_capacity=cal.heat_capacity, loss=Input(cal.loss.G_W_per_K, cal.loss.u_G_W_per_K),
            env_C=20.0, u_env_K=0.02, u_temp_K=0.02, kind="cement",
            sample_g=Input(100.0, 0.1, "g"),
        )  # fmt: skip
        peak = float(hc.power(np.linspace(60.0, 3 * 86400.0, 100_000)).max())
        return Scenario(kind, run, settings, _tau(60.0), 0.0, peak)
    if kind == "pack-sim":
        return _sim_pack(seed)
    raise ValueError(kind)


def _sim_pack(seed: int) -> Scenario:
    from heatlog.sim.thermal import Reaction, ThermalModel, Vessel

    rng = np.random.default_rng(seed)
    tau = 15.0 * (1 + 0.05 * rng.standard_normal())
    model = ThermalModel(
        Vessel(400.0, 0.2, 22.0, 22.0, probe_lag_s=tau), (Reaction(300.0, -7200.0, 40.0),)
    )
    t = np.arange(0.0, 3 * 3600.0 + 1.0, 2.0)
    probe, contents, heat = (np.empty_like(t) for _ in range(3))
    for i, ti in enumerate(t):
        model.advance(float(ti))
        probe[i], contents[i], heat[i] = model.probe_C, model.temp_C, model.released_J()
    read = probe + rng.normal(0.0, 0.01, t.size)
    run = LongRun(t, read, np.full_like(t, 22.0), heat, contents, 400.0, 0.2, tau)
    settings = ProfileSettings(
        heat_capacity=Input(400.0, 4.0, "J/K"), cooling_fit_after_s=1800.0,
        env_C=22.0, u_env_K=0.02, u_temp_K=0.02, kind="pack",
    )  # fmt: skip
    return Scenario("pack-sim", run, settings, _tau(15.0), 300.0, -7200.0 / 40.0)


def _box_calibration(seed: int):
    """The cement box calibrated with a 2 W heater for 8 h, then 16 h off (invented)."""
    cal = long_run(
        PlateauDecay(2.0, 8 * 3600.0, 1.0), duration_s=24 * 3600.0, dt_s=60.0,
        heat_capacity_J_per_K=2500.0, loss_W_per_K=0.03, env_C=20.0, noise_K=0.01,
        seed=seed + 1000,
    )  # fmt: skip
    power = np.where(cal.time_s < 8 * 3600.0, 2.0, 0.0)
    return heating_curve_fit(cal.time_s, cal.temp_C, cal.env_C, power, u_power_rel=0.002)


@dataclass(frozen=True)
class Coverage:
    """Of Q(t) against the truth at POINTS instants along the curve."""

    covered: float  # fraction of points with |error| ≤ U(k=2)
    median_rel_error: float  # |error| over max(|Q_true|, 1 % of the largest |Q_true|)
    max_rel_error: float
    peak_rate_W: float
    u_peak_rate_W: float
    peak_flagged: bool  # the peak rate carries a warning (not resolved, not converged)


def along_curve(sc: Scenario) -> np.ndarray:
    """Sample indices log-spaced from the event's start to the end (dense where Q changes)."""
    t = sc.run.time_s
    step = float(t[1] - t[0])
    grid = sc.event_start_s + np.geomspace(2.0 * step, t[-1] - sc.event_start_s, POINTS)
    idx = np.searchsorted(t, grid)
    return np.unique(np.clip(idx, 1, t.size - 1))


def coverage(sc: Scenario, result: ProfileResult) -> Coverage:
    idx = along_curve(sc)
    h = result.heat
    truth = sc.run.true_heat_J[idx] - sc.run.true_heat_J[0]
    err = h.heat_J[idx] - truth
    scale = np.maximum(np.abs(truth), 0.01 * float(np.max(np.abs(sc.run.true_heat_J))))
    rel = np.abs(err) / scale
    p = result.peak
    return Coverage(
        float(np.mean(np.abs(err) <= 2.0 * h.u_heat_J[idx])),
        float(np.median(rel)),
        float(np.max(rel)),
        p.rate_W,
        p.u_rate_W,
        bool(p.warnings),
    )


def analyse(sc: Scenario, *, corrected: bool) -> ProfileResult:
    """The scenario analysed without (before) or with (after) the probe's time constant."""
    from dataclasses import replace

    s = replace(sc.settings, probe_tau=sc.tau if corrected else None)
    return analyse_profile(sc.run.time_s + CLOCK_OFFSET_S, sc.run.temp_C, s)
