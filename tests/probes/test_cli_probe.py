"""``heatlog probe`` through click's CliRunner: JSON shapes, text output, clean errors."""

import json
import sys
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.probes.chains import MAX31865Chain
from heatlog.probes.probefile import load_probe
from heatlog.probes.rtd import pt100
from heatlog.probes.thermistor import Beta, SteinhartHart

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "host" / "heatlog" / "data" / "examples" / "ntc_10k_calibration.csv"
SH10K = SteinhartHart(1.129148e-3, 2.34125e-4, 8.76741e-8)  # widely quoted set, from memory


FIT_EXAMPLE = ("fit", str(EXAMPLE), "--model", "steinhart-hart", "--ref-u", "0.01")


def run(*args: str):
    return CliRunner().invoke(main, ["probe", *args])


def write_points(path: Path, temps, values, column="resistance_ohm") -> Path:
    rows = "\n".join(f"{float(t)!r},{float(v)!r}" for t, v in zip(temps, values, strict=True))
    path.write_text(f"# invented data\ntemp_C,{column}\n{rows}\n")
    return path


def test_example_csv_is_what_its_script_makes():
    sys.path.insert(0, str(Path(__file__).parent))
    try:
        import make_example_csv
    finally:
        sys.path.pop(0)
    assert EXAMPLE.read_text(encoding="utf-8") == make_example_csv.text()


def test_fit_example_json_keys():
    r = run(
        *FIT_EXAMPLE,
        "--range",
        "0",
        "80",
        "--json",
    )
    assert r.exit_code == 0, r.output
    out = json.loads(r.output)
    for key in (
        "model",
        "coefficients",
        "residuals_K",
        "max_abs_residual_K",
        "rms_residual_K",
        "u_fit_K",
        "warnings",
    ):
        assert key in out
    assert out["model"] == "steinhart-hart" and set(out["coefficients"]) == {"A", "B", "C"}
    assert len(out["residuals_K"]) == 9
    # Invented data with 3 mK reference scatter: residuals of a few mK, not tenths.
    assert out["max_abs_residual_K"] < 0.01
    assert out["u_fit_K"]["max_u_K"] >= 0.01  # never below the reference's own uncertainty
    assert any("scald" in c for c in out["cautions"])  # points up to 80 °C: hot bath


def test_beta_reference_temperature_option(tmp_path):
    b = Beta(2252.0, 3891.0, T25_C=30.0)
    t = np.array([0.0, 20.0, 40.0, 60.0])
    path = write_points(tmp_path / "b.csv", t, b.temperature_to_resistance(t))
    r = run("fit", str(path), "--model", "beta", "--t25", "30", "--json")
    assert json.loads(r.output)["coefficients"]["R25"] == pytest.approx(2252.0, rel=1e-8)
    cautions = json.loads(r.output)["cautions"]
    assert len(cautions) == 1 and "scald" in cautions[0]


def test_fit_text_and_probe_file_then_convert(tmp_path):
    out = tmp_path / "ntc.toml"
    r = run(
        *FIT_EXAMPLE,
        "--out",
        str(out),
        "--reference",
        "Pt100 (invented)",
        "--id",
        "ntc-demo",
        "--date",
        "2026-11-30",
    )
    assert r.exit_code == 0, r.output
    assert "max |residual|" in r.output and f"wrote {out}" in r.output
    probe = load_probe(out)
    assert probe.id == "ntc-demo" and probe.uncertainty_K >= 0.01
    r = run("convert", "--probe", str(out), "--ohm", "10000", "--temp", "37", "--json")
    assert r.exit_code == 0, r.output
    res = json.loads(r.output)["results"]
    assert res[0]["temp_C"] == pytest.approx(probe.model.resistance_to_temperature(10_000.0))
    assert res[1]["resistance_ohm"] == pytest.approx(probe.model.temperature_to_resistance(37.0))


def test_fit_cvd_from_max31865_counts(tmp_path):
    t = np.array([0.0, 25.0, 50.0, 75.0, 100.0])
    counts = MAX31865Chain(430.0).to_counts(pt100().temperature_to_resistance(t))
    path = write_points(tmp_path / "c.csv", t, counts, "counts")
    r = run(
        "fit", str(path), "--model", "callendar-van-dusen", "--chain", "max31865:rref=430", "--json"
    )
    assert r.exit_code == 0, r.output
    out = json.loads(r.output)
    assert out["coefficients"]["R0"] == pytest.approx(100.0, rel=1e-9)
    assert out["coefficients"]["C"] == pytest.approx(-4.183e-12)
    assert any("C not fitted" in n for n in out["notes"])


