"""Importing runs, tracing results to raw files and calibrations, checksums on read, export."""

import base64
import binascii
import hashlib
import shutil
import tempfile
import tomllib
from pathlib import Path

import pytest
from archive_data import A_1, R0_1, invented_run, log_bytes, probe_toml, write_run_file
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog.archive import (
    ChecksumMismatch,
    add_calibration_file,
    export_run,
    import_path,
    open_archive,
    record_pulled_run,
    reduce_run,
    run_record,
    thermogram_from_log,
    trace,
)
from heatlog.demo import run_demo
from heatlog.errors import HeatlogError
from heatlog.logformat import decode, parse_header
from heatlog.probes import parse_probe
from heatlog.runfile import run_file

VECTOR = Path(__file__).resolve().parents[1] / "vectors" / "run_log.bin"


@pytest.fixture
def archive(tmp_path):
    a = open_archive(tmp_path / "a.sqlite")
    yield a
    a.close()


def test_board_log_import_records_board_channels_anchor_and_checksum(archive, tmp_path):
    raw = tmp_path / "run_log.bin"
    shutil.copy(VECTOR, raw)
    first = import_path(archive, raw)
    again = import_path(archive, raw)
    assert first.new and not again.new and again.run_id == first.run_id
    run = run_record(archive, first.run_id)
    header = parse_header(raw.read_bytes())
    assert run.raw_sha256 == hashlib.sha256(raw.read_bytes()).hexdigest()
    assert (run.board_id, run.run_number, run.anchor_ms) == (
        header.board_id,
        header.run,
        header.anchor_ms,
    )
    assert [c["probe_id"] for c in run.channels] == [c.probe_id for c in header.channels]
    assert run.run_date_source.startswith("board clock")


def test_record_pulled_run_checks_the_manifest_checksum_and_header(archive, tmp_path):
    raw = tmp_path / "pulled.bin"
    shutil.copy(VECTOR, raw)
    sha = hashlib.sha256(raw.read_bytes()).hexdigest()
    header = parse_header(raw.read_bytes())
    with pytest.raises(ChecksumMismatch, match="pulled.bin"):
        record_pulled_run(archive, raw, "0" * 64, header)
    other = header.__class__(**{**header.__dict__, "run": header.run + 1})
    with pytest.raises(ChecksumMismatch, match="pull the run again"):
        record_pulled_run(archive, raw, sha, other)
    rec = record_pulled_run(archive, raw, sha, header)
    assert rec.new and rec.kind == "device-log"
    assert not record_pulled_run(tmp_path / "a.sqlite", raw, sha).new  # by path, idempotent
    assert run_record(archive, rec.run_id).settings["source"] == "pull"


@pytest.fixture
def demo(archive, tmp_path):
    run_demo(tmp_path / "demo")  # the simulated board logs and pulls the invented runs
    imported = import_path(archive, tmp_path / "demo" / "dissolution.toml", "2026-12-01")
    return archive, tmp_path / "demo", imported


def test_run_file_import_records_log_probe_and_calibration_run(demo):
    archive, folder, imported = demo
    assert len(imported.dependencies) == 1
    run = run_record(archive, imported.run_id)
    assert Path(run.raw_path) == (folder / "dissolution.csv").resolve()
    assert run.run_file_text == (folder / "dissolution.toml").read_text(encoding="utf-8")
    assert run.channels[0]["probe_id"] == "demo-ntc-1"
    cal = archive.one("SELECT probe_toml, sha256 FROM calibrations")
    text = (folder / "probe.toml").read_text(encoding="utf-8")
    assert cal["probe_toml"] == text
    assert cal["sha256"] == hashlib.sha256(text.encode()).hexdigest()


