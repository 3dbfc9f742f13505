"""Importing runs into the archive, and reading them back.

Two kinds of run:

* ``device-log`` — a run file pulled from a board (``heatlog.logformat``): board, run number,
  channel table (channel → probe id and reading chain), clock anchor. The pull code calls
  :func:`record_pulled_run` after it has verified a file against its manifest.
* ``run-file`` — a TOML run file (``heatlog.runfile``) with its log CSV: the run file's text is
  stored, the CSV is the raw file, its probe file is recorded as a calibration, and calibration
  run files it names are imported too (``run_dependencies``).

Each import is one transaction: the run, its channels, its board, probe files and dependencies
are all committed together or not at all. Importing the same file again returns the run already
recorded. Raw files stay where they are; the archive keeps their path and SHA-256 and checks the
bytes on every read (:func:`raw_bytes`). Paths are stored relative to the archive file's folder
with forward slashes when the file lies inside that folder (so a project folder moves, or goes to
another system, whole), else absolute; both separators read back on any system
(:mod:`heatlog.storedpath`).

The run's date (what the calibration rule compares) is the clock anchor's UTC date for a board
log whose clock was set, else the date given on import, else the import date.
"""

from __future__ import annotations

import datetime as dt
import json
import sqlite3
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from heatlog.archive import rawstore
from heatlog.archive.calibrations import add_calibration_text
from heatlog.archive.db import Archive, open_archive, utc_now
from heatlog.archive.rawfiles import ChecksumMismatch, read_bytes, read_verified, sha256_bytes
from heatlog.errors import HeatlogError, InputError
from heatlog.logformat import DamagedLog, LogHeader, RunLog, decode, parse_header
from heatlog.runfile import parse_run
from heatlog.storedpath import resolve_stored, to_stored


@dataclass(frozen=True)
class ImportedRun:
    run_id: int
    new: bool  # False: the same file was already in the archive
    kind: str
    raw_path: str
    raw_sha256: str
    dependencies: tuple[int, ...] = ()
    damage: dict[str, Any] | None = None  # a board run log's Damage (None for a TOML run file)

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


def _date_from(run_date: dt.date | str | None) -> tuple[str, str] | None:
    if run_date is None:
        return None
    if isinstance(run_date, str):
        try:
            run_date = dt.date.fromisoformat(run_date)
        except ValueError:
            raise InputError(f"run date must look like 2026-11-30, got {run_date!r}") from None
    return run_date.isoformat(), "given on import"


def _existing(conn: sqlite3.Connection, identity: str) -> sqlite3.Row | None:
    return conn.execute("SELECT * FROM runs WHERE identity = ?", (identity,)).fetchone()


def _board(conn: sqlite3.Connection, header: LogHeader) -> int:
    row = conn.execute("SELECT id FROM boards WHERE board_id = ?", (header.board_id,)).fetchone()
    if row is not None:
        conn.execute("UPDATE boards SET firmware = ? WHERE id = ?", (header.firmware, row["id"]))
        return int(row["id"])
    cur = conn.execute(
        "INSERT INTO boards (board_id, firmware, first_seen) VALUES (?, ?, ?)",
        (header.board_id, header.firmware, utc_now()),
    )
    return int(cur.lastrowid or 0)


def _insert_run(conn: sqlite3.Connection, fields: Mapping[str, Any]) -> int:
    cols = ", ".join(fields)
    marks = ", ".join("?" for _ in fields)
    cur = conn.execute(f"INSERT INTO runs ({cols}) VALUES ({marks})", tuple(fields.values()))
    return int(cur.lastrowid or 0)


