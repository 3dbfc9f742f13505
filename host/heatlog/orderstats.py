"""Whole-array statistics in numpy alone: the median, the distinct values and their number, and a
test that every value is finite.

Each gives what its numpy counterpart gives (``numpy.median``, ``numpy.unique``;
tests/test_orderstats.py checks them on seeded data) without what those load on first use: both
ask whether their input is a masked array, which imports ``numpy.ma`` (about 8 ms, paid by every
``heatlog reduce``, whose whole reduction takes a few times that).
"""

from __future__ import annotations

import math

import numpy as np


def median(a: np.ndarray, *, overwrite: bool = False) -> float:
    """``float(numpy.median(a))`` of a whole array: the same selection and the same mean of the
    two middle values (NaN in, NaN out). An empty array gives NaN. ``overwrite``: a scratch
    float64 array may be reordered in place instead of copied (numpy's ``overwrite_input``)."""
    a = np.asarray(a, dtype=np.float64).ravel()
    n = a.size
    if n == 0:
        return math.nan
    half = n // 2
    kth = [half - 1, half, n - 1] if n % 2 == 0 else [half, n - 1]
    if overwrite and a.flags.writeable and a.flags.c_contiguous:
        a.partition(kth)
        part = a
    else:
        part = np.partition(a, kth)
    if math.isnan(part[-1]):
        return math.nan
    if n % 2:
        return float(part[half])
    return float((part[half - 1] + part[half]) / 2.0)


def distinct(a: np.ndarray) -> np.ndarray:
    """``numpy.unique(a)``: the sorted distinct values, NaN (which sorts last) once."""
    s = np.sort(np.asarray(a).ravel())
    if s.size == 0:
        return s
    if s.dtype.kind == "f" and math.isnan(s[-1]):
        finite = s[~np.isnan(s)]
        return np.append(distinct(finite), s[-1])
    return s[np.concatenate([[True], s[1:] != s[:-1]])]


def distinct_count(a: np.ndarray) -> int:
    """``numpy.unique(a).size``."""
    return int(distinct(a).size)


def all_finite(a: np.ndarray) -> bool:
    """``bool(numpy.isfinite(a).all())`` for a float array, without a mask of its length: a sum
    of finite numbers that comes out finite settles it (any NaN or infinity makes the sum NaN
    or infinite); only a sum that overflows or is not finite looks at each value."""
    a = np.asarray(a)
    if a.dtype.kind != "f":
        return bool(np.isfinite(a).all())
    with np.errstate(over="ignore", invalid="ignore"):
        total = float(np.add.reduce(a, axis=None))
    if math.isfinite(total):
        return True
    return bool(np.isfinite(a).all())
