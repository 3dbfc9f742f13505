"""Schema versions and migrations, connection settings, and readers beside a writer."""

import multiprocessing
import os
import signal
import sqlite3
import time

import pytest
from archive_data import invented_run, log_bytes

from heatlog.archive import MIGRATIONS, SCHEMA_VERSION, ArchiveError, import_path, open_archive
from heatlog.archive.runs import list_runs
from heatlog.archive.schema import migrate, schema_version


def _v1_archive(path):
    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("PRAGMA foreign_keys = ON")
    migrate(conn, target=1)
    conn.execute("INSERT INTO probes VALUES ('pt-1', 'rtd', '2026-10-01T00:00:00+00:00')")
    conn.execute(
        "INSERT INTO calibrations (probe_id, calibration_date, reference, uncertainty_K, model, "
        "coefficients_json, probe_toml, sha256, added_at) VALUES ('pt-1', '2026-10-01', 'ref', "
        "0.02, 'callendar-van-dusen', '{}', 'text', 'abc', '2026-10-01T00:00:00+00:00')"
    )
    conn.execute(
        "INSERT INTO runs (kind, identity, raw_path, raw_sha256, raw_size, run_date, "
        "run_date_source, n_channels, settings_json, imported_at) VALUES ('device-log', 'log:x', "
        "'/x.bin', 'x', 1, '2026-10-02', 'given', 1, '{}', '2026-10-02T00:00:00+00:00')"
    )
    conn.execute("INSERT INTO run_channels VALUES (1, 0, 'pt-1', 'max31865', NULL)")
    assert schema_version(conn) == 1
    conn.close()


def test_migrating_from_v1_to_the_latest_keeps_the_data(tmp_path):
    db = tmp_path / "old.sqlite"
    _v1_archive(db)
    with open_archive(db, create=False) as archive:
        assert schema_version(archive.conn) == SCHEMA_VERSION == len(MIGRATIONS) >= 2
        assert archive.one("SELECT probe_toml FROM calibrations")[0] == "text"
        assert archive.one("SELECT probe_id FROM run_channels WHERE run_id = 1")[0] == "pt-1"
        archive.conn.execute("INSERT INTO run_dependencies VALUES (1, 0, 1)")  # v2 table works
        assert archive.integrity_problems() == []


def test_fresh_archive_is_at_the_latest_version_in_wal_mode(tmp_path):
    with open_archive(tmp_path / "new.sqlite") as archive:
        assert schema_version(archive.conn) == SCHEMA_VERSION
        assert archive.one("PRAGMA journal_mode")[0] == "wal"
        assert archive.one("PRAGMA foreign_keys")[0] == 1
        assert archive.one("PRAGMA busy_timeout")[0] >= 1000


def test_newer_schema_and_missing_or_foreign_files_are_clean_errors(tmp_path):
    db = tmp_path / "future.sqlite"
    conn = sqlite3.connect(db)
    conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    conn.close()
    with pytest.raises(ArchiveError, match="update heatlog"):
        open_archive(db)
    with pytest.raises(ArchiveError, match="no archive here"):
        open_archive(tmp_path / "absent.sqlite", create=False)
    junk = tmp_path / "junk.sqlite"
    junk.write_bytes(b"not a database at all" * 100)
    with pytest.raises(ArchiveError, match="not a usable heatlog archive"):
        open_archive(junk)


def _writer(db, folder, fd):
    out = os.fdopen(fd, "w", buffering=1)
    t, sums = invented_run(5)
    with open_archive(db) as archive:
        out.write("ready\n")
        for i in range(10_000):
            path = folder / f"w-{i}.bin"
            path.write_bytes(log_bytes("b-2", i, ["pt-0"], sums + i, (t * 1000).astype(int)))
            import_path(archive, path)


def test_readers_see_only_committed_runs_while_a_writer_imports(tmp_path):
    db = tmp_path / "a.sqlite"
    open_archive(db).close()
    read_fd, write_fd = os.pipe()
    child = multiprocessing.get_context("fork").Process(
        target=_writer, args=(db, tmp_path, write_fd)
    )
    child.start()
    os.close(write_fd)
    counts = []
    try:
        with os.fdopen(read_fd) as pipe:
            assert pipe.readline() == "ready\n"
            with open_archive(db, create=False) as reader:
                deadline = time.monotonic() + 1.5
                while time.monotonic() < deadline:
                    rows = list_runs(reader)
                    assert all(r["probes"] == "pt-0" for r in rows)  # never a run without channels
                    counts.append(len(rows))
    finally:
        os.kill(child.pid, signal.SIGKILL)
        child.join()
    assert counts == sorted(counts) and counts[-1] > counts[0], counts[:3] + counts[-3:]
