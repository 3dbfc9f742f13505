"""`heatlog calibrate ...` and `heatlog hess`: text, --json and one-line errors (CliRunner)."""

import json

import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog.cli import main


def run(*args):
    return CliRunner().invoke(main, list(args))


MIXING = [
    "calibrate", "mixing", "--hot-g", "50", "--hot-c", "60", "--cold-g", "50", "--cold-c", "20",
    "--final-c", "38.5", "--u-mass", "0", "--u-temp", "0.1", "--cp", "4.18", "--u-cp", "0",
]  # fmt: skip


def test_mixing_worked_example_json():
    # Invented data, worked by hand: hot water gives 50.0·4.18·21.5 = 4493.5 J, cold water takes
    # 50.0·4.18·18.5 = 3866.5 J; the calorimeter took 627.0 J over 18.5 K → 33.892 J/K, and
    # u = 0.1·√(11.297² + 13.129² + 24.427²) = 2.994 J/K (see test_energetics_calorimeter).
    r = run(*MIXING, "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["value"] == pytest.approx(33.892, abs=1e-3)
    assert data["standard_uncertainty"] == pytest.approx(2.994, abs=2e-3)
    assert data["budget"]["unit"] == "J/K"
    assert {c["name"] for c in data["budget"]["components"]} >= {"T_h", "T_c", "T_f"}
    assert "safety data sheets" in data["caution"]


def test_mixing_text_has_table_and_caution():
    r = run(*MIXING)
    assert r.exit_code == 0
    assert "C_cal (method of mixtures) = 33.8919 J/K" in r.output
    assert r.output.strip().splitlines()[-1].startswith("Caution: hot water")


def test_electrical_on_off_and_power_log(tmp_path):
    r = run(
        "calibrate", "electrical", "--voltage", "12", "--u-voltage", "0.01", "--current", "1.5",
        "--u-current", "0.005", "--on", "60", "--off", "360", "--u-seconds", "0.5",
        "--delta-t", "2.4", "--u-delta-t", "0.01", "--water-g", "500", "--u-water-g", "0.1",
        "--cp", "4.18", "--u-cp", "0.004", "--json",
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    # Invented: 12·1.5·300 = 5400 J over 2.4 K = 2250 J/K, minus 500·4.18 = 2090 → 160 J/K
    assert data["value"] == pytest.approx(160.0)
    assert data["energy_budget"]["value"] == pytest.approx(5400.0)
    log = tmp_path / "power.csv"
    log.write_text("time_s,power_W\n" + "".join(f"{t},18.0\n" for t in range(0, 301)))
    r = run(
        "calibrate", "electrical", "--power-log", str(log), "--u-power-rel", "0.002",
        "--delta-t", "2.4", "--u-delta-t", "0.01", "--water-g", "500", "--u-water-g", "0.1",
        "--cp", "4.18", "--u-cp", "0.004", "--json",
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    assert json.loads(r.output)["value"] == pytest.approx(160.0)


def test_reaction_reference_and_reduce_json(tmp_path):
    # Invented: 0.5000 g tris (−245.76 J/g, Prosen & Kilday 1973) into 100 g acid at 4.15 J/(g·K)
    # with C_cal = 50 J/K gives ΔT = 122.88/465 K; ΔT is passed as 'heatlog reduce --json' output.
    red = tmp_path / "reduce.json"
    red.write_text(json.dumps({"delta_t_K": 122.88 / 465.0, "u_delta_t_K": 0.002}))
    r_args = [
        "calibrate", "reaction", "--reference", "tris-hcl", "--amount", "0.5", "--u-amount",
        "0.0002", "--reduce-json", str(red), "--water-g", "100", "--u-water-g", "0.05", "--cp",
        "4.15", "--u-cp", "0.01", "--json",
    ]  # fmt: skip
    r = run(*r_args)
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["value"] == pytest.approx(50.0, abs=1e-9)
    assert data["reference"]["source"].startswith("Prosen & Kilday")
    assert "eye protection" in data["caution"]
    text = run(*[a for a in r_args if a != "--json"]).output
    assert "Reference: tris" in text and "Prosen & Kilday" in text


def test_solution_contents():
    r = run(
        "calibrate", "electrical", "--power", "18", "--u-power", "0.02", "--seconds", "300",
        "--u-seconds", "0.2", "--delta-t", "2.5", "--u-delta-t", "0.01", "--water-g", "500",
        "--u-water-g", "0.1", "--solute", "NaCl", "--molality", "0.5", "--json",
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    comps = {c["name"]: c for c in json.loads(r.output)["budget"]["components"]}
    assert comps["c_p(NaCl(aq))"]["value"] == pytest.approx(4.034, abs=0.005)


def test_combine():
    r = run("calibrate", "combine", "150:1", "160:2", "152:4", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["budget"]["k"] > 2  # few repeats: Student-t coverage factor


def test_hess_text_json_and_compare():
    r = run("hess", "NH4NO3(s) -> NH4+(aq) + NO3-(aq)", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["value"] == pytest.approx(25.69, abs=0.3)  # Parker 1965, NSRDS-NBS 2
    assert all(c["note"] for c in data["budget"]["components"])  # every value is sourced
    r = run("hess", "H+(aq) + OH-(aq) -> H2O(l)", "--measured", "-56.2", "--u-measured", "0.8")
    assert r.exit_code == 0
    assert "z = 0.48" in r.output and "agrees" in r.output
    assert "eye protection" in r.output  # neutralisation: acids and bases caution


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["hess", "H2 + O2 -> H2O"], "does not balance"),
        (["hess", "Unobtainium -> Na"], "cannot read formula"),
        (["hess", "NaCl(s) -> Na+(aq) + Cl-(aq)", "--measured", "3"], "--u-measured"),
        (MIXING[:-6] + ["--final-c", "70", "--u-mass", "0", "--u-temp", "0.1"], "T_cold"),
        (["calibrate", "electrical", "--power", "18", "--seconds", "300", "--u-seconds", "1",
          "--delta-t", "2", "--u-delta-t", "0.01"], "--u-power"),
        (["calibrate", "electrical", "--voltage", "12", "--power", "18"], "exactly one"),
        (["calibrate", "electrical", "--power", "18", "--u-power", "0.1", "--seconds", "300",
          "--u-seconds", "1"], "--delta-t"),
        (["calibrate", "reaction", "--reference", "kcl", "--amount", "0.02", "--u-amount", "0",
          "--delta-t", "0.5", "--u-delta-t", "0.01", "--water-g", "400", "--u-water-g", "0.1"],
         "sign of ΔT"),
        (["calibrate", "reaction", "--reference", "tris-hcl", "--amount", "0.5", "--u-amount",
          "0", "--reduce-json", "missing.json"], "no such file"),
        (["calibrate", "combine", "150"], "VALUE:U"),
        (["calibrate", "electrical", "--power", "nan", "--u-power", "0.1", "--seconds", "300",
          "--u-seconds", "1", "--delta-t", "2", "--u-delta-t", "0.01"], "finite"),
        (["calibrate", "electrical", "--power", "18", "--u-power", "0.1", "--seconds", "300",
          "--u-seconds", "1", "--delta-t", "2", "--u-delta-t", "0.01", "--water-g", "inf"],
         "finite"),
        (["calibrate", "electrical", "--power", "18", "--u-power", "0.1", "--seconds", "300",
          "--u-seconds", "1", "--delta-t", "2", "--u-delta-t", "0.01", "--water-g", "100",
          "--solute", "CaCl2", "--molality", "0.1", "--temp", "20"], "25–100 °C"),
    ],
)  # fmt: skip
def test_bad_input_is_one_clear_line(args, message):
    r = run(*args)
    assert r.exit_code != 0
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), r.output
    assert message in lines[0]


@given(st.text(alphabet="NaClHO()+-> 23^·aqsg", max_size=30))
@settings(max_examples=100, deadline=None)
def test_hess_fuzz_never_tracebacks(text):
    r = run("hess", text, "--json")
    if r.exit_code == 0:
        assert json.loads(r.output)["budget"]["components"]
    else:
        assert r.exception is None or isinstance(r.exception, SystemExit), r.exception
        error = json.loads(r.output)  # with --json an error is one JSON object
        assert error["error"] and error["kind"]
