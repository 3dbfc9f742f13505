"""The built-in demo: end to end on invented data, checked against the values it was made with."""

import html
import json
import re

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


LABEL = re.compile(r"U\s*\(k|\(k\s*=|k\s*=\s*\d|\(u,|σ")


def bare_plus_minus(text):
    """Every ± whose line does not say, within 80 characters after it, u or U and k."""
    bad = []
    for m in re.finditer("±", text):
        tail = text[m.start() : m.start() + 80].split("\n")[0]
        if not LABEL.search(tail):
            bad.append(tail)
    return bad


def labels_in_json(node, where="$"):
    """Expanded uncertainties (U_*) need a coverage_factor beside them (the JSON convention)."""
    bad = []
    if isinstance(node, dict):
        if any(k.startswith("U_") for k in node) and "coverage_factor" not in node:
            bad.append(where)
        for k, v in node.items():
            bad += labels_in_json(v, f"{where}.{k}")
    elif isinstance(node, list):
        for i, v in enumerate(node):
            bad += labels_in_json(v, f"{where}[{i}]")
    return bad


def test_demo_text_output_carries_the_caution(tmp_path):
    out = tmp_path / "d"
    r = CliRunner().invoke(main, ["demo", "--out", str(out)])
    assert r.exit_code == 0, r.output
    assert "invented" in r.output and "kJ/mol" in r.output
    assert "safety data sheets" in r.output
    # every ± in the demo's text, its JSON and its report names its coverage
    assert "ΔH refers to" in r.output and "U(k=2)" in r.output
    assert bare_plus_minus(r.output) == []
    assert labels_in_json(json.loads((out / "results.json").read_text(encoding="utf-8"))) == []
    report = html.unescape(re.sub(r"<[^>]+>", " ", (out / "report.html").read_text("utf-8")))
    report = re.sub(r"data:image/[^\s\"']+", "", report)
    assert "±" in report and bare_plus_minus(report) == []
    text = CliRunner().invoke(main, ["reduce", str(out / "dissolution.toml")]).output
    assert bare_plus_minus(text) == []


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
