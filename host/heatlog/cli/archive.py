"""``heatlog probes …`` and ``heatlog runs …``: the run archive (probes, calibrations, runs, results).

The archive is one SQLite file: ``--db PATH``, else ``$HEATLOG_DB``, else ``./heatlog.sqlite``.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click

from heatlog.archive import calibrations as cal_mod
from heatlog.archive.db import Archive, open_archive
from heatlog.archive.provenance import export_run, trace
from heatlog.archive.reductions import ReductionRecord, Rereduction, reduce_run, rereduce_probe
from heatlog.archive.runs import import_path, list_runs
from heatlog.cli.output import emit, json_option, jsonable
from heatlog.cli.reduce import CAUTION
from heatlog.reduce import METHODS

db_option = click.option(
    "--db",
    "db",
    envvar="HEATLOG_DB",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Archive file (default: $HEATLOG_DB, else ./heatlog.sqlite).",
)


def _open(db: Path | None, create: bool = False) -> Archive:
    return open_archive(db, create=create)


def _short(sha: str | None) -> str:
    return "-" if not sha else sha[:12] + "…"


@click.group("probes")
def probes() -> None:
    """Probe calibrations in the archive (a newer one supersedes for runs from its date on)."""


@probes.command("add")
@click.argument("probe_file", type=click.Path(dir_okay=False, path_type=Path))
@db_option
@json_option
def probes_add(probe_file: Path, db: Path | None, as_json: bool) -> None:
    """Record the calibration in PROBE_FILE (a probe TOML file) with its text and SHA-256."""
    with _open(db, create=True) as archive:
        added = cal_mod.add_calibration_file(archive, probe_file)
    c, s = added.calibration, added.supersedes
    payload = {
        "db": str(archive.path),
        "calibration_id": c.id,
        "probe_id": c.probe_id,
        "calibration_date": c.calibration_date,
        "new": added.new,
        "sha256": c.sha256,
        "supersedes": None
        if s is None
        else {"calibration_id": s.id, "calibration_date": s.calibration_date},
        "rule": "runs dated on or after calibration_date use this calibration until a later one",
    }
    text = (
        f"{'recorded' if added.new else 'already recorded'}: calibration {c.id} of probe "
        f"{c.probe_id}, calibrated {c.calibration_date} (SHA-256 {_short(c.sha256)})"
    )
    if s is not None:
        text += f"\n  supersedes calibration {s.id} ({s.calibration_date}) for runs from {c.calibration_date} on"
    emit(as_json, payload, text)


@probes.command("list")
@click.option("--probe", "probe_id", default=None, help="Only this probe id.")
@db_option
@json_option
def probes_list(probe_id: str | None, db: Path | None, as_json: bool) -> None:
    """Calibration history of every probe (or one), oldest first."""
    with _open(db) as archive:
        cals = cal_mod.history(archive, probe_id)
    rows = [dict(c.to_dict(), valid_until=cal_mod.valid_until(cals, c)) for c in cals]

    def text() -> str:
        lines = [f"{'id':>4}  {'probe':<16} {'calibrated':<11} {'until':<11} model, u(k=1)"]
        for r in rows:
            lines.append(
                f"{r['id']:>4}  {r['probe_id']:<16} {r['calibration_date']:<11} "
                f"{r['valid_until'] or 'current':<11} {r['model']}, {r['uncertainty_K']:.2g} K"
            )
        return "\n".join(lines) if rows else "no calibrations recorded"

    emit(as_json, {"calibrations": rows}, text)


@click.group("runs")
def runs() -> None:
    """Runs in the archive: import, list, show, export, reduce, re-reduce."""


@runs.command("import")
@click.argument("file", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--date", "run_date", default=None, help="Run date YYYY-MM-DD when the file has none."
)
@click.option("--strict", is_flag=True, help="Refuse a damaged board run log (bad blocks, "
              "records missing, repeated or out of order): exit code 4, nothing stored.")  # fmt: skip
@db_option
@json_option
def runs_import(
    file: Path, run_date: str | None, strict: bool, db: Path | None, as_json: bool
) -> None:
    """Import FILE: a board run log pulled from a board, or a TOML run file with its log CSV."""
    with _open(db, create=True) as archive:
        imported = import_path(archive, file, run_date, strict=strict)
    payload = {"db": str(archive.path), **imported.to_dict()}
    text = (
        f"{'imported' if imported.new else 'already imported'}: run {imported.run_id} "
        f"({imported.kind}), raw file {imported.raw_path} SHA-256 {_short(imported.raw_sha256)}"
    )
    if imported.damage is not None:
        text += f"\n  {imported.damage['summary']}"
    if imported.dependencies:
        text += f"\n  calibration runs: {', '.join(map(str, imported.dependencies))}"
    emit(as_json, payload, text)


@runs.command("list")
@click.option("--probe", "probe_id", default=None, help="Only runs that used this probe id.")
@db_option
@json_option
def runs_list(probe_id: str | None, db: Path | None, as_json: bool) -> None:
    """Runs, newest first, with their latest corrected ΔT."""
    with _open(db) as archive:
        rows = list_runs(archive, probe_id)

    def text() -> str:
        lines = [f"{'id':>4}  {'date':<11} {'kind':<10} {'probes':<20} {'ΔT/K':>12}  title"]
        for r in rows:
            dtk = "-" if r["delta_t_K"] is None else f"{r['delta_t_K']:+.5f}"
            lines.append(
                f"{r['id']:>4}  {r['run_date']:<11} {r['kind']:<10} {r['probes'] or '-':<20} "
                f"{dtk:>12}  {r['title']}"
            )
        return "\n".join(lines) if rows else "no runs imported"

    emit(as_json, {"runs": rows}, text)


def _result_lines(red: dict[str, Any]) -> list[str]:
    rec = ReductionRecord(**{**red, "calibrations": tuple(red["calibrations"])})
    lines = [
        f"reduction {rec.id} ({rec.reason}, {rec.created_at}, heatlog {rec.software_version}), "
        f"method {rec.method}"
    ]
    for name, (v, u, unit) in rec.headline().items():
        lines.append(f"  {name} = {v:+.6g} {unit}, u = {u:.2g} {unit}")
    for c in rec.calibrations:
        coeffs = ", ".join(f"{k} = {v:.6g}" for k, v in c["coefficients"].items())
        lines.append(
            f"  run {c['run_id']} channel {c['channel']}: probe {c['probe_id']} calibration "
            f"{c['calibration_id']} of {c['calibration_date']} ({c['model']}: {coeffs})"
        )
    return lines


@runs.command("show")
@click.argument("run_id", type=int)
@db_option
@json_option
def runs_show(run_id: int, db: Path | None, as_json: bool) -> None:
    """Trace RUN_ID's results to its raw file (SHA-256 checked now) and calibrations."""
    with _open(db) as archive:
        payload = trace(archive, run_id)

    def text() -> str:
        run, raw = payload["run"], payload["raw_file"]
        lines = [
            f"run {run['id']}: {run['title']} ({run['kind']}, {run['run_date']}, "
            f"date: {run['run_date_source']})",
            f"  raw file {raw['path']} ({raw['size_bytes']} bytes)",
            f"  SHA-256 {raw['sha256']} — verified",
        ]
        if run["board_id"]:
            lines.append(
                f"  board {run['board_id']} (firmware {run['firmware']}), run {run['run_number']}"
            )
        if run["run_file_path"]:
            lines.append(
                f"  run file {run['run_file_path']} SHA-256 {_short(run['run_file_sha256'])}"
            )
        for ch in run["channels"]:
            lines.append(f"  channel {ch['channel']}: probe {ch['probe_id'] or '-'} ({ch['kind']})")
        if payload["latest"] is None:
            lines.append(f"  not reduced yet: heatlog runs reduce {run['id']}")
        else:
            lines += _result_lines(payload["latest"])
        return "\n".join(lines)

    emit(as_json, payload, text)


