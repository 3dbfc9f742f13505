"""``heatlog profile``: JSON keys, the run-file form and one-line errors (CliRunner)."""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.profile.synthetic import HydrationCurve, PlateauDecay, long_run, warmer_run


def _write(path, columns: dict[str, np.ndarray]) -> None:
    header = ",".join(columns)
    data = np.column_stack(list(columns.values()))
    np.savetxt(
        path, data, delimiter=",", header="invented data\n" + header, comments="", fmt="%.6f"
    )
    # np.savetxt writes the comment line without '#'; make it a comment.
    text = path.read_text().replace("invented data", "# invented data", 1)
    path.write_text(text)


@pytest.fixture(scope="module")
def warmer_csv(tmp_path_factory):
    run = warmer_run()
    path = tmp_path_factory.mktemp("warmer") / "warmer.csv"
    _write(path, {"time_s": run.time_s, "temp_C": run.temp_C, "room_C": run.env_C})
    return path, run


@pytest.fixture(scope="module")
def cement_csv(tmp_path_factory):
    run = long_run(
        HydrationCurve(),
        duration_s=3 * 86400.0,
        dt_s=120.0,
        heat_capacity_J_per_K=2500.0,
        loss_W_per_K=0.03,
        env_C=20.0,
    )
    status = np.zeros(run.time_s.size)
    status[40] = 1
    t = run.time_s.copy()
    t[1500:] = t[1500:] - t[1500]  # the board's clock reset late in the run
    path = tmp_path_factory.mktemp("cement") / "cement.csv"
    _write(path, {"time_s": t, "temp_C": run.temp_C, "status": status})
    return path, run


def _json(path, options=""):
    """Run ``heatlog profile PATH OPTIONS --json`` and parse the output."""
    result = CliRunner().invoke(main, ["profile", str(path), *options.split(), "--json"])
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


def test_warmer_json_keys_and_values(warmer_csv):
    path, run = warmer_csv
    d = _json(
        path,
        "--heat-capacity 60 --u-heat-capacity 1 --loss 0.06 --u-loss 0.002 --env-col room_C --kind warmer --sample-g 40 --u-sample-g 0.05",
    )
    for key in (
        "heat_J",
        "u_heat_J",
        "heat_J_per_g",
        "u_heat_J_per_g",
        "heat_budget",
        "metrics",
        "safety",
        "log",
        "series",
        "profile",
        "peak_rate_W",
        "complete",
        "caution",
    ):
        assert key in d, key
    assert d["heat_J"] == pytest.approx(run.true_heat_J[-1], rel=0.01)
    assert d["heat_J_per_g"] == pytest.approx(run.true_heat_J[-1] / 40.0, rel=0.01)
    m = d["metrics"]
    assert {"time_to_threshold_s", "time_above_threshold_s", "time_in_band_s", "peak_C"} <= set(m)
    assert m["thresholds_source"].startswith("common practice, no source")
    assert any(f["code"] == "general" for f in d["safety"])
    assert len(d["series"]["time_h"]) <= 200


def test_cement_with_faults_and_reset(cement_csv):
    path, run = cement_csv
    d = _json(
        path,
        "--heat-capacity 2500 --loss 0.03 --u-loss 0.0006 --env-temp 20 --u-env-temp 0.2 --kind cement --sample-g 100 --flags-col status",
    )
    assert d["log"]["faulted_samples_excluded"] == 1
    assert len(d["log"]["clock_resets"]) == 1 and len(d["log"]["segments"]) == 2
    assert d["maturity"]["datum_C"] == 0.0 and d["maturity"]["activation_energy_constant_K"] == 5000
    assert {"temperature_time_factor_C_h", "equivalent_age_h"} <= set(d["maturity"])
    assert [row["age_h"] for row in d["heat_at_ages"]][:2] == pytest.approx([12.0, 24.0], abs=0.05)
    i = 1499
    assert d["heat_J"] == pytest.approx(run.true_heat_J[i], rel=0.01)
    assert any(f["code"] == "alkaline-material" for f in d["safety"])


def test_text_output_has_safety_and_caution(warmer_csv):
    path, _ = warmer_csv
    result = CliRunner().invoke(
        main,
        [
            "profile",
            str(path),
            "--heat-capacity",
            "60",
            "--loss",
            "0.06",
            "--u-loss",
            "0.002",
            "--env-temp",
            "20",
            "--kind",
            "warmer",
        ],
    )
    assert result.exit_code == 0, result.output
    assert "INFO:" in result.output and "Caution" in result.output
    assert "Q(end)" in result.output


