"""The peak heat-release rate with a window fitted to the event's width.

P(t) is the slope of Q(t) over a centred window w. Too wide a window flattens a short event
(a cold pack dissolving in a minute reads far below its true peak); too narrow a window lets the
reading noise through, and the largest of many noisy slopes is biased high. The window is
chosen here rather than fixed:

* the event's width at half height is found on a coarse rate (iterated from the default window
  to a quarter of the width), and the window set to a sixth of it (at least 2 sampling steps;
  common practice, no source);
* the peak is not the largest sample of the noisy rate (biased high: the maximum of many noisy
  values) but the vertex of a parabola fitted to the rate where it stays above 80 % of its
  maximum; the fit's variance (scaled by w/step, as the windows overlap), the change when the
  fit is limited to 90 %, and the w²·P''/24 flattening of a centred difference (Taylor; removed,
  and kept as an uncertainty) join the u(C), u(G) terms;
* a peak that still rises by over 3 % (and over 2 u) when the window is halved (a release that
  starts at full power), or an event narrower than three time resolutions (the window combined
  with the probe-lag correction's smoothing), is not resolved by the log: the result is flagged
  as a lower bound.

Pure: a :class:`~heatlog.profile.heat.HeatProfile` in, a frozen dataclass out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from heatlog.profile.heat import SQRT2, HeatProfile

#: An event is resolved when its width at half height spans this many windows.
RESOLVED_WINDOWS = 3.0
#: Rise of the peak with half the window, relative, above which it is not converged.
CONVERGED_REL = 0.03
#: The peak is fitted (a parabola) where the rate stays above this fraction of its maximum.
FIT_LEVEL = 0.8


@dataclass(frozen=True)
class PeakRate:
    """Peak P (W, signed), its time from the segment start, u (k = 1) and the window used."""

    rate_W: float
    u_rate_W: float
    time_s: float
    window_s: float
    width_s: float  # width of the rate peak at half height
    chosen: str  # "adaptive" or "given"
    warnings: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        return {
            "peak_rate_W": self.rate_W,
            "u_peak_rate_W": self.u_rate_W,
            "time_of_peak_rate_s": self.time_s,
            "peak_rate_window_s": self.window_s,
            "peak_rate_window_chosen": self.chosen,
            "event_width_s": self.width_s,
            "peak_rate_warnings": list(self.warnings),
        }


def _rate(t: np.ndarray, q: np.ndarray, window: float) -> np.ndarray:
    half = 0.5 * window
    lo = np.maximum(t - half, t[0])
    hi = np.minimum(t + half, t[-1])
    return (np.interp(hi, t, q) - np.interp(lo, t, q)) / (hi - lo)


def _width(t: np.ndarray, r: np.ndarray, i: int) -> float:
    """Width (s) of the run of samples around i where r stays above half of r[i]."""
    above = r >= 0.5 * r[i]
    lo = i
    while lo > 0 and above[lo - 1]:
        lo -= 1
    hi = i
    while hi < r.size - 1 and above[hi + 1]:
        hi += 1
    return float(t[hi] - t[lo])


def _region(r: np.ndarray, i: int, level: float) -> tuple[int, int]:
    above = r >= level * r[i]
    lo = i
    while lo > 0 and above[lo - 1]:
        lo -= 1
    hi = i
    while hi < r.size - 1 and above[hi + 1]:
        hi += 1
    return lo, hi


def _vertex(t: np.ndarray, r: np.ndarray, lo: int, hi: int, step: float, w: float):
    """Quadratic fit of the rate over samples lo..hi: (peak value, its index, u of the value,
    curvature 2c). The rates overlap over w, so the fit's variance is scaled by w/step."""
    tc = t[lo : hi + 1] - t[lo]
    y = r[lo : hi + 1]
    design = np.column_stack([np.ones_like(tc), tc, tc * tc])
    beta, *_ = np.linalg.lstsq(design, y, rcond=None)
    a, b, c = (float(v) for v in beta)
    tv = -b / (2.0 * c) if c < 0 else tc[int(np.argmax(y))]
    tv = float(np.clip(tv, tc[0], tc[-1]))
    x = np.array([1.0, tv, tv * tv])
    resid = y - design @ beta
    dof = max(y.size - 3, 1)
    s2 = float(resid @ resid) / dof * max(w / step, 1.0)
    cov = s2 * np.linalg.pinv(design.T @ design)
    value = float(x @ beta)
    u = math.sqrt(max(float(x @ cov @ x), 0.0))
    idx = lo + int(np.argmin(np.abs(tc - tv)))
    return value, idx, u, 2.0 * c


