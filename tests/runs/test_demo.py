"""The built-in demo: end to end on invented data, checked against the values it was made with."""

import json

from click.testing import CliRunner

from heatlog.cli import main


def test_demo_recovers_its_invented_truth_within_the_stated_uncertainty(tmp_path):
    out = tmp_path / "demo"
    r = CliRunner().invoke(main, ["demo", "--out", str(out), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert (
        abs(d["enthalpy_kJ_per_mol"] - d["true_enthalpy_kJ_per_mol"]) <= d["U_enthalpy_kJ_per_mol"]
    )
    assert 0 < d["u_enthalpy_kJ_per_mol"] < 0.05 * abs(d["enthalpy_kJ_per_mol"])
    c, uc = d["calorimeter_constant_J_per_K"], d["u_calorimeter_constant_J_per_K"]
    assert abs(c - d["true_calorimeter_constant_J_per_K"]) <= 2 * uc
    for name in (
        "probe.toml",
        "calibration.csv",
        "calibration.toml",
        "dissolution.csv",
        "dissolution.toml",
        "results.json",
    ):
        assert (out / name).is_file(), name
    assert "invented" in (out / "dissolution.csv").read_text().splitlines()[0]


def test_demo_text_output_carries_the_caution(tmp_path):
    r = CliRunner().invoke(main, ["demo", "--out", str(tmp_path / "d")])
    assert r.exit_code == 0, r.output
    assert "invented" in r.output and "kJ/mol" in r.output
    assert "safety data sheets" in r.output


def test_reduce_reads_the_demo_run_file(tmp_path):
    out = tmp_path / "d"
    assert CliRunner().invoke(main, ["demo", "--out", str(out)]).exit_code == 0
    r = CliRunner().invoke(main, ["reduce", str(out / "dissolution.toml"), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    for key in (
        "delta_t_K",
        "u_delta_t_K",
        "event_start_s",
        "after_start_s",
        "method",
        "heat_J",
        "u_heat_J",
        "enthalpy_kJ_per_mol",
        "u_enthalpy_kJ_per_mol",
    ):
        assert key in d, key
    text = CliRunner().invoke(main, ["reduce", str(out / "dissolution.toml")])
    assert "Hess's law" in text.output and "kJ/mol" in text.output
    bad = CliRunner().invoke(main, ["reduce", str(tmp_path / "missing.toml")])
    assert bad.exit_code != 0 and "no such run file" in bad.output


def test_demo_end_to_end_over_the_tcp_link(tmp_path):
    """The path every system has (no pseudo-terminal): the same result over socket://."""
    out = tmp_path / "demo"
    r = CliRunner().invoke(main, ["demo", "--out", str(out), "--link", "tcp"])
    assert r.exit_code == 0, r.output
    assert "socket://127.0.0.1:" in r.stderr
    d = json.loads((out / "results.json").read_text())
    assert d["pull"]["pulled"] and len(d["simulator"]["runs"]) == 2
    assert (
        abs(d["enthalpy_kJ_per_mol"] - d["true_enthalpy_kJ_per_mol"]) <= d["U_enthalpy_kJ_per_mol"]
    )
