"""Probe files: TOML written with tomli_w, read with tomllib, validated with clean errors."""

import datetime as dt

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from heatlog.errors import CalibrationError
from heatlog.probes.fitting import fit_resistance
from heatlog.probes.probefile import (
    ProbeFile,
    load_probe,
    parse_probe,
    probe_from_fit,
    probe_to_toml,
    save_probe,
)
from heatlog.probes.rtd import pt100
from heatlog.probes.thermistor import Beta, SteinhartHart

SH10K = SteinhartHart(1.129148e-3, 2.34125e-4, 8.76741e-8, t_min_C=0.0, t_max_C=80.0)
GOOD = """\
id = "ntc-01"
kind = "thermistor"
model = "steinhart-hart"
calibration_date = 2026-11-30
reference = "Pt100 class A (invented)"
valid_range_C = [0.0, 80.0]
uncertainty_K = 0.02

[coefficients]
A = 1.129148e-3
B = 2.34125e-4
C = 8.76741e-8
"""


def test_reads_a_hand_written_file(tmp_path):
    path = tmp_path / "ntc-01.toml"
    path.write_text(GOOD)
    probe = load_probe(path)
    assert probe.id == "ntc-01" and probe.kind == "thermistor"
    assert probe.calibration_date == dt.date(2026, 11, 30)
    assert probe.valid_range_C == (0.0, 80.0)
    assert probe.model.resistance_to_temperature(10_000.0) == pytest.approx(25.0, abs=0.01)


def test_fit_to_file_and_back(tmp_path):
    t = np.linspace(0.0, 80.0, 7)
    fit = fit_resistance(t, SH10K.temperature_to_resistance(t), "beta", ref_u_K=0.01)
    probe = probe_from_fit(fit, "ntc-02", reference="ref", calibration_date=dt.date(2026, 12, 1))
    # The default uncertainty holds the lack of fit of a β curve (tenths of a kelvin).
    assert probe.uncertainty_K > fit.rms_residual_K
    save_probe(probe, tmp_path / "p.toml")
    back = load_probe(tmp_path / "p.toml")
    assert back.model == probe.model and back.fit["dof"] == 5
    assert back.model.T25_C == 25.0


@given(
    r0=st.floats(50.0, 2000.0),
    a=st.floats(3.8e-3, 4.0e-3),
    u=st.floats(0.0, 5.0),
    lo=st.floats(-200.0, 100.0),
    width=st.floats(1.0, 500.0),
)
def test_round_trip_of_any_valid_rtd_file(r0, a, u, lo, width):
    model = type(pt100())(R0=r0, A=a, t_min_C=lo, t_max_C=min(lo + width, 850.0))
    probe = ProbeFile("rtd-x", model, dt.date(2026, 1, 2), "SPRT", u)
    back = parse_probe(probe_to_toml(probe))
    assert back.model == model and back.uncertainty_K == u and back.id == "rtd-x"


@given(st.text(max_size=200))
def test_any_text_ends_in_a_clean_error_or_a_probe(text):
    try:
        parse_probe(text)
    except CalibrationError:
        pass


