"""Savitzky–Golay smoothing and differentiation in numpy alone.

Savitzky, A.; Golay, M. J. E. (1964), Anal. Chem. 36, 1627 (docs/REFERENCES.md: SAVGOL1964):
a least-squares polynomial of order ``polyorder`` over a sliding window of ``window_length``
points, evaluated (or differentiated) at the window's centre. The ends use the interior
polynomials of the first and last window ("interp" edges). The output equals
``scipy.signal.savgol_filter(..., mode="interp")`` to rounding (tests/test_smoothing.py checks it
against scipy on seeded data); it lives here because importing ``scipy.signal`` alone costs
more than half a second at every ``heatlog reduce``.
"""

from __future__ import annotations

import math

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
    local = np.arange(stop - start, dtype=float)
    poly = np.polynomial.polynomial.Polynomial.fit(
        local, x[start:stop], polyorder, domain=[0, stop - start - 1]
    )
    if deriv:
        poly = poly.deriv(deriv)
    return poly(at - start) / delta**deriv


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
