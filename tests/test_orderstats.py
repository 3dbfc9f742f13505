"""heatlog.orderstats gives what numpy.median and numpy.unique give, on seeded data."""

import math

import numpy as np
import pytest

from heatlog.orderstats import distinct, distinct_count, median


@pytest.mark.parametrize("seed", range(6))
def test_median_is_numpys(seed):
    rng = np.random.default_rng(seed)
    for n in (1, 2, 3, 4, 7, 10, 101, 1000, 4097):
        a = rng.normal(0, 1, n) * 10.0 ** rng.integers(-6, 6)
        if seed % 2:
            a = np.round(a, 2)  # ties
        assert median(a) == float(np.median(a))  # bit for bit, odd and even sizes
        assert median(a.reshape(1, -1)) == float(np.median(a))
        scratch = a.copy()
        assert median(scratch, overwrite=True) == float(np.median(a))
        assert sorted(scratch) == sorted(a)  # reordered, nothing lost


def test_median_nan_and_empty():
    assert math.isnan(median(np.array([1.0, np.nan, 3.0])))
    assert math.isnan(median(np.array([np.nan])))
    assert math.isnan(median(np.array([])))


@pytest.mark.parametrize("seed", range(4))
def test_distinct_count_is_numpys(seed):
    rng = np.random.default_rng(seed)
    for n in (0, 1, 2, 5, 100, 5000):
        a = np.round(rng.normal(20, 0.5, n), int(rng.integers(0, 4)))
        assert distinct_count(a) == np.unique(a).size
        np.testing.assert_array_equal(distinct(a), np.unique(a))
        if n:
            a[rng.integers(0, n, 3)] = np.nan
            assert distinct_count(a) == np.unique(a).size
            np.testing.assert_array_equal(distinct(a), np.unique(a))
    ints = rng.integers(0, 50, 300)
    assert distinct_count(ints) == np.unique(ints).size


def test_all_finite_is_numpys():
    from heatlog.orderstats import all_finite

    rng = np.random.default_rng(7)
    a = rng.normal(size=1000)
    assert all_finite(a) and all_finite(a.reshape(10, 100)) and all_finite(a[::3])
    for bad in (np.nan, np.inf, -np.inf):
        b = a.copy()
        b[rng.integers(0, a.size)] = bad
        assert not all_finite(b)
    # finite values whose sum overflows: still all finite
    assert all_finite(np.array([1e308, 1e308, -1e308]))
    assert not all_finite(np.array([1e308, 1e308, np.inf]))
    assert all_finite(np.arange(5)) and all_finite(np.array([], dtype=float))
