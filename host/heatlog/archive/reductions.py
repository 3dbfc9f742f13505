"""Reducing archived runs with recorded provenance, and re-reducing after a recalibration.

:func:`reduce_run` reads the run's raw file (checked against its SHA-256), converts raw readings
through the calibration the supersede rule gives (``calibrations.applicable``) or a calibration
chosen by the caller, reduces, and records the result with its inputs, method, software version
and the calibration ids applied (also those of calibration run files it depends on).

:func:`rereduce_probe` re-reduces every run affected by a calibration of one probe and pairs
each old result with the new one; a change is also given in units of the old result's combined
standard uncertainty.
"""

from __future__ import annotations

import dataclasses
import json
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from heatlog import __version__
from heatlog.archive.calibrations import Calibration, applicable, calibration
from heatlog.archive.db import Archive, utc_now
from heatlog.archive.runs import RunRecord, raw_bytes, raw_file, run_record
from heatlog.errors import CalibrationError, HeatlogError, InputError
from heatlog.logformat import RunLog, decode
from heatlog.plainjson import jsonable
from heatlog.probes import ProbeFile, chain_from_spec
from heatlog.runfile import (
    RunResult,
    evaluate_run,
    parse_run,
    read_run_log,
    reduce_with_settings,
)
from heatlog.thermogram import Thermogram

#: Results compared side by side: (name, key of value, key of its standard uncertainty, unit).
QUANTITIES = (
    ("ΔT corrected", "delta_t_K", "u_delta_t_K", "K"),
    ("heat q", "heat_J", "u_heat_J", "J"),
    ("ΔH molar", "enthalpy_kJ_per_mol", "u_enthalpy_kJ_per_mol", "kJ/mol"),
    ("ΔH per gram", "enthalpy_J_per_g", "u_enthalpy_J_per_g", "J/g"),
)
_REDUCE_OPTIONS = ("method", "event", "event_start_s", "after_start_s", "resolution_K")


def thermogram_from_log(log: RunLog, channel: int, probe: ProbeFile, source: str) -> Thermogram:
    """One channel of a decoded board log in °C through ``probe`` (records with a probe fault
    on that channel are left out). Time is the record's offset from the run start."""
    h = log.header
    if not 0 <= channel < len(h.channels):
        raise InputError(
            f"{source}: channel {channel} does not exist (the log has {len(h.channels)})"
        )
    ok = log.channel_faults()[:, channel] == 0
    chain = chain_from_spec(h.channels[channel].chain_spec(h.oversample))
    raw = log.raw[ok, channel].astype(np.float64)
    reading = chain.reading(probe.model, raw)
    meta = {
        "source": source,
        "probe_id": probe.id,
        "probe_u_K": probe.uncertainty_K,
        "count_step_K": float(np.median(reading.step_K)) if raw.size else 0.0,
        "faulty_records_left_out": int((~ok).sum()),
        # the probe file itself, so reduce_with_settings adds the calibration curve's rows
        # (runfile.with_probe_curve) exactly as it does for a run file read through it
        "probe_file": probe,
    }
    return Thermogram(log.offset_ms[ok] / 1000.0, np.asarray(reading.temp_C), metadata=meta)


@dataclass(frozen=True)
class CalibrationUse:
    run_id: int
    channel: int
    calibration: Calibration
    note: str = ""


@dataclass
class _Context:
    archive: Archive
    fixed: Mapping[str, int]  # probe id → calibration id chosen by the caller
    uses: list[CalibrationUse] = field(default_factory=list)

    def calibration_for(self, run: RunRecord, channel: int) -> ProbeFile | None:
        probe_id = run.channels[channel]["probe_id"]
        if probe_id is None:
            return None
        if probe_id in self.fixed:
            cal, note = calibration(self.archive, self.fixed[probe_id]), "chosen for re-reduction"
        else:
            cal, note = applicable(self.archive, probe_id, run.run_date)
        self.uses.append(CalibrationUse(run.id, channel, cal, note))
        return cal.probe()


