"""Several runs side by side (formulation work): one overlay plot and one table of key figures.

Long runs (run files with a ``[profile]`` table) overlay Q(t) and P(t) (per gram when every run
gives a sample mass) and their temperatures; cup runs (run files or CSV logs) overlay their
thermograms, each shifted to its own event start and its starting temperature, so the corrected
rises can be compared by eye. The table holds each run's key figures with their standard
uncertainties. Reading the runs is :func:`compare_inputs`; :func:`render_compare_html` is pure.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from heatlog import __version__
from heatlog.errors import InputError
from heatlog.profile import ProfileResult
from heatlog.reduce import Reduction
from heatlog.report import plots
from heatlog.report.html import esc
from heatlog.runfile import RunResult
from heatlog.thermogram import Thermogram

CAUTION = (
    "Caution: hot liquids, acids/bases, heaters, hand warmers, cold packs and wet cement can "
    "injure; follow the safety data sheets, the product's instructions, local codes and your "
    "lab's rules."
)


@dataclass(frozen=True, eq=False)
class CompareRun:
    """One run of a comparison: a profile, or a reduction (with its run result when a run file)."""

    label: str
    source: str
    profile: ProfileResult | None = None
    thermogram: Thermogram | None = None
    reduction: Reduction | None = None
    run: RunResult | None = None


def compare_inputs(
    paths: list[Path], time_col: str = "time_s", temp_col: str = "temp_C"
) -> list[CompareRun]:
    """Read and evaluate each run (run files or CSV logs); all profiles or all cup runs."""
    from heatlog.reduce import reduce_thermogram
    from heatlog.runfile import load_run, profile_run, read_run_log, run_file
    from heatlog.thermogram import read_thermogram_csv

    if len(paths) < 2:
        raise InputError("give at least two runs to compare")
    runs: list[CompareRun] = []
    for p in paths:
        if p.suffix.lower() == ".toml":
            spec = load_run(p)
            if spec.profile is not None:
                runs.append(CompareRun(spec.title, str(p), profile=profile_run(spec)))
            else:
                result = run_file(p)
                runs.append(CompareRun(spec.title, str(p), thermogram=read_run_log(spec.log),
                                       reduction=result.reduction, run=result))  # fmt: skip
        else:
            th = read_thermogram_csv(p, time_col=time_col, temp_col=temp_col)
            runs.append(CompareRun(p.stem, str(p), thermogram=th, reduction=reduce_thermogram(th)))
    kinds = {r.profile is not None for r in runs}
    if len(kinds) > 1:
        raise InputError(
            "compare long-run profiles with profiles, or cup runs with cup runs, not both kinds"
        )
    return runs


def key_figures(run: CompareRun) -> list[tuple[str, str]]:
    """(figure, value with its standard uncertainty) for the comparison table."""
    rows: list[tuple[str, str]] = []
    if run.profile is not None:
        p = run.profile
        b = p.budget
        rows.append(("Q at the end", f"{b.value:.5g} J, u = {b.u:.2g} J"))
        if p.budget_per_g is not None:
            g = p.budget_per_g
            rows.append(("Q per gram", f"{g.value:.4g} J/g, u = {g.u:.2g} J/g"))
        rate, t_rate, u_rate = p.peak_rate()
        rows.append(("peak rate", f"{rate:.4g} W, u = {u_rate:.2g} W, at {t_rate / 3600:.3g} h"))
        m = p.metrics
        rows.append(("peak temperature" if m.side != "below" else "lowest temperature",
                     f"{m.peak_C:.2f} °C, u = {m.u_peak_C:.2g} °C, at {m.time_to_peak_s / 3600:.3g} h"))  # fmt: skip
        th = m.thresholds
        if th.threshold_C is not None:
            beyond = m.time_beyond_threshold_s
            rows.append((f"time {m.side} {th.threshold_C:g} °C",
                         "never" if beyond is None else f"{beyond / 3600:.3g} h"))  # fmt: skip
        if not p.complete:
            rows.append(("completeness", "INCOMPLETE: a skipped gap leaves heat out of Q"))
        return rows
    red = run.reduction
    assert red is not None
    rows.append(
        ("corrected ΔT", f"{red.delta_t_K:+.5f} K, u = {red.u_delta_t_K:.2g} K ({red.method})")
    )
    r = run.run
    if r is not None:
        if r.heat_J is not None:
            rows.append(("heat q", f"{r.heat_J.value:.5g} J, u = {r.heat_J.u:.2g} J"))
        if r.specific is not None:
            rows.append(("ΔH per gram", f"{r.specific.value:+.5g} J/g, u = {r.specific.u:.2g} J/g"))
        if r.molar is not None:
            rows.append(("ΔH per mole", f"{r.molar.value:+.4g} kJ/mol, u = {r.molar.u:.2g} kJ/mol"))
        if r.c_cal is not None and r.spec.electrical is not None:
            rows.append(("C_cal", f"{r.c_cal.value:.4g} J/K, u = {r.c_cal.u:.2g} J/K"))
    return rows


def overlay_figure(runs: list[CompareRun]):  # -> matplotlib Figure
    """Profiles: P(t), Q(t) and T(t) overlaid; cup runs: thermograms from their event starts."""
    if runs[0].profile is not None:
        per_g = all(r.profile.settings.sample_g is not None for r in runs)  # type: ignore[union-attr]
        fig, (ax_p, ax_q, ax_t) = plots._figure(rows=3, height=8.0)
        for r in runs:
            p = r.profile
            assert p is not None
            h = p.heat
            hours = (h.time_s - h.time_s[0]) / 3600.0
            scale = 1.0 / p.settings.sample_g.value if per_g else 1.0  # type: ignore[union-attr]
            th, rate, q, temp = plots._thin_with(hours, h.rate_W * scale * (1e3 if per_g else 1.0),
                                                 h.heat_J * scale, h.temp_C)  # fmt: skip
            ax_p.plot(th, rate, lw=1.2, label=r.label)
            ax_q.plot(th, q, lw=1.4, label=r.label)
            ax_t.plot(th, temp, lw=1.2, label=r.label)
        plots._finish(ax_p, None, "P / mW/g" if per_g else "P / W", "Runs compared")
        plots._finish(ax_q, None, "Q / J/g" if per_g else "Q / J")
        plots._finish(ax_t, "time since start / h", "T / °C")
        return fig
    fig, (ax,) = plots._figure(rows=1, height=4.6)
    for r in runs:
        assert r.thermogram is not None and r.reduction is not None
        t = np.asarray(r.thermogram.time_s) - r.reduction.event_start_s
        y = np.asarray(r.thermogram.temp_C)
        y0 = float(r.reduction.drift.fore(r.reduction.event_start_s))
        tt, yy = plots._thin(t, y - y0)
        ax.plot(tt, yy, lw=1.2, label=f"{r.label} (ΔT {r.reduction.delta_t_K:+.3f} K)")
    ax.axvline(0.0, color="black", lw=0.6)
    plots._finish(ax, "time from event start / s", "T − T(start) / K", "Thermograms compared")
    return fig


def render_compare_html(runs: list[CompareRun], title: str = "Runs compared") -> str:
    """One self-contained HTML page: the overlay plot and the table of key figures."""
    labels = []
    for r in runs:
        labels += [k for k, _ in key_figures(r) if k not in labels]
    head = "".join(f"<th>{esc(r.label)}<br><small>{esc(r.source)}</small></th>" for r in runs)
    body = ""
    for k in labels:
        cells = "".join(f"<td>{esc(dict(key_figures(r)).get(k, '—'))}</td>" for r in runs)
        body += f"<tr><th>{esc(k)}</th>{cells}</tr>"
    png = plots.figure_png_base64(overlay_figure(runs))
    stamp = dt.datetime.now(dt.UTC).strftime("%Y-%m-%d %H:%M UTC")
    return (
        '<!DOCTYPE html><html lang="en"><head><meta charset="utf-8">'
        f"<title>{esc(title)} — heatlog</title><style>body{{font-family:sans-serif;max-width:70em;"
        "margin:auto}td,th{border:1px solid #ccc;padding:.3em .6em;text-align:left}"
        "table{border-collapse:collapse}img{max-width:100%}</style></head><body>"
        f"<h1>{esc(title)}</h1>"
        f'<figure><img alt="overlay of the compared runs" src="data:image/png;base64,{png}">'
        "<figcaption>Overlay of the compared runs.</figcaption></figure>"
        "<h2>Key figures</h2><p>u: standard uncertainty (k=1).</p>"
        f"<table><tr><th>figure</th>{head}</tr>{body}</table>"
        f"<p><strong>{esc(CAUTION)}</strong></p>"
        f"<p><small>heatlog {esc(__version__)}, {esc(stamp)}</small></p></body></html>"
    )
