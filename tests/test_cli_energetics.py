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
        "4.15", "--u-cp", "0.01", "--temp", "25", "--json",
    ]  # fmt: skip
    r = run(*r_args)
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["value"] == pytest.approx(50.0, abs=1e-9)
    assert data["reference"]["source"].startswith("Prosen & Kilday")
    assert data["reference"]["concentration"] == pytest.approx(5.0)  # 0.5 g per 100 g
    # at 20 °C the same rise means a larger C_cal: ΔH(20 °C) = −252.935 J/g (PROSEN1973 ΔCp)
    r20 = run(*[a if a != "25" else "20" for a in r_args])
    assert json.loads(r20.output)["value"] == pytest.approx(0.5 * 252.935 / (122.88 / 465) - 415)
    missing = run(*[a for a in r_args if a not in ("--temp", "25")])
    assert missing.exit_code != 0 and "--temp" in missing.output
    cold = run(*[a if a != "25" else "15" for a in r_args])
    assert cold.exit_code != 0 and "293.15–303.15 K" in json.loads(cold.output)["error"]
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
    # NBS 1982: −55.836, u = 0.42; z = 0.364/√(0.8² + 0.42²) = 0.40; every ± names its k
    assert "z = 0.40" in r.output and "agrees" in r.output
    assert "u = 0.8 (k = 1)" in r.output and "(k = 1)" in r.output.split("predicted")[1]
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
        (["calibrate", "reaction", "--reference", "kcl", "--amount", "0.0444", "--u-amount", "0",
          "--delta-t", "0.5", "--u-delta-t", "0.01", "--water-g", "400", "--u-water-g", "0.1",
          "--temp", "25"],
         "sign of ΔT"),
        (["calibrate", "reaction", "--reference", "kcl", "--amount", "0.8", "--u-amount", "0",
          "--delta-t", "-0.5", "--u-delta-t", "0.01", "--water-g", "400", "--u-water-g", "0.1",
          "--temp", "25"],
         "0.02–0.5 mol/kg"),
        (["calibrate", "reaction", "--reference", "tris-hcl", "--amount", "0.5", "--u-amount",
          "0", "--reduce-json", "missing.json", "--temp", "25", "--water-g", "100"],
         "no such file"),
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


def test_hess_user_table_and_alternative_compilation(tmp_path):
    # A user's cited row in front of the packaged table (invented value, marked so)
    t = tmp_path / "mine.csv"
    t.write_text(
        "species,phase,dHf_kJ_per_mol,u_kJ_per_mol,source\n"
        'KClO4,s,-432.75,0.5,"invented test value"\n',
        encoding="utf-8",
    )
    r = run("hess", "KClO4(s) -> K+(aq) + ClO4-(aq)", "--table", str(t))
    assert r.exit_code != 0 and "ClO4-(aq)" in r.output  # still missing: one clear line
    t.write_text(
        t.read_text(encoding="utf-8") + 'ClO4-,aq,-129.33,0.5,"invented test value"\n',
        encoding="utf-8",
    )
    r = run("hess", "KClO4(s) -> K+(aq) + ClO4-(aq)", "--table", str(t), "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["value"] == pytest.approx(-129.33 - 252.38 + 432.75)
    assert data["coverage_factor"] == 2 and data["U_value"] == pytest.approx(2 * data["u_value"])
    r = run("hess", "KNO3(s) -> K+(aq) + NO3-(aq)", "--compilation", "codata1989")
    assert r.exit_code != 0 and "KNO3(s)" in r.output and "codata1989" in r.output


@pytest.mark.parametrize(
    ("row", "message"),
    [
        ('KClO4,s,abc,0.5,"x"', "must be numbers"),
        ('KClO4,s,-432.75,-1,"x"', "positive standard uncertainty"),
        ('KClO4,s,-432.75,0,"x"', "positive standard uncertainty"),
        ('KClO4,s,-432.75,nan,"x"', "positive standard uncertainty"),
        ('KClO4,s,inf,0.5,"x"', "finite"),
        ("KClO4,s,-432.75,0.5,", "source is empty"),
        ('KClO4,solid,-432.75,0.5,"x"', "phase 'solid'"),
        ('K$ClO4,s,-432.75,0.5,"x"', "species"),
        ('KClO4,s,-432.75,0.5,"x",extra', "exactly the 5 columns"),
        ('KClO4,s,-432.75,0.5,"x"\nKClO4,s,-432.70,0.5,"y"', "repeats row 1"),
    ],
)
def test_bad_user_table_rows_are_refused_in_one_line(tmp_path, row, message):
    t = tmp_path / "bad.csv"
    t.write_text("species,phase,dHf_kJ_per_mol,u_kJ_per_mol,source\n" + row + "\n", "utf-8")
    r = run("hess", "NaCl(s) -> Na+(aq) + Cl-(aq)", "--table", str(t))
    assert r.exit_code != 0
    assert message in r.output and "row " in r.output
    assert "Traceback" not in r.output and len(r.output.strip().splitlines()) == 1


def test_user_table_seeded_mutations_never_traceback(tmp_path):
    # Seeded damage to a good file: every case is a clean refusal or a readable table.
    import random

    good = (
        "species,phase,dHf_kJ_per_mol,u_kJ_per_mol,source\n"
        'KClO4,s,-432.75,0.5,"invented"\nClO4-,aq,-129.33,0.5,"invented"\n'
    )
    rng = random.Random(12)
    for i in range(40):
        chars = list(good)
        for _ in range(rng.randint(1, 4)):
            j = rng.randrange(len(chars))
            chars[j] = rng.choice([",", '"', "x", "-", "", "\n", "9", "é", " "])
        t = tmp_path / f"m{i}.csv"
        t.write_text("".join(chars), encoding="utf-8")
        r = run("hess", "NaCl(s) -> Na+(aq) + Cl-(aq)", "--table", str(t))
        assert r.exception is None or isinstance(r.exception, SystemExit), r.output
        if r.exit_code != 0:
            assert len(r.output.strip().splitlines()) == 1, r.output