@runs.command("export")
@click.argument("run_id", type=int)
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Write the export JSON here (default: print it).")  # fmt: skip
@click.option("--include-raw", is_flag=True, help="Embed the raw file (base64) too.")
@db_option
@json_option
def runs_export(
    run_id: int, out: Path | None, include_raw: bool, db: Path | None, as_json: bool
) -> None:
    """RUN_ID with its full provenance (checksums, probe files, settings, version, results).

    Without --out the export itself is printed (always JSON); with --out it is written there
    and a one-line summary (or, with --json, a small JSON object) is printed."""
    with _open(db) as archive:
        doc = jsonable(export_run(archive, run_id, include_raw=include_raw))
    body = json.dumps(doc, indent=2, allow_nan=False)
    if out is None:
        click.echo(body)
        return
    out.write_text(body + "\n", encoding="utf-8")
    emit(as_json, {"run_id": run_id, "out": str(out), "bytes": len(body) + 1},
         f"run {run_id} exported to {out}")  # fmt: skip


@runs.command("reduce")
@click.argument("run_id", type=int)
@click.option("--channel", type=click.IntRange(min=0), default=0, show_default=True,
              help="Logged channel to reduce (0 = first).")  # fmt: skip
@click.option("--method", type=click.Choice(["auto", *METHODS]), default=None,
              help="Correction method (default: the run file's, else auto).")  # fmt: skip