def _evaluate_run_file(ctx: _Context, run: RunRecord, options: Mapping[str, Any]) -> RunResult:
    assert run.run_file_text is not None and run.run_file_path is not None
    spec = parse_run(tomllib.loads(run.run_file_text), Path(run.run_file_path))
    spec = dataclasses.replace(
        spec,
        log=dataclasses.replace(spec.log, file=raw_file(run)),
        reduce={**spec.reduce, **options},
    )
    raw_bytes(run)  # verify the log CSV before reading it
    probe = ctx.calibration_for(run, 0)
    if spec.log.raw_col is not None and probe is None:
        raise CalibrationError(f"run {run.id}: raw readings but no probe recorded; re-import it")
    thermogram = read_run_log(spec.log, probe)
    deps = dict(zip(spec.calibrations, run.dependencies, strict=False))

    def calibrate(path: Path) -> RunResult:
        if path not in deps:
            raise InputError(f"run {run.id}: calibration run {path} was not archived; re-import")
        return _evaluate_run_file(ctx, run_record(ctx.archive, deps[path]), {})

    return evaluate_run(spec, thermogram, calibrate=calibrate)


def _evaluate(
    ctx: _Context, run: RunRecord, channel: int, options: Mapping[str, Any]
) -> dict[str, Any]:
    if run.kind == "run-file":
        if channel != 0:
            raise InputError(f"run {run.id} is a run file with one channel (0)")
        return _evaluate_run_file(ctx, run, options).to_dict()
    data = raw_bytes(run)
    if not 0 <= channel < len(run.channels):
        raise InputError(f"run {run.id}: no channel {channel} (it has {len(run.channels)})")
    probe = ctx.calibration_for(run, channel)
    if probe is None:
        raise CalibrationError(f"run {run.id} channel {channel} names no probe id; cannot convert")
    thermogram = thermogram_from_log(decode(data), channel, probe, run.raw_path)
    return reduce_with_settings(thermogram, options).to_dict()


@dataclass(frozen=True)
class ReductionRecord:
    id: int
    run_id: int
    channel: int
    created_at: str
    reason: str
    method: str
    inputs: dict[str, Any]
    results: dict[str, Any]
    software_version: str
    calibrations: tuple[dict[str, Any], ...]

    def headline(self) -> dict[str, tuple[float, float, str]]:
        """(value, standard uncertainty, unit) of every compared quantity this result has."""
        out = {}
        for name, key, ukey, unit in QUANTITIES:
            v, u = self.results.get(key), self.results.get(ukey)
            if v is not None and u is not None:
                out[name] = (float(v), float(u), unit)
        for key in ("calorimeter_constant", "calorimeter_constant_used"):
            cc = self.results.get(key)
            if isinstance(cc, dict):
                out[key.replace("_", " ")] = (cc["value_J_per_K"], cc["u_J_per_K"], "J/K")
        return out

    def to_dict(self) -> dict[str, Any]:
        out = dict(self.__dict__)
        out["calibrations"] = list(self.calibrations)
        return out


def _options(options: Mapping[str, Any]) -> dict[str, Any]:
    bad = set(options) - set(_REDUCE_OPTIONS)
    if bad:
        raise InputError(f"unknown reduction option(s) {sorted(bad)}; use {list(_REDUCE_OPTIONS)}")
    return {k: v for k, v in options.items() if v is not None}


def reduce_run(
    archive: Archive,
    run_id: int,
    *,
    channel: int = 0,
    options: Mapping[str, Any] | None = None,
    fixed: Mapping[str, int] | None = None,
    reason: str = "reduce",
) -> ReductionRecord:
    """Reduce a run and record the result with its provenance; returns the record.

    ``options``: method, event, event_start_s, after_start_s, resolution_K (unset: the run
    file's settings, else automatic). ``fixed``: probe id → calibration id to apply instead of
    the supersede rule. The computation runs outside any transaction; the record is written in
    one."""
    run = run_record(archive, run_id)
    opts = _options(options or {})
    ctx = _Context(archive, dict(fixed or {}))
    results = jsonable(_evaluate(ctx, run, channel, opts))
    results["software_version"] = __version__
    inputs = {
        "options": opts,
        "raw_sha256": run.raw_sha256,
        "run_file_sha256": run.run_file_sha256,
        "run_date": run.run_date,
        "calibration_choice": "fixed" if fixed else "supersede rule",
        "fixed": dict(fixed or {}),
    }
    notes = [u.note for u in ctx.uses if u.note and u.note != "chosen for re-reduction"]
    if notes:
        results["calibration_notes"] = notes
    with archive.transaction() as conn:
        cur = conn.execute(
            "INSERT INTO reductions (run_id, channel, created_at, reason, method, inputs_json, "
            "results_json, delta_t_K, u_delta_t_K, software_version) "
            "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (run.id, channel, utc_now(), reason, str(results.get("method", "")),
             json.dumps(inputs), json.dumps(results, allow_nan=False),
             results.get("delta_t_K"), results.get("u_delta_t_K"), __version__),
        )  # fmt: skip
        rid = int(cur.lastrowid or 0)
        seen = set()
        for u in ctx.uses:
            if (u.run_id, u.channel) not in seen:  # a dependency evaluated twice counts once
                seen.add((u.run_id, u.channel))
                conn.execute(
                    "INSERT INTO reduction_calibrations (reduction_id, run_id, channel, "
                    "calibration_id) VALUES (?, ?, ?, ?)",
                    (rid, u.run_id, u.channel, u.calibration.id),
                )
    return reduction(archive, rid)