def test_convert_standard_pt100_and_counts():
    r = run("convert", "--standard", "pt100", "--ohm", "138.5055", "--json")
    assert json.loads(r.output)["results"][0]["temp_C"] == pytest.approx(
        100.0, abs=1e-4
    )  # IEC 60751
    r = run("convert", "--standard", "pt100", "--counts", "7620", "--chain", "max31865:rref=430")
    assert r.exit_code == 0 and "one count" in r.output and "class B" in r.output
    r = run("convert", "--standard", "pt100", "--counts", "7620", "--chain", "max31865", "--json")
    row = json.loads(r.output)["results"][0]
    assert row["u_quantisation_K"] == pytest.approx(row["step_K"] / 12**0.5)  # JCGM 100, F.2.2.1


def test_design_json_and_text():
    nominal = ["design", "--beta", "3950", "--r25", "10000", "--range", "0", "80"]
    r = run(*nominal, "--target-mk", "5", "--json")
    assert r.exit_code == 0, r.output
    out = json.loads(r.output)
    assert out["r_series_ohm"] > 0 and out["oversample_needed"] >= 1
    r = run(*nominal, "--criterion", "linearity")
    assert r.exit_code == 0 and "series resistor" in r.output


def _points(tmp_path, text):
    p = tmp_path / "p.csv"
    p.write_text(text)
    return str(p)


@pytest.mark.parametrize(
    "args",
    [
        lambda tp: [
            "fit",
            _points(tp, "temp_C,resistance_ohm\n0,32650\n50,3600\n"),
            "--model",
            "steinhart-hart",
        ],
        lambda tp: [
            "fit",
            _points(tp, "temp_C,resistance_ohm\n0,100\n50,90\n100,80\n"),
            "--model",
            "callendar-van-dusen",
        ],
        lambda tp: ["fit", _points(tp, "temp_C,counts\n0,1\n"), "--model", "beta"],
        lambda tp: [
            "fit",
            _points(tp, "temp_C,counts\n0,1000\n50,3000\n"),
            "--model",
            "beta",
            "--chain",
            "bridge:r=1",
        ],
        lambda tp: ["fit", _points(tp, "temp,resistance_ohm\n0,1\n"), "--model", "beta"],
        lambda tp: ["fit", str(tp / "missing.csv"), "--model", "beta"],
        lambda tp: ["fit", str(EXAMPLE), "--model", "beta", "--out", str(tp / "x.toml")],
        lambda tp: [
            "fit",
            str(EXAMPLE),
            "--model",
            "beta",
            "--out",
            str(tp / "x.toml"),
            "--reference",
            "r",
            "--date",
            "soon",
        ],
        lambda tp: ["convert", "--standard", "pt100", "--ohm", "-5"],
        lambda tp: ["convert", "--standard", "pt100", "--temp", "2000"],
        lambda tp: ["convert", "--standard", "pt100"],
        lambda tp: ["convert", "--ohm", "100"],
        lambda tp: ["convert", "--standard", "pt100", "--counts", "5"],
        lambda tp: ["convert", "--probe", str(tp / "none.toml"), "--ohm", "100"],
        lambda tp: ["design", "--range", "0", "80"],
        lambda tp: ["design", "--beta", "3950", "--r25", "10000", "--range", "80", "0"],
        lambda tp: ["design", "--beta", "-3950", "--r25", "10000", "--range", "0", "80"],
    ],
    ids=[
        "too-few",
        "falling-rtd",
        "counts-no-chain",
        "bad-chain",
        "missing-col",
        "no-file",
        "out-no-ref",
        "bad-date",
        "neg-ohm",
        "too-hot",
        "nothing",
        "no-model",
        "counts-no-chain2",
        "no-probe",
        "design-no-model",
        "design-range",
        "design-neg-beta",
    ],
)
def test_bad_inputs_end_in_one_line_and_nonzero_exit(tmp_path, args):
    r = run(*args(tmp_path))
    assert r.exit_code != 0
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), r.output
    assert "Traceback" not in r.output
    assert r.exception is None or isinstance(r.exception, SystemExit)


def test_too_few_points_message(tmp_path):
    path = write_points(tmp_path / "p.csv", [0.0, 50.0], [32650.0, 3600.0])
    r = run("fit", str(path), "--model", "steinhart-hart")
    assert "need at least 3 calibration points for steinhart-hart, got 2" in r.output
