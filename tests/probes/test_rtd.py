"""Callendar–Van Dusen (IEC 60751) against the standard's table values and its own formula."""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from heatlog.errors import CalibrationError, RangeError
from heatlog.probes.rtd import CallendarVanDusen, pt100, pt1000, tolerance_class
from heatlog.probes.validity import RANGE_MARGIN_K

# IEC 60751 reference table, Pt100 (ohms) — docs/REFERENCES.md: IEC60751; tolerance 1 mΩ.
IEC_PT100 = [(0.0, 100.0000), (50.0, 119.3971), (100.0, 138.5055), (200.0, 175.8560)]


@pytest.mark.parametrize("t, r", IEC_PT100, ids=[f"{t:g}C" for t, _ in IEC_PT100])
def test_pt100_matches_iec_60751_table(t, r):
    assert pt100().temperature_to_resistance(t) == pytest.approx(r, abs=1e-3)


def test_pt1000_is_ten_pt100s():
    t = np.array([-150.0, -20.0, 0.0, 100.0, 600.0])
    np.testing.assert_allclose(
        pt1000().temperature_to_resistance(t), 10 * pt100().temperature_to_resistance(t), rtol=1e-14
    )


def test_negative_temperature_uses_the_c_term():
    # IEC 60751 formula below 0 °C written out by hand: R0[1 + At + Bt² + C(t − 100)t³].
    t, a, b, c = -100.0, 3.9083e-3, -5.775e-7, -4.183e-12
    expected = 100.0 * (1 + a * t + b * t * t + c * (t - 100.0) * t**3)
    assert expected == pytest.approx(60.2558, abs=1e-4)  # IEC 60751 table: 60.26 Ω at −100 °C
    assert pt100().temperature_to_resistance(t) == pytest.approx(expected, abs=1e-9)
    # Without C the curve would be off by ≈ 2.5 mΩ at −100 °C: the term matters.
    no_c = CallendarVanDusen(C=0.0).temperature_to_resistance(t)
    assert abs(no_c - expected) > 2e-3


def test_inverse_of_iec_value_at_100C():
    # IEC 60751: 138.5055 Ω → 100.000 °C within 1e-4 K.
    assert pt100().resistance_to_temperature(138.5055) == pytest.approx(100.0, abs=1e-4)


def test_inverse_below_zero_newton_and_above_zero_closed_form_agree_with_forward():
    t = np.array([-200.0, -150.0, -38.8344, -0.001, 0.0, 0.001, 29.7646, 420.0, 850.0])
    r = pt100().temperature_to_resistance(t)
    np.testing.assert_allclose(pt100().resistance_to_temperature(r), t, atol=1e-9)


def test_gallium_fixed_point_round_trip():
    # ITS-90 gallium melting point 29.7646 °C, used as a check temperature.
    r = pt100().temperature_to_resistance(29.7646)
    assert 111.0 < r < 112.0
    assert pt100().resistance_to_temperature(r) == pytest.approx(29.7646, abs=1e-9)


@pytest.mark.parametrize(
    "cls, t, tol",
    [
        ("A", 0.0, 0.15),
        ("A", 100.0, 0.35),
        ("A", -100.0, 0.35),
        ("B", 0.0, 0.30),
        ("B", 100.0, 0.80),
        ("B", -196.0, 1.28),
        ("C", 100.0, 1.6),
        ("AA", 250.0, 0.525),
        ("b", 50.0, 0.55),
    ],
)
def test_iec_60751_tolerance_classes(cls, t, tol):
    # IEC 60751: class A ±(0.15 + 0.002|t|), class B ±(0.30 + 0.005|t|) °C; AA ±(0.10 +
    # 0.0017|t|), C ±(0.6 + 0.01|t|) (IEC 60751:2008; docs/REFERENCES.md: IEC60751).
    assert tolerance_class(t, cls) == pytest.approx(tol, abs=1e-12)


