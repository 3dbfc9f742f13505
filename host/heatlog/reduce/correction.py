"""Corrected temperature change: Regnault–Pfaundler, Dickinson (equal-area and 60 %), Newton fit.

All methods take the readings, a fitted :class:`~heatlog.reduce.drift.DriftFit`, the start of the
main period t₀ and the start of the after-period tₙ, and return the signed corrected change.

* Regnault–Pfaundler (ISO 1928 Annex C form): θ = (Tₙ − T₀) − ∫g dt with
  ∫g dt = s_f(tₙ − t₀) − k[∫T dt − T_f(tₙ − t₀)]; T₀, Tₙ are the fitted drift curves at t₀ and tₙ,
  ∫T dt the trapezoid over the readings between them. Exact for Newtonian exchange.
* Dickinson, equal-area: the time x where ∫(T − F)dt from t₀ to x equals ∫(A − T)dt from x to tₙ
  (F, A: fore and after drift curves extrapolated); θ = A(x) − F(x). With Newtonian drift curves
  this equals Regnault–Pfaundler exactly.
* Dickinson 60 % (ASTM D240 / D5865 form): x is the time the reading first reaches 60 % of the
  observed change Tₙ − T₀; θ = A(x) − F(x), i.e. t_c − t_a − r₁(b − a) − r₂(c − b).
* Newton-model fit: the readings from the start of the fore-period to the end of the after-period
  are fitted with a vessel under Newton's law (exchange k, convergence T∞), a first-order release
  (adiabatic change Δ, time constant τ_r, start t_s) and a first-order probe lag τ_p; θ = Δ.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from heatlog.reduce.drift import DriftFit, _expo, residual_sigma
from heatlog.reduce.sampling import block_means
from heatlog.solvers import least_squares_box

METHODS = ("regnault-pfaundler", "dickinson", "dickinson-60", "newton")
_NEWTON_PERIOD_POINTS = 250


@dataclass(frozen=True, eq=False)
class MainPeriod:
    """Nodes for integrals over [t₀, tₙ]: fitted ends, readings in between."""

    t: np.ndarray
    y: np.ndarray


def main_period(t: np.ndarray, y: np.ndarray, fit: DriftFit, t0: float, tn: float) -> MainPeriod:
    inside = (t > t0) & (t < tn)
    tt = np.concatenate([[t0], t[inside], [tn]])
    yy = np.concatenate([[float(fit.fore(t0))], y[inside], [float(fit.after(tn))]])
    return MainPeriod(tt, yy)


def trapezoid_weights(t: np.ndarray) -> np.ndarray:
    dt = np.diff(t)
    w = np.zeros(t.size)
    w[:-1] += dt / 2
    w[1:] += dt / 2
    return w


def regnault_pfaundler(mp: MainPeriod, fit: DriftFit) -> float:
    t0, tn = float(mp.t[0]), float(mp.t[-1])
    y = mp.y.copy()
    y[0], y[-1] = fit.fore(t0), fit.after(tn)
    integral_t = float(np.trapezoid(y, mp.t))
    k = fit.k_per_s
    drift_integral = fit.params[2] * (tn - t0) - k * (integral_t - fit.params[0] * (tn - t0))
    return float(y[-1] - y[0] - drift_integral)


def _crossing(t: np.ndarray, phi: np.ndarray) -> float:
    """First zero of a sampled function (linear interpolation); ends if no sign change."""
    s = np.sign(phi)
    idx = np.flatnonzero(s[:-1] * s[1:] <= 0)
    if idx.size == 0:
        return float(t[0] if abs(phi[0]) < abs(phi[-1]) else t[-1])
    i = int(idx[0])
    if phi[i + 1] == phi[i]:
        return float(t[i])
    return float(t[i] - phi[i] * (t[i + 1] - t[i]) / (phi[i + 1] - phi[i]))


def _cumtrapz(y: np.ndarray, t: np.ndarray) -> np.ndarray:
    return np.concatenate([[0.0], np.cumsum(np.diff(t) * (y[1:] + y[:-1]) / 2)])


def dickinson_time(mp: MainPeriod, fit: DriftFit) -> float:
    y = mp.y.copy()
    y[0], y[-1] = fit.fore(mp.t[0]), fit.after(mp.t[-1])
    c1 = _cumtrapz(y - fit.fore(mp.t), mp.t)
    c2 = _cumtrapz(fit.after(mp.t) - y, mp.t)
    phi = c1 - (c2[-1] - c2)
    return _crossing(mp.t, phi)


def dickinson(mp: MainPeriod, fit: DriftFit) -> tuple[float, float]:
    x = dickinson_time(mp, fit)
    return float(fit.after(x) - fit.fore(x)), x


def dickinson_60(mp: MainPeriod, fit: DriftFit) -> tuple[float, float]:
    y0, yn = float(fit.fore(mp.t[0])), float(fit.after(mp.t[-1]))
    target = y0 + 0.6 * (yn - y0)
    y = mp.y.copy()
    y[0], y[-1] = y0, yn
    x = _crossing(mp.t, (y - target) * np.sign(yn - y0 or 1.0))
    return float(fit.after(x) - fit.fore(x)), x


# ----- Newton-model fit -------------------------------------------------------------------


def probe_response(s: np.ndarray, k: float, tau_r: float, tau_p: float) -> np.ndarray:
    """Probe reading change for a unit adiabatic release starting at s = 0 (0 before).

    Vessel: first-order release (rate 1/τ_r) under Newtonian loss k; probe: first-order lag τ_p.
    Closed form by partial fractions (convolution of three exponentials).
    """
    s = np.maximum(np.asarray(s, dtype=float), 0.0)

    def decay(rate: float) -> np.ndarray:
        # clipped so that no subnormal numbers reach the linear algebra (they are very slow)
        return np.exp(-np.minimum(rate * s, 600.0))

    a = 1.0 / max(tau_r, 1e-6)
    b = k
    if abs(a - b) < 1e-9 * a:
        a *= 1 + 1e-6
    eb, ea = decay(b), decay(a)
    if tau_p <= 1e-6:
        return (a / (a - b)) * (eb - ea)
    c = 1.0 / tau_p
    if abs(c - a) < 1e-6 * a:
        c = a * (1 + 1e-6)
    if abs(c - b) < 1e-9 * c:
        c *= 1 + 1e-6
    ec = decay(c)
    return (a / (a - b)) * (c * (eb - ec) / (c - b) - c * (ea - ec) / (c - a))


@dataclass(frozen=True)
class NewtonFit:
    delta_t_K: float
    u_delta_t_K: float
    k_per_s: float
    start_s: float
    tau_release_s: float
    tau_probe_s: float
    rms_K: float
    rms_main_K: float
    converged: bool

    def to_dict(self) -> dict[str, float | bool]:
        return dict(self.__dict__)


def newton_model(p: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Probe reading: T_s + g_s·(1 − e^(−k(t − t_s)))/k + Δ·response(t − t_s)."""
    t_s_temp, g_s, k, delta, t_s, tau_r, tau_p = p
    dt = t - t_s
    return t_s_temp + g_s * _expo(k, dt) + delta * probe_response(dt, k, tau_r, tau_p)


