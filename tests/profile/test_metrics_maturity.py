"""Threshold times on constructed curves, ASTM C1074 maturity check values, extrema downsampling."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from heatlog.errors import InputError
from heatlog.profile import Thresholds, downsample_extrema, maturity, metrics

# A constructed warmer curve (piecewise linear, exact by hand): 20 → 50 °C over the first hour,
# flat for an hour, back to 20 °C over the third.
T = np.array([0.0, 3600.0, 7200.0, 10800.0])
Y = np.array([20.0, 50.0, 50.0, 20.0])


def test_threshold_times_on_a_constructed_curve():
    m = metrics(T, Y, kind="warmer", thresholds=Thresholds(40.0, (40.0, 45.0)))
    # 40 °C is 2/3 of the way up the first hour: 2400 s; above 40 °C: 1200 + 3600 + 1200 s.
    assert m.time_to_threshold_s == pytest.approx(2400.0, abs=1e-9)
    assert m.time_beyond_threshold_s == pytest.approx(6000.0, abs=1e-9)
    # 40–45 °C: 600 s on the way up and 600 s on the way down.
    assert m.time_in_band_s == pytest.approx(1200.0, abs=1e-9)
    assert m.peak_C == 50.0 and m.time_to_peak_s == 3600.0
    # With u_T = 0 the peak is a plateau of 3600 s: rectangular, half-width 1800 s.
    assert m.u_time_to_peak_s == pytest.approx(1800.0 / math.sqrt(3.0))


def test_threshold_uncertainty_is_u_t_over_the_slope():
    """GUM sensitivity: δt = δT/(dT/dt); slope 30 K/h, u_T 0.3 K → 36 s to reach 40 °C."""
    m = metrics(T, Y, kind="warmer", thresholds=Thresholds(40.0, None), u_temp_K=0.3)
    assert m.u_time_to_threshold_s == pytest.approx(36.0, rel=1e-9)
    # Time above: both crossings move by 36 s in the same sense.
    assert m.u_time_beyond_threshold_s == pytest.approx(72.0, rel=1e-9)


def test_pack_counts_below_and_never_reached():
    y = 60.0 - Y  # 40 → 10 → 10 → 40 °C
    m = metrics(T, y, kind="pack", thresholds=Thresholds(15.0, (5.0, 15.0)))
    assert m.side == "below" and m.peak_C == 10.0
    assert m.time_to_threshold_s == pytest.approx(3000.0)
    assert m.time_beyond_threshold_s == pytest.approx(600.0 + 3600.0 + 600.0)
    assert m.time_in_band_s == pytest.approx(4800.0)
    never = metrics(T, Y, kind="warmer", thresholds=Thresholds(60.0, None))
    assert never.time_to_threshold_s is None and never.time_beyond_threshold_s == 0.0


def test_skipped_intervals_count_for_nothing():
    skip = np.array([False, True, False])
    m = metrics(T, Y, kind="warmer", thresholds=Thresholds(40.0, None), skip=skip)
    assert m.time_beyond_threshold_s == pytest.approx(2400.0)


def test_bad_band_and_kind():
    with pytest.raises(InputError, match="must lie below"):
        Thresholds(None, (45.0, 40.0))
    with pytest.raises(InputError, match="unknown kind"):
        metrics(T, Y, kind="heater")


def test_nurse_saul_check_value():
    """ASTM C1074 formula: 24 h at 20 °C with T₀ = 0 °C gives 480 °C·h."""
    t = np.arange(0.0, 24 * 3600.0 + 1.0, 600.0)
    mt = maturity(t, np.full(t.size, 20.0), datum_C=0.0)
    assert mt.factor_Ch[-1] == pytest.approx(480.0, abs=1e-9)


def test_below_datum_adds_nothing():
    """ASTM C1074 (from memory): an interval with T_a < T₀ adds 0, it never subtracts."""
    t = np.arange(0.0, 48 * 3600.0 + 1.0, 600.0)
    y = np.where(t <= 24 * 3600.0, 20.0, -5.0)
    mt = maturity(t, y, datum_C=0.0)
    # The one interval across the step has T_a = 7.5 °C for 600 s: 1.25 °C·h more.
    assert mt.factor_Ch[-1] == pytest.approx(480.0 + 7.5 / 6.0, abs=1e-9)


def test_equivalent_age_at_reference_is_elapsed_time():
    """At T_a = T_s the Arrhenius factor is 1, so t_e equals the elapsed time."""
    t = np.arange(0.0, 72 * 3600.0 + 1.0, 900.0)
    mt = maturity(t, np.full(t.size, 20.0), reference_C=20.0)
    np.testing.assert_allclose(mt.equivalent_age_h, t / 3600.0, rtol=1e-12)


def test_equivalent_age_at_thirty_degrees():
    """t_e = exp[−Q(1/T_a − 1/T_s)]·t with Q = 5000 K (ASTM C1074 formula, evaluated by hand)."""
    t = np.arange(0.0, 10 * 3600.0 + 1.0, 600.0)
    mt = maturity(t, np.full(t.size, 30.0), activation_K=5000.0, reference_C=20.0, u_temp_K=0.5)
    factor = math.exp(-5000.0 * (1.0 / 303.15 - 1.0 / 293.15))
    assert mt.equivalent_age_h[-1] == pytest.approx(10.0 * factor, rel=1e-12)
    # Sensitivity to a common temperature offset: Q/T_a² per kelvin (analytic derivative).
    assert mt.age_budget.u == pytest.approx(10.0 * factor * 5000.0 / 303.15**2 * 0.5, rel=1e-9)
    assert mt.factor_budget.u == pytest.approx(10.0 * 0.5, rel=1e-12)


def test_downsample_keeps_the_extrema_and_ends():
    rng = np.random.default_rng(0)
    t = np.arange(1_000_003, dtype=float)
    y = np.cumsum(rng.normal(size=t.size))
    td, yd = downsample_extrema(t, y, 500)
    assert td.size <= 2 * 500 + 2
    assert yd.max() == y.max() and yd.min() == y.min()
    assert td[0] == t[0] and td[-1] == t[-1] and yd[0] == y[0] and yd[-1] == y[-1]
    assert np.all(np.diff(td) > 0)


@settings(max_examples=80, deadline=None)
@given(
    hnp.arrays(float, st.integers(1, 400), elements=st.floats(-1e3, 1e3)),
    st.integers(1, 50),
)
def test_downsample_properties(y, buckets):
    """Any series: global extrema, first and last kept, time order kept, at most 2n + 2 points."""
    t = np.arange(y.size, dtype=float)
    td, yd = downsample_extrema(t, y, buckets)
    assert yd.max() == y.max() and yd.min() == y.min()
    assert td[0] == 0 and td[-1] == y.size - 1
    assert td.size <= max(2 * buckets + 2, y.size)
    assert np.all(np.diff(td) > 0)
    np.testing.assert_array_equal(yd, y[td.astype(int)])