def test_tolerance_class_is_vectorised_and_rejects_unknown_class():
    np.testing.assert_allclose(tolerance_class(np.array([-10.0, 10.0]), "A"), [0.17, 0.17])
    with pytest.raises(CalibrationError, match="unknown IEC 60751 tolerance class"):
        tolerance_class(0.0, "D")


@pytest.mark.parametrize(
    ("t", "cls", "element", "message"),
    [
        (-200.0, "B", "wire", "-196…600 °C"),
        (300.0, "AA", "wire", "-50…250 °C"),
        (500.0, "A", "wire", "-100…450 °C"),
        (200.0, "AA", "film", "0…150 °C"),
        (-40.0, "A", "film", "-30…300 °C"),
    ],
)
def test_tolerance_class_refuses_outside_its_iec_60751_range(t, cls, element, message):
    # Ranges per class and element type, IEC 60751:2008 (docs/REFERENCES.md: IEC60751)
    with pytest.raises(RangeError, match=message):
        tolerance_class(t, cls, element)
    with pytest.raises(RangeError):
        tolerance_class(np.array([0.0, t]), cls, element)  # one bad element refuses the array


def test_scalar_in_scalar_out_array_in_array_out():
    assert isinstance(pt100().temperature_to_resistance(10.0), float)
    assert isinstance(pt100().resistance_to_temperature(110.0), float)
    out = pt100().resistance_to_temperature([[100.0, 110.0], [90.0, 120.0]])
    assert isinstance(out, np.ndarray) and out.shape == (2, 2)


@given(st.floats(-200.0 - RANGE_MARGIN_K, 850.0 + RANGE_MARGIN_K), st.floats(20.0, 2000.0))
def test_round_trip_over_whole_range(t, r0):
    model = CallendarVanDusen(R0=r0)
    back = model.resistance_to_temperature(model.temperature_to_resistance(t))
    assert math.isclose(back, t, abs_tol=1e-9)


def test_slope_matches_finite_difference():
    p = pt100()
    for t in (-120.0, -1.0, 1.0, 300.0):
        r = p.temperature_to_resistance(t)
        h = 1e-4
        fd = 2 * h / (p.temperature_to_resistance(t + h) - p.temperature_to_resistance(t - h))
        assert p.dtemperature_dresistance(r) == pytest.approx(fd, rel=1e-6)


@pytest.mark.parametrize(
    "call, fragment",
    [
        (lambda: pt100().resistance_to_temperature(0.0), "must be positive"),
        (lambda: pt100().resistance_to_temperature(-5.0), "must be positive"),
        (lambda: pt100().resistance_to_temperature(5.0), "outside"),
        (lambda: pt100().resistance_to_temperature(500.0), "outside"),
        (lambda: pt100().resistance_to_temperature(float("nan")), "finite"),
        (lambda: pt100().temperature_to_resistance(900.0), "outside the valid range"),
        (lambda: pt100().temperature_to_resistance(-202.0), "outside the valid range"),
        (lambda: pt100().temperature_to_resistance("warm"), "must be a number"),
        (lambda: pt100().resistance_to_temperature([110.0, -1.0, -2.0]), "2 values"),
    ],
    ids=["zero", "negative", "too-low", "too-high", "nan", "hot", "cold", "text", "count"],
)
def test_bad_inputs_raise_range_error_with_a_clear_message(call, fragment):
    with pytest.raises(RangeError, match=fragment):
        call()


def test_margin_is_allowed_but_not_more():
    p = CallendarVanDusen(t_min_C=0.0, t_max_C=100.0)
    assert p.temperature_to_resistance(100.0 + RANGE_MARGIN_K) > 0
    with pytest.raises(RangeError):
        p.temperature_to_resistance(100.0 + RANGE_MARGIN_K + 0.01)


@pytest.mark.parametrize(
    "kwargs",
    [
        {"R0": 0.0},
        {"R0": -100.0},
        {"A": -3.9e-3},
        {"t_min_C": 10.0, "t_max_C": 0.0},
        {"B": float("nan")},
    ],
)
def test_bad_coefficients_are_refused(kwargs):
    with pytest.raises((CalibrationError, RangeError)):
        CallendarVanDusen(**kwargs)
