"""Synthetic calorimeter runs with a known answer (invented data, for tests and the simulator).

The vessel follows Newton's law, dT/dt = k(T∞ − T) + P(t)/C, with T∞ = T_jacket + u/k (u: stirring
and other steady heat, in K/s). Heat releases are first-order reactions (rate ΔT/τ·e^(−(t−t₀)/τ)) or
heaters (constant rate for a set time). The probe lags the vessel by a first-order time constant,
and readings get Gaussian noise and are rounded to the ADC resolution.

The surroundings may drift: T_jacket(t) = jacket_C + β·t + A·sin(2πt/P + φ) (a room warming or
cooling, with a slow heating/air-conditioning swing). The vessel exchanges heat with that true
temperature; a second probe, logged as the channel ``env_C`` when ``log_env`` is set, reads it
through its own first-order lag, with its own noise and rounding.

The state [T, T_probe, R₁…R_m, t, cos, sin, T_env probe, 1] evolves linearly, so it is stepped
exactly with matrix exponentials between sample times and release switch points (no ODE solver
error). The true adiabatic rise of each release is the ΔT it was given. Pure and seeded: no I/O.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.linalg import expm

from heatlog.thermogram import Thermogram


@dataclass(frozen=True)
class Release:
    """One heat release: a first-order reaction (``tau_s`` its time constant) or a heater.

    For ``kind="heater"`` the release runs at a constant rate for ``tau_s`` seconds. ``delta_t_K``
    is the adiabatic temperature change it causes (negative for endothermic).
    """

    start_s: float
    delta_t_K: float
    tau_s: float = 20.0
    kind: str = "reaction"


@dataclass(frozen=True)
class SyntheticTruth:
    """What the generator put in: the true adiabatic change and start of every release."""

    delta_t_K: tuple[float, ...]
    event_start_s: tuple[float, ...]
    k_per_s: float
    t_inf_C: float
    probe_lag_s: float
    noise_K: float
    resolution_K: float
    dt_s: float
    releases: tuple[Release, ...] = field(default_factory=tuple)


@dataclass(frozen=True)
class SyntheticRun:
    thermogram: Thermogram
    truth: SyntheticTruth


def synthetic_run(
    *,
    releases: tuple[Release, ...] = (Release(600.0, 5.0, 20.0),),
    duration_s: float = 2400.0,
    dt_s: float = 1.0,
    k_per_s: float = 3e-4,
    jacket_C: float = 22.0,
    stirring_K_per_s: float = 0.0,
    start_C: float = 20.0,
    probe_lag_s: float = 0.0,
    noise_K: float = 0.0,
    resolution_K: float = 0.0,
    seed: int = 0,
    room_drift_K_per_s: float = 0.0,
    room_swing_K: float = 0.0,
    room_period_s: float = 3600.0,
    room_phase: float = 0.0,
    log_env: bool = False,
    env_lag_s: float = 0.0,
    env_noise_K: float = 0.0,
    env_resolution_K: float = 0.0,
) -> SyntheticRun:
    """One invented run sampled every ``dt_s`` from 0 to ``duration_s``; see the module docstring.

    ``room_*`` make the surroundings drift (β, A, P, φ above); ``log_env`` adds the channel
    ``env_C``: the surroundings read by a probe with lag ``env_lag_s``, noise ``env_noise_K`` and
    step ``env_resolution_K``.
    """
    t_inf = jacket_C + (stirring_K_per_s / k_per_s if k_per_s > 0 else 0.0)
    lagged = probe_lag_s > 1e-6  # a shorter lag is no lag at any sampling rate used here
    env_lagged = env_lag_s > 1e-6
    moving = room_drift_K_per_s != 0.0 or room_swing_K != 0.0
    m = len(releases)
    size = 7 + m  # T, Tp, R_1..R_m, t, cos, sin, E, 1
    clock, cos_i, sin_i, env_i, one = 2 + m, 3 + m, 4 + m, 5 + m, 6 + m
    omega = 2 * np.pi / room_period_s

    def matrix(heater_rate: float) -> np.ndarray:
        a = np.zeros((size + 0, size + 0))
        a[0, 0] = -k_per_s
        a[0, one] = k_per_s * t_inf + heater_rate
        a[0, clock] = k_per_s * room_drift_K_per_s
        a[0, sin_i] = k_per_s * room_swing_K
        for j, rel in enumerate(releases):
            if rel.kind == "reaction":
                a[0, 2 + j] = 1.0 / rel.tau_s
                a[2 + j, 2 + j] = -1.0 / rel.tau_s
        if lagged:
            a[1, 0] = 1.0 / probe_lag_s
            a[1, 1] = -1.0 / probe_lag_s
        a[clock, one] = 1.0
        a[cos_i, sin_i] = -omega
        a[sin_i, cos_i] = omega
        if env_lagged:  # the surroundings probe: dE/dt = (T_jacket(t) − E)/τ_e
            a[env_i, env_i] = -1.0 / env_lag_s
            a[env_i, one] = jacket_C / env_lag_s
            a[env_i, clock] = room_drift_K_per_s / env_lag_s
            a[env_i, sin_i] = room_swing_K / env_lag_s
        return a

    def jacket(state: np.ndarray) -> float:
        return float(jacket_C + room_drift_K_per_s * state[clock] + room_swing_K * state[sin_i])

    times = np.arange(0.0, duration_s + 0.5 * dt_s, dt_s)
    switches: list[tuple[float, int, float]] = []  # (time, release index, action)
    for j, rel in enumerate(releases):
        switches.append((rel.start_s, j, 1.0))
        if rel.kind == "heater":
            switches.append((rel.start_s + rel.tau_s, j, -1.0))
    switches.sort()

    x = np.zeros(size)
    x[0] = start_C
    lag_gain = 1.0 / (1.0 - k_per_s * probe_lag_s)  # settled probe on an exponential drift
    x[1] = t_inf + (start_C - t_inf) * lag_gain if lagged else start_C
    x[one] = 1.0
    x[cos_i], x[sin_i] = np.cos(room_phase), np.sin(room_phase)
    heater = 0.0
    cache: dict[tuple[float, float], np.ndarray] = {}
    preroll = 10.0 * max(probe_lag_s, env_lag_s) if (moving or log_env) else 0.0
    if preroll > 0:
        # let both probes settle on the drifting curves before the log starts at t = 0
        x[clock] = -preroll
        x[cos_i], x[sin_i] = (
            np.cos(room_phase - omega * preroll),
            np.sin(room_phase - omega * preroll),
        )
        x[1] = x[0]
        x[env_i] = jacket(x)
        x = expm(matrix(0.0) * preroll) @ x
    x[env_i] = x[env_i] if env_lagged else jacket(x)

    def advance(state: np.ndarray, h: float) -> np.ndarray:
        if h <= 0:
            return state
        key = (heater, round(h, 9))
        step = cache.get(key)
        if step is None:
            step = expm(matrix(heater) * h)
            cache[key] = step
        return step @ state

    out = np.empty(times.size)
    env = np.empty(times.size)
    now = 0.0
    si = 0
    for i, t in enumerate(times):
        while si < len(switches) and switches[si][0] <= t:
            ts, j, action = switches[si]
            x = advance(x, ts - now)
            now = ts
            rel = releases[j]
            if rel.kind == "reaction":
                x[2 + j] += rel.delta_t_K
            else:
                heater += action * rel.delta_t_K / rel.tau_s
            si += 1
        x = advance(x, t - now)
        now = t
        out[i] = x[1] if lagged else x[0]
        env[i] = x[env_i] if env_lagged else jacket(x)

    rng = np.random.default_rng(seed)
    if noise_K > 0:
        out = out + rng.normal(0.0, noise_K, out.size)
    if resolution_K > 0:
        out = np.round(out / resolution_K) * resolution_K
    channels = {}
    if log_env:
        if env_noise_K > 0:
            env = env + np.random.default_rng(seed + 7919).normal(0.0, env_noise_K, env.size)
        if env_resolution_K > 0:
            env = np.round(env / env_resolution_K) * env_resolution_K
        channels["env_C"] = env
    truth = SyntheticTruth(
        delta_t_K=tuple(r.delta_t_K for r in releases),
        event_start_s=tuple(r.start_s for r in releases),
        k_per_s=k_per_s,
        t_inf_C=t_inf,
        probe_lag_s=probe_lag_s,
        noise_K=noise_K,
        resolution_K=resolution_K,
        dt_s=dt_s,
        releases=tuple(releases),
    )
    meta = {"source": "synthetic run (invented data)", "seed": seed}
    return SyntheticRun(Thermogram(times, out, channels=channels, metadata=meta), truth)


def random_run(seed: int) -> SyntheticRun:
    """A run drawn from the ranges the reduction is specified for (invented data).

    k log-uniform 2e-5…1e-3 1/s; reaction τ log-uniform 3…150 s; |ΔT| log-uniform 1…14 K with a
    random sign; noise uniform 0…0.03 K; probe lag uniform 0…8 s; sampling log-uniform 0.5…5 s;
    resolution 0, 0.5 or 1 mK; fore-period 5…10 min; after-period 10·max(τ, lag) + 10…15 min,
    so the release and the lag have died out well before the end of the log.
    """
    rng = np.random.default_rng(seed)

    def logu(lo: float, hi: float) -> float:
        return float(np.exp(rng.uniform(np.log(lo), np.log(hi))))

    k = logu(2e-5, 1e-3)
    tau = logu(3.0, 150.0)
    dtk = logu(1.0, 14.0) * (1.0 if rng.random() < 0.5 else -1.0)
    noise = float(rng.uniform(0.0, 0.03))
    lag = float(rng.uniform(0.0, 8.0))
    dt = logu(0.5, 5.0)
    res = float(rng.choice([0.0, 0.0005, 0.001]))
    fore = float(rng.uniform(300.0, 600.0))
    after = 10.0 * max(tau, lag) + float(rng.uniform(600.0, 900.0))
    start = float(rng.uniform(18.0, 25.0))
    jacket = start + float(rng.uniform(-3.0, 3.0))
    return synthetic_run(
        releases=(Release(fore, dtk, tau),),
        duration_s=fore + after,
        dt_s=dt,
        k_per_s=k,
        jacket_C=jacket,
        stirring_K_per_s=float(rng.uniform(0.0, 2e-4)) * k / 1e-3,
        start_C=start,
        probe_lag_s=lag,
        noise_K=noise,
        resolution_K=res,
        seed=seed,
    )


#: Ranges of the invented "cup on a bench in an ordinary room" runs (``room_run``).
ROOM_MAX_DRIFT_K_PER_H = 1.5


def room_run(
    seed: int, *, fore_s: tuple[float, float] = (120.0, 240.0), log_env: bool = True
) -> SyntheticRun:
    """A cup run on a bench in an ordinary room (invented data; ranges chosen by us).

    The room warms or cools at up to ±1.5 K/h in total: a steady rate β uniform in ±1.5 K/h
    plus a slow swing (period 30…120 min) whose rate adds at most what is left of the 1.5 K/h.
    It is logged as ``env_C`` by a second probe (lag uniform 5…120 s, noise 0…0.03 K, step 0 or
    0.01 K) when ``log_env`` is set. The cup: k log-uniform 1e-4…1.5e-3 1/s; the reaction a
    first-order release with τ log-uniform 5…150 s (it lasts up to about ten minutes);
    |ΔT| log-uniform 1…10 K with a random sign; noise uniform 0…0.02 K; probe lag 0…8 s;
    sampling log-uniform 0.5…5 s; resolution 0, 0.5 or 1 mK; the cup starts within ±2 K of the
    room; fore-period uniform in ``fore_s`` (default two to four minutes); after-period
    5τ + 5…10 min.
    """
    rng = np.random.default_rng(10_000_019 + seed)

    def logu(lo: float, hi: float) -> float:
        return float(np.exp(rng.uniform(np.log(lo), np.log(hi))))

    k = logu(1e-4, 1.5e-3)
    tau = logu(5.0, 150.0)
    dtk = logu(1.0, 10.0) * (1.0 if rng.random() < 0.5 else -1.0)
    max_rate = ROOM_MAX_DRIFT_K_PER_H / 3600.0
    beta = float(rng.uniform(-max_rate, max_rate))
    period = float(rng.uniform(1800.0, 7200.0))
    omega = 2 * np.pi / period
    swing = float(rng.uniform(0.0, 1.0)) * (max_rate - abs(beta)) / omega
    fore = float(rng.uniform(*fore_s))
    after = 5.0 * tau + float(rng.uniform(300.0, 600.0))
    room = float(rng.uniform(18.0, 26.0))
    return synthetic_run(
        releases=(Release(fore, dtk, tau),),
        duration_s=fore + after,
        dt_s=logu(0.5, 5.0),
        k_per_s=k,
        jacket_C=room,
        stirring_K_per_s=float(rng.uniform(0.0, 2e-4)) * k / 1e-3,
        start_C=room + float(rng.uniform(-2.0, 2.0)),
        probe_lag_s=float(rng.uniform(0.0, 8.0)),
        noise_K=float(rng.uniform(0.0, 0.02)),
        resolution_K=float(rng.choice([0.0, 0.0005, 0.001])),
        seed=seed,
        room_drift_K_per_s=beta,
        room_swing_K=swing,
        room_period_s=period,
        room_phase=float(rng.uniform(0.0, 2 * np.pi)),
        log_env=log_env,
        env_lag_s=float(rng.uniform(5.0, 120.0)),
        env_noise_K=float(rng.uniform(0.0, 0.03)),
        env_resolution_K=float(rng.choice([0.0, 0.01])),
    )
