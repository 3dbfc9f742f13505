"""The numpy filters of heatlog.smoothing against scipy, the reference implementation on PyPI,
on seeded data: Savitzky–Golay against scipy.signal.savgol_filter (mode="interp"), the running
median and the moving average against scipy.ndimage."""

import itertools

import numpy as np
import pytest
from scipy.ndimage import median_filter, uniform_filter1d
from scipy.signal import savgol_filter as scipy_savgol

from heatlog.inputgate import running_median as gate_running_median
from heatlog.smoothing import MEDIAN7_NETWORK, moving_average, running_median, savgol_filter


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("polyorder,deriv", [(2, 0), (2, 1), (3, 1), (2, 2), (1, 0), (3, 0)])
def test_matches_scipy(seed, polyorder, deriv):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(polyorder + 2, 400))
    win = int(rng.integers(polyorder + 1, n + 1)) | 1
    if win > n:
        win -= 2
    if win <= polyorder:
        pytest.skip("window too short for this order")
    x = np.cumsum(rng.normal(size=n)) + 20.0
    delta = float(rng.uniform(0.05, 5.0))
    ours = savgol_filter(x, win, polyorder, deriv=deriv, delta=delta)
    ref = scipy_savgol(x, win, polyorder, deriv=deriv, delta=delta, mode="interp")
    scale = max(1.0, float(np.max(np.abs(ref))))
    np.testing.assert_allclose(ours, ref, rtol=0, atol=1e-9 * scale)


def test_exact_on_a_parabola():
    # A quadratic is reproduced exactly by an order-2 filter, edges included; its slope too.
    t = np.arange(50) * 0.5
    y = 3.0 - 0.2 * t + 0.01 * t**2
    np.testing.assert_allclose(savgol_filter(y, 11, 2), y, atol=1e-12)
    np.testing.assert_allclose(
        savgol_filter(y, 11, 2, deriv=1, delta=0.5), -0.2 + 0.02 * t, atol=1e-12
    )


def test_bad_windows_are_refused():
    with pytest.raises(ValueError):
        savgol_filter(np.zeros(5), 7, 2)
    with pytest.raises(ValueError):
        savgol_filter(np.zeros(10), 4, 2)


# --- running median and moving average against scipy.ndimage (the reference implementation on
# PyPI: scipy.ndimage.median_filter with mode="nearest", scipy.ndimage.uniform_filter1d with its
# default mode "reflect"), bit for bit on seeded data ---


def _bits(a):
    return np.ascontiguousarray(a).view(np.uint8)