def newton_fit(
    t: np.ndarray,
    y: np.ndarray,
    fit: DriftFit,
    t0: float,
    tn: float,
    *,
    guess_delta: float,
    guess_start: float,
    guess_tau: float,
) -> NewtonFit:
    lo_t, hi_t = float(fit.fore_t[0]), float(fit.after_t[-1])
    # drift periods thinned to block means (weighted by √block so every residual has the
    # variance of one reading), main period kept at full resolution
    masks = ((t >= lo_t) & (t <= t0), (t > t0) & (t < tn), (t >= tn) & (t <= hi_t))
    parts = [
        block_means(t[m], y[m], _NEWTON_PERIOD_POINTS if i != 1 else 0) for i, m in enumerate(masks)
    ]
    tt = np.concatenate([p[0] for p in parts])
    yy = np.concatenate([p[1] for p in parts])
    ww = np.concatenate([np.full(p[0].size, math.sqrt(p[2])) for p in parts])
    k0 = fit.k_per_s if math.isfinite(fit.k_per_s) else 0.0
    ts0 = min(max(guess_start, t0), tn)
    p0 = np.array(
        [
            float(fit.fore(ts0)),
            float(fit.rate(fit.fore(ts0))),
            k0,
            guess_delta,
            ts0,
            max(guess_tau, 0.5),
            1.0,
        ]
    )
    span = hi_t - lo_t
    lower = [-np.inf, -np.inf, -0.5 / span, -np.inf, t0 - 1.0, 0.05, 0.0]
    upper = [np.inf, np.inf, 50.0 / span, np.inf, tn, 10.0 * (tn - t0), 0.5 * (tn - t0)]
    p0 = np.clip(p0, np.array(lower) + 1e-12, np.array(upper) - 1e-12)
    try:
        res = least_squares_box(
            lambda p: ww * (newton_model(p, tt) - yy),
            p0,
            np.array(lower),
            np.array(upper),
            max_nfev=400,
        )
    except (ValueError, np.linalg.LinAlgError):
        return NewtonFit(
            math.nan, math.nan, math.nan, math.nan, math.nan, math.nan, math.inf, math.inf, False
        )
    r = res.fun
    # residual variance per reading, inflated for lag-1 autocorrelation as in the drift fits
    s2 = residual_sigma(r, max(r.size - 7, 1)) ** 2
    main = (tt > t0) & (tt < tn)
    rms_main = float(np.sqrt(np.mean(r[main] ** 2))) if main.any() else math.inf
    u = math.nan
    try:
        cov = np.linalg.pinv(res.jac.T @ res.jac) * s2
        u = float(math.sqrt(max(cov[3, 3], 0.0)))
    except np.linalg.LinAlgError:
        pass
    p = res.x
    # The release and the probe lag enter the model symmetrically (a convolution of two first-
    # order responses), so the data cannot tell which time constant is whose; the shorter one is
    # reported as the probe's (common practice, no source: a probe in a stirred vessel answers
    # in seconds, a dissolution or reaction takes longer). Δ and its uncertainty do not depend
    # on the choice.
    tau_release, tau_probe = max(p[5], p[6]), min(p[5], p[6])
    return NewtonFit(
        float(p[3]),
        u,
        float(p[2]),
        float(p[4]),
        float(tau_release),
        float(tau_probe),
        float(math.sqrt(s2)),
        rms_main,
        bool(res.success),
    )
