"""Gathering what a report shows from files, and writing the report (the report's I/O).

:func:`report_inputs` reads a run file (TOML: calorimetry run, or a long run with a ``[profile]``
table) or a CSV log (reduction only) into :class:`~heatlog.report.html.ReportInputs`;
:func:`inputs_from_run` does the same for an already evaluated :class:`RunResult`;
:func:`write_report` renders and writes the HTML file. Every step is announced through the
optional ``progress`` callback (the CLI prints it on stderr).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from heatlog.csvtable import read_columns
from heatlog.errors import InputError
from heatlog.probes import fit_resistance, load_probe
from heatlog.probes.fitting import CalibrationFit
from heatlog.probes.probefile import ProbeFile
from heatlog.reduce import reduce_thermogram
from heatlog.report.html import ReportInputs, cautions_for, render_html
from heatlog.runfile import RunResult, RunSpec, load_run, profile_run, read_run_log, run_file
from heatlog.thermogram import Thermogram, read_thermogram_csv

Progress = Callable[[str], None]


def _quiet(_step: str) -> None:
    return None


def _spec_rows(spec: RunSpec) -> list[tuple[str, str]]:
    log = spec.log
    rows = [
        ("run file", str(spec.path)),
        ("log file", str(log.file)),
        ("time column", log.time_col),
        ("temperature column", log.raw_col or log.temp_col),
    ]
    if log.raw_col is not None:
        rows.append(
            (
                "raw readings converted through",
                f"chain {log.chain or 'resistance'}, probe {log.probe}",
            )
        )
    if spec.reduce:
        rows.append(("reduction settings", ", ".join(f"{k} = {v}" for k, v in spec.reduce.items())))
    for c in spec.contents:
        cp = (
            "water, IAPWS-95 at the mean temperature"
            if c.cp is None
            else f"{c.cp.value:g} J/(g·K), u = {c.cp.u:g} J/(g·K) (k = 1)"
        )
        rows.append(
            (f"contents: {c.name}", f"{c.mass_g.value:g} g, u = {c.mass_g.u:g} g (k = 1), c_p {cp}")
        )
    if spec.heat_capacity is not None:
        hc = spec.heat_capacity
        rows.append(("calorimeter constant given", f"{hc.value:g} J/K, u = {hc.u:g} J/K (k = 1)"))
    for cal in spec.calibrations:
        rows.append(("calibration run file", str(cal)))
    e = spec.electrical
    if e is not None:
        if e.power_W is not None:
            rows.append(("heater power", f"{e.power_W.value:g} W, u = {e.power_W.u:g} W (k = 1)"))
        if e.voltage_V is not None and e.current_A is not None:
            rows.append(
                ("heater voltage", f"{e.voltage_V.value:g} V, u = {e.voltage_V.u:g} V (k = 1)")
            )
            rows.append(
                ("heater current", f"{e.current_A.value:g} A, u = {e.current_A.u:g} A (k = 1)")
            )
        if e.seconds is not None:
            rows.append(("heater time", f"{e.seconds.value:g} s, u = {e.seconds.u:g} s (k = 1)"))
        if e.logged is not None:
            g = e.logged
            rows.append(
                (
                    "heater energy",
                    f"∫V·I dt from the logged {g.monitor.upper()} ({g.bus_col}, {g.shunt_col})",
                )
            )
            rows.append(
                ("heater shunt", f"{g.shunt_ohm:g} ohm, u = {100 * g.u_shunt_rel:.3g} % (k = 1)")
            )
    s = spec.sample
    if s is not None:
        rows.append(("sample", f"{s.name}: {s.mass_g.value:g} g, u = {s.mass_g.u:g} g (k = 1)"))
        if s.molar_mass_g_per_mol is not None:
            rows.append(("molar mass", f"{s.molar_mass_g_per_mol:g} g/mol"))
        if s.reaction is not None:
            rows.append(("reaction", s.reaction))
    prof = spec.profile
    if prof is not None:
        hc = prof.heat_capacity
        rows.append(("kind", prof.kind))
        rows.append(("heat capacity C", f"{hc.value:g} J/K, u = {hc.u:g} J/K (k = 1)"))
        if prof.loss is not None:
            rows.append(
                (
                    "heat-loss coefficient G",
                    f"{prof.loss.value:g} W/K, u = {prof.loss.u:g} W/K (k = 1)",
                )
            )
        if prof.sample_g is not None:
            rows.append(
                ("sample mass", f"{prof.sample_g.value:g} g, u = {prof.sample_g.u:g} g (k = 1)")
            )
    return rows


def calibration_from_points(points: Path, probe: ProbeFile | None) -> CalibrationFit:
    """Refit the probe's model to its calibration points (``temp_C,resistance_ohm``) for the plot."""
    pts = read_columns(points, ["temp_C", "resistance_ohm"], what="calibration points")
    model = probe.model.name if probe is not None else "steinhart-hart"
    ref_u = float(probe.fit.get("ref_u_K", 0.0)) if probe is not None else 0.0
    return fit_resistance(pts["temp_C"], pts["resistance_ohm"], model, ref_u_K=ref_u)