def _record_device_log(
    conn: sqlite3.Connection,
    path: Path,
    log: RunLog,
    size: int,
    digest: str,
    run_date: dt.date | str | None,
    source: str,
    base: Path,
) -> ImportedRun:
    identity = f"log:{digest}"
    damage = _damage(log)
    old = _existing(conn, identity)
    if old is not None:
        return ImportedRun(
            old["id"], False, old["kind"], _shown(old["raw_path"], base), digest, (), damage
        )
    h = log.header
    if h.anchor_ms is not None:
        date = dt.datetime.fromtimestamp(h.anchor_ms / 1000, dt.UTC).date().isoformat()
        dated = (date, "board clock anchor (UTC)")
    else:
        dated = _date_from(run_date) or (dt.date.today().isoformat(), "import date (clock unset)")
    settings = {
        "source": source,
        "format_version": h.format_version,
        "firmware": h.firmware,
        "interval_ms": h.interval_ms,
        "oversample": h.oversample,
        "n_records": log.n_records,
        "segments": len(log.segments),
        "bad_blocks": log.bad_blocks,
        "bad_bytes": log.bad_bytes,
        "trailing_bytes": log.trailing_bytes,
        "damage": damage,
    }
    run_id = _insert_run(
        conn,
        {
            "kind": "device-log",
            "identity": identity,
            "title": f"{h.board_id} run {h.run}",
            "raw_path": to_stored(path, base),
            "raw_sha256": digest,
            "raw_size": size,
            "board": _board(conn, h),
            "run_number": h.run,
            "anchor_ms": h.anchor_ms,
            "run_date": dated[0],
            "run_date_source": dated[1],
            "n_channels": len(h.channels),
            "settings_json": json.dumps(settings),
            "imported_at": utc_now(),
        },
    )
    for i, ch in enumerate(h.channels):
        try:
            spec: str | None = ch.chain_spec(h.oversample)
        except HeatlogError:
            spec = None
        conn.execute(
            "INSERT INTO run_channels (run_id, channel, probe_id, kind, chain_spec) "
            "VALUES (?, ?, ?, ?, ?)",
            (run_id, i, ch.probe_id or None, ch.kind, spec),
        )
    return ImportedRun(run_id, True, "device-log", str(path), digest, (), damage)


def _damage(log: RunLog) -> dict[str, Any]:
    d = log.damage()
    return d.to_dict() | {"summary": d.describe()}


def archive_dir(archive: Archive) -> Path:
    """The folder stored paths are relative to: the archive file's own."""
    return Path(archive.path).resolve().parent


def _shown(stored: str, base: Path) -> str:
    """A stored path as a full path on this system (either separator; old absolute ones kept)."""
    return str(resolve_stored(stored, base))


def _archive(db: Archive | str | Path | None) -> tuple[Archive, bool]:
    if isinstance(db, Archive):
        return db, False
    return open_archive(db), True


def record_pulled_run(
    db: Archive | str | Path | None,
    raw_path: str | Path,
    sha256: str,
    header: LogHeader | None = None,
    *,
    run_date: dt.date | str | None = None,
) -> ImportedRun:
    """Record a run file the pull code has written and verified (for ``heatlog pull``).

    ``db`` is an open :class:`Archive` or a path (None: the default archive). The file is read
    once, checked against ``sha256`` (the manifest's checksum; :class:`ChecksumMismatch` if the
    bytes differ) and, when given, against ``header`` (board id and run number must agree). One
    transaction; calling it again for the same file returns the recorded run (``new=False``)."""
    archive, owned = _archive(db)
    try:
        path = Path(raw_path).resolve()
        data = read_verified(path, sha256.lower(), "pulled run file")
        if header is not None:
            found = parse_header(data)
            if (found.board_id, found.run) != (header.board_id, header.run):
                raise ChecksumMismatch(
                    f"{path}: holds board {found.board_id} run {found.run}, the pull said "
                    f"board {header.board_id} run {header.run}; pull the run again"
                )
        log = decode(data)  # before the transaction: the write lock is held only to insert
        rawstore.keep(archive.path, data, sha256.lower())
        with archive.transaction() as conn:
            return _record_device_log(
                conn, path, log, len(data), sha256.lower(), run_date, "pull", archive_dir(archive)
            )
    finally:
        if owned:
            archive.close()


def import_device_log(
    archive: Archive,
    path: str | Path,
    run_date: dt.date | str | None = None,
    *,
    strict: bool = False,
) -> ImportedRun:
    """Import a board run log file from disk (``heatlog runs import RUN.bin``). The reply's
    ``damage`` says what the decoder found; with ``strict`` a damaged file is refused
    (:class:`~heatlog.logformat.DamagedLog`) and nothing is stored."""
    p = Path(path).resolve()
    data = read_bytes(p, "run log")
    log = decode(data)  # LogCorrupt for an unusable header; damaged blocks are counted
    if strict and log.damaged:
        raise DamagedLog(
            f"{p}: {log.damage().describe()}; not imported (--strict); import it without "
            "--strict to keep it with the damage recorded"
        )
    digest = sha256_bytes(data)
    rawstore.keep(archive.path, data, digest)
    with archive.transaction() as conn:
        return _record_device_log(
            conn, p, log, len(data), digest, run_date, "file", archive_dir(archive)
        )


