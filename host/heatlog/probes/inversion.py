"""Vectorised Newton iteration kept inside a bracket, for curves with no closed-form inverse.

Used for the four-term Steinhart–Hart curve and for Callendar–Van Dusen below 0 °C. Each element
keeps its own bracket [lo, hi]; a Newton step that would leave the bracket (or a non-positive
slope) is replaced by bisection, so the iteration converges for any monotonic curve whose bracket
holds the root, and quadratically once close.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

Curve = Callable[[np.ndarray], np.ndarray]


def solve_increasing(
    f: Curve,
    fprime: Curve,
    target: np.ndarray,
    lo: np.ndarray | float,
    hi: np.ndarray | float,
    x0: np.ndarray | None = None,
    *,
    xtol: float = 1e-13,
    max_iter: int = 100,
) -> np.ndarray:
    """Solve ``f(x) = target`` elementwise for an increasing ``f`` on ``[lo, hi]``.

    The caller guarantees ``f(lo) <= target <= f(hi)`` (the range checks do). Returns x with
    |Δx| below ``xtol``·(1 + |x|).
    """
    target = np.asarray(target, dtype=np.float64)
    lo = np.broadcast_to(np.asarray(lo, dtype=np.float64), target.shape).copy()
    hi = np.broadcast_to(np.asarray(hi, dtype=np.float64), target.shape).copy()
    x = 0.5 * (lo + hi) if x0 is None else np.clip(np.asarray(x0, dtype=np.float64), lo, hi)
    x = np.array(x, dtype=np.float64, copy=True)
    for _ in range(max_iter):
        fx = f(x) - target
        below = fx < 0.0
        lo = np.where(below, x, lo)
        hi = np.where(below, hi, x)
        slope = fprime(x)
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = x - fx / slope
        ok = (slope > 0.0) & (newton > lo) & (newton < hi) & np.isfinite(newton)
        x_new = np.where(ok, newton, 0.5 * (lo + hi))
        x_new = np.where(fx == 0.0, x, x_new)
        done = np.abs(x_new - x) <= xtol * (1.0 + np.abs(x))
        x = x_new
        if np.all(done):
            break
    return x
