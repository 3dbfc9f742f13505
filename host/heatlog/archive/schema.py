"""The archive's SQLite schema and its ordered migrations.

The schema version is SQLite's ``PRAGMA user_version``: 0 for a new file, otherwise the number
of migrations applied. :data:`MIGRATIONS` is append-only — a released migration is never edited;
a change to the schema is a new function at the end. :func:`migrate` applies the missing ones,
each in its own transaction together with the new ``user_version``, so an interrupted upgrade
leaves the file at the last complete version.

Tables (latest version):

* ``boards`` — one row per board id seen in a run log (firmware last seen).
* ``calibrations`` — the calibration history of every probe: probe id, calibration date (the
  date it is valid from), reference used, standard uncertainty, model and coefficients, the full
  probe-file TOML text and its SHA-256. ``probes`` holds one row per probe id.
* ``runs`` — one row per imported run: what it is (``device-log`` or ``run-file``), the raw
  file's path and SHA-256, the run file's text and SHA-256 (run files), board, run number, clock
  anchor, the run's date and where that date came from, ``imported_at``.
* ``run_channels`` — channel → probe id and reading chain of each run.
* ``run_dependencies`` (v2) — calibration run files a run file names, in order.
* ``reductions`` — each reduction ever made: inputs (JSON), method, results (JSON, with the
  uncertainty budget), headline ΔT and u, software version, why it was made.
* ``reduction_calibrations`` — which calibration ids a reduction applied, per run and channel.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Callable

from heatlog.errors import InputError

_V1 = """
CREATE TABLE boards (
    id INTEGER PRIMARY KEY,
    board_id TEXT NOT NULL UNIQUE,
    firmware TEXT NOT NULL DEFAULT '',
    first_seen TEXT NOT NULL
);
CREATE TABLE probes (
    probe_id TEXT PRIMARY KEY,
    kind TEXT NOT NULL,
    first_added TEXT NOT NULL
);
CREATE TABLE calibrations (
    id INTEGER PRIMARY KEY,
    probe_id TEXT NOT NULL REFERENCES probes(probe_id),
    calibration_date TEXT NOT NULL,
    reference TEXT NOT NULL,
    uncertainty_K REAL NOT NULL,
    model TEXT NOT NULL,
    coefficients_json TEXT NOT NULL,
    probe_toml TEXT NOT NULL,
    sha256 TEXT NOT NULL,
    source_path TEXT NOT NULL DEFAULT '',
    added_at TEXT NOT NULL,
    UNIQUE (probe_id, sha256)
);
CREATE TABLE runs (
    id INTEGER PRIMARY KEY,
    kind TEXT NOT NULL CHECK (kind IN ('device-log', 'run-file')),
    identity TEXT NOT NULL UNIQUE,
    title TEXT NOT NULL DEFAULT '',
    raw_path TEXT NOT NULL,
    raw_sha256 TEXT NOT NULL,
    raw_size INTEGER NOT NULL,
    run_file_path TEXT,
    run_file_sha256 TEXT,
    run_file_text TEXT,
    board INTEGER REFERENCES boards(id),
    run_number INTEGER,
    anchor_ms INTEGER,
    run_date TEXT NOT NULL,
    run_date_source TEXT NOT NULL,
    n_channels INTEGER NOT NULL CHECK (n_channels >= 1),
    settings_json TEXT NOT NULL,
    imported_at TEXT NOT NULL
);
CREATE TABLE run_channels (
    run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
    channel INTEGER NOT NULL,
    probe_id TEXT,
    kind TEXT NOT NULL DEFAULT '',
    chain_spec TEXT,
    PRIMARY KEY (run_id, channel)
);
CREATE TABLE reductions (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
    channel INTEGER NOT NULL,
    created_at TEXT NOT NULL,
    reason TEXT NOT NULL,
    method TEXT NOT NULL,
    inputs_json TEXT NOT NULL,
    results_json TEXT NOT NULL,
    delta_t_K REAL,
    u_delta_t_K REAL,
    software_version TEXT NOT NULL
);
CREATE TABLE reduction_calibrations (
    reduction_id INTEGER NOT NULL REFERENCES reductions(id) ON DELETE CASCADE,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    channel INTEGER NOT NULL,
    calibration_id INTEGER NOT NULL REFERENCES calibrations(id),
    PRIMARY KEY (reduction_id, run_id, channel)
);
CREATE INDEX reductions_by_run ON reductions(run_id, channel, id);
"""

_V2 = """
CREATE TABLE run_dependencies (
    run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
    position INTEGER NOT NULL,
    depends_on INTEGER NOT NULL REFERENCES runs(id),
    PRIMARY KEY (run_id, position)
);
CREATE INDEX calibrations_by_probe ON calibrations(probe_id, calibration_date, id);
CREATE INDEX run_channels_by_probe ON run_channels(probe_id);
"""


def _script(sql: str) -> Callable[[sqlite3.Connection], None]:
    def apply(conn: sqlite3.Connection) -> None:
        for statement in filter(str.strip, sql.split(";")):
            conn.execute(statement)

    return apply


#: Ordered, append-only: MIGRATIONS[i] takes the schema from version i to i + 1.
MIGRATIONS: tuple[Callable[[sqlite3.Connection], None], ...] = (
    _script(_V1),  # v1: boards, probes, calibrations, runs, channels, reductions
    _script(_V2),  # v2: calibration run files a run depends on; lookup indexes
)
SCHEMA_VERSION = len(MIGRATIONS)


def schema_version(conn: sqlite3.Connection) -> int:
    return int(conn.execute("PRAGMA user_version").fetchone()[0])


def migrate(conn: sqlite3.Connection, target: int = SCHEMA_VERSION) -> int:
    """Apply the missing migrations up to ``target``, each in one transaction; returns the version.

    ``conn`` must be in autocommit mode (``isolation_level=None``)."""
    version = schema_version(conn)
    if version > SCHEMA_VERSION:
        raise InputError(
            f"this archive has schema version {version}, newer than this heatlog knows "
            f"({SCHEMA_VERSION}); update heatlog"
        )
    while version < target:
        conn.execute("BEGIN IMMEDIATE")
        try:
            current = schema_version(conn)  # another process may have migrated meanwhile
            if current == version:
                MIGRATIONS[version](conn)
                conn.execute(f"PRAGMA user_version = {version + 1}")
            conn.execute("COMMIT")
        except BaseException:
            conn.execute("ROLLBACK")
            raise
        version = schema_version(conn)
    return version
