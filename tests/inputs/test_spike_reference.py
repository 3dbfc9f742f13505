"""The spike test's shortcuts change no result: inputgate.spike_rows against its plain form
(scipy.ndimage.median_filter for the running median, the reference implementation on PyPI; σ's
median and the reading step always computed; every valid reading gathered) on seeded series,
clean and spiky, quantised and not, near the threshold where the shortcut must not decide."""

import math

import numpy as np
import pytest
from scipy.ndimage import median_filter

from heatlog import inputgate as g


def _runs(mask):
    d = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    return list(zip(np.flatnonzero(d == 1).tolist(), np.flatnonzero(d == -1).tolist(), strict=True))


def plain_spike_rows(y, valid):
    idx = np.flatnonzero(valid)
    if idx.size < g.HAMPEL_WINDOW:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    v = y[idx]
    med = median_filter(v, size=g.HAMPEL_WINDOW, mode="nearest")
    r = v - med
    sigma = 1.4826 * float(np.median(np.abs(np.diff(v, 2)))) / math.sqrt(6.0)
    d = np.abs(np.diff(med))
    d = d[d > 0]
    step = float(np.percentile(d, 5)) if d.size else 0.0
    thr = max(g.HAMPEL_SIGMAS * sigma, g.MIN_SPIKE_STEPS * step, g.MIN_SPIKE_K)
    spikes, other = [], []
    for ra, rb in _runs(np.abs(r) > thr):
        core = np.zeros(v.size, dtype=bool)
        big = np.abs(r[ra:rb])
        core[ra:rb] = big > max(thr, 0.5 * float(big.max()))
        for a, b in _runs(core):
            if b - a <= g.MAX_SPIKE_RUN and a > 0 and b < v.size:
                left, right = v[a - 1], v[b]
                dev = v[a:b] - 0.5 * (left + right)
                low = float(np.abs(dev).min())
                same_side = bool((dev > 0).all() or (dev < 0).all())
                if same_side and low > thr and abs(left - right) < 0.5 * low:
                    spikes.extend(range(a, b))
                    continue
            other.extend(range(a, b))
    return idx[np.asarray(spikes, dtype=np.int64)], idx[np.asarray(other, dtype=np.int64)]


def _series(rng, n):
    y = 20.0 + np.cumsum(rng.normal(size=n)) * rng.choice([1e-3, 1e-2, 0.1])
    y += rng.normal(size=n) * rng.choice([0.0, 0.002, 0.01, 0.03])
    if rng.random() < 0.4:
        y = np.round(y / 0.0625) * 0.0625  # a DS-type sensor's steps
    for _ in range(int(rng.integers(0, 5))):
        i = int(rng.integers(0, n))
        y[i : i + int(rng.integers(1, 5))] += rng.normal() * rng.choice([0.03, 0.1, 1.0, 20.0])
    return y


@pytest.mark.parametrize("seed", range(8))
def test_spike_rows_equal_their_plain_form(seed):
    rng = np.random.default_rng(seed)
    found = 0
    for _ in range(150):
        n = int(rng.choice([3, 7, 8, 30, 200, 2000]))
        y = _series(rng, n)
        valid = rng.random(n) >= rng.choice([0.0, 0.0, 0.02, 0.3])
        ours, ref = g.spike_rows(y, valid), plain_spike_rows(y, valid)
        assert np.array_equal(ours[0], ref[0]) and np.array_equal(ours[1], ref[1]), (seed, n)
        found += ref[0].size + ref[1].size
    assert found > 0  # the seeded series do hold spikes and outliers


def test_at_the_threshold_the_shortcut_does_not_decide():
    # one reading placed a hair either side of 10σ off its running median (σ and the median as
    # they are with that reading in place), where only the full test may decide
    rng = np.random.default_rng(42)
    base = 20.0 + rng.normal(size=3001) * 0.01  # an odd count of second differences
    outcomes = set()
    for factor in (1 - 1e-6, 1 - 1e-12, 1.0, 1 + 1e-12, 1 + 1e-6):
        y = base.copy()
        y[1500] += 1.0  # far off: its own |second differences| sit at the top of their order
        for _ in range(3):  # σ and the median with the reading in place, then place it
            sigma = 1.4826 * float(np.median(np.abs(np.diff(y, 2)))) / math.sqrt(6.0)
            med = float(median_filter(y, size=7, mode="nearest")[1500])
            y[1500] = med + factor * g.HAMPEL_SIGMAS * sigma
        valid = np.ones(y.size, dtype=bool)
        ours, ref = g.spike_rows(y, valid), plain_spike_rows(y, valid)
        assert np.array_equal(ours[0], ref[0]) and np.array_equal(ours[1], ref[1]), factor
        outcomes.add(ref[0].size)
    assert outcomes == {0, 1}  # the series does straddle the threshold


@pytest.mark.parametrize(
    "n", [1, 2, 4, 7, 8, 13, 100, (1 << 14) + 1, (1 << 16) + 3, (1 << 17) + 11]
)
def test_window_reach_is_the_windows_reach_and_bounds_the_residuals(n):
    from heatlog.inputgate import _window_reach
    from heatlog.smoothing import running_median

    # a column of a two-column table, as the CSV reader gives it (a strided view)
    v = np.random.default_rng(n).normal(size=(n, 2))[:, 1]
    windows = np.lib.stride_tricks.sliding_window_view(np.pad(v, 3, mode="edge"), 7)
    want = max(float((windows.max(1) - v).max()), float((v - windows.min(1)).max()))
    assert _window_reach(v) == want
    assert _window_reach(v) >= float(np.abs(v - running_median(v, 7)).max())
