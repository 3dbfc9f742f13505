"""Downsampling long series for plots without losing the extremes.

A plot of a million points shows at most a few thousand pixels across; taking every n-th sample
can drop the peak a reader looks for. :func:`downsample_extrema` keeps, per bucket of consecutive
samples, the sample with the lowest and the one with the highest value (in time order), plus the
first and last samples of the series.
"""

from __future__ import annotations

import numpy as np

from heatlog.errors import InputError


def downsample_extrema(
    t: np.ndarray, y: np.ndarray, n_buckets: int
) -> tuple[np.ndarray, np.ndarray]:
    """At most 2·n_buckets (+ first and last) samples keeping each bucket's min and max.

    Buckets hold equal numbers of consecutive samples (the last may be shorter). Vectorised:
    the series is padded to whole buckets and reshaped, so a million samples take milliseconds.
    Series no longer than 2·n_buckets are returned whole (as copies).
    """
    ta = np.asarray(t, dtype=np.float64)
    ya = np.asarray(y, dtype=np.float64)
    if ta.ndim != 1 or ya.shape != ta.shape:
        raise InputError("downsampling needs 1-D time and value arrays of equal length")
    if n_buckets < 1:
        raise InputError(f"need at least 1 bucket, got {n_buckets}")
    n = ta.size
    if n <= 2 * n_buckets:
        return ta.copy(), ya.copy()
    size = -(-n // n_buckets)  # ceil
    rows = -(-n // size)
    pad = rows * size - n
    lo = np.concatenate((ya, np.full(pad, np.inf))).reshape(rows, size)
    hi = np.concatenate((ya, np.full(pad, -np.inf))).reshape(rows, size)
    offsets = np.arange(rows) * size
    idx = np.concatenate(
        ([0], offsets + np.argmin(lo, axis=1), offsets + np.argmax(hi, axis=1), [n - 1])
    )
    idx = np.unique(idx)  # sorted, so the result stays in time order
    return ta[idx], ya[idx]
