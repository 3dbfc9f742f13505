"""``heatlog demo``: the whole job on a simulated board (invented data), no hardware needed."""

from __future__ import annotations

import json
from importlib import resources
from pathlib import Path
from typing import Any

import click

from heatlog.cli.output import emit, json_option, jsonable

# The bundled calibration points of the demo probe, plotted in the demo's report.
EXAMPLE_POINTS = Path(str(resources.files("heatlog") / "data/examples/ntc_10k_calibration.csv"))

CAUTION = (
    "Caution: ammonium nitrate is an oxidiser and cold packs can chill skin; heaters and hot water "
    "burn. Follow the safety data sheets, local codes and licensed practice when you do this for real."
)


def _heat(d: dict) -> float:
    runs = d["simulator"]["runs"]
    return float(runs[-1]["total_heat_J"]) if runs else float("nan")


def _heater_line(cal: Any, d: dict[str, Any]) -> list[str]:
    he = cal.heater
    if he is None:
        return []
    b = he.budget
    return [
        f"    heater energy ∫V·I dt = {b.value:.1f} J, U(k=2) = {b.expanded:.1f} J from the logged "
        f"{he.monitor} (invented truth {d['true_heater_J']:.1f} J); its power changed by "
        f"{100 * he.power_change_rel:+.1f} % while on"
    ]


@click.command("demo")
@click.option(
    "--out",
    type=click.Path(file_okay=False, path_type=Path),
    default=Path("heatlog-demo"),
    show_default=True,
    help="Folder for the demo's probe file, raw logs, run files and results.",
)
@click.option(
    "--link",
    "link",
    type=click.Choice(["auto", "pty", "tcp"]),
    default="auto",
    show_default=True,
    help="How to reach the virtual board: a pseudo-terminal (Linux, macOS), a local TCP socket "
    "(any system), or auto (the pty where there is one, else TCP).",
)
@json_option
def demo(out: Path, link: str, as_json: bool) -> None:
    """Simulate a board, pull its runs and measure a dissolution enthalpy (invented data).

    Starts the virtual board (the real firmware under the simulator) on a pseudo-terminal or a
    local TCP socket, logs
    an electrical calibration and an ammonium nitrate dissolution, pulls and verifies them,
    applies the probe calibration and reduces both runs; prints the result beside the truth."""
    from heatlog.demo import run_demo
    from heatlog.report.sources import write_report

    result = run_demo(
        out, say=(lambda s: None) if as_json else (lambda s: click.echo(s, err=True)), link=link
    )
    payload = result.to_dict()
    (out / "results.json").write_text(json.dumps(jsonable(payload), indent=2), encoding="utf-8")
    write_report(result.run, out / "report.html", probe_points=EXAMPLE_POINTS)
    write_report(result.calibration, out / "calibration.html", probe_points=EXAMPLE_POINTS)

    def text() -> str:
        d = payload
        run = result.run
        cal = result.calibration
        assert run.molar is not None and cal.c_cal is not None
        lines = [
            "heatlog demo — invented data, simulated board (the real firmware under the simulator)",
            f"  probe: Steinhart–Hart fit of the bundled calibration points -> {out / 'probe.toml'}",
            f"  pulled {len(result.pull.pulled)} runs ({result.pull.bytes} bytes, CRC-32 verified) into "
            f"{out / 'archive'}; demo took {result.seconds:.1f} s",
            f"  calibration run: ΔT = {cal.reduction.delta_t_K:+.4f} K, U(k=2) = "
            f"{2 * cal.reduction.u_delta_t_K:.4f} K ({cal.reduction.method}); C_cal = "
            f"{cal.c_cal.value:.1f} J/K, U(k={cal.c_cal.k:g}) = {cal.c_cal.expanded:.1f} J/K "
            f"(invented truth {d['true_calorimeter_constant_J_per_K']:.1f} J/K)",
            *_heater_line(cal, d),
            f"  dissolution run: ΔT = {run.reduction.delta_t_K:+.4f} K, U(k=2) = "
            f"{2 * run.reduction.u_delta_t_K:.4f} K "
            f"(naive peak reading {run.reduction.naive_delta_t_K:+.4f} K)",
            f"  ΔH(NH4NO3, dissolution) = {run.molar.value:+.2f} kJ/mol, U(k={run.molar.k:g}) = "
            f"{run.molar.expanded:.2f} kJ/mol (simulator's truth "
            f"{d['true_enthalpy_kJ_per_mol']:+.2f} kJ/mol, {-_heat(d):.1f} J absorbed)",
            f"  ΔH refers to {run.enthalpy_temp_C:.2f} °C ({run.enthalpy_temp_basis})",
        ]
        if run.hess is not None:
            lines.append(
                f"  Hess's law (25 °C, infinite dilution): {run.hess.predicted:+.2f} kJ/mol, "
                f"U(k=2) = {2 * run.hess.u_predicted:.2f} kJ/mol; z = {run.hess.z:.1f}: "
                f"{run.hess.verdict}"
            )
        if run.hess_warning is not None:
            lines.append(f"  warning: {run.hess_warning}")
        lines.append(f"  files, results.json, report.html and calibration.html in {out}")
        lines.append(CAUTION)
        return "\n".join(lines)

    emit(as_json, payload, text)
