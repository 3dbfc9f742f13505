"""Finding events (mixing, heater on, reaction) and the start of the after-period.

Criterion (stated, our own design):

1. Resample onto a uniform grid (median step h) and take a Savitzky–Golay smoothed derivative
   dT/dt over a window W = max(60 s, 9h) (quadratic, Savitzky & Golay 1964).
2. In every quiet stretch of a Newtonian vessel the drift is the same straight line in temperature,
   dT/dt = g(T) = a − kT (module ``drift``); with a logged surroundings temperature it is the
   plane a − kT + c·T_env (``surroundings``). Fit that line robustly (iteratively trimmed least
   squares, points beyond 4σ dropped; started from both ends, the first or the last fifth of the
   log, keeping the start whose quiet points still hold both ends of the log, then the one with
   the most quiet points) and take
   the residual r(t) = dT/dt − g(T).
3. An event is a run of |r| > 5σ_r (σ_r: 1.4826·MAD of r on the quiet points, at least 10⁻⁵ of the
   largest |dT/dt| and q/W for a reading step q, so noise-free or coarsely rounded logs do not
   turn rounding into events); runs of the same
   sign closer than W are merged; runs whose size ∫r dt is below 10× the reading noise, 5
   resolution steps or 0.1 mK are dropped.
4. Event start, coarse: walk back from the first crossing of 5σ_r to where |r| falls below σ_r
   (at most W back), then a further W/2 + 2h earlier (the smoothing window spreads the onset).
   Refined on the readings themselves, so the margin scales with the sampling and with the
   event's own rise instead of the fixed window: a straight line is fitted to the readings from
   the fore-period start to where |r| fell below σ_r and extrapolated; t_a and t_b are the first
   times the readings leave it (in the event's direction, three readings in a row, looking
   up to 4h past the peak of the rate) by
   a = max(3σ_p, 3q, 10⁻⁵·|size|, 1 µK) and by 3a (σ_p: the line's residual noise with its
   prediction error). Near the true onset the departure grows as a power of the time no higher
   than the third (a release seen through a first-order probe lag as its square, through a
   second lag as its cube), so the onset is no earlier than t_a − 2.3·(t_b − t_a); the start is
   t_a − max(2.5·(t_b − t_a) + 2h, 3h, W/4) (2h for the sampling; W/4 against noise hiding the
   first departures), and never earlier than the coarse
   start (an early start costs little: the corrections are exact for any start
   inside the Newtonian fore-period).
5. After-period start: from the peak of |r|, t_½ and t_e are the last times |r| is above ½ and 1/e
   of the peak; the tail time constant is τ = (t_e − t_½)/(1 − ln 2) (exact for an exponential
   tail), at least h and W/6. The release still to come after t is R(t) = |r(t_e)|·τ·e^(−(t−t_e)/τ).
   The after-period begins where R has fallen below a fifth of the reading noise (max(σ/5, q,
   10⁻⁴·|size|)),
   and no later than t_e + 6τ (R below e⁻⁶ of its value at t_e); never before the last 5σ_r
   crossing + W/2. ``Event.tail_K`` is R at that start; the reduction carries it in the budget.

Fore- and after-periods must meet the one stated minimum in ``periods`` (readings and seconds).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from heatlog.orderstats import median
from heatlog.reduce.periods import MIN_PERIOD_POINTS, MIN_PERIOD_S, detector_window_s
from heatlog.smoothing import savgol_filter  # scipy.signal costs ~0.6 s to import

__all__ = ["MIN_PERIOD_POINTS", "MIN_PERIOD_S", "Event", "detect_events", "reading_noise"]

THRESHOLD_SIGMA = 5.0
TAIL_NOISE_FRACTION = 0.2
REFINED_MARGIN_W = 0.25  # the refined start is at least W/4 before the first departure
MIN_EVENT_K = 1e-4  # smaller changes are below any logger this tool serves


@dataclass(frozen=True)
class Event:
    """One detected release. Times in seconds on the thermogram's time axis."""

    index: int
    start_s: float  # chosen start of the main period
    onset_s: float  # first time the residual rate crosses the threshold
    peak_s: float  # time of the largest residual rate
    after_start_s: float  # chosen start of the after-period
    direction: int  # +1 rising (exothermic / heating), −1 falling
    size_K: float  # rough size: integral of the residual rate
    tail_s: float  # tail time constant used for the after-period start
    tail_K: float = 0.0  # release still to come after the after-period start (estimate, K)

    def to_dict(self) -> dict[str, float | int]:
        return {
            "index": self.index,
            "start_s": self.start_s,
            "onset_s": self.onset_s,
            "peak_s": self.peak_s,
            "after_start_s": self.after_start_s,
            "direction": self.direction,
            "size_K": self.size_K,
            "tail_s": self.tail_s,
            "tail_K": self.tail_K,
        }


