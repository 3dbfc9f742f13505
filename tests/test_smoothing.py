"""The numpy Savitzky–Golay filter against scipy.signal.savgol_filter (mode="interp"), the
reference implementation on PyPI, on seeded data."""

import numpy as np
import pytest
from scipy.signal import savgol_filter as scipy_savgol

from heatlog.smoothing import savgol_filter


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
