"""Steinhart–Hart (3- and 4-term) and β thermistor curves."""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from heatlog.errors import CalibrationError, RangeError
from heatlog.probes.thermistor import Beta, SteinhartHart, SteinhartHart4
from heatlog.probes.validity import RANGE_MARGIN_K

# The widely quoted 10 kΩ NTC Steinhart–Hart set (common practice; values from memory).
SH10K = SteinhartHart(1.129148e-3, 2.34125e-4, 8.76741e-8)


def test_sh_10k_reads_25C_at_10k():
    # From memory: 10 000 Ω → 25.00 °C within 0.01 K.
    assert SH10K.resistance_to_temperature(10_000.0) == pytest.approx(25.0, abs=0.01)


def test_sh_10k_reads_0C_near_32650():
    # From memory: ≈ 32 650 Ω → 0.00 °C within 0.01 K.
    assert SH10K.resistance_to_temperature(32_650.0) == pytest.approx(0.0, abs=0.01)
    assert SH10K.temperature_to_resistance(0.0) == pytest.approx(32_650.0, rel=1e-3)


def test_cardano_inverse_agrees_with_newton_inverse():
    # Independent method: the four-term class with D = 0 inverts by bracketed Newton.
    newton = SteinhartHart4(SH10K.A, SH10K.B, SH10K.C, 0.0)
    t = np.linspace(-40.0, 125.0, 331)
    np.testing.assert_allclose(
        SH10K.temperature_to_resistance(t), newton.temperature_to_resistance(t), rtol=1e-12
    )


def test_beta_closed_forms():
    b = Beta(10_000.0, 3950.0)
    assert b.temperature_to_resistance(25.0) == pytest.approx(10_000.0, rel=1e-15)
    expected = 10_000.0 * math.exp(3950.0 * (1 / 273.15 - 1 / 298.15))
    assert b.temperature_to_resistance(0.0) == pytest.approx(expected, rel=1e-13)
    b50 = Beta(10_000.0, 3950.0, T25_C=50.0)  # R25 stated at another reference temperature
    assert b50.temperature_to_resistance(50.0) == pytest.approx(10_000.0, rel=1e-15)


def test_single_beta_errs_by_tenths_of_a_kelvin_against_sh_curve():
    # Common practice: a single β over 0–100 °C errs by several tenths of a K on a real NTC curve.
    # "Truth" is the 10 kΩ SH set; β is taken the datasheet way, from R(25) and R(85).
    r25, r85 = SH10K.temperature_to_resistance([25.0, 85.0])
    beta = math.log(r25 / r85) / (1 / 298.15 - 1 / 358.15)
    model = Beta(r25, beta)
    t = np.linspace(0.0, 100.0, 201)
    err = model.resistance_to_temperature(SH10K.temperature_to_resistance(t)) - t
    worst = np.max(np.abs(err))
    # "~0.7 K" (common practice, no source); this pair gives 0.70 K at 0 °C.
    assert 0.5 < worst < 1.0
    assert abs(err[t == 25.0][0]) < 1e-9  # exact at its own points


SH_MODELS = [
    SH10K,
    SteinhartHart4(1.129148e-3, 2.34125e-4, 8.76741e-8, -2.0e-7),
    SteinhartHart(1.1e-3, 2.4e-4, -1.0e-8),  # C < 0: Newton path of the three-term class
    Beta(10_000.0, 3950.0),
    Beta(2252.0, 3891.0, T25_C=25.0),
]


@pytest.mark.parametrize("model", SH_MODELS, ids=["sh", "sh4", "sh-negC", "beta", "beta-2k"])
@given(t=st.floats(-40.0 - RANGE_MARGIN_K, 125.0 + RANGE_MARGIN_K))
def test_round_trip(model, t):
    back = model.resistance_to_temperature(model.temperature_to_resistance(t))
    assert math.isclose(back, t, abs_tol=1e-8)


@pytest.mark.parametrize("model", SH_MODELS, ids=["sh", "sh4", "sh-negC", "beta", "beta-2k"])
def test_vectorised_matches_scalar_and_slope_matches_finite_difference(model):
    t = np.array([-30.0, 0.0, 37.0, 100.0])
    r = model.temperature_to_resistance(t)
    assert [model.temperature_to_resistance(float(x)) for x in t] == pytest.approx(r, rel=1e-13)
    h = 1e-3
    fd = 2 * h / (model.temperature_to_resistance(t + h) - model.temperature_to_resistance(t - h))
    np.testing.assert_allclose(model.dtemperature_dresistance(r), fd, rtol=1e-6)
    assert np.all(np.diff(r) < 0)  # NTC


@pytest.mark.parametrize(
    "call, fragment",
    [
        (lambda: SH10K.resistance_to_temperature(0.0), "must be positive"),
        (lambda: SH10K.resistance_to_temperature(-1.0), "must be positive"),
        (lambda: SH10K.resistance_to_temperature(10.0), "outside"),
        (lambda: SH10K.resistance_to_temperature(1e9), "outside"),
        (lambda: SH10K.temperature_to_resistance(150.0), "outside the valid range"),
        (lambda: SH10K.temperature_to_resistance([20.0, float("inf")]), "finite"),
        (lambda: Beta(1e4, 3950).resistance_to_temperature(0.0), "must be positive"),
        (lambda: Beta(1e4, 3950).temperature_to_resistance(-60.0), "outside the valid range"),
    ],
)
def test_bad_inputs_raise_range_error(call, fragment):
    with pytest.raises(RangeError, match=fragment):
        call()


@pytest.mark.parametrize(
    "make",
    [
        lambda: SteinhartHart(1.1e-3, -2.3e-4, 8.7e-8),  # rising curve
        lambda: SteinhartHart(float("nan"), 2.3e-4, 8.7e-8),
        lambda: SteinhartHart(1.1e-3, 2.3e-4, 8.7e-8, t_min_C=50.0, t_max_C=10.0),
        lambda: SteinhartHart(1.1e-3, 2.3e-4, 8.7e-8, t_min_C=-300.0),
        lambda: Beta(-1.0, 3950.0),
        lambda: Beta(1e4, 0.0),
    ],
    ids=["rising", "nan", "range-order", "below-zero-K", "neg-R25", "zero-beta"],
)
def test_bad_coefficients_are_refused_at_construction(make):
    with pytest.raises((CalibrationError, RangeError)):
        make()