def peak_rate(heat: HeatProfile, sign: float, window_s: float | None = None) -> PeakRate:
    """The largest ``sign``·P over the segment (sign −1 for a cold pack); see the module text.

    ``window_s`` fixes the window (a user's choice); the peak is still taken from the fit.
    """
    t, q = heat.time_s, heat.heat_J
    step = float(np.median(np.diff(t)))
    span = float(t[-1] - t[0])

    def signed(w: float) -> np.ndarray:
        r = sign * _rate(t, q, w)
        return np.where(np.isfinite(r), r, -np.inf)

    # the event's width from a coarse rate, then a window of a sixth of it
    w_coarse = heat.rate_window_s
    width = span
    for _ in range(3):
        rc = signed(w_coarse)
        ic = int(np.argmax(rc))
        width = _width(t, rc, ic)
        w_next = min(max(width / 4.0, 2.0 * step), span / 4.0)
        if abs(w_next - w_coarse) < 0.1 * w_coarse:
            break
        w_coarse = w_next
    chosen = "given" if window_s is not None else "adaptive"
    w = float(window_s) if window_s is not None else min(max(width / 6.0, 2.0 * step), span / 4.0)
    rc = signed(max(w_coarse, w))
    ic = int(np.argmax(rc))
    r = signed(w)
    lo, hi = _region(rc, ic, FIT_LEVEL)
    warnings = []
    if hi - lo + 1 < 5:
        lo, hi = max(ic - 2, 0), min(ic + 2, t.size - 1)
    value, i, u_fit, curv = _vertex(t, r, lo, hi, step, w)
    lo2, hi2 = _region(rc, ic, 0.5 * (1.0 + FIT_LEVEL))
    u_model = 0.0
    if hi2 - lo2 + 1 >= 5:
        value2, _, _, _ = _vertex(t, r, lo2, hi2, step, w)
        u_model = abs(value2 - value)
    flatten = w * w / 24.0 * curv  # P_w − P at the peak (centred difference, Taylor)
    value -= flatten
    u_cg = float(heat.u_rate_at(i)[0])
    c = heat.heat_capacity.value
    u_cg = math.sqrt(max(u_cg**2 - (c * SQRT2 * heat.u_reading_K / heat.rate_window_s) ** 2, 0))
    u = math.sqrt(u_fit**2 + u_model**2 + flatten**2 + u_cg**2)
    # the time resolution: the window, the probe-lag correction's smoothing, the sampling
    w_eff = math.hypot(max(w, 2.0 * step), 0.0 if heat.lag is None else heat.lag.window_s)
    # converged? the same fit with half the window (a release starting at full power keeps rising)
    w_half = max(0.5 * w, 2.0 * step)
    r_half = signed(w_half)
    value_half, _, u_half, curv_half = _vertex(t, r_half, lo, hi, step, w_half)
    value_half -= w_half * w_half / 24.0 * curv_half
    jump = value_half - value
    if jump > max(2.0 * math.hypot(u_fit, u_half), CONVERGED_REL * abs(value)):
        warnings.append(
            f"the peak rate has not converged: {sign * value_half:.4g} W with a {w_half:.3g} s "
            f"window against {sign * value:.4g} W with {w:.3g} s; the release starts faster than "
            f"the log resolves (time resolution {w_eff:.3g} s with the lag smoothing), so it is "
            "a lower bound — log faster"
        )
    elif width < RESOLVED_WINDOWS * w_eff or hi - lo < 4:
        warnings.append(
            f"the peak rate is not resolved: the event is about {width:.3g} s wide at half height "
            f"against a time resolution of {w_eff:.3g} s (window, lag smoothing, sampling every "
            f"{step:.3g} s); it is a lower bound — log faster"
        )
    return PeakRate(sign * value, u, float(t[i] - t[0]), w, width, chosen, tuple(warnings))
