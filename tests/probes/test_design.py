"""Divider design: series resistor criteria, self-heating, resolution and oversampling."""

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from heatlog.errors import RangeError
from heatlog.probes.design import (
    design_divider,
    local_beta,
    oversampling_for,
    self_heating,
    series_resistor,
)
from heatlog.probes.thermistor import Beta, SteinhartHart

SH10K = SteinhartHart(1.129148e-3, 2.34125e-4, 8.76741e-8)  # widely quoted set, from memory


def test_self_heating_check_value():
    # Derived by hand (Ohm's law, no source): 3.3 V, 10 k/10 k → 0.27 mW, 0.18 K at 1.5 mW/K.
    p, dt = self_heating(3.3, 10_000.0, 10_000.0, 1.5)
    assert p == pytest.approx(0.27e-3, abs=0.005e-3)
    assert dt == pytest.approx(0.18, abs=0.005)


def test_max_span_resistor_maximises_the_span_numerically():
    # Independent method: maximise the ratio span over R_s with a scalar optimiser.
    r1, r2 = SH10K.temperature_to_resistance([0.0, 80.0])

    def neg_span(log_rs):
        rs = np.exp(log_rs)
        return -(r1 / (r1 + rs) - r2 / (r2 + rs))

    best = np.exp(minimize_scalar(neg_span, bounds=(np.log(100), np.log(1e6)), method="bounded").x)
    assert series_resistor(SH10K, 0.0, 80.0) == pytest.approx(best, rel=1e-4)
    assert series_resistor(SH10K, 0.0, 80.0) == pytest.approx(np.sqrt(r1 * r2), rel=1e-12)


def test_linearity_resistor_puts_the_inflection_at_mid_range():
    # For a β curve, V(T) = R_T/(R_T + R_s) has d²V/dT² = 0 at Tm with the derived R_s.
    model = Beta(10_000.0, 3950.0)
    rs = series_resistor(model, 0.0, 80.0, "linearity")
    t = np.array([39.0, 40.0, 41.0])
    v = model.temperature_to_resistance(t)
    v = v / (v + rs)
    second = v[0] - 2 * v[1] + v[2]
    first = (v[2] - v[0]) / 2
    assert abs(second) < 1e-6 * abs(first)
    assert local_beta(model, 40.0) == pytest.approx(3950.0, rel=1e-12)


def test_local_beta_of_sh_curve_is_near_its_nominal_beta():
    assert 3800 < local_beta(SH10K, 25.0) < 4000


def test_oversampling_needed_gains_half_a_bit_per_doubling():
    assert oversampling_for(0.010, 0.020) == 1
    assert oversampling_for(0.040, 0.020) == 4  # 2× finer needs 4× the reads
    assert oversampling_for(0.041, 0.020) == 16
    assert oversampling_for(10.0, 1e-4) is None
    with pytest.raises(RangeError):
        oversampling_for(0.01, 0.0)


def test_design_report_over_range():
    d = design_divider(SH10K, 0.0, 80.0, bits=12, oversample=16, target_mK=5.0)
    assert d.r_series_ohm == pytest.approx(series_resistor(SH10K, 0.0, 80.0))
    np.testing.assert_allclose(d.resolution_mK, d.step_raw_mK / 4.0)
    assert d.worst_resolution_mK == pytest.approx(max(d.resolution_mK))
    assert d.oversample_needed == oversampling_for(max(d.step_raw_mK) * 1e-3, 5e-3)
    assert np.all((d.ratio > 0) & (d.ratio < 1))
    # Self-heating peaks where R_T = R_s (matched load), at V²/(4 R_s).
    assert max(d.self_heating_mW) <= 3.3**2 / (4 * d.r_series_ohm) * 1e3 + 1e-12
    assert any("1 LSB" in n for n in d.notes)
    given = design_divider(SH10K, 0.0, 80.0, r_series_ohm=10_000.0, bits=16)
    assert given.criterion == "given" and given.worst_resolution_mK < d.worst_resolution_mK


@pytest.mark.parametrize(
    "call",
    [
        lambda: series_resistor(SH10K, 80.0, 0.0),
        lambda: series_resistor(SH10K, 0.0, 80.0, "flat"),
        lambda: series_resistor(SH10K, 0.0, 200.0),
        lambda: design_divider(SH10K, 0.0, 80.0, r_series_ohm=-1.0),
        lambda: design_divider(SH10K, 0.0, 80.0, excitation_V=0.0),
        lambda: design_divider(SH10K, 0.0, 80.0, oversample=0),
        lambda: self_heating(3.3, 1e4, 1e4, 0.0),
    ],
)
def test_bad_design_inputs(call):
    with pytest.raises(RangeError):
        call()
