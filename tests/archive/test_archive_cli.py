"""``heatlog probes`` and ``heatlog runs`` through click's CliRunner: --json keys, one-line errors."""

import json

import pytest
from archive_data import A_1, A_2, R0_1, R0_2, SLOPE, probe_toml, write_run_file
from click.testing import CliRunner

from heatlog.cli import main


@pytest.fixture
def lab(tmp_path, monkeypatch):
    monkeypatch.delenv("HEATLOG_DB", raising=False)
    (tmp_path / "p1.toml").write_text(probe_toml("pt-1", "2026-10-01", R0_1, A_1), encoding="utf-8")
    (tmp_path / "p2.toml").write_text(probe_toml("pt-1", "2026-11-15", R0_2, A_2), encoding="utf-8")
    run = write_run_file(tmp_path, "run", 3, "p1.toml")
    return tmp_path, run, ["--db", str(tmp_path / "lab.sqlite")]


def call(args, ok=True):
    r = CliRunner().invoke(main, args)
    if ok:
        assert r.exit_code == 0, r.output
    return r


def as_json(args):
    return json.loads(call([*args, "--json"]).output)


def test_probe_run_reduce_rereduce_show_export(lab):
    folder, run, db = lab
    added = as_json(["probes", "add", str(folder / "p1.toml"), *db])
    assert {"calibration_id", "probe_id", "calibration_date", "new", "sha256", "rule"} <= set(added)
    imported = as_json(["runs", "import", str(run), "--date", "2026-12-01", *db])
    assert {"run_id", "new", "kind", "raw_path", "raw_sha256"} <= set(imported)
    rid = str(imported["run_id"])
    listed = as_json(["runs", "list", *db])["runs"]
    assert [r["id"] for r in listed] == [imported["run_id"]] and listed[0]["probes"] == "pt-1"
    red = as_json(["runs", "reduce", rid, *db])
    assert {"results", "calibrations", "software_version", "inputs", "caution"} <= set(red)
    assert {"delta_t_K", "u_delta_t_K", "enthalpy_kJ_per_mol"} <= set(red["results"])

    second = as_json(["probes", "add", str(folder / "p2.toml"), *db])
    assert second["supersedes"]["calibration_id"] == added["calibration_id"]
    hist = as_json(["probes", "list", *db])["calibrations"]
    assert [c["valid_until"] for c in hist] == ["2026-11-15", None]
    rr = as_json(["runs", "rereduce", "--probe", "pt-1", *db])
    (cmp,) = rr["runs"]
    assert cmp["old_calibration_ids"] == [added["calibration_id"]]
    assert cmp["new_calibration_ids"] == [second["calibration_id"]]
    dt = next(c for c in cmp["changes"] if c["quantity"] == "ΔT corrected")
    assert dt["new"] == pytest.approx(SLOPE * dt["old"], rel=1e-5)  # see test_archive_rereduce
    assert {"old", "u_old", "new", "u_new", "change", "change_in_u"} <= set(dt)
    text = call(["runs", "rereduce", "--probe", "pt-1", "--calibration", "1", *db]).output
    assert "change/u" in text and "ΔT corrected" in text

    shown = as_json(["runs", "show", rid, *db])
    assert (
        shown["raw_file"]["verified"] and shown["latest"]["calibrations"][0]["probe_id"] == "pt-1"
    )
    text = call(["runs", "show", rid, *db]).output
    assert "verified" in text and "calibration" in text and shown["raw_file"]["sha256"] in text
    out = folder / "export.json"
    summary = as_json(["runs", "export", rid, "--out", str(out), *db])
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert summary["out"] == str(out)
    assert {"run", "raw_file", "reductions", "probe_files", "run_file_text", "exported_by"} <= set(
        doc
    )
    assert len(doc["reductions"]) == 3 and len(doc["probe_files"]) == 2


def test_db_from_the_environment(lab, monkeypatch):
    folder, _, _ = lab
    monkeypatch.setenv("HEATLOG_DB", str(folder / "env.sqlite"))
    as_json(["probes", "add", str(folder / "p1.toml")])
    assert (folder / "env.sqlite").exists()


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["runs", "show", "7"], "no run 7"),
        (["runs", "reduce", "7"], "no run 7"),
        (["runs", "rereduce", "--probe", "nope"], "probe nope is not in"),
        (["probes", "add", "missing.toml"], "not found"),
        (["runs", "import", "missing.bin"], "not found"),
        (["runs", "import", "run.toml", "--date", "tomorrow"], "run date must look like"),
    ],
    ids=["show", "reduce", "rereduce", "probe-file", "run-file", "date"],
)
def test_user_errors_are_one_line(lab, monkeypatch, args, message):
    folder, _, db = lab
    monkeypatch.chdir(folder)
    call(["probes", "add", "p1.toml", *db])
    r = call([*args, *db], ok=False)
    assert r.exit_code != 0
    assert r.output.count("\n") == 1 and r.output.startswith("Error: ") and message in r.output


def test_list_without_an_archive_says_what_to_do(lab):
    folder, _, _ = lab
    r = call(["runs", "list", "--db", str(folder / "none.sqlite")], ok=False)
    assert r.exit_code != 0 and "import a run or add a probe first" in r.output


def test_checksum_mismatch_is_one_line_naming_the_file(lab):
    folder, run, db = lab
    rid = str(as_json(["runs", "import", str(run), *db])["run_id"])
    csv = folder / "run.csv"
    csv.write_bytes(csv.read_bytes() + b"2402.0,1\n")
    r = call(["runs", "show", rid, *db], ok=False)
    assert r.exit_code == 2 and r.output.count("\n") == 1 and "run.csv" in r.output