def inputs_from_run(
    result: RunResult,
    *,
    thermogram: Thermogram | None = None,
    probe_points: Path | None = None,
    progress: Progress | None = None,
) -> ReportInputs:
    """Report inputs of an evaluated run file (re-reads its log unless ``thermogram`` is given)."""
    say = progress or _quiet
    spec = result.spec
    if thermogram is None:
        say("reading the log")
        thermogram = read_run_log(spec.log)
    probe = load_probe(spec.log.probe) if spec.log.probe is not None else None
    fit = calibration_from_points(probe_points, probe) if probe_points is not None else None
    return ReportInputs(
        title=spec.title,
        source=str(spec.path),
        thermogram=thermogram,
        run=result,
        probe=probe,
        calibration=fit,
        inputs=tuple(_spec_rows(spec)),
        cautions=cautions_for(result, None),
    )


def report_inputs(
    path: str | Path,
    *,
    time_col: str = "time_s",
    temp_col: str = "temp_C",
    probe_points: Path | None = None,
    progress: Progress | None = None,
    event_start_s: float | None = None,
    after_start_s: float | None = None,
) -> ReportInputs:
    """Everything a report on ``path`` (run file or CSV log) shows. ``event_start_s`` and
    ``after_start_s`` override the detected periods of a CSV log (a run file has its own)."""
    say = progress or _quiet
    p = Path(path)
    if p.suffix.lower() == ".toml":
        spec = load_run(p)
        if spec.profile is not None:
            return _profile_inputs(spec, probe_points, say)
        say("reducing the run")
        result = run_file(p)
        return inputs_from_run(result, probe_points=probe_points, progress=say)
    say("reading the log")
    thermogram = read_thermogram_csv(p, time_col=time_col, temp_col=temp_col)
    say("reducing the log")
    red = reduce_thermogram(thermogram, event_start_s=event_start_s, after_start_s=after_start_s)
    return ReportInputs(
        title=p.stem,
        source=str(p),
        thermogram=thermogram,
        reduction=red,
        calibration=calibration_from_points(probe_points, None) if probe_points else None,
        inputs=(("log file", str(p)), ("time column", time_col), ("temperature column", temp_col)),
        cautions=cautions_for(None, None),
        notes=("CSV log: reduction only; give a run file for heat and enthalpy.",),
    )


def _profile_inputs(spec: RunSpec, probe_points: Path | None, say: Progress) -> ReportInputs:
    say("reading the log and computing the heat profile")
    result = profile_run(spec)
    probe = load_probe(spec.log.probe) if spec.log.probe is not None else None
    return ReportInputs(
        title=spec.title,
        source=str(spec.path),
        profile=result,
        probe=probe,
        calibration=calibration_from_points(probe_points, probe) if probe_points else None,
        inputs=tuple(_spec_rows(spec)),
        cautions=cautions_for(None, result),
    )


def write_report(
    result: RunResult | ReportInputs,
    path: str | Path,
    *,
    probe_points: Path | None = None,
    progress: Progress | None = None,
) -> Path:
    """Render the report of an evaluated run (or of prepared inputs) and write it to ``path``."""
    inputs = (
        result
        if isinstance(result, ReportInputs)
        else inputs_from_run(result, probe_points=probe_points, progress=progress)
    )
    text = render_html(inputs, progress)
    out = Path(path)
    save_text(out, text)
    return out


def save_text(path: Path, text: str) -> None:
    """Write the report; a path that cannot be written ends in one clear line."""
    try:
        path.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise InputError(
            f"cannot write the report to {path} ({exc.strerror or exc}); check the folder exists "
            "and is writable, or give another --out"
        ) from None
