"""Reading noise of a logged curve, shared by the heat budget and the fit quality checks."""

from __future__ import annotations

import math

import numpy as np


def reading_noise(temp_C: np.ndarray) -> float:
    """Standard deviation of the reading noise from second differences (robust: 1.4826·MAD/√6).

    For white noise on a smooth curve, T[i+1] − 2T[i] + T[i−1] has variance 6σ².
    """
    y = np.asarray(temp_C, dtype=np.float64)
    if y.size < 5:
        return 0.0
    d2 = y[2:] - 2.0 * y[1:-1] + y[:-2]
    return float(1.4826 * np.median(np.abs(d2 - np.median(d2))) / math.sqrt(6.0))