def _record_run_file(
    conn: sqlite3.Connection,
    archive: Archive,
    path: Path,
    run_date: dt.date | str | None,
    seen: tuple[Path, ...],
) -> ImportedRun:
    if path in seen:
        raise InputError(f"{path}: calibration run files refer to each other in a loop")
    raw = read_bytes(path, "run file")
    try:
        text = raw.decode("utf-8")
        doc = tomllib.loads(text)
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise InputError(f"{path}: not a TOML run file ({exc})") from None
    spec = parse_run(doc, path)
    log_path = spec.log.file.resolve()
    log_bytes = read_bytes(log_path, "log CSV")
    log_sha = sha256_bytes(log_bytes)
    rawstore.keep(archive.path, log_bytes, log_sha)
    run_sha = sha256_bytes(raw)
    identity = f"run-file:{run_sha}:{log_sha}"
    old = _existing(conn, identity)
    if old is not None:
        return ImportedRun(
            old["id"], False, "run-file", _shown(old["raw_path"], archive_dir(archive)), log_sha
        )
    deps = tuple(
        _record_run_file(conn, archive, p.resolve(), run_date, (*seen, path)).run_id
        for p in spec.calibrations
    )
    probe_id = None
    if spec.log.probe is not None:
        probe_text = read_bytes(spec.log.probe, "probe file").decode("utf-8", "replace")
        added = add_calibration_text(archive, probe_text, str(spec.log.probe.resolve()), conn)
        probe_id = added.calibration.probe_id
    dated = _date_from(run_date) or (dt.date.today().isoformat(), "import date")
    settings = {
        "log": {
            "time_col": spec.log.time_col,
            "temp_col": spec.log.temp_col,
            "raw_col": spec.log.raw_col,
            "chain": spec.log.chain,
        },
        "reduce": dict(spec.reduce),
    }
    run_id = _insert_run(
        conn,
        {
            "kind": "run-file",
            "identity": identity,
            "title": spec.title,
            "raw_path": to_stored(log_path, archive_dir(archive)),
            "raw_sha256": log_sha,
            "raw_size": len(log_bytes),
            "run_file_path": to_stored(path, archive_dir(archive)),
            "run_file_sha256": run_sha,
            "run_file_text": text,
            "run_date": dated[0],
            "run_date_source": dated[1],
            "n_channels": 1,
            "settings_json": json.dumps(settings),
            "imported_at": utc_now(),
        },
    )
    conn.execute(
        "INSERT INTO run_channels (run_id, channel, probe_id, kind, chain_spec) "
        "VALUES (?, 0, ?, ?, ?)",
        (run_id, probe_id, "raw" if spec.log.raw_col else "temperature", spec.log.chain),
    )
    for i, dep in enumerate(deps):
        conn.execute(
            "INSERT INTO run_dependencies (run_id, position, depends_on) VALUES (?, ?, ?)",
            (run_id, i, dep),
        )
    return ImportedRun(run_id, True, "run-file", str(log_path), log_sha, deps)


def import_run_file(
    archive: Archive, path: str | Path, run_date: dt.date | str | None = None
) -> ImportedRun:
    """Import a TOML run file with its log CSV, probe file and calibration run files."""
    with archive.transaction() as conn:
        return _record_run_file(conn, archive, Path(path).resolve(), run_date, ())


def import_path(
    archive: Archive,
    path: str | Path,
    run_date: dt.date | str | None = None,
    *,
    strict: bool = False,
) -> ImportedRun:
    """``heatlog runs import FILE``: a ``.toml`` run file, or else a board run log (with
    ``strict``, refused if damaged)."""
    _date_from(run_date)  # a malformed date is reported before any file is read
    if str(path).lower().endswith(".toml"):
        return import_run_file(archive, path, run_date)
    return import_device_log(archive, path, run_date, strict=strict)