def _edit(old: str, new: str) -> str:
    assert old in GOOD
    return GOOD.replace(old, new)


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("id = ", "not valid TOML"),
        (_edit('id = "ntc-01"\n', ""), "missing key(s) id"),
        (_edit("[coefficients]", "colour = 'red'\n[coefficients]"), "unknown key(s) colour"),
        (GOOD + "colour = 'red'\n", "coefficients: unknown colour"),
        (_edit('"ntc-01"', '"ntc 01!"'), "id must be"),
        (_edit('kind = "thermistor"', 'kind = "rtd"'), "does not match model"),
        (_edit('model = "steinhart-hart"', 'model = "magic"'), "model must be one of"),
        (_edit("2026-11-30", '"yesterday"'), "calibration_date"),
        (_edit('"Pt100 class A (invented)"', '""'), "reference"),
        (_edit("[0.0, 80.0]", "[0.0]"), "valid_range_C"),
        (_edit("[0.0, 80.0]", "[80.0, 0.0]"), "low to high"),
        (_edit("uncertainty_K = 0.02", "uncertainty_K = -1"), "uncertainty_K must be"),
        (_edit("uncertainty_K = 0.02", 'uncertainty_K = "small"'), "finite number"),
        (_edit("C = 8.76741e-8\n", ""), "missing C"),
        (_edit("C = 8.76741e-8", "C = 'x'"), "must be a number"),
        (_edit("B = 2.34125e-4", "B = -2.34125e-4"), "falling NTC"),
        (GOOD + "[constants]\nR99 = 1.0\n", "unknown constant"),
    ],
    ids=[
        "toml",
        "missing",
        "unknown",
        "unknown-coef",
        "id",
        "kind",
        "model",
        "date",
        "reference",
        "range",
        "range-order",
        "u-neg",
        "u-text",
        "coef-missing",
        "coef-text",
        "coef-bad",
        "const",
    ],
)
def test_bad_files_end_in_one_clear_error(text, fragment):
    with pytest.raises(CalibrationError) as err:
        parse_probe(text, "p.toml")
    assert fragment in str(err.value) and "\n" not in str(err.value)
    assert str(err.value).startswith("p.toml: ")


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(CalibrationError, match="no such probe file"):
        load_probe(tmp_path / "none.toml")
    with pytest.raises(CalibrationError, match="not a TOML text file"):
        load_probe(tmp_path)


def test_beta_file_keeps_t25():
    probe = ProbeFile("b", Beta(2252.0, 3891.0, T25_C=30.0), dt.date(2026, 1, 1), "x", 0.1)
    assert parse_probe(probe_to_toml(probe)).model.T25_C == 30.0


def test_curve_modes_split_the_difference_uncertainty_like_the_coefficient_covariance():
    # The curve's error in T(r2) − T(r1) is gᵀΣg (JCGM 100, 5.2); checked against refits drawn
    # from the coefficient distribution (JCGM 101 style Monte Carlo), on the invented example.
    import datetime as dt
    from importlib import resources
    from pathlib import Path

    import numpy as np

    from heatlog.csvtable import read_columns
    from heatlog.probes import SteinhartHart, fit_resistance, probe_from_fit

    pts = read_columns(
        Path(str(resources.files("heatlog") / "data" / "examples" / "ntc_10k_calibration.csv")),
        ["temp_C", "resistance_ohm"],
    )
    fit = fit_resistance(pts["temp_C"], pts["resistance_ohm"], "steinhart-hart", ref_u_K=0.01)
    probe = probe_from_fit(fit, "p", reference="invented", calibration_date=dt.date(2026, 1, 1))
    r1, r2 = (float(probe.model.temperature_to_resistance(t)) for t in (21.0, 24.0))
    modes = probe.curve_modes(r1, r2)
    assert len(modes) == 3
    rng = np.random.default_rng(4)
    theta = rng.multivariate_normal(list(probe.model.coefficients().values()), fit.covariance, 4000)
    diffs = [
        float(SteinhartHart(*c).resistance_to_temperature(r2))
        - float(SteinhartHart(*c).resistance_to_temperature(r1))
        for c in theta
    ]
    assert np.sqrt(np.sum(np.square(modes))) == pytest.approx(np.std(diffs), rel=0.05)
    assert np.sqrt(np.sum(np.square(modes))) < 0.5 * float(fit.u_fit(22.5)[0])  # offsets cancel
    assert probe.curve_modes(r1, r1) == pytest.approx([0.0, 0.0, 0.0], abs=1e-15)


def test_a_broken_covariance_table_is_a_clean_error():
    from heatlog.errors import CalibrationError
    from heatlog.probes import parse_probe

    text = (
        'id = "x"\nkind = "thermistor"\nmodel = "beta"\ncalibration_date = 2026-01-01\n'
        'reference = "r"\nvalid_range_C = [0.0, 80.0]\nuncertainty_K = 0.1\n'
        "[coefficients]\nR25 = 10000.0\nbeta = 3950.0\n"
        '[fit]\nfitted = ["R25", "beta"]\ncovariance = [[1.0, 0.0]]\n'
    )
    with pytest.raises(CalibrationError, match="covariance"):
        parse_probe(text)