def reduction(archive: Archive, reduction_id: int) -> ReductionRecord:
    row = archive.one("SELECT * FROM reductions WHERE id = ?", (reduction_id,))
    if row is None:
        raise InputError(f"no reduction {reduction_id} in {archive.path}")
    uses = [
        {"run_id": r["run_id"], "channel": r["channel"], **_cal_summary(r)}
        for r in archive.query(
            "SELECT rc.run_id, rc.channel, c.* FROM reduction_calibrations rc "
            "JOIN calibrations c ON c.id = rc.calibration_id WHERE rc.reduction_id = ? "
            "ORDER BY rc.run_id, rc.channel",
            (reduction_id,),
        )
    ]
    return ReductionRecord(
        id=row["id"],
        run_id=row["run_id"],
        channel=row["channel"],
        created_at=row["created_at"],
        reason=row["reason"],
        method=row["method"],
        inputs=json.loads(row["inputs_json"]),
        results=json.loads(row["results_json"]),
        software_version=row["software_version"],
        calibrations=tuple(uses),
    )


def _cal_summary(row: Any) -> dict[str, Any]:
    return {
        "calibration_id": row["id"],
        "probe_id": row["probe_id"],
        "calibration_date": row["calibration_date"],
        "model": row["model"],
        "coefficients": json.loads(row["coefficients_json"]),
        "uncertainty_K": row["uncertainty_K"],
        "probe_file_sha256": row["sha256"],
    }


def reductions_of(archive: Archive, run_id: int) -> list[ReductionRecord]:
    ids = archive.query("SELECT id FROM reductions WHERE run_id = ? ORDER BY id", (run_id,))
    return [reduction(archive, r[0]) for r in ids]


def latest_reduction(archive: Archive, run_id: int, channel: int) -> ReductionRecord | None:
    row = archive.one(
        "SELECT id FROM reductions WHERE run_id = ? AND channel = ? ORDER BY id DESC LIMIT 1",
        (run_id, channel),
    )
    return None if row is None else reduction(archive, row[0])


@dataclass(frozen=True)
class Change:
    quantity: str
    unit: str
    old: float
    u_old: float
    new: float
    u_new: float

    @property
    def change(self) -> float:
        return self.new - self.old

    @property
    def change_in_u(self) -> float:
        """The change in units of the old result's combined standard uncertainty."""
        return self.change / self.u_old if self.u_old > 0 else float("nan")

    def to_dict(self) -> dict[str, Any]:
        return {**self.__dict__, "change": self.change, "change_in_u": self.change_in_u}


@dataclass(frozen=True)
class Comparison:
    run_id: int
    title: str
    channel: int
    run_date: str
    old: ReductionRecord
    new: ReductionRecord
    changes: tuple[Change, ...]

    def to_dict(self) -> dict[str, Any]:
        def cals(r: ReductionRecord) -> list[int]:
            return [c["calibration_id"] for c in r.calibrations]

        return {
            "run_id": self.run_id,
            "title": self.title,
            "channel": self.channel,
            "run_date": self.run_date,
            "old_reduction_id": self.old.id,
            "new_reduction_id": self.new.id,
            "old_calibration_ids": cals(self.old),
            "new_calibration_ids": cals(self.new),
            "changes": [c.to_dict() for c in self.changes],
        }


