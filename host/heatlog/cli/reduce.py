"""``heatlog reduce FILE``: corrected temperature change of one event in a logged thermogram."""

from __future__ import annotations

from typing import TYPE_CHECKING

import click

from heatlog.cli.output import emit, json_option
from heatlog.gum import Budget
from heatlog.inputgate import findings_of, findings_text
from heatlog.reduce import METHODS, Reduction, reduce_thermogram
from heatlog.thermogram import read_thermogram_csv

if TYPE_CHECKING:
    from heatlog.runfile import RunResult

CAUTION = (
    "Caution: hot liquids, acids/bases, heaters and cold packs can injure; follow the safety data "
    "sheets, local codes and your lab's rules."
)


def _text(red: Reduction) -> str:
    drift = red.drift
    k, u_k, t_inf, u_t = drift.k_and_t_inf()
    lines = [
        f"corrected ΔT = {red.delta_t_K:+.5f} K, u = {red.u_delta_t_K:.2g} K, "
        f"U(k=2) = {red.U_delta_t_K:.2g} K  [{red.method}]",
        f"  naive (extreme reading − start reading) = {red.naive_delta_t_K:+.5f} K",
        f"  main period {red.event_start_s:.1f} s → after-period from {red.after_start_s:.1f} s "
        f"(fore-period from {red.fore_start_s:.1f} s, after-period to {red.after_end_s:.1f} s)",
        f"  drift: {drift.model}, k = {k:.3g} 1/s (u = {u_k:.2g}, k=1), T∞ = "
        + (f"{t_inf:.3f} °C (u = {u_t:.2g} K, k=1)" if t_inf == t_inf else "undefined (k ≈ 0)"),
        f"  drift choice: {red.drift_reason}",
        f"  method choice: {red.method_reason}",
        "  methods: " + ", ".join(f"{m} {r.delta_t_K:+.5f}" for m, r in red.methods.items()),
        f"  events found: {len(red.events)}"
        + "".join(
            f"\n    [{e.index}] start {e.start_s:.1f} s, after {e.after_start_s:.1f} s, "
            f"{'rising' if e.direction > 0 else 'falling'}, ≈{e.size_K:+.3g} K"
            for e in red.events
        ),
        "",
        red.budget.table(),
    ]
    lines += [f"note: {n}" for n in red.notes]
    lines.append(CAUTION)
    return "\n".join(lines)


def _budget_line(label: str, b: Budget) -> str:
    return f"{label} = {b.value:+.6g} {b.unit}, u = {b.u:.2g}, U(k={b.k:g}) = {b.expanded:.2g} {b.unit}"


def _run_text(result: RunResult) -> str:
    lines = [result.spec.title, *findings_text(result.findings), _text(result.reduction)]
    if result.c_cal is not None:
        what = "calorimeter constant" if result.spec.electrical else "calorimeter constant used"
        lines.append(_budget_line(what, result.c_cal))
    if result.heat_J is not None:
        lines.append(_budget_line("heat taken up by calorimeter + contents, q", result.heat_J))
    if result.specific is not None:
        lines.append(
            _budget_line("ΔH per gram of sample (system; exothermic < 0)", result.specific)
        )
    if result.molar is not None:
        lines += ["", result.molar.table()]
        if result.enthalpy_temp_C is not None:
            lines.append(
                f"ΔH refers to {result.enthalpy_temp_C:.2f} °C ({result.enthalpy_temp_basis})"
            )
    if result.molar_25 is not None:
        lines.append(_budget_line("ΔH moved to 25 °C (Kirchhoff, given ΔrCp)", result.molar_25))
    if result.hess is not None:
        h = result.hess
        lines.append(
            f"Hess's law (25 °C, infinite dilution): predicted {h.predicted:+.3f} kJ/mol, "
            f"U(k=2) = {2 * h.u_predicted:.3f} kJ/mol; measured − predicted = "
            f"{h.difference:+.3f} kJ/mol, U(k=2) = {2 * h.u_difference:.3f} kJ/mol "
            f"(z = {h.z:.1f}): {h.verdict}"
        )
    if result.hess_warning is not None:
        lines.append(f"warning: {result.hess_warning}")
    return "\n".join(lines)


@click.command("reduce")
@click.argument("file", type=click.Path(dir_okay=False, path_type=str))
@click.option("--time-col", default="time_s", show_default=True, help="Column with the time.")
@click.option("--temp-col", default="temp_C", show_default=True, help="Column with °C readings.")
@click.option("--iso-time", is_flag=True, help="The time column holds ISO-8601 timestamps.")
@click.option(
    "--env-col",
    default=None,
    help="Column with the logged surroundings (room/ambient) temperature, °C; the exchange is "
    "then reduced against it.",
)
@click.option(
    "--method",
    type=click.Choice(["auto", *METHODS]),
    default="auto",
    show_default=True,
    help="Correction method.",
)
@click.option(
    "--event",
    "event_index",
    type=click.IntRange(min=0),
    default=0,
    show_default=True,
    help="Which detected event to reduce (0 = first).",
)
@click.option("--event-start", type=float, default=None, help="Main-period start, s (override).")
@click.option("--after-start", type=float, default=None, help="After-period start, s (override).")
@click.option(
    "--resolution",
    type=click.FloatRange(min=0.0),
    default=None,
    help="Reading step in K (ADC/probe resolution); default: from the data, else 0.",
)
@click.option(
    "--allow-negative",
    is_flag=True,
    help="Print a run file's negative calorimeter constant instead of refusing it.",
)
@json_option
def reduce(
    file: str,
    time_col: str,
    temp_col: str,
    iso_time: bool,
    env_col: str | None,
    method: str,
    event_index: int,
    event_start: float | None,
    after_start: float | None,
    resolution: float | None,
    allow_negative: bool,
    as_json: bool,
) -> None:
    """Corrected temperature change (with uncertainty) of one event in FILE.

    FILE is a CSV log, or a TOML run file (see DEVELOPERS.md), which adds the calorimeter
    constant, heat, enthalpy and the Hess's-law comparison its inputs allow; the run file's own
    settings then replace the options here.
    """
    if file.lower().endswith(".toml"):
        from heatlog.cli.hints import run_file_hints
        from heatlog.runfile import run_file  # energetics, probes, profile: only for run files

        with run_file_hints(file):
            result = run_file(file, allow_negative=allow_negative)
        payload = result.to_dict()
        payload["file"] = file
        payload["caution"] = CAUTION
        emit(as_json, payload, lambda: _run_text(result))
        return
    thermogram = read_thermogram_csv(
        file,
        time_col=time_col,
        temp_col=temp_col,
        channels=(env_col,) if env_col else (),
        iso_time=iso_time,
    )
    red = reduce_thermogram(
        thermogram,
        method=method,
        event_index=event_index,
        event_start_s=event_start,
        after_start_s=after_start,
        resolution_K=resolution,
        env_channel=env_col,
    )
    found = findings_of(thermogram)
    payload = red.to_dict()
    payload["file"] = file
    payload["findings"] = [f.to_dict() for f in found]
    payload["caution"] = CAUTION
    emit(as_json, payload, lambda: "\n".join([*findings_text(found), _text(red)]))
