"""Block means: fewer points for long logs, so every fit is O(n) and small.

A block mean keeps the time integral of the readings and, for drift curves that are smooth on the
scale of a block, differs from the curve at the block's mean time by about (block length)²·T''/24
— far below the noise for the drift periods of a calorimeter run.
"""

from __future__ import annotations

import math

import numpy as np


def block_means(
    t: np.ndarray, y: np.ndarray, max_points: int
) -> tuple[np.ndarray, np.ndarray, int]:
    """Average consecutive blocks so at most ``max_points`` remain; returns t, y, block size."""
    n = t.size
    m = math.ceil(n / max_points) if max_points > 0 else 1
    if m <= 1:
        return t, y, 1
    full = (n // m) * m
    tb = t[:full].reshape(-1, m).mean(axis=1)
    yb = y[:full].reshape(-1, m).mean(axis=1)
    if full < n:
        tb = np.append(tb, t[full:].mean())
        yb = np.append(yb, y[full:].mean())
    return tb, yb, m