def test_cooling_fit_option(tmp_path):
    """Warmer off after 4 h (τ 60 s); the fit on the tail after 5 h finds G/C = 1e-3 1/s."""
    run = long_run(
        PlateauDecay(1.5, 4 * 3600.0, 60.0),
        duration_s=9 * 3600.0,
        dt_s=20.0,
        heat_capacity_J_per_K=60.0,
        loss_W_per_K=0.06,
        env_C=20.0,
    )
    path = tmp_path / "off.csv"
    _write(path, {"time_s": run.time_s, "temp_C": run.temp_C})
    d = _json(
        path, f"--heat-capacity 60 --u-heat-capacity 1 --cooling-fit {5 * 3600} --env-temp 20"
    )
    assert d["cooling_fit"]["rate_G_over_C_per_s"] == pytest.approx(1e-3, rel=0.01)
    assert d["profile"]["loss"]["source"] == "cooling-curve fit"
    assert d["heat_J"] == pytest.approx(run.true_heat_J[-1], rel=0.01)
    names = [c["name"] for c in d["heat_budget"]["components"]]
    assert "k = G/C (cooling fit)" in names


def test_run_file_form(warmer_csv, tmp_path):
    path, run = warmer_csv
    toml = tmp_path / "warmer.toml"
    toml.write_text(
        f'title = "invented warmer"\n[log]\nfile = "{path.as_posix()}"\n'
        '[profile]\nheat_capacity_J_per_K = 60.0\nloss_W_per_K = 0.06\nu_loss_W_per_K = 0.002\nenv_col = "room_C"\n'
        'kind = "warmer"\nsample_mass_g = 40.0\nthreshold_C = 38.0\n'
    )
    d = _json(toml)
    assert d["heat_J"] == pytest.approx(run.true_heat_J[-1], rel=0.01)
    assert d["metrics"]["threshold_C"] == 38.0


@pytest.mark.parametrize(
    "extra, fragment",
    [
        (["--loss", "0.06", "--u-loss", "0.002", "--env-temp", "20"], "--heat-capacity"),
        (["--heat-capacity", "60", "--env-temp", "20"], "--cooling-fit"),
        (["--heat-capacity", "60", "--loss", "0.06", "--u-loss", "0"], "--env-temp"),
        (
            ["--heat-capacity", "60", "--loss", "0.06", "--u-loss", "0.002", "--env-col", "nope"],
            "missing column",
        ),
        (
            [
                "--heat-capacity",
                "60",
                "--loss",
                "0.06",
                "--u-loss",
                "0.002",
                "--env-temp",
                "20",
                "--cooling-fit",
                "5",
            ],
            "not both",
        ),
        (
            [
                "--heat-capacity",
                "60",
                "--loss",
                "0.06",
                "--u-loss",
                "0.002",
                "--env-temp",
                "20",
                "--band",
                "45",
                "40",
            ],
            "must lie below",
        ),
        (
            ["--heat-capacity", "60", "--cooling-fit", "1e9", "--env-temp", "20"],
            "give a start inside it",
        ),
    ],
    ids=["no-c", "no-loss", "no-env", "bad-col", "loss-and-fit", "bad-band", "late-fit"],
)
def test_one_line_errors(warmer_csv, extra, fragment):
    path, _ = warmer_csv
    result = CliRunner().invoke(main, ["profile", str(path), *extra])
    assert result.exit_code == 2
    assert fragment in result.output
    assert result.output.startswith("Error:") and result.output.count("\n") == 1


@pytest.mark.parametrize(
    "table, fragment",
    [
        (
            "heat_capacity_J_per_K = 60.0\nloss_W_per_K = 0.06\nu_loss_W_per_K = 0.0\n",
            "needs env_temp_C or env_col",
        ),
        ("loss_W_per_K = 0.06\nenv_temp_C = 20.0\n", "needs heat_capacity_J_per_K"),
        ("heat_capacity_J_per_K = 60.0\nloss = 0.06\nenv_temp_C = 20.0\n", "does not know"),
        ("heat_capacity_J_per_K = 'x'\n", "must be a number"),
        (
            "heat_capacity_J_per_K = 60.0\nloss_W_per_K = 0.06\nu_loss_W_per_K = 0.002\nenv_temp_C = 20.0\nband_low_C = 1.0\n",
            "give both",
        ),
    ],
    ids=["no-env", "no-c", "unknown-key", "text", "half-band"],
)
def test_bad_profile_tables(tmp_path, table, fragment):
    toml = tmp_path / "run.toml"
    toml.write_text(f'[log]\nfile = "x.csv"\n[profile]\n{table}')
    result = CliRunner().invoke(main, ["profile", str(toml)])
    assert result.exit_code == 2 and fragment in result.output
    assert result.output.count("\n") == 1


def test_run_file_without_profile_table(tmp_path):
    toml = tmp_path / "run.toml"
    toml.write_text('[log]\nfile = "x.csv"\n')
    result = CliRunner().invoke(main, ["profile", str(toml)])
    assert result.exit_code == 2 and "no [profile] table" in result.output
