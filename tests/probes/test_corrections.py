"""One- and two-point corrections of standard and nominal curves."""

import numpy as np
import pytest

from heatlog.errors import CalibrationError, RangeError
from heatlog.probes.corrections import one_point_correction, two_point_correction
from heatlog.probes.rtd import CallendarVanDusen, pt100
from heatlog.probes.thermistor import Beta, SteinhartHart, SteinhartHart4

GALLIUM_C = 29.7646  # ITS-90 fixed point, gallium melting point
SH10K = SteinhartHart(1.129148e-3, 2.34125e-4, 8.76741e-8)  # widely quoted set, from memory


def test_pt100_ice_point_sets_r0():
    # A probe that reads 100.040 Ω in an ice-point bath (ASTM E563: 0 °C).
    probe = one_point_correction(pt100(), (0.0, 100.040))
    assert pytest.approx(100.040, abs=1e-12) == probe.R0
    assert probe.resistance_to_temperature(100.040) == pytest.approx(0.0, abs=1e-12)
    assert (probe.A, probe.B, probe.C) == (pt100().A, pt100().B, pt100().C)


def test_pt100_two_points_recover_r0_and_a_of_a_probe_with_iec_b_and_c():
    truth = CallendarVanDusen(R0=99.97, A=3.9101e-3)
    probe = two_point_correction(
        pt100(),
        (0.0, truth.temperature_to_resistance(0.0)),
        (GALLIUM_C, truth.temperature_to_resistance(GALLIUM_C)),
    )
    assert pytest.approx(99.97, rel=1e-12) == probe.R0
    assert pytest.approx(3.9101e-3, rel=1e-9) == probe.A
    t = np.linspace(-100.0, 300.0, 9)
    np.testing.assert_allclose(
        probe.temperature_to_resistance(t), truth.temperature_to_resistance(t)
    )


def test_thermistor_nominal_set_shifted_by_an_ice_point_reading():
    # A nominal 10 kΩ part whose own curve sits 1.2 % high in resistance at every temperature.
    truth_r0 = 1.012 * SH10K.temperature_to_resistance(0.0)
    probe = one_point_correction(SH10K, (0.0, truth_r0))
    assert probe.resistance_to_temperature(truth_r0) == pytest.approx(0.0, abs=1e-10)
    # Shifting A leaves the C ln³R term slightly off for a scaled curve: by hand,
    # 1/T_read − 1/T = C[(x + L)³ − x³ − (x0 + L)³ + x0³], x = ln R(T), x0 = ln R(0), L = ln 1.012.
    t = np.linspace(0.0, 50.0, 11)
    x, x0, lk = np.log(SH10K.temperature_to_resistance(t)), np.log(truth_r0 / 1.012), np.log(1.012)
    inv = 1 / (t + 273.15) + SH10K.C * ((x + lk) ** 3 - x**3 - (x0 + lk) ** 3 + x0**3)
    back = probe.resistance_to_temperature(1.012 * SH10K.temperature_to_resistance(t))
    np.testing.assert_allclose(back, 1 / inv - 273.15, atol=1e-9)
    assert 5e-3 < np.max(np.abs(back - t)) < 0.02  # a one-point fix is good near its point only
    beta = one_point_correction(Beta(10_000.0, 3950.0), (0.0, 33_000.0))
    assert beta.resistance_to_temperature(33_000.0) == pytest.approx(0.0, abs=1e-10)


@pytest.mark.parametrize(
    "model", [SH10K, SteinhartHart4(1.129148e-3, 2.34125e-4, 8.76741e-8, 0.0), Beta(1e4, 3950.0)]
)
def test_thermistor_two_point_correction_reads_both_points(model):
    points = [(0.0, 33_100.0), (GALLIUM_C, 8_150.0)]
    probe = two_point_correction(model, *points)
    got = probe.resistance_to_temperature(np.array([33_100.0, 8_150.0]))
    np.testing.assert_allclose(got, [0.0, GALLIUM_C], atol=1e-9)


@pytest.mark.parametrize(
    "call, error",
    [
        (lambda: one_point_correction(pt100(), (0.0, 0.0)), CalibrationError),
        (lambda: one_point_correction(pt100(), (0.0, float("nan"))), CalibrationError),
        (lambda: one_point_correction(pt100(), (900.0, 400.0)), RangeError),
        (lambda: two_point_correction(pt100(), (0.0, 100.0), (0.5, 100.2)), CalibrationError),
        (lambda: one_point_correction(object(), (0.0, 1.0)), Exception),
    ],
)
def test_bad_corrections(call, error):
    with pytest.raises(error):
        call()
