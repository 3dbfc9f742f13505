"""Probe calibration history and the rule that picks the calibration a run uses.

Supersede rule: a run uses the calibration of its probe with the latest ``calibration_date`` on
or before the run's date (on the same date, the one added last). A newer calibration therefore
supersedes the older one for runs from its date on; runs before it keep the calibration that was
valid when they were made. A run older than every calibration of its probe uses the earliest one,
with a note saying so. ``heatlog runs rereduce --probe ID --calibration N`` applies a chosen
calibration to every run of the probe regardless of dates (to see what a recalibration would
change in earlier runs).
"""

from __future__ import annotations

import json
import sqlite3
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from heatlog.archive.db import Archive, utc_now
from heatlog.archive.rawfiles import read_bytes, sha256_bytes
from heatlog.errors import CalibrationError, InputError
from heatlog.probes import ProbeFile, parse_probe


@dataclass(frozen=True)
class Calibration:
    """One row of a probe's calibration history."""

    id: int
    probe_id: str
    calibration_date: str
    reference: str
    uncertainty_K: float
    model: str
    coefficients: dict[str, float]
    sha256: str
    source_path: str
    added_at: str
    probe_toml: str

    @classmethod
    def from_row(cls, row: sqlite3.Row) -> Calibration:
        return cls(
            id=row["id"],
            probe_id=row["probe_id"],
            calibration_date=row["calibration_date"],
            reference=row["reference"],
            uncertainty_K=row["uncertainty_K"],
            model=row["model"],
            coefficients=json.loads(row["coefficients_json"]),
            sha256=row["sha256"],
            source_path=row["source_path"],
            added_at=row["added_at"],
            probe_toml=row["probe_toml"],
        )

    def probe(self) -> ProbeFile:
        return parse_probe(self.probe_toml, f"archived calibration {self.id} of {self.probe_id}")

    def to_dict(self, with_text: bool = False) -> dict[str, Any]:
        out = {k: v for k, v in self.__dict__.items() if k != "probe_toml"}
        if with_text:
            out["probe_toml"] = self.probe_toml
        return out


@dataclass(frozen=True)
class Added:
    calibration: Calibration
    new: bool  # False: this exact probe file was already recorded
    supersedes: Calibration | None  # the calibration it follows in the history, if any


def add_calibration_text(
    archive: Archive, text: str, source_path: str = "", conn: sqlite3.Connection | None = None
) -> Added:
    """Record a probe file's text; the same text for the same probe id is recorded once.

    Runs inside the caller's transaction when ``conn`` is given, else in its own."""
    probe = parse_probe(text, source_path or "probe file")
    digest = sha256_bytes(text.encode("utf-8"))
    if conn is None:
        with archive.transaction() as c:
            return _add(c, probe, text, digest, source_path)
    return _add(conn, probe, text, digest, source_path)


def _add(
    conn: sqlite3.Connection, probe: ProbeFile, text: str, digest: str, source_path: str
) -> Added:
    date = probe.calibration_date.isoformat()
    row = conn.execute(
        "SELECT * FROM calibrations WHERE probe_id = ? AND sha256 = ?", (probe.id, digest)
    ).fetchone()
    new = row is None
    if new:
        known = conn.execute("SELECT kind FROM probes WHERE probe_id = ?", (probe.id,)).fetchone()
        if known is None:
            conn.execute(
                "INSERT INTO probes (probe_id, kind, first_added) VALUES (?, ?, ?)",
                (probe.id, probe.kind, utc_now()),
            )
        elif known["kind"] != probe.kind:
            raise CalibrationError(
                f"probe {probe.id} is recorded as kind {known['kind']}, this file says {probe.kind}; "
                "give the new probe its own id"
            )
        coeffs = {k: float(v) for k, v in probe.model.coefficients().items()}
        cur = conn.execute(
            "INSERT INTO calibrations (probe_id, calibration_date, reference, uncertainty_K, "
            "model, coefficients_json, probe_toml, sha256, source_path, added_at) "
            "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (probe.id, date, probe.reference, probe.uncertainty_K, probe.model.name,
             json.dumps(coeffs), text, digest, source_path, utc_now()),
        )  # fmt: skip
        row = conn.execute("SELECT * FROM calibrations WHERE id = ?", (cur.lastrowid,)).fetchone()
    cal = Calibration.from_row(row)
    before = conn.execute(
        "SELECT * FROM calibrations WHERE probe_id = ? AND id != ? AND "
        "(calibration_date < ? OR (calibration_date = ? AND id < ?)) "
        "ORDER BY calibration_date DESC, id DESC LIMIT 1",
        (probe.id, cal.id, date, date, cal.id),
    ).fetchone()
    return Added(cal, new, None if before is None else Calibration.from_row(before))


def add_calibration_file(archive: Archive, path: str | Path) -> Added:
    """Record a probe file (``heatlog probes add``)."""
    raw = read_bytes(path, "probe file")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise CalibrationError(f"{path}: not a UTF-8 TOML probe file") from None
    return add_calibration_text(archive, text, str(Path(path).resolve()))


def calibration(archive: Archive, cal_id: int) -> Calibration:
    row = archive.one("SELECT * FROM calibrations WHERE id = ?", (cal_id,))
    if row is None:
        raise InputError(f"no calibration {cal_id} in {archive.path}; see heatlog probes list")
    return Calibration.from_row(row)


def history(archive: Archive, probe_id: str | None = None) -> list[Calibration]:
    """Calibrations in supersede order (by probe, date, then order added)."""
    sql = "SELECT * FROM calibrations"
    params: tuple = ()
    if probe_id is not None:
        sql += " WHERE probe_id = ?"
        params = (probe_id,)
    rows = archive.query(sql + " ORDER BY probe_id, calibration_date, id", params)
    return [Calibration.from_row(r) for r in rows]


def valid_until(cals: list[Calibration], cal: Calibration) -> str | None:
    """Date the next calibration of the same probe takes over (None: still current)."""
    later = [
        c.calibration_date
        for c in cals
        if c.probe_id == cal.probe_id
        and (c.calibration_date, c.id) > (cal.calibration_date, cal.id)
        and c.calibration_date > cal.calibration_date
    ]
    return min(later) if later else None


def applicable(archive: Archive, probe_id: str, run_date: str) -> tuple[Calibration, str]:
    """The calibration the supersede rule gives a run of ``run_date`` (ISO date), and a note."""
    row = archive.one(
        "SELECT * FROM calibrations WHERE probe_id = ? AND calibration_date <= ? "
        "ORDER BY calibration_date DESC, id DESC LIMIT 1",
        (probe_id, run_date),
    )
    if row is not None:
        return Calibration.from_row(row), ""
    row = archive.one(
        "SELECT * FROM calibrations WHERE probe_id = ? ORDER BY calibration_date, id LIMIT 1",
        (probe_id,),
    )
    if row is None:
        raise CalibrationError(
            f"probe {probe_id} has no calibration in the archive; add its probe file with "
            "heatlog probes add PROBE.toml"
        )
    cal = Calibration.from_row(row)
    return (
        cal,
        f"probe {probe_id}: run of {run_date} predates its first calibration ({cal.calibration_date})",
    )
