"""Run files checked as a whole, impossible constants refused, and `sim --link` never over a
user's file (invented data)."""

import json
import os
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.errors import InputError
from heatlog.inputgate import check_constant
from heatlog.reduce.synthetic import Release, synthetic_run
from heatlog.runfile import load_run, run_file

LOG = "[log]\nfile = 'a.csv'\n"
WATER = "[[contents]]\nname = 'water'\nmass_g = 200.0\nu_mass_g = 0.05\n"


@pytest.mark.parametrize(
    "text, fragment",
    [
        (LOG + "[sampel]\nmass_g = 1.0\n", "'sampel' (did you mean 'sample'?)"),
        ("[log]\nfile = 'a.csv'\ntempcol = 'T'\n", "'tempcol' (did you mean 'temp_col'?)"),
        (LOG + "[reduce]\nmetod = 'auto'\n", "did you mean 'method'?"),
        (LOG + "[calorimeter]\nheat_capacity_J_per_K = -40.0\n", "physically possible"),
        (
            LOG + "[calorimeter]\nheat_capacity_J_per_K = 40.0\nu_heat_capacity_J_per_K = -1.0\n",
            "u_heat_capacity",
        ),
        (LOG + "[[contents]]\nname = 'oil'\nmass_g = 10.0\ncp = -1e308\n", "physically possible"),
        (LOG + "[[contents]]\nname = 'water'\nmass_g = 1e300\n", "physically possible"),
        (LOG + "[electrical]\npower_W = 5.0\nseconds = 0.0\n", "physically possible"),
        (LOG + "[electrical]\npower_W = inf\nseconds = 10.0\n", "not a usable number"),
        (LOG + "[[contents]]\nname = 'water'\nmasss_g = 10.0\n", "did you mean 'mass_g'?"),
        (
            LOG + "[profile]\nheat_capacity_J_per_K = 60.0\nenv_temp_C = 20.0\nlos_W_per_K = 0.1\n",
            "did you mean 'loss_W_per_K'?",
        ),
        (
            LOG
            + "[profile]\nheat_capacity_J_per_K = 1e300\nenv_temp_C = 20.0\nloss_W_per_K = 0.1\nu_loss_W_per_K = 0.01\n",
            "physically possible",
        ),
        (
            LOG + "[sample]\nmass_g = 5.0\n[calorimeter]\nheat_capacity_J_per_K = 40\n[sample2]\n",
            "'sample2'",
        ),
    ],
    ids=[
        "table",
        "log-key",
        "reduce-key",
        "neg-C",
        "neg-u",
        "cp",
        "mass",
        "seconds",
        "inf",
        "content-key",
        "profile-key",
        "profile-C",
        "extra-table",
    ],  # fmt: skip
)
def test_run_file_mistakes_are_refused_with_the_closest_name(tmp_path, text, fragment):
    p = tmp_path / "run.toml"
    p.write_text(text)
    with pytest.raises(InputError) as err:
        load_run(p)
    assert fragment in str(err.value) and "\n" not in str(err.value)


def _log(path: Path, delta_k: float, seed: int) -> None:
    run = synthetic_run(
        releases=(Release(400.0, delta_k, 60.0, kind="heater"),),
        duration_s=1600.0,
        dt_s=2.0,
        k_per_s=2e-4,
        noise_K=0.002,
        seed=seed,
    )
    rows = "\n".join(
        f"{a:.2f},{b:.5f}"
        for a, b in zip(run.thermogram.time_s, run.thermogram.temp_C, strict=True)
    )
    path.write_text("# invented data\ntime_s,temp_C\n" + rows + "\n")


@pytest.fixture()
def cup(tmp_path):
    """A calibration that heats by 2 K with 1800 J, and a measuring run (invented)."""
    _log(tmp_path / "cal.csv", 2.0, 1)
    _log(tmp_path / "run.csv", 1.0, 2)
    (tmp_path / "cal.toml").write_text(
        "[log]\nfile = 'cal.csv'\n" + WATER + "[electrical]\npower_W = 5.0\nu_power_W = 0.01\n"
        "seconds = 360.0\nu_seconds = 0.2\n"
    )
    (tmp_path / "measure.toml").write_text(
        "[log]\nfile = 'run.csv'\n[calorimeter]\nheat_capacity_J_per_K = 40.0\n"
        + WATER
        + "[sample]\nname = 's'\nmass_g = 5.0\nu_mass_g = 0.01\n"
    )
    return tmp_path


def test_a_measuring_run_listed_as_calibration_is_refused(cup):
    (cup / "run2.toml").write_text(
        "[log]\nfile = 'run.csv'\n[calorimeter]\ncalibrations = ['measure.toml']\n"
        + WATER
        + "[sample]\nname = 's'\nmass_g = 5.0\n"
    )
    with pytest.raises(InputError, match="is not a calibration run"):
        run_file(cup / "run2.toml")


