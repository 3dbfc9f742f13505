"""Calibration fits: coefficient recovery, interpolation, uncertainty, warnings and errors."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog.errors import CalibrationError, HeatlogError, RangeError
from heatlog.probes.chains import MAX31865Chain, VoltageDivider
from heatlog.probes.fitting import fit_counts, fit_resistance
from heatlog.probes.rtd import IEC_C, CallendarVanDusen, pt100
from heatlog.probes.thermistor import Beta, SteinhartHart, SteinhartHart4

SH10K = SteinhartHart(1.129148e-3, 2.34125e-4, 8.76741e-8)  # widely quoted set, from memory
# An invented NTC that a three-term curve cannot follow exactly (D ≠ 0), R(25 °C) = 10 kΩ.
_B, _C, _D = 2.34125e-4, 8.76741e-8, -2.0e-7
_X = np.log(1e4)
NTC_TRUTH = SteinhartHart4(
    1 / 298.15 - _B * _X - _C * _X**3 - _D * _X**2, _B, _C, _D, t_min_C=-20, t_max_C=100
)
# An invented real Pt100: coefficients off the IEC values as a real sensor's are.
PT_TRUTH = CallendarVanDusen(R0=100.021, A=3.9092e-3, B=-5.81e-7, C=-4.0e-12)


def test_done_when_six_ntc_points_interpolate_within_2_mK():
    t = np.linspace(0.0, 80.0, 6)
    fit = fit_resistance(t, NTC_TRUTH.temperature_to_resistance(t), "steinhart-hart")
    grid = np.linspace(0.0, 80.0, 801)
    err = fit.model.resistance_to_temperature(NTC_TRUTH.temperature_to_resistance(grid)) - grid
    assert np.max(np.abs(err)) < 2e-3
    assert np.max(np.abs(err)) > 1e-5  # the truth is not a three-term curve: a real test
    assert fit.max_abs_residual_K < 2e-3


def test_done_when_five_pt100_points_give_cvd_within_1_mK():
    t = np.array([0.0, 50.0, 100.0, 150.0, 200.0])
    fit = fit_resistance(t, PT_TRUTH.temperature_to_resistance(t), "callendar-van-dusen")
    grid = np.linspace(0.0, 200.0, 401)
    err = fit.model.resistance_to_temperature(PT_TRUTH.temperature_to_resistance(grid)) - grid
    assert np.max(np.abs(err)) < 1e-3
    assert fit.coefficients["C"] == IEC_C and "C not fitted" in fit.notes[0]


@pytest.mark.parametrize(
    "truth, model, temps",
    [
        (SH10K, "steinhart-hart", np.linspace(-20, 100, 7)),
        (NTC_TRUTH, "steinhart-hart-4", np.linspace(-10, 90, 8)),
        (Beta(4700.0, 3650.0), "beta", np.linspace(0, 80, 5)),
        (PT_TRUTH, "callendar-van-dusen", np.array([-180.0, -100.0, -40.0, 0.0, 100.0, 300.0])),
    ],
    ids=["sh", "sh4", "beta", "cvd-with-C"],
)
def test_recovers_known_coefficients_from_exact_points(truth, model, temps):
    fit = fit_resistance(temps, truth.temperature_to_resistance(temps), model)
    for name, value in truth.coefficients().items():
        assert fit.coefficients[name] == pytest.approx(value, rel=1e-6), name
    assert fit.max_abs_residual_K < 1e-8
    assert fit.dof == temps.size - len(fit.fitted)


def test_cvd_with_r0_fixed():
    t = np.array([0.0, 60.0, 120.0, 200.0])
    fit = fit_resistance(
        t, PT_TRUTH.temperature_to_resistance(t), "callendar-van-dusen", r0_ohm=100.021
    )
    assert fit.fitted == ("A", "B")
    assert fit.coefficients["A"] == pytest.approx(PT_TRUTH.A, rel=1e-9)
    assert any("R0 held" in n for n in fit.notes)


def test_fit_from_counts_through_a_chain():
    chain = MAX31865Chain(430.0)
    t = np.array([0.0, 25.0, 50.0, 75.0, 100.0])
    counts = chain.to_counts(PT_TRUTH.temperature_to_resistance(t))
    fit = fit_counts(t, counts, chain, "callendar-van-dusen")
    assert fit.coefficients["R0"] == pytest.approx(100.021, rel=1e-9)
    # With rounded codes the fit still lands within the code step (≈ 0.034 K, FIRMWARE.md).
    rounded = fit_counts(t, np.round(counts), chain, "callendar-van-dusen")
    assert rounded.max_abs_residual_K < 0.034


def test_fit_from_divider_counts():
    chain = VoltageDivider(10_000.0, bits=16)
    t = np.linspace(0.0, 80.0, 9)
    fit = fit_counts(
        t, chain.to_counts(SH10K.temperature_to_resistance(t)), chain, "steinhart-hart"
    )
    assert fit.coefficients["B"] == pytest.approx(SH10K.B, rel=1e-8)


def test_u_fit_agrees_with_monte_carlo_refits():
    # Independent check of the covariance propagation: refit many noisy copies of the points
    # and compare the spread of the fitted curve with u_fit (JCGM 101 style).
    rng = np.random.default_rng(7)
    t = np.linspace(0.0, 80.0, 9)
    r_true = SH10K.temperature_to_resistance(t)
    sigma = 0.005  # K of noise on the reference temperatures
    fit = fit_resistance(t + rng.normal(0, sigma, t.size), r_true, "steinhart-hart")
    probe_t = np.array([5.0, 40.0, 75.0])
    probe_r = SH10K.temperature_to_resistance(probe_t)
    curves = []
    for _ in range(400):
        f = fit_resistance(t + rng.normal(0, sigma, t.size), r_true, "steinhart-hart")
        curves.append(f.model.resistance_to_temperature(probe_r))
    spread = np.std(curves, axis=0, ddof=1)
    # With the true σ in place of s, u_fit scales exactly; compare shapes with the known σ.
    predicted = fit.u_fit(probe_t) * sigma / fit.residual_sd_K
    np.testing.assert_allclose(spread, predicted, rtol=0.15)


def test_u_fit_combines_with_reference_uncertainty_and_beta_covariance_is_sane():
    t = np.linspace(0.0, 100.0, 11)
    fit = fit_resistance(t, SH10K.temperature_to_resistance(t), "beta", ref_u_K=0.02)
    # β cannot follow the SH curve: residuals of tenths of a kelvin, so u_fit is not small.
    assert 0.2 < fit.max_abs_residual_K < 1.0
    u_fit = fit.u_fit([0.0, 50.0, 100.0])
    assert np.all(u_fit > 0.01)
    np.testing.assert_allclose(fit.u_combined([0.0, 50.0, 100.0]), np.hypot(u_fit, 0.02))
    table = fit.u_table(5)
    assert table["temp_C"].tolist() == [0.0, 25.0, 50.0, 75.0, 100.0]
    assert table["max_u_K"] == pytest.approx(max(table["u_K"]))


def test_no_degrees_of_freedom_warns_and_uses_reference_uncertainty():
    t = np.array([0.0, 40.0, 80.0])
    fit = fit_resistance(t, SH10K.temperature_to_resistance(t), "steinhart-hart", ref_u_K=0.01)
    assert fit.dof == 0 and fit.covariance_from == "reference uncertainty"
    assert any("no degrees of freedom" in w for w in fit.warnings)
    # At a calibration point the curve is as good as the reference that fixed it, or better.
    assert 0.0 < fit.u_fit(40.0)[0] <= 0.0101


def test_warns_when_points_do_not_span_the_range():
    t = np.linspace(10.0, 60.0, 6)
    fit = fit_resistance(t, SH10K.temperature_to_resistance(t), "steinhart-hart", range_C=(0, 80))
    assert any("extrapolated" in w for w in fit.warnings)
    assert (fit.model.t_min_C, fit.model.t_max_C) == (0.0, 80.0)
    spanned = fit_resistance(t, SH10K.temperature_to_resistance(t), "steinhart-hart")
    assert spanned.warnings == ()


def test_cvd_range_below_zero_without_cold_points_warns():
    t = np.array([0.0, 50.0, 100.0, 150.0])
    fit = fit_resistance(
        t, pt100().temperature_to_resistance(t), "callendar-van-dusen", range_C=(-50, 150)
    )
    assert any("C term" in w for w in fit.warnings)


R_SH = SH10K.temperature_to_resistance(np.array([0.0, 20.0, 40.0, 60.0]))


@pytest.mark.parametrize(
    "temps, res, model, fragment",
    [
        (
            [0.0, 50.0],
            R_SH[:2],
            "steinhart-hart",
            "need at least 3 calibration points for steinhart-hart",
        ),
        ([0.0, 50.0, 100.0], [100.0, 119.4, 138.5], "steinhart-hart-4", "need at least 4"),
        ([0.0], [100.0], "callendar-van-dusen", "need at least 3"),
        ([10.0], [1e4], "beta", "need at least 2"),
        ([0.0, 20.0, 20.0, 60.0], R_SH, "steinhart-hart", "duplicate calibration points at 20"),
        ([0.0, 20.0, 40.0, 60.0], R_SH[::-1], "steinhart-hart", "must fall"),
        ([0.0, 50.0, 100.0], [138.5, 119.4, 100.0], "callendar-van-dusen", "must rise"),
        ([0.0, 20.0, 40.0, 60.0], [3e4, -1.0, 5e3, 2e3], "steinhart-hart", "must be positive"),
        ([0.0, 20.0, 40.0, 400.0], R_SH, "steinhart-hart", "outside -80..300"),
        (
            [-250.0, 0.0, 50.0, 100.0],
            [10.0, 100.0, 119.4, 138.5],
            "callendar-van-dusen",
            "outside -200..850",
        ),
        ([0.0, 20.0, 40.0], R_SH, "steinhart-hart", "equal-length"),
        ([0.0, 20.0, 40.0, 60.0], R_SH, "polynomial", "unknown probe model"),
    ],
    ids=[
        "too-few-sh",
        "too-few-sh4",
        "too-few-cvd",
        "too-few-beta",
        "duplicate",
        "rising-ntc",
        "falling-rtd",
        "negative-R",
        "hot-ntc",
        "cold-rtd",
        "lengths",
        "unknown-model",
    ],
)
def test_bad_points_raise_calibration_error(temps, res, model, fragment):
    with pytest.raises(CalibrationError, match=fragment):
        fit_resistance(temps, res, model)


def test_bad_options_raise():
    t = np.array([0.0, 20.0, 40.0, 60.0])
    with pytest.raises(CalibrationError, match="reference uncertainty"):
        fit_resistance(t, R_SH, "steinhart-hart", ref_u_K=-0.1)
    with pytest.raises(CalibrationError, match="low to high"):
        fit_resistance(t, R_SH, "steinhart-hart", range_C=(60, 0))
    with pytest.raises(CalibrationError, match="R0"):
        fit_resistance(t, pt100().temperature_to_resistance(t), "callendar-van-dusen", r0_ohm=0.0)
    with pytest.raises(RangeError):
        fit_counts(t, [0, 1000, 2000, 3000], VoltageDivider(1e4), "steinhart-hart")


@pytest.mark.parametrize(
    "model", ["steinhart-hart", "steinhart-hart-4", "beta", "callendar-van-dusen"]
)
@settings(max_examples=60, deadline=None)
@given(
    temps=st.lists(st.floats(-300.0, 1000.0), min_size=0, max_size=8),
    res=st.lists(st.floats(-10.0, 1e7), min_size=0, max_size=8),
)
def test_fuzzed_points_end_in_a_fit_or_a_clean_error(model, temps, res):
    try:
        fit = fit_resistance(temps, res, model)
    except HeatlogError:
        return
    assert np.all(np.isfinite(fit.residuals_K))


@pytest.mark.parametrize(
    "model", ["steinhart-hart", "steinhart-hart-4", "beta", "callendar-van-dusen"]
)
@settings(max_examples=80, deadline=None)
@given(
    temps=st.lists(st.floats(-60.0, 250.0), min_size=2, max_size=9, unique=True),
    res=st.lists(st.floats(1.0, 1e6), min_size=2, max_size=9, unique=True),
    ref_u=st.floats(0.0, 1.0),
)
def test_fuzzed_monotonic_points_end_in_a_fit_or_a_clean_error(model, temps, res, ref_u):
    n = min(len(temps), len(res))
    t = np.sort(temps[:n])
    r = np.sort(res[:n])
    r = r if model == "callendar-van-dusen" else r[::-1]
    try:
        fit = fit_resistance(t, r, model, ref_u_K=ref_u)
    except HeatlogError:
        return
    assert np.all(np.isfinite(fit.residuals_K))
    assert np.all(np.isfinite(fit.u_table()["u_K"]))


def test_cvd_c_needs_a_point_cold_enough_to_show_it():
    # Near 0 °C the IEC C term is far below a millikelvin: C is held, not fitted from noise.
    t = np.array([-5.0, 0.0, 50.0, 100.0, 150.0])
    fit = fit_resistance(t, PT_TRUTH.temperature_to_resistance(t), "callendar-van-dusen")
    assert "C" not in fit.fitted and "-20" in fit.notes[0]
    assert fit.max_abs_residual_K < 1e-3  # PT_TRUTH's own C differs, but only by µK at −5 °C


def test_points_that_cannot_determine_the_coefficients_are_refused():
    # Four points crowded into 10 mK cannot pin down a three-term curve.
    t = np.array([25.0, 25.003, 25.006, 25.01])
    with pytest.raises(CalibrationError, match="determine"):
        fit_resistance(t, SH10K.temperature_to_resistance(t), "steinhart-hart")
