"""``heatlog export``: results as CSV for a spreadsheet, units in every column name.

``export profile`` writes Q(t) and P(t) of a long run (with their standard uncertainties);
``export thermogram`` writes a cup run's temperatures with the heat-exchange correction applied.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from heatlog.cli.output import emit, json_option
from heatlog.errors import InputError


def _write_csv(path: Path, header_lines: list[str], names: list[str], columns: list[Any]) -> None:
    import numpy as np

    data = np.column_stack(columns)
    lines = [f"# {line}" for line in header_lines] + [",".join(names)]
    body = "\n".join(",".join(f"{v:.10g}" if np.isfinite(v) else "" for v in row) for row in data)
    try:
        path.write_text("\n".join(lines) + "\n" + body + "\n", encoding="utf-8")
    except OSError as exc:
        raise InputError(f"{path}: cannot write ({exc.strerror})") from None


@click.group("export")
def export() -> None:
    """Write results as CSV (units in the column names) for a spreadsheet."""


@export.command("profile")
@click.argument("run", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="CSV to write (default: RUN with .profile.csv).")  # fmt: skip
@json_option
def export_profile(run: Path, out: Path | None, as_json: bool) -> None:
    """Q(t) and P(t) of the long run in RUN (a run file with a [profile] table) as CSV.

    Columns: time_s, age_h, temp_C, env_C, Q_J, u_Q_J, P_W, u_P_W and, with a sample mass,
    Q_J_per_g, u_Q_J_per_g; u_* are standard uncertainties (k=1). Rows after an excluded gap
    have no Q (the heat there is unknown) and are left empty.
    """
    from heatlog.runfile import load_run, profile_run

    if run.suffix.lower() != ".toml":
        raise InputError(
            f"{run}: export profile reads a run file with a [profile] table "
            "(write one with `heatlog new profile`)"
        )
    spec = load_run(run)
    if spec.profile is None:
        raise InputError(f"{run}: has no [profile] table; `heatlog new profile` writes one")
    result = profile_run(spec)
    h = result.heat
    complete = (h.time_s * 0 + 1).astype(bool)
    complete[h.first_incomplete :] = False
    q = h.heat_J.copy()
    uq = h.u_heat_J.copy()
    q[~complete] = float("nan")
    uq[~complete] = float("nan")
    names = ["time_s", "age_h", "temp_C", "env_C", "Q_J", "u_Q_J", "P_W", "u_P_W"]
    cols: list[Any] = [h.time_s, (h.time_s - h.time_s[0]) / 3600.0, h.temp_C, h.env_C, q, uq,
                       h.rate_W, h.u_rate_W]  # fmt: skip
    if spec.profile.sample_g is not None:
        m = spec.profile.sample_g.value
        names += ["Q_J_per_g", "u_Q_J_per_g"]
        cols += [q / m, uq / m]  # u of the mass is in the report's budget, not per row
    target = out if out is not None else run.with_name(run.stem + ".profile.csv")
    head = [
        f"heatlog profile export of {run.name}: {spec.title}",
        "Q: heat released by the sample since the first reading; P: its rate",
        "u_*: standard uncertainties (k=1) of each row; empty cells: unknown (after a gap)",
    ]
    _write_csv(target, head, names, cols)
    payload = {"csv": str(target), "rows": int(h.time_s.size), "columns": names}
    emit(as_json, payload, f"wrote {h.time_s.size} rows to {target}: {', '.join(names)}")


@export.command("thermogram")
@click.argument("run", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="CSV to write (default: RUN with .corrected.csv).")  # fmt: skip
@click.option("--time-col", default="time_s", show_default=True, help="Time column (CSV logs).")
@click.option("--temp-col", default="temp_C", show_default=True, help="°C column (CSV logs).")
@json_option
def export_thermogram(run: Path, out: Path | None, time_col: str, temp_col: str,
                      as_json: bool) -> None:  # fmt: skip
    """The corrected thermogram of RUN (a run file or a CSV log) as CSV.

    Columns: time_s, temp_C (as read, calibrated), drift_K_per_s (the fitted heat-exchange drift
    at that temperature) and corrected_C = T(t) − ∫ drift dt from the first reading: the
    temperature as it would have been without heat exchange. It is flat in the fore- and
    after-periods, and its step across the event is the corrected ΔT.
    """
    import numpy as np

    from heatlog.cli.hints import run_file_hints
    from heatlog.reduce import reduce_thermogram
    from heatlog.thermogram import read_thermogram_csv

    if run.suffix.lower() == ".toml":
        from heatlog.runfile import load_run, read_run_log, reduce_with_settings

        spec = load_run(run)
        thermogram = read_run_log(spec.log)
        with run_file_hints(run):
            red = reduce_with_settings(thermogram, spec.reduce)
        title = spec.title
    else:
        thermogram = read_thermogram_csv(run, time_col=time_col, temp_col=temp_col)
        red = reduce_thermogram(thermogram)
        title = run.stem
    t = np.asarray(thermogram.time_s, dtype=float)
    y = np.asarray(thermogram.temp_C, dtype=float)
    g = np.asarray(red.drift.rate(y), dtype=float) * np.ones_like(y)
    correction = np.concatenate([[0.0], np.cumsum(np.diff(t) * (g[1:] + g[:-1]) / 2.0)])
    corrected = y - correction
    target = out if out is not None else run.with_name(run.stem + ".corrected.csv")
    names = ["time_s", "temp_C", "drift_K_per_s", "corrected_C"]
    head = [
        f"heatlog corrected thermogram of {run.name}: {title}",
        f"drift model {red.drift.model}; corrected ΔT = {red.delta_t_K:+.5f} K ± "
        f"{red.u_delta_t_K:.2g} K (u, k=1), method {red.method}",
        "corrected_C = temp_C − ∫ drift dt from the first reading (trapezoid rule)",
    ]
    _write_csv(target, head, names, [t, y, g, corrected])
    payload = {
        "csv": str(target),
        "rows": int(t.size),
        "columns": names,
        "delta_t_K": red.delta_t_K,
        "u_delta_t_K": red.u_delta_t_K,
        "event_start_s": red.event_start_s,
        "after_start_s": red.after_start_s,
    }
    emit(as_json, payload, f"wrote {t.size} rows to {target}: {', '.join(names)}")