@dataclass(frozen=True, eq=False)
class RateResidual:
    """The quantities events are found from, on a uniform grid (kept for plots and tests)."""

    grid_s: np.ndarray
    temp_C: np.ndarray
    rate_K_per_s: np.ndarray
    residual_K_per_s: np.ndarray
    sigma_K_per_s: float
    window_s: float
    step_s: float


def reading_noise(y: np.ndarray) -> float:
    """Robust noise of single readings from second differences (σ_d2 = √6·σ)."""
    if y.size < 5:
        return 0.0
    d2 = np.diff(y, 2)
    return float(1.4826 * median(np.abs(d2 - median(d2))) / math.sqrt(6.0))


def _starting_masks(n: int) -> list[np.ndarray]:
    """Where the quiet line may be started: both ends, the first or the last fifth."""
    edge = max(3, n // 10)
    masks = []
    for lo_hi in ((0, edge, n - edge, n), (0, 2 * edge, n, n), (0, 0, n - 2 * edge, n)):
        m = np.zeros(n, dtype=bool)
        m[lo_hi[0] : lo_hi[1]] = True
        m[lo_hi[2] : lo_hi[3]] = True
        masks.append(m)
    return masks


def _quiet_line(
    ys: np.ndarray, d: np.ndarray, mask: np.ndarray, floor: float, env: np.ndarray | None = None
) -> tuple[np.ndarray, float, np.ndarray]:
    """Iteratively trimmed fit of d = a + b·T (+ c·T_env); returns residual, robust σ and the
    quiet mask."""
    n = d.size
    r = d.copy()
    sigma = 0.0
    for _ in range(10):
        x, z = ys[mask], d[mask]
        xc = x - x.mean()
        sxx = float(xc @ xc)
        # a temperature span below a microkelvin carries no slope (flat or rounded readings)
        b = float(xc @ (z - z.mean())) / sxx if np.ptp(x) > 1e-6 else 0.0
        r = d - (z.mean() + b * (ys - x.mean()))
        if env is not None and np.ptp(env[mask]) > 1e-6 and np.ptp(x) > 1e-6:
            cols = np.column_stack([np.ones(x.size), xc, env[mask] - env[mask].mean()])
            coef, *_ = np.linalg.lstsq(cols, z, rcond=None)
            r = d - (coef[0] + coef[1] * (ys - x.mean()) + coef[2] * (env - env[mask].mean()))
        sigma = float(1.4826 * median(np.abs(r[mask] - median(r[mask]))))
        new = np.abs(r) < 4 * max(sigma, floor)
        if new.sum() < max(6, n // 20) or np.array_equal(new, mask):
            break
        mask = new
    return r, sigma, mask


def rate_residual(
    t: np.ndarray, y: np.ndarray, resolution_K: float = 0.0, env: np.ndarray | None = None
) -> RateResidual:
    """The residual rate of step 2; with ``env`` (surroundings, °C, on ``t``) the quiet line is
    d = a + b·T + c·T_env (Newton's law against a moving surroundings temperature)."""
    h = float(median(np.diff(t)))
    grid = np.arange(t[0], t[-1] + 1e-9 * h, h)
    yg = np.interp(grid, t, y)
    n = grid.size
    w_s = detector_window_s(h)
    win = int(round(w_s / h)) | 1
    win = max(5, min(win, (n - 1) | 1 if n % 2 == 0 else n))
    if win > n:
        win = n if n % 2 == 1 else n - 1
    d = savgol_filter(yg, win, 2, deriv=1, delta=h)
    ys = savgol_filter(yg, win, 2)
    # no finer rate is real: 1e-5 of the largest, and a reading step q moves the slope over the
    # window by about q/W
    floor = max(1e-12 + 1e-5 * float(np.max(np.abs(d))), resolution_K / (win * h))
    es = None if env is None else savgol_filter(np.interp(grid, t, env), win, 2)
    best: tuple[tuple[bool, int], float, np.ndarray] | None = None
    edge = max(2, n // 50)
    for mask in _starting_masks(n):
        r, sigma, mask = _quiet_line(ys, d, mask, floor, es)
        # a quiet line that leaves out the start or the end of the log has mistaken a period
        # for the event (a long reaction's tail also lies on a line in T): prefer one that
        # holds both ends, then the most quiet points
        key = (bool(mask[:edge].any() and mask[-edge:].any()), int(mask.sum()))
        if best is None or key > best[0]:
            best = (key, sigma, r)
    assert best is not None
    _, sigma, r = best
    sigma = max(sigma, floor)
    return RateResidual(grid, ys, d, r, sigma, win * h, h)


def tail_release(rate_at_te: float, tau: float, since_te: float) -> float:
    """Release still to come (K) ``since_te`` seconds after t_e on an exponential tail."""
    return abs(rate_at_te) * tau * math.exp(-max(since_te, 0.0) / tau)


def _refined_start(
    t: np.ndarray,
    y: np.ndarray,
    lo: float,
    coarse: float,
    quiet_end: float,
    peak: float,
    s: int,
    size: float,
    q: float,
    h: float,
    w: float,
) -> float:
    """The event start from the readings' own departure from the fore-period line (step 4)."""
    fm = (t >= lo) & (t <= quiet_end)
    if np.count_nonzero(fm) < 5:
        return coarse
    tf, yf = t[fm], y[fm]
    tc = float(tf.mean())
    x = tf - tc
    sxx = float(x @ x)
    if sxx <= 0:
        return coarse
    b = float(x @ (yf - yf.mean())) / sxx
    a0 = float(yf.mean())
    res = yf - (a0 + b * x)
    sig = math.sqrt(float(res @ res) / max(res.size - 2, 1))
    # up to a little past the rate's peak: the readings keep leaving the line while the rate has
    # the event's sign, and a fast event at slow sampling has few readings before its peak
    after = (t > quiet_end) & (t <= peak + 4 * h)
    if not after.any():
        return coarse
    ta_, ya_ = t[after], y[after]
    pred_se = sig * np.sqrt(1.0 / tf.size + (ta_ - tc) ** 2 / sxx)
    dev = s * (ya_ - (a0 + b * (ta_ - tc)))
    base = max(3 * q, 1e-5 * abs(size), 1e-6)

    def first_run(level: np.ndarray | float) -> int | None:
        hit = dev > level
        run = hit[:-2] & hit[1:-1] & hit[2:] if hit.size >= 3 else hit
        idx = np.flatnonzero(run)
        return int(idx[0]) if idx.size else None

    lev_a = np.maximum(3 * np.hypot(sig, pred_se), base)
    ia = first_run(lev_a)
    ib = first_run(3 * lev_a)
    if ia is None or ib is None:
        return coarse
    ta, tb = float(ta_[ia]), float(ta_[max(ib, ia)])
    refined = ta - max(2.5 * (tb - ta) + 2 * h, 3 * h, REFINED_MARGIN_W * w)
    return max(coarse, refined)


def detect_events(
    t: np.ndarray,
    y: np.ndarray,
    *,
    noise_K: float | None = None,
    resolution_K: float = 0.0,
    env: np.ndarray | None = None,
) -> tuple[tuple[Event, ...], RateResidual]:
    """All events in a thermogram, in time order, by the criterion in the module docstring.

    ``env``: the logged surroundings temperature on ``t``, or None."""
    rr = rate_residual(t, y, resolution_K, env)
    grid, r, sig, h, w = rr.grid_s, rr.residual_K_per_s, rr.sigma_K_per_s, rr.step_s, rr.window_s
    thr = THRESHOLD_SIGMA * sig
    above = np.abs(r) > thr
    if not above.any():
        return (), rr
    sign = np.sign(r) * above
    # runs of constant non-zero sign
    change = np.flatnonzero(np.diff(sign) != 0) + 1
    bounds = np.concatenate([[0], change, [sign.size]])
    runs = [
        (int(a), int(b), int(sign[a]))
        for a, b in zip(bounds[:-1], bounds[1:], strict=True)
        if sign[a] != 0
    ]
    merged: list[list[int]] = []
    gap = max(1, int(round(w / h)))
    for a, b, s in runs:
        if merged and merged[-1][2] == s and a - merged[-1][1] <= gap:
            merged[-1][1] = b
        else:
            merged.append([a, b, s])
    noise = reading_noise(y) if noise_K is None else noise_K
    min_size = max(10 * noise, 5 * resolution_K, MIN_EVENT_K)
    events: list[Event] = []
    for a, b, s in merged:
        seg = r[a:b]
        size = float(np.trapezoid(seg, dx=h)) if seg.size > 1 else float(seg[0] * h)
        if abs(size) < min_size:
            continue
        # start: walk back to |r| < sigma
        i0 = a
        # (at most W back from the onset: the smoothing spreads an onset by W/2; further back
        # the fore-period itself is off the quiet line, e.g. in a drifting room)
        while i0 > 0 and s * r[i0 - 1] > sig and grid[i0 - 1] >= grid[a] - w:
            i0 -= 1
        start = grid[i0] - w / 2 - 2 * h
        ipk = a + int(np.argmax(s * seg))
        peak = s * r[ipk]
        tail = s * r[ipk:]
        below_half = np.flatnonzero(tail < 0.5 * peak)
        below_e = np.flatnonzero(tail < peak / math.e)
        i_half = ipk + (int(below_half[0]) if below_half.size else tail.size - 1)
        i_e = ipk + (int(below_e[0]) if below_e.size else tail.size - 1)
        tau = max((grid[i_e] - grid[i_half]) / (1 - math.log(2.0)), h, w / 6)
        lo = events[-1].after_start_s if events else float(t[0])
        start = _refined_start(
            t, y, lo, float(start), float(grid[i0]), float(grid[ipk]), s, size, resolution_K, h, w
        )
        r_e = peak / math.e
        floor = max(TAIL_NOISE_FRACTION * noise, resolution_K, 1e-4 * abs(size), 1e-9)
        rel = r_e * tau / floor
        t_quiet = grid[i_e] + tau * math.log(rel) if rel > 1 else grid[i_e]
        after = max(min(grid[i_e] + 6 * tau, t_quiet), grid[b - 1] + w / 2)
        events.append(
            Event(
                index=len(events),
                start_s=float(start),
                onset_s=float(grid[a]),
                peak_s=float(grid[ipk]),
                after_start_s=float(after),
                direction=s,
                size_K=size,
                tail_s=float(tau),
                tail_K=float(tail_release(r_e, tau, float(after) - float(grid[i_e]))),
            )
        )
    return tuple(events), rr