def _series(rng, n, shape):
    """Seeded series of several kinds: smooth with noise, quantised (many ties), with spikes,
    plateaus, integers held as floats (no −0.0: see running_median's docstring)."""
    if shape == "noise":
        return np.cumsum(rng.normal(size=n)) * 0.1 + rng.normal(size=n) * 0.05 + 20.0
    if shape == "quantised":
        return np.round((np.cumsum(rng.normal(size=n)) * 0.05 + 20.0) / 0.0625) * 0.0625
    if shape == "spikes":
        y = np.cumsum(rng.normal(size=n)) * 0.01 + 25.0
        y[rng.integers(0, n, size=max(1, n // 20))] += rng.normal(size=max(1, n // 20)) * 5.0
        return y
    if shape == "plateaus":
        return np.repeat(rng.integers(1, 5, size=n), rng.integers(1, 4, size=n))[:n] * 1.5
    return rng.integers(-3, 4, size=n).astype(float) + 0.5  # few values, many ties


SHAPES = ("noise", "quantised", "spikes", "plateaus", "ties")


@pytest.mark.parametrize("shape", SHAPES)
@pytest.mark.parametrize("seed", range(3))
def test_running_median_equals_scipy_median_filter_bit_for_bit(shape, seed):
    rng = np.random.default_rng(100 + seed)
    lengths = [1, 2, 3, 6, 7, 8, 13, 50, int(rng.integers(100, 3000))]
    for n in lengths:
        y = _series(rng, n, shape)
        for size in (*range(1, 16), 7, 31, 64):
            ref = median_filter(y, size=size, mode="nearest")
            ours = running_median(y, size)
            assert ours.dtype == ref.dtype and ours.shape == ref.shape
            assert np.array_equal(_bits(ours), _bits(ref)), (shape, n, size)


def test_running_median_of_7_over_many_blocks():
    # longer than one block of the network (the temporaries are built block by block)
    rng = np.random.default_rng(7)
    for n in (16383, 16384, 16385, 100_003):
        y = _series(rng, n, "spikes")
        ref = median_filter(y, size=7, mode="nearest")
        assert np.array_equal(_bits(running_median(y, 7)), _bits(ref)), n


@pytest.mark.parametrize("seed", range(4))
def test_the_gates_running_median_is_scipys_with_the_window_clamped(seed):
    # inputgate.running_median(y, window) = median_filter(y, size=min(window, max(1, y.size)))
    rng = np.random.default_rng(200 + seed)
    for n in (*range(0, 12), 40, 500):
        y = _series(rng, max(n, 1), SHAPES[seed])[:n]
        for window in (1, 3, 5, 7, 9):
            ref = median_filter(y, size=min(window, max(1, y.size)), mode="nearest")
            assert np.array_equal(_bits(gate_running_median(y, window)), _bits(ref)), (n, window)


def _apply_network(values):
    v = list(values)
    for a, b in MEDIAN7_NETWORK:
        if v[a] > v[b]:
            v[a], v[b] = v[b], v[a]
    return v[3]


def test_median7_network_is_a_median_selector():
    # 0-1 principle (docs/REFERENCES.md: KNUTH-TAOCP3): a comparator network that picks the
    # median of every sequence of zeros and ones picks it for every input; all 7! orders too.
    for bits in itertools.product((0, 1), repeat=7):
        assert _apply_network(bits) == sorted(bits)[3], bits
    for order in itertools.permutations(range(7)):
        assert _apply_network(order) == 3, order
    # and the vectorised form (pruned to the outputs it needs) at the centre of a 7-long series
    for bits in itertools.product((0.0, 1.0), repeat=7):
        assert running_median(np.array(bits), 7)[3] == sorted(bits)[3], bits


def test_running_median_refuses_what_it_cannot_do():
    with pytest.raises(ValueError):
        running_median(np.zeros((3, 3)), 3)
    with pytest.raises(ValueError):
        running_median(np.zeros(5), 0)
    assert running_median(np.zeros(0), 7).size == 0


@pytest.mark.parametrize("seed", range(4))
def test_moving_average_equals_scipy_uniform_filter1d_bit_for_bit(seed):
    rng = np.random.default_rng(300 + seed)
    for n in (1, 2, 3, 5, 8, 30, 99, int(rng.integers(200, 5000))):
        x = rng.normal(size=n) * rng.uniform(1e-6, 1e3) + rng.uniform(-100.0, 100.0)
        # even and odd sizes, sizes past the series' length (mirrored more than once), and the
        # reduction's window of 60 s of samples
        for size in (*range(1, 13), 16, 61, 200, 1201):
            ref = uniform_filter1d(x, size=size)
            ours = moving_average(x, size)
            assert ours.dtype == ref.dtype and ours.shape == ref.shape
            assert np.array_equal(_bits(ours), _bits(ref)), (n, size)


def test_moving_average_of_a_line_is_the_line_inside_and_refuses_bad_sizes():
    x = 3.0 + 0.25 * np.arange(40)
    np.testing.assert_allclose(moving_average(x, 5)[2:-2], x[2:-2], rtol=0, atol=1e-12)
    with pytest.raises(ValueError):
        moving_average(x, 0)
    with pytest.raises(ValueError):
        moving_average(np.zeros((2, 2)), 3)
