"""Smoothing filters in numpy alone: Savitzky–Golay, a running median and a moving average.

Each equals its scipy counterpart (tests/test_smoothing.py checks them against scipy on seeded
data) and lives here because importing ``scipy.signal`` or ``scipy.ndimage`` costs a large share
of a ``heatlog reduce`` that should take about as long as reading the file.

Savitzky, A.; Golay, M. J. E. (1964), Anal. Chem. 36, 1627 (docs/REFERENCES.md: SAVGOL1964):
a least-squares polynomial of order ``polyorder`` over a sliding window of ``window_length``
points, evaluated (or differentiated) at the window's centre. The ends use the interior
polynomials of the first and last window ("interp" edges). The output equals
``scipy.signal.savgol_filter(..., mode="interp")`` to rounding.

:func:`running_median` equals ``scipy.ndimage.median_filter(y, size, mode="nearest")`` bit for bit
on finite data (a median is one of the readings, picked by comparisons only); for the window of
7 it is a selection network of 13 compare-exchanges on shifted copies of the edge-padded series,
about as fast as scipy's C loop. :func:`moving_average` equals
``scipy.ndimage.uniform_filter1d(x, size)`` (mode "reflect") bit for bit: the same running sum,
added up in the same order.
"""

from __future__ import annotations

import math
from collections.abc import Iterator

import numpy as np


def savgol_coefficients(
    window_length: int, polyorder: int, deriv: int = 0, delta: float = 1.0
) -> np.ndarray:
    """Weights ``w`` with ``out[i] = sum_j w[j] * x[i - half + j]`` (a correlation)."""
    if window_length % 2 != 1 or window_length < 1:
        raise ValueError("window_length must be a positive odd number")
    if not 0 <= polyorder < window_length:
        raise ValueError("polyorder must be less than window_length")
    if deriv > polyorder:
        return np.zeros(window_length)
    half = window_length // 2
    offsets = np.arange(-half, half + 1, dtype=float)
    design = np.vander(offsets, polyorder + 1, increasing=True)  # rows: 1, j, j², ...
    target = np.zeros(polyorder + 1)
    target[deriv] = math.factorial(deriv) / delta**deriv
    # weights w solve design.T @ w = target with least norm: the LS fit's derivative at 0
    weights, *_ = np.linalg.lstsq(design.T, target, rcond=None)
    return weights


def _edge(
    x: np.ndarray, start: int, stop: int, at: np.ndarray, polyorder: int, deriv: int, delta: float
) -> np.ndarray:
    """The least-squares polynomial of ``x[start:stop]`` (or its derivative) at rows ``at``: the
    window mapped onto [-1, 1] for a well-conditioned fit, as ``numpy.polynomial`` does, with the
    ``numpy.polyfit`` family (``numpy.polynomial`` costs a few ms to import)."""
    scale = 2.0 / (stop - start - 1)
    coef = np.polyfit(np.arange(stop - start) * scale - 1.0, x[start:stop], polyorder)
    if deriv:
        coef = np.polyder(coef, deriv) * scale**deriv
    return np.polyval(coef, (at - start) * scale - 1.0) / delta**deriv


def savgol_filter(
    x: np.ndarray, window_length: int, polyorder: int, deriv: int = 0, delta: float = 1.0
) -> np.ndarray:
    """Smoothed values (``deriv=0``) or the ``deriv``-th derivative of a 1-D evenly spaced series."""
    x = np.asarray(x, dtype=float)
    n = x.size
    if window_length > n:
        raise ValueError("window_length must be at most the number of points")
    weights = savgol_coefficients(window_length, polyorder, deriv, delta)
    half = window_length // 2
    out = np.empty(n)
    out[half : n - half] = np.correlate(x, weights, mode="valid")
    idx = np.arange(n, dtype=float)
    out[:half] = _edge(x, 0, window_length, idx[:half], polyorder, deriv, delta)
    out[n - half :] = _edge(x, n - window_length, n, idx[n - half :], polyorder, deriv, delta)
    return out


#: A median-of-7 selection network of 13 compare-exchanges (docs/REFERENCES.md: MEDIAN-NETWORK).
#: tests/test_smoothing.py proves it on all 2^7 inputs of zeros and ones (the 0-1 principle,
#: docs/REFERENCES.md: KNUTH-TAOCP3) and on all 7! orders of distinct values.
MEDIAN7_NETWORK = (
    (0, 5), (0, 3), (1, 6), (2, 4), (0, 1), (3, 5), (2, 6),
    (2, 3), (3, 6), (4, 5), (1, 4), (1, 3), (3, 4),
)  # fmt: skip