@dataclass(frozen=True)
class Rereduction:
    probe_id: str
    calibration_id: int | None  # None: the supersede rule chose per run
    compared: tuple[Comparison, ...]
    unchanged: tuple[int, ...]  # runs whose calibration stays the same
    first: tuple[int, ...]  # runs never reduced before: reduced now, nothing to compare
    failed: tuple[tuple[int, str], ...]  # runs that could not be re-reduced, with the reason

    def to_dict(self) -> dict[str, Any]:
        return {
            "probe_id": self.probe_id,
            "calibration_id": self.calibration_id,
            "rule": "fixed calibration" if self.calibration_id else "supersede rule",
            "runs": [c.to_dict() for c in self.compared],
            "unchanged_runs": list(self.unchanged),
            "first_reductions": list(self.first),
            "failed_runs": [{"run_id": r, "error": e} for r, e in self.failed],
        }


def _changes(old: ReductionRecord, new: ReductionRecord) -> tuple[Change, ...]:
    a, b = old.headline(), new.headline()
    return tuple(
        Change(name, a[name][2], a[name][0], a[name][1], b[name][0], b[name][1])
        for name in a
        if name in b
    )


def _candidates(archive: Archive, probe_id: str) -> list[tuple[int, int]]:
    rows = archive.query(
        "SELECT run_id, channel FROM run_channels WHERE probe_id = ? UNION "
        "SELECT d.run_id, 0 FROM run_dependencies d JOIN run_channels c "
        "ON c.run_id = d.depends_on WHERE c.probe_id = ? ORDER BY 1, 2",
        (probe_id, probe_id),
    )
    return [(r[0], r[1]) for r in rows]


def rereduce_probe(
    archive: Archive, probe_id: str, calibration_id: int | None = None
) -> Rereduction:
    """Re-reduce every run whose result a calibration of ``probe_id`` changes.

    Without ``calibration_id`` the supersede rule picks each run's calibration, so runs dated on
    or after a newly added calibration are affected. With it, that calibration is applied to
    every run of the probe. A run never reduced before has nothing to compare with: it is reduced
    (by the rule) and listed in ``first``. Old results stay in the archive; new ones are added."""
    if calibration_id is not None:
        cal = calibration(archive, calibration_id)
        if cal.probe_id != probe_id:
            raise InputError(
                f"calibration {calibration_id} belongs to probe {cal.probe_id}, not {probe_id}"
            )
    elif archive.one("SELECT 1 FROM probes WHERE probe_id = ?", (probe_id,)) is None:
        raise InputError(f"probe {probe_id} is not in {archive.path}; see heatlog probes list")
    compared, unchanged, first, failed = [], [], [], []
    for run_id, channel in _candidates(archive, probe_id):
        try:
            old = latest_reduction(archive, run_id, channel)
            if old is None:  # nothing to compare with: reduce it as the rule says, list it apart
                reduce_run(archive, run_id, channel=channel, reason=f"reduce (rereduce {probe_id})")
                first.append(run_id)
                continue
            wanted = {}
            for use in old.calibrations:
                if use["probe_id"] != probe_id:
                    continue
                if calibration_id is not None:
                    wanted[use["calibration_id"]] = calibration_id
                else:
                    date = run_record(archive, use["run_id"]).run_date
                    wanted[use["calibration_id"]] = applicable(archive, probe_id, date)[0].id
            if all(k == v for k, v in wanted.items()):
                unchanged.append(run_id)
                continue
            new = reduce_run(
                archive,
                run_id,
                channel=channel,
                options=old.inputs.get("options", {}),
                fixed={probe_id: calibration_id} if calibration_id is not None else None,
                reason=f"rereduce: probe {probe_id}"
                + (f", calibration {calibration_id}" if calibration_id else ", supersede rule"),
            )
        except HeatlogError as exc:
            failed.append((run_id, str(exc)))
            continue
        run = run_record(archive, run_id)
        compared.append(
            Comparison(run_id, run.title, channel, run.run_date, old, new, _changes(old, new))
        )
    return Rereduction(
        probe_id, calibration_id, tuple(compared), tuple(unchanged), tuple(first), tuple(failed)
    )