@click.option("--event", type=click.IntRange(min=0), default=None, help="Which event (0 = first).")
@click.option("--event-start", type=float, default=None, help="Main-period start, s.")
@click.option("--after-start", type=float, default=None, help="After-period start, s.")
@db_option
@json_option
def runs_reduce(
    run_id: int,
    channel: int,
    method: str | None,
    event: int | None,
    event_start: float | None,
    after_start: float | None,
    db: Path | None,
    as_json: bool,
) -> None:
    """Reduce RUN_ID with the calibrations the supersede rule gives and record the result."""
    options = {"method": method, "event": event, "event_start_s": event_start,
               "after_start_s": after_start}  # fmt: skip
    with _open(db) as archive:
        rec = reduce_run(archive, run_id, channel=channel, options=options)
    payload = {**rec.to_dict(), "caution": CAUTION}
    emit(as_json, payload, lambda: "\n".join([*_result_lines(rec.to_dict()), CAUTION]))


def _rereduce_text(r: Rereduction) -> Callable[[], str]:
    def text() -> str:
        how = f"calibration {r.calibration_id}" if r.calibration_id else "the supersede rule"
        lines = [f"probe {r.probe_id}, calibrations by {how}"]
        for c in r.compared:
            d = c.to_dict()
            lines.append(
                f"run {c.run_id} ({c.run_date}) {c.title}: calibration "
                f"{d['old_calibration_ids']} → {d['new_calibration_ids']}"
            )
            lines.append(
                f"  {'quantity':<34} {'old':>14} {'new':>14} {'change':>12} {'change/u':>9}"
            )
            for ch in c.changes:
                lines.append(
                    f"  {ch.quantity + ' / ' + ch.unit:<34} {ch.old:>+14.6g} {ch.new:>+14.6g} "
                    f"{ch.change:>+12.3g} {ch.change_in_u:>+9.2f}"
                )
        if r.unchanged:
            lines.append(f"unchanged (same calibration): runs {', '.join(map(str, r.unchanged))}")
        if r.first:
            lines.append(f"reduced for the first time: runs {', '.join(map(str, r.first))}")
        for run_id, err in r.failed:
            lines.append(f"run {run_id} not re-reduced: {err}")
        if not (r.compared or r.unchanged or r.first or r.failed):
            lines.append("no run in the archive uses this probe")
        lines.append("change/u: change in units of the old result's combined standard uncertainty")
        return "\n".join(lines)

    return text


@runs.command("rereduce")
@click.option("--probe", "probe_id", required=True, help="Probe id whose calibration changed.")
@click.option("--calibration", "calibration_id", type=int, default=None,
              help="Apply this calibration id to every run of the probe (default: supersede rule).")  # fmt: skip
@db_option
@json_option
def runs_rereduce(
    probe_id: str, calibration_id: int | None, db: Path | None, as_json: bool
) -> None:
    """Re-reduce every run a probe's new calibration affects; old and new results side by side."""
    with _open(db) as archive:
        result = rereduce_probe(archive, probe_id, calibration_id)
    emit(as_json, result.to_dict(), _rereduce_text(result))