@dataclass(frozen=True)
class RunRecord:
    """A run as the archive holds it."""

    id: int
    kind: str
    title: str
    raw_path: str
    raw_sha256: str
    raw_size: int
    run_file_path: str | None
    run_file_sha256: str | None
    run_file_text: str | None
    board_id: str | None
    firmware: str | None
    run_number: int | None
    anchor_ms: int | None
    run_date: str
    run_date_source: str
    settings: dict[str, Any]
    imported_at: str
    channels: tuple[dict[str, Any], ...]
    dependencies: tuple[int, ...]
    archive_copy: str | None = None  # the archive's own copy (rawstore), when it holds one

    def to_dict(self, with_text: bool = True) -> dict[str, Any]:
        out = dict(self.__dict__)
        if not with_text:
            out.pop("run_file_text")
        out["channels"] = [dict(c) for c in self.channels]
        out["dependencies"] = list(self.dependencies)
        return out


def run_record(archive: Archive, run_id: int) -> RunRecord:
    row = archive.one(
        "SELECT runs.*, boards.board_id AS board_name, boards.firmware AS board_fw FROM runs "
        "LEFT JOIN boards ON boards.id = runs.board WHERE runs.id = ?",
        (run_id,),
    )
    if row is None:
        raise InputError(f"no run {run_id} in {archive.path}; see heatlog runs list")
    channels = tuple(
        dict(r)
        for r in archive.query(
            "SELECT channel, probe_id, kind, chain_spec FROM run_channels WHERE run_id = ? "
            "ORDER BY channel",
            (run_id,),
        )
    )
    deps = tuple(
        r[0]
        for r in archive.query(
            "SELECT depends_on FROM run_dependencies WHERE run_id = ? ORDER BY position",
            (run_id,),
        )
    )
    return RunRecord(
        id=row["id"],
        kind=row["kind"],
        title=row["title"],
        raw_path=_shown(row["raw_path"], archive_dir(archive)),
        raw_sha256=row["raw_sha256"],
        raw_size=row["raw_size"],
        run_file_path=(
            None
            if row["run_file_path"] is None
            else _shown(row["run_file_path"], archive_dir(archive))
        ),
        run_file_sha256=row["run_file_sha256"],
        run_file_text=row["run_file_text"],
        board_id=row["board_name"],
        firmware=row["board_fw"],
        run_number=row["run_number"],
        anchor_ms=row["anchor_ms"],
        run_date=row["run_date"],
        run_date_source=row["run_date_source"],
        settings=json.loads(row["settings_json"]),
        imported_at=row["imported_at"],
        channels=channels,
        dependencies=deps,
        archive_copy=None
        if (copy := rawstore.stored(archive.path, row["raw_sha256"])) is None
        else str(copy),
    )


def raw_file(run: RunRecord) -> Path:
    """Where the run's raw bytes are read from: the original file while it is there, else the
    archive's own copy (so a moved project folder does not orphan its runs)."""
    if run.archive_copy is not None and not Path(run.raw_path).is_file():
        return Path(run.archive_copy)
    return Path(run.raw_path)


def raw_bytes(run: RunRecord) -> bytes:
    """The run's raw file, verified against its recorded SHA-256 (ChecksumMismatch if not)."""
    return read_verified(raw_file(run), run.raw_sha256)


def list_runs(archive: Archive, probe_id: str | None = None) -> list[dict[str, Any]]:
    """One summary row per run (newest first), with its latest ΔT on channel 0 if reduced."""
    sql = (
        "SELECT runs.id, runs.kind, runs.title, runs.run_date, runs.imported_at, runs.raw_path, "
        "runs.raw_sha256, boards.board_id, runs.run_number, "
        "(SELECT group_concat(COALESCE(probe_id, '-'), ',') FROM run_channels c "
        " WHERE c.run_id = runs.id) AS probes, "
        "(SELECT delta_t_K FROM reductions r WHERE r.run_id = runs.id ORDER BY r.id DESC LIMIT 1)"
        " AS delta_t_K, "
        "(SELECT u_delta_t_K FROM reductions r WHERE r.run_id = runs.id ORDER BY r.id DESC "
        " LIMIT 1) AS u_delta_t_K "
        "FROM runs LEFT JOIN boards ON boards.id = runs.board"
    )
    params: tuple = ()
    if probe_id is not None:
        sql += " WHERE runs.id IN (SELECT run_id FROM run_channels WHERE probe_id = ?)"
        params = (probe_id,)
    base = archive_dir(archive)
    return [
        dict(r) | {"raw_path": _shown(r["raw_path"], base)}
        for r in archive.query(sql + " ORDER BY runs.id DESC", params)
    ]
