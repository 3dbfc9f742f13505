"""The probe's own time constant: correcting its lag and measuring it from a plunge test.

A probe in a sheath follows the contents with a first-order lag, τ·dT_p/dt = T − T_p, so the
contents' temperature is recovered as T ≈ T_p + τ·dT_p/dt (first-order sensor model; the GUM
treats the correction as any other: applied, and its uncertainty in the budget;
docs/REFERENCES.md: JCGM100). The slope is taken from a local quadratic fit over a window of
about τ (Savitzky–Golay through scipy.signal; docs/REFERENCES.md: SAVGOL1964), never from
sample-by-sample differences, which only amplify noise.

The uncertainty of τ enters the heat as ∂Q/∂τ = C·(s(t) − s(0)) + G·(T_p(t) − T_p(0)), with s the
smoothed slope; the budget in :mod:`heatlog.profile.heat` carries it.

:func:`plunge_fit` measures τ from a plunge test: a probe moved from one stirred bath (or air)
into another, its reading fitted as a first-order step response (scipy.optimize.least_squares; docs/REFERENCES.md:
SCIPY), T(t) = T_f + (T_i − T_f)·exp(−(t − t₀)/τ) for t ≥ t₀ (T_i before), with t₀ free.

Pure: arrays in, frozen dataclasses out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares
from scipy.signal import savgol_filter

from heatlog.errors import InputError, ReductionError
from heatlog.gum import Input
from heatlog.profile.noise import reading_noise

#: Readings outside this range (°C) are no probe temperature: the file is damaged or in other
#: units (common practice, no source).
PLAUSIBLE_C = (-273.15, 1500.0)
#: Fewest samples of the smoothing window for the slope.
MIN_WINDOW_SAMPLES = 7


@dataclass(frozen=True, eq=False)
class LagCorrection:
    """What the lag correction did: τ, the smoothing window and the slope it used."""

    tau: Input
    window_s: float
    slope_K_per_s: np.ndarray
    measured_C: np.ndarray
    corrected_C: np.ndarray
    smoothing_K: np.ndarray | None = None  # τ·(s_w − s_2w)/3: what the smoothing may flatten

    @property
    def max_shift_K(self) -> float:
        return float(np.max(np.abs(self.corrected_C - self.measured_C)))

    def to_dict(self) -> dict[str, object]:
        return {
            "probe_time_constant_s": self.tau.value,
            "u_probe_time_constant_s": self.tau.u,
            "source": self.tau.note,
            "slope_window_s": self.window_s,
            "max_correction_K": self.max_shift_K,
            "model": "first-order probe: T = T_probe + τ·dT_probe/dt (slope: local quadratic fit)",
        }


def _window_samples(step_s: float, window_s: float, n: int) -> int:
    w = max(int(round(window_s / step_s)), MIN_WINDOW_SAMPLES)
    largest = n if n % 2 else n - 1
    w = min(w, largest)
    return w if w % 2 else w - 1


def smoothed_slope(time_s: np.ndarray, temp_C: np.ndarray, window_s: float) -> np.ndarray:
    """dT/dt (K/s) from a local quadratic fit over ``window_s`` (at least 7 samples)."""
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    if t.size < MIN_WINDOW_SAMPLES + 2:
        raise ReductionError(
            f"the probe-lag correction needs at least {MIN_WINDOW_SAMPLES + 2} samples"
        )
    step = float(np.median(np.diff(t)))
    w = _window_samples(step, window_s, t.size)
    return savgol_filter(y, w, 2, deriv=1, delta=step, mode="interp")


def correct_lag(time_s: np.ndarray, temp_C: np.ndarray, tau: Input) -> LagCorrection:
    """T = T_p + τ·dT_p/dt with the slope smoothed over max(τ, 7 samples).

    What the smoothing may still flatten where the curve bends fast is estimated from the slope
    over twice the window, τ·(s_w − s_2w)/3 (the w² error of a local quadratic's slope;
    Richardson's step), and kept for the budget as a rectangular half-width.
    """
    if not (math.isfinite(tau.value) and tau.value >= 0):
        raise InputError(f"the probe time constant must be zero or positive, got {tau.value:g} s")
    if not (math.isfinite(tau.u) and tau.u >= 0):
        raise InputError(f"the uncertainty of the probe time constant must be ≥ 0, got {tau.u:g}")
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    step = float(np.median(np.diff(t)))
    if tau.value > 0.1 * (t[-1] - t[0]):
        raise InputError(
            f"a probe time constant of {tau.value:g} s is over a tenth of the log "
            f"({t[-1] - t[0]:g} s); check the value (seconds) or log longer"
        )
    window = max(tau.value, MIN_WINDOW_SAMPLES * step)
    slope = smoothed_slope(t, y, window)
    wider = smoothed_slope(t, y, 2.0 * window)
    # a local quadratic's slope errs as w² on a curve's cubic part: s_w − s_2w ≈ −3 × that error
    smoothing = tau.value * (slope - wider) / 3.0
    return LagCorrection(tau, window, slope, y, y + tau.value * slope, smoothing)


@dataclass(frozen=True, eq=False)
class PlungeFit:
    """τ (s) of a probe from a plunge test, with the step's start and the two levels."""

    tau_s: float
    u_tau_s: float
    start_s: float
    initial_C: float
    final_C: float
    residual_K: float
    noise_K: float
    samples: int
    warnings: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        return {
            "time_constant_s": self.tau_s,
            "u_time_constant_s": self.u_tau_s,
            "step_start_s": self.start_s,
            "initial_C": self.initial_C,
            "final_C": self.final_C,
            "residual_rms_K": self.residual_K,
            "reading_noise_K": self.noise_K,
            "samples": self.samples,
            "warnings": list(self.warnings),
            "model": "first-order step response T_f + (T_i − T_f)·exp(−(t − t₀)/τ), t ≥ t₀",
        }


def _step(p: np.ndarray, t: np.ndarray) -> np.ndarray:
    ti, tf, t0, tau = p
    return tf + (ti - tf) * np.exp(-np.maximum(t - t0, 0.0) / tau)


def plunge_fit(time_s: np.ndarray, temp_C: np.ndarray) -> PlungeFit:
    """Fit a first-order step response to a plunge test (see the module docstring).

    u(τ) combines the fit's covariance (scaled by the residual variance) with the misfit of the
    first-order model: τ refitted on the response from 10 %, 30 % and 50 % of the step onwards
    (a real probe in a sheath has a second time constant and a plunge is not instantaneous),
    the largest change taken as a standard uncertainty. A step under 20 times the reading noise, or fewer than 5
    samples within 3τ, is refused.
    """
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    if t.size < 20 or y.shape != t.shape:
        raise InputError("a plunge test needs at least 20 samples of time and temperature")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(y))) or np.any(np.diff(t) <= 0):
        raise InputError("a plunge test needs finite values and strictly increasing time")
    bad = np.flatnonzero((y < PLAUSIBLE_C[0]) | (y > PLAUSIBLE_C[1]))
    if bad.size:
        raise InputError(
            f"the plunge test's reading {y[bad[0]]:.3g} °C (data row {bad[0] + 1}) is no "
            f"temperature a probe reads ({PLAUSIBLE_C[0]:g} to {PLAUSIBLE_C[1]:g} °C); fix the file"
        )
    if t[-1] - t[0] > 1e7:
        raise InputError("the plunge test spans over 10⁷ s; give the time in seconds")
    noise = reading_noise(y)
    n_edge = max(3, t.size // 20)
    ti0, tf0 = float(np.median(y[:n_edge])), float(np.median(y[-n_edge:]))
    step = tf0 - ti0
    if abs(step) < 20.0 * max(noise, 1e-3):
        raise ReductionError(
            f"the plunge test's step ({step:.3g} K) is under 20× the reading noise "
            f"({noise:.2g} K); plunge into a bath further from the start temperature"
        )
    frac = (y - ti0) / step
    i10 = int(np.argmax(frac > 0.1))
    i63 = int(np.argmax(frac > 1.0 - math.exp(-1.0)))
    t0_guess = float(t[max(i10 - 1, 0)])
    tau_guess = max(float(t[i63] - t[i10]) * 1.1, float(np.median(np.diff(t))))
    p0 = np.array([ti0, tf0, t0_guess, tau_guess])

    def fit(mask: np.ndarray, p_start: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
        res = least_squares(lambda p: _step(p, t[mask]) - y[mask], p_start, method="lm")
        dof = max(int(mask.sum()) - 4, 1)
        s2 = float(res.fun @ res.fun) / dof
        try:
            cov = s2 * np.linalg.inv(res.jac.T @ res.jac)
        except np.linalg.LinAlgError:
            raise ReductionError(
                "the plunge fit is degenerate; log the step with more samples"
            ) from None
        return res.x, cov, math.sqrt(s2)

    p, cov, rms = fit(np.ones(t.size, dtype=bool), p0)
    tau, t0 = float(p[3]), float(p[2])
    if not (tau > 0 and math.isfinite(tau)):
        raise ReductionError("the plunge fit gives no positive time constant; check the log")
    within = np.count_nonzero((t >= t0) & (t <= t0 + 3.0 * tau))
    if within < 5:
        raise ReductionError(
            f"only {within} samples fall within 3τ of the step (τ ≈ {tau:.3g} s); "
            "log the plunge faster"
        )
    warnings = []
    u_model = 0.0
    done = (_step(p, t) - p[0]) / (p[1] - p[0])
    for level in (0.1, 0.3, 0.5):
        late = (t < t0) | (done >= level)
        if np.count_nonzero(late & (t >= t0)) < 5:
            continue
        try:
            p_late, _, _ = fit(late, p)
        except ReductionError:
            continue
        u_model = max(u_model, abs(float(p_late[3]) - tau))
    u_tau = math.hypot(math.sqrt(max(float(cov[3, 3]), 0.0)), u_model)
    if not (math.isfinite(u_tau) and math.isfinite(rms)):
        raise ReductionError("the plunge fit has no finite uncertainty; check the log")
    floor = max(noise, 1e-3)
    if rms > 3.0 * floor:
        warnings.append(
            f"residual rms {rms:.2g} K is {rms / floor:.1f}× the reading noise: the response is "
            "not first order (sheath, slow plunge); τ is an effective value"
        )
    return PlungeFit(
        tau, u_tau, t0, float(p[0]), float(p[1]), rms, noise, int(t.size), tuple(warnings)
    )