def test_a_profile_run_file_given_to_reduce_names_heatlog_profile(cup):
    (cup / "long.toml").write_text(
        "[log]\nfile = 'run.csv'\n[profile]\nheat_capacity_J_per_K = 60.0\nloss_W_per_K = 0.06\nu_loss_W_per_K = 0.003\n"
        "env_temp_C = 20.0\n"
    )
    r = CliRunner().invoke(main, ["reduce", str(cup / "long.toml")])
    assert r.exit_code == 2 and "heatlog profile" in r.output and r.output.count("\n") == 1


def test_negative_calorimeter_constant_from_a_run_file_is_refused_unless_allowed(cup):
    # 600 g of water cannot rise 2 K on 1800 J: C_cal = 900 − 2510 J/K < 0
    text = (cup / "cal.toml").read_text().replace("mass_g = 200.0", "mass_g = 600.0")
    (cup / "cal.toml").write_text(text)
    r = CliRunner().invoke(main, ["reduce", str(cup / "cal.toml")])
    assert r.exit_code == 2 and "negative heat capacity" in r.output and r.output.count("\n") == 1
    assert "sign of" in r.output or "wrong sign" in r.output
    r = CliRunner().invoke(main, ["reduce", str(cup / "cal.toml"), "--allow-negative", "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert d["calorimeter_constant"]["value_J_per_K"] < 0
    assert d["findings"][0]["code"] == "negative-constant"


def test_calibrate_refuses_a_negative_constant_unless_allowed():
    args = ["calibrate", "electrical", "--power", "5", "--u-power", "0.01", "--seconds", "360",
            "--u-seconds", "0.2", "--delta-t", "2.0", "--u-delta-t", "0.005", "--water-g", "600",
            "--u-water-g", "0.1"]  # fmt: skip
    r = CliRunner().invoke(main, args)
    assert r.exit_code == 2 and "negative heat capacity" in r.output
    r = CliRunner().invoke(main, [*args, "--allow-negative", "--json"])
    assert r.exit_code == 0 and json.loads(r.output)["value"] < 0


def test_slightly_negative_within_its_uncertainty_is_flagged_not_refused():
    f = check_constant(-1.0, 2.0, "x")
    assert f is not None and f.severity == "flag"
    assert check_constant(5.0, 1.0, "x") is None
    with pytest.raises(InputError):
        check_constant(-10.0, 2.0, "x")


@pytest.mark.skipif(sys.platform == "win32", reason="the simulator's pty is POSIX-only")
def test_sim_link_never_replaces_a_file_and_bad_paths_are_one_line(tmp_path):
    precious = tmp_path / "precious.csv"
    precious.write_text("keep me\n")
    r = CliRunner().invoke(main, ["sim", "--link", str(precious), "--seconds", "0.1"])
    assert r.exit_code == 2 and "exists; choose another path" in r.output
    assert precious.read_text() == "keep me\n"
    other = tmp_path / "other.link"
    os.symlink(precious, other)  # a symlink the user made: not ours to replace
    r = CliRunner().invoke(main, ["sim", "--link", str(other), "--seconds", "0.1"])
    assert r.exit_code == 2 and os.readlink(other) == str(precious)
    r = CliRunner().invoke(main, ["sim", "--link", "/nonexistent/dir/board", "--seconds", "0.1"])
    assert r.exit_code == 2 and "does not exist" in r.output and r.output.count("\n") == 1
    stale = tmp_path / "stale.link"
    os.symlink("/dev/pts/heatlog-gone-999", stale)  # left by a killed simulator: cleared
    r = CliRunner().invoke(main, ["sim", "--link", str(stale), "--seconds", "0.1", "--json"])
    assert r.exit_code == 0, r.output
    assert json.loads(r.output)["scenario"] == "demo"
    assert not os.path.lexists(stale)  # the simulator removes its own link when it stops


def test_odd_proportions_are_flagged(cup):
    text = (cup / "measure.toml").read_text().replace("= 40.0", "= 1e6")
    (cup / "measure.toml").write_text(text)
    res = run_file(cup / "measure.toml")
    assert [f.code for f in res.findings] == ["proportions"]
    assert "times the contents' heat capacity" in res.findings[0].message


def test_a_run_without_a_sample_says_so(cup):
    text = (cup / "measure.toml").read_text().split("[sample]")[0]
    (cup / "measure.toml").write_text(text)
    res = run_file(cup / "measure.toml")
    assert [f.code for f in res.findings] == ["no-sample"] and res.heat_J is not None