def _network_plan(
    network: tuple[tuple[int, int], ...], out: int
) -> list[tuple[int, int, bool, bool]]:
    """Each compare-exchange with whether its low and its high output are used later."""
    live = {out}
    plan = []
    for a, b in reversed(network):
        plan.append((a, b, a in live, b in live))
        if a in live or b in live:
            live |= {a, b}
    return plan[::-1]


_MEDIAN7_PLAN = _network_plan(MEDIAN7_NETWORK, 3)


#: Readings per block for work along a long series: the temporaries stay small (in cache, reused
#: by the allocator) instead of fresh arrays of the series' length (common practice, no source).
BLOCK = 1 << 14


def halo_blocks(y: np.ndarray, half: int, block: int = BLOCK) -> Iterator[tuple[int, np.ndarray]]:
    """(start, segment) for each run of ``block`` readings from ``start``: the segment holds them
    with ``half`` readings either side, the series' ends repeated outward (only the end blocks
    are padded, so no padded copy of the whole series is made)."""
    n = y.size
    for start in range(0, n, block):
        stop = min(start + block, n)
        lo, hi = start - half, stop + half
        seg = y[max(lo, 0) : min(hi, n)]
        if lo < 0 or hi > n:
            seg = np.pad(seg, (max(0, -lo), max(0, hi - n)), mode="edge")
        yield start, seg


def _median7(y: np.ndarray) -> np.ndarray:
    out = np.empty(y.size, dtype=y.dtype)
    for start, seg in halo_blocks(y, 3):
        m = seg.size - 6
        v = [seg[k : k + m] for k in range(7)]  # v[k][i] = y[start + i - 3 + k]
        for a, b, low, high in _MEDIAN7_PLAN:
            x, z = v[a], v[b]
            if low:
                v[a] = np.minimum(x, z)
            if high:
                v[b] = np.maximum(x, z)
        out[start : start + m] = v[3]
    return out


def running_median(y: np.ndarray, size: int) -> np.ndarray:
    """Median of the ``size`` readings around each one, the series' ends repeated outward.

    Window ``y[i - size//2 : i - size//2 + size]`` (for an even size one more reading before
    than after), the element of rank ``size//2`` in it: scipy.ndimage's convention. Equals
    ``scipy.ndimage.median_filter(y, size=size, mode="nearest")`` for finite 1-D input (where a
    window holds both +0.0 and −0.0 the sign of a zero median may differ); NaN is not ordered.
    """
    y = np.asarray(y)
    if y.ndim != 1:
        raise ValueError("running_median takes a 1-D series")
    if size < 1:
        raise ValueError("size must be at least 1")
    if size == 1 or y.size == 0:
        return y.copy()
    if size == 7:
        return _median7(y)
    before = size // 2
    padded = np.pad(y, (before, size - 1 - before), mode="edge")
    windows = np.lib.stride_tricks.sliding_window_view(padded, size)
    return np.partition(windows, before, axis=1)[:, before].copy()


def moving_average(x: np.ndarray, size: int) -> np.ndarray:
    """Mean of the ``size`` values around each one, the series mirrored at its ends
    (``d c b a | a b c d | d c b a``; the window ``x[i - size//2 : i - size//2 + size]``).

    Equals ``scipy.ndimage.uniform_filter1d(x, size)`` (mode "reflect", origin 0) bit for bit on
    float64 input: like scipy it keeps a running sum, started as the first window added up from
    its left end, moved on by (entering − leaving) value and divided by ``size`` at each point;
    ``numpy.add.accumulate`` adds in the same strict order.
    """
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 1:
        raise ValueError("moving_average takes a 1-D series")
    if size < 1:
        raise ValueError("size must be at least 1")
    n = x.size
    if n == 0:
        return x.copy()
    before = size // 2
    padded = np.pad(x, (before, size - 1 - before), mode="symmetric")
    steps = np.empty(n)
    steps[0] = np.add.accumulate(padded[:size])[-1]
    np.subtract(padded[size : size + n - 1], padded[: n - 1], out=steps[1:])
    return np.add.accumulate(steps) / size