def test_show_traces_a_result_to_raw_file_and_calibration(demo):
    archive, folder, imported = demo
    red = reduce_run(archive, imported.run_id)
    direct = run_file(folder / "dissolution.toml")  # the same files evaluated without the archive
    assert red.results["delta_t_K"] == pytest.approx(direct.reduction.delta_t_K, rel=1e-12)
    assert red.results["enthalpy_kJ_per_mol"] == pytest.approx(direct.molar.value, rel=1e-12)
    shown = trace(archive, imported.run_id)
    raw = (folder / "dissolution.csv").read_bytes()
    assert shown["raw_file"]["sha256"] == hashlib.sha256(raw).hexdigest()
    assert shown["raw_file"]["verified"] is True
    uses = shown["latest"]["calibrations"]
    assert {(u["run_id"], u["probe_id"], u["calibration_date"]) for u in uses} == {
        (imported.run_id, "demo-ntc-1", "2026-11-30"),
        (imported.dependencies[0], "demo-ntc-1", "2026-11-30"),
    }
    probe = tomllib.loads((folder / "probe.toml").read_text(encoding="utf-8"))
    assert uses[0]["coefficients"] == pytest.approx(probe["coefficients"], rel=1e-15)
    assert shown["latest"]["software_version"]


def test_changed_raw_file_is_a_clean_error_naming_it(demo):
    archive, folder, imported = demo
    reduce_run(archive, imported.run_id)
    log = folder / "dissolution.csv"
    text = log.read_text(encoding="utf-8")
    log.write_text(text.rstrip("\n") + "1\n", encoding="utf-8")  # one digit more in the last cell
    for action in (
        lambda: trace(archive, imported.run_id),
        lambda: reduce_run(archive, imported.run_id),
    ):
        with pytest.raises(ChecksumMismatch, match=r"dissolution\.csv.*SHA-256"):
            action()


def test_export_reproduces_the_result_elsewhere(archive, tmp_path):
    src = tmp_path / "src"
    src.mkdir()
    (src / "p1.toml").write_text(probe_toml("pt-1", "2026-10-01", R0_1, A_1), encoding="utf-8")
    imported = import_path(archive, write_run_file(src, "run", 3, "p1.toml"), "2026-12-01")
    red = reduce_run(archive, imported.run_id)
    doc = export_run(archive, imported.run_id, include_raw=True)
    assert doc["run"]["run_date"] == "2026-12-01" and doc["latest"]["id"] == red.id
    # rebuild the files from the export alone in another folder, check every checksum, re-evaluate
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    spec = tomllib.loads(doc["run_file_text"])
    raw = base64.b64decode(doc["raw_file"]["base64"])
    assert hashlib.sha256(raw).hexdigest() == doc["raw_file"]["sha256"]
    (elsewhere / spec["log"]["file"]).write_bytes(raw)
    (probe,) = doc["probe_files"]
    assert hashlib.sha256(probe["probe_toml"].encode()).hexdigest() == probe["sha256"]
    (elsewhere / spec["log"]["probe"]).write_text(probe["probe_toml"], encoding="utf-8")
    (elsewhere / "run.toml").write_text(doc["run_file_text"], encoding="utf-8")
    again = run_file(elsewhere / "run.toml")
    assert again.reduction.delta_t_K == pytest.approx(red.results["delta_t_K"], rel=1e-12)


def test_probe_add_is_idempotent_and_a_kind_change_is_refused(archive, tmp_path):
    p = tmp_path / "p.toml"
    p.write_text(probe_toml("pt-1", "2026-10-01", R0_1, A_1), encoding="utf-8")
    first = add_calibration_file(archive, p)
    assert first.new and not add_calibration_file(archive, p).new
    ntc = (
        'id = "pt-1"\nkind = "thermistor"\nmodel = "beta"\ncalibration_date = 2026-11-01\n'
        'reference = "invented"\nvalid_range_C = [0.0, 80.0]\nuncertainty_K = 0.05\n'
        "[coefficients]\nR25 = 10000.0\nbeta = 3950.0\n"
    )
    p.write_text(ntc, encoding="utf-8")
    with pytest.raises(ValueError, match="recorded as kind rtd"):
        add_calibration_file(archive, p)


