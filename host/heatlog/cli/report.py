"""``heatlog report RUN``: one self-contained HTML report of a run file or a CSV log."""

from __future__ import annotations

import contextlib
import sys
import time
from pathlib import Path

import click

from heatlog.cli.output import emit, json_option
from heatlog.errors import InputError


class StepProgress:
    """Step-by-step feedback on stderr: each step is announced, and its time is printed when it
    took more than a second. Silent unless enabled, so ``--json`` stdout stays clean."""

    def __init__(self, enabled: bool, stream=None) -> None:
        self.enabled = enabled
        self.stream = stream if stream is not None else sys.stderr
        self._step: str | None = None
        self._start = 0.0

    def _finish(self) -> None:
        if self._step is not None and self.enabled:
            took = time.perf_counter() - self._start
            if took > 1.0:
                self.stream.write(f"  … {self._step}: {took:.1f} s\n")
                self.stream.flush()
        self._step = None

    def __call__(self, step: str) -> None:
        self._finish()
        self._step, self._start = step, time.perf_counter()
        if self.enabled:
            self.stream.write(f"heatlog report: {step}\n")
            self.stream.flush()

    def close(self) -> None:
        self._finish()


@click.command("report")
@click.argument("run", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--out",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="HTML file to write (default: RUN with .html).",
)
@click.option("--time-col", default="time_s", show_default=True, help="Time column (CSV logs).")
@click.option("--temp-col", default="temp_C", show_default=True, help="°C column (CSV logs).")
@click.option(
    "--probe-points",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="The probe's calibration points (temp_C,resistance_ohm) to plot its calibration curve.",
)
@click.option(
    "--event-start",
    type=float,
    default=None,
    help="Main-period start, s (CSV logs; a run file sets event_start_s in [reduce]).",
)
@click.option(
    "--after-start",
    type=float,
    default=None,
    help="After-period start, s (CSV logs; a run file sets after_start_s in [reduce]).",
)
@click.option(
    "--progress/--no-progress",
    default=None,
    help="Step feedback on stderr (default: only when stderr is a terminal).",
)
@json_option
def report(
    run: Path,
    out: Path | None,
    time_col: str,
    temp_col: str,
    probe_points: Path | None,
    event_start: float | None,
    after_start: float | None,
    progress: bool | None,
    as_json: bool,
) -> None:
    """Write a self-contained HTML report of RUN: a run file (TOML) or a CSV log (reduction only).

    The report holds the inputs, results with their uncertainty budgets, the plots, the published
    name of every method used, the probe's calibration provenance and the safety cautions.
    """
    from heatlog.cli.hints import run_file_hints
    from heatlog.report.html import render_html
    from heatlog.report.sources import report_inputs, save_text

    enabled = sys.stderr.isatty() if progress is None else progress
    say = StepProgress(enabled)
    is_run_file = run.suffix.lower() == ".toml"
    if is_run_file and (event_start is not None or after_start is not None):
        raise InputError(
            f"--event-start/--after-start apply to CSV logs; for a run file set event_start_s and "
            f"after_start_s in the [reduce] table of {run.name}"
        )
    with run_file_hints(run) if is_run_file else contextlib.nullcontext():
        inputs = report_inputs(
            run,
            time_col=time_col,
            temp_col=temp_col,
            probe_points=probe_points,
            progress=say,
            event_start_s=event_start,
            after_start_s=after_start,
        )
    text = render_html(inputs, say)
    target = out if out is not None else run.with_suffix(".html")
    save_text(target, text)
    say.close()
    red = inputs.run.reduction if inputs.run is not None else inputs.reduction
    payload: dict[str, object] = {"report": str(target), "bytes": len(text.encode("utf-8"))}
    payload["title"] = inputs.title
    if inputs.run is not None:
        payload["result"] = inputs.run.to_dict()
    elif red is not None:
        payload["result"] = red.to_dict()
    if inputs.profile is not None:
        payload["result"] = inputs.profile.to_dict()
    payload["cautions"] = list(inputs.cautions)

    def text_out() -> str:
        lines = [f"report written to {target}"]
        if red is not None:
            lines.append(f"  corrected ΔT = {red.delta_t_K:+.5f} K, u = {red.u_delta_t_K:.2g} K")
        if inputs.run is not None and inputs.run.molar is not None:
            m = inputs.run.molar
            lines.append(f"  ΔH = {m.value:+.3f} kJ/mol, U(k=2) = {m.expanded:.2g} kJ/mol")
        if inputs.profile is not None:
            b = inputs.profile.budget
            lines.append(f"  Q = {b.value:.5g} J, u = {b.u:.2g} J")
        lines += list(inputs.cautions)
        return "\n".join(lines)

    emit(as_json, payload, text_out)