def test_faulty_records_are_left_out_of_a_board_log_channel(archive, tmp_path):
    t, sums = invented_run(5)
    data = bytearray(log_bytes("b-1", 1, ["pt-1"], sums, (t * 1000).astype(int)))
    hsize, rsize = 64 + 24 + 4, 18
    for k in (10, 11, 12):  # mark three records "open circuit" on channel 0, fix their CRCs
        pos = hsize + k * rsize
        data[pos + 2] = 1
        data[pos + rsize - 2 : pos + rsize] = binascii.crc_hqx(
            bytes(data[pos : pos + rsize - 2]), 0xFFFF
        ).to_bytes(2, "little")
    path = tmp_path / "faults.bin"
    path.write_bytes(bytes(data))
    (tmp_path / "p1.toml").write_text(probe_toml("pt-1", "2026-01-01", R0_1, A_1), encoding="utf-8")
    add_calibration_file(archive, tmp_path / "p1.toml")
    red = reduce_run(archive, import_path(archive, path).run_id)
    log = decode(bytes(data))
    probe = parse_probe(probe_toml("pt-1", "2026-01-01", R0_1, A_1))
    thermo = thermogram_from_log(log, 0, probe, "faults.bin")
    assert thermo.metadata["faulty_records_left_out"] == 3 and len(thermo) == log.n_records - 3
    assert red.results["delta_t_K"] == pytest.approx(2.0, abs=0.02)  # invented release: 2 K


def test_calibrated_temperature_logs_need_no_probe(archive, tmp_path):
    (tmp_path / "t.csv").write_text(
        "time_s,temp_C\n"
        + "".join(f"{t},{21 + (t > 600) * 1.5 + 1e-4 * t}\n" for t in range(0, 2400, 2)),
        encoding="utf-8",
    )
    (tmp_path / "t.toml").write_text('[log]\nfile = "t.csv"\n', encoding="utf-8")
    run_id = import_path(archive, tmp_path / "t.toml").run_id
    red = reduce_run(archive, run_id)
    assert red.calibrations == () and red.results["delta_t_K"] == pytest.approx(1.5, abs=0.01)


@settings(max_examples=40, deadline=None)
@given(st.binary(max_size=300))
def test_any_bytes_import_cleanly_or_fail_cleanly(data):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "x.bin"
        path.write_bytes(b"HLOG" + data if data[:1] == b"\0" else data)
        with open_archive(Path(folder) / "a.sqlite") as archive:
            try:
                import_path(archive, path)
            except HeatlogError:
                assert archive.one("SELECT count(*) FROM runs")[0] == 0
            assert archive.integrity_problems() == []


def test_board_log_and_run_file_give_the_same_budget(demo):
    # The same logged dissolution, reduced from the pulled board log (heatlog runs reduce) and
    # from its run file (heatlog reduce RUN.toml): one code path (runfile.with_probe_curve), so
    # the probe curve's rows and u(ΔT) agree.
    archive, folder, imported = demo
    logs = sorted((folder / "archive").rglob("*.hlg"), key=lambda p: p.name)
    assert len(logs) >= 2
    board = import_path(archive, logs[-1])
    via_archive = reduce_run(archive, board.run_id)
    direct = run_file(folder / "dissolution.toml")
    names = [c["name"] for c in via_archive.results["budget"]["components"]]
    assert any(n.startswith("probe demo-ntc-1 curve mode") for n in names)
    assert names == [c.name for c in direct.reduction.budget.components]
    assert via_archive.results["delta_t_K"] == pytest.approx(direct.reduction.delta_t_K, rel=1e-9)
    assert via_archive.results["u_delta_t_K"] == pytest.approx(
        direct.reduction.u_delta_t_K, rel=1e-9
    )
