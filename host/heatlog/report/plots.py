"""Plots of heatlog results: pure functions from result objects to a matplotlib ``Figure``.

Every function builds its own :class:`matplotlib.figure.Figure` on the Agg canvas (no pyplot, no
global state, no display needed) and returns it; :func:`save_figure` writes PNG and SVG, and
:func:`figure_svg` / :func:`figure_png` give the bytes for embedding in a report.

Uncertainty bars and bands are drawn at k = 2 (expanded uncertainty, JCGM 100:2008 6.2), as the
legends say. Long series are thinned with :func:`heatlog.profile.downsample_extrema`, which keeps
each bucket's lowest and highest reading so peaks survive.
"""

from __future__ import annotations

import base64
import io
import math
from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from heatlog.energetics.heater_energy import HeaterEnergy
from heatlog.energetics.hess import Comparison
from heatlog.probes.fitting import CalibrationFit
from heatlog.profile import ProfileResult, downsample_extrema
from heatlog.reduce import Reduction
from heatlog.reduce.correction import dickinson_time, main_period
from heatlog.reduce.reduction import MAX_POINTS
from heatlog.reduce.sampling import block_means
from heatlog.thermogram import Thermogram

#: Buckets for :func:`downsample_extrema`: about two readings per pixel column of a 1200-px plot.
PLOT_BUCKETS = 1500
K_PLOT = 2.0  # coverage factor of drawn bands and bars

READINGS = "#4c4c4c"
FORE = "#1f77b4"
AFTER = "#d62728"
BAND = "#ff7f0e"
EVENT = "#9467bd"


def _figure(rows: int = 1, height: float = 4.2, sharex: bool = True) -> tuple[Figure, list]:
    fig = Figure(figsize=(8.0, height), layout="constrained")
    FigureCanvasAgg(fig)
    if rows == 1:
        return fig, [fig.add_subplot(1, 1, 1)]
    axes = fig.subplots(rows, 1, sharex=sharex, height_ratios=[2] + [1] * (rows - 1))
    return fig, list(axes)


def _finish(ax, xlabel: str | None, ylabel: str, title: str | None = None) -> None:
    """Axis labels, optional title, a small legend and a light grid."""
    if xlabel is not None:
        ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    if title is not None:
        ax.set_title(title)
    ax.legend(fontsize="small")
    ax.grid(alpha=0.3)


def _thin(t: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    return downsample_extrema(np.asarray(t), np.asarray(y), PLOT_BUCKETS)


def thermogram_figure(thermogram: Thermogram, reduction: Reduction, title: str = "") -> Figure:
    """Readings, fore/after drift fits and their extrapolations, the event window and ΔT_corr.

    The corrected ΔT is drawn as an arrow between the extrapolated fore- and after-period curves
    at the equal-area (Dickinson) time, where the two extrapolations are exactly ΔT apart for
    Newtonian drift curves.
    """
    fit = reduction.drift
    t, y = thermogram.time_s, thermogram.temp_C
    fig, (ax,) = _figure(height=4.6)
    tt, yy = _thin(t, y)
    ax.plot(tt, yy, ".", ms=2.0, color=READINGS, label="readings")
    t0, ta = reduction.event_start_s, reduction.after_start_s
    lo, hi = reduction.fore_start_s, reduction.after_end_s
    ax.axvspan(t0, ta, color=EVENT, alpha=0.12, label="main period (event window)")
    fore_t = np.linspace(lo, t0, 200)
    fore_x = np.linspace(t0, hi, 200)
    after_t = np.linspace(ta, hi, 200)
    after_x = np.linspace(lo, ta, 200)
    ax.plot(fore_t, fit.fore(fore_t), color=FORE, lw=2, label=f"fore-period fit ({fit.model})")
    ax.plot(fore_x, fit.fore(fore_x), "--", color=FORE, lw=1, label="fore-period extrapolated")
    ax.plot(after_t, fit.after(after_t), color=AFTER, lw=2, label=f"after-period fit ({fit.model})")
    ax.plot(after_x, fit.after(after_x), "--", color=AFTER, lw=1, label="after-period extrapolated")
    tb, yb, _ = block_means(t, y, MAX_POINTS)
    x = dickinson_time(main_period(tb, yb, fit, t0, ta), fit)
    if not (t0 <= x <= ta) or not math.isfinite(x):
        x = 0.5 * (t0 + ta)
    f_x = float(fit.fore(x))
    label = (
        f"corrected ΔT = {reduction.delta_t_K:+.4f} K, U(k={reduction.budget.k:g}) = "
        f"{reduction.U_delta_t_K:.2g} K ({reduction.method})"
    )
    ax.annotate(
        "",
        xy=(x, f_x + reduction.delta_t_K),
        xytext=(x, f_x),
        arrowprops={"arrowstyle": "<->", "color": "black", "lw": 1.5},
    )
    ax.plot([x, x], [f_x, f_x + reduction.delta_t_K], color="black", lw=0, label=label)
    ax.text(x, f_x + 0.5 * reduction.delta_t_K, f"  ΔT = {reduction.delta_t_K:+.4f} K", va="center")
    ax.set_xlabel("time / s")
    ax.set_ylabel("temperature / °C")
    ax.set_title(title or "Thermogram and drift correction")
    ax.legend(fontsize="small", loc="best")
    ax.grid(alpha=0.3)
    return fig


def heater_power_figure(
    thermogram: Thermogram,
    power_W: np.ndarray,
    heater: HeaterEnergy,
    title: str = "",
) -> Figure:
    """The readings above, the heater power logged by the monitor below (same time axis), with
    the switching instants found from the current and their uncertainty."""
    t = thermogram.time_s
    fig, (ax1, ax2) = _figure(rows=2, height=5.6)
    tt, yy = _thin(t, thermogram.temp_C)
    ax1.plot(tt, yy, ".", ms=2.0, color=READINGS, label="readings")
    tp, pp = _thin(t, power_W)
    ax2.plot(tp, pp, "-", lw=1.0, color=AFTER, label="heater power V·I (logged)")
    for ax in (ax1, ax2):
        for x, u in ((heater.t_on_s, heater.u_t_on_s), (heater.t_off_s, heater.u_t_off_s)):
            ax.axvspan(x - 2 * u, x + 2 * u, color=EVENT, alpha=0.25, lw=0)
            ax.axvline(x, color=EVENT, lw=0.8)
    b = heater.budget
    ax2.plot([], [], " ", label=f"∫V·I dt = {b.value:.5g} J, U(k=2) = {b.expanded:.2g} J")
    ax2.plot([], [], " ", label=f"power changed {100 * heater.power_change_rel:+.2f} % while on")
    _finish(ax1, None, "temperature / °C", title or "Thermogram and logged heater power")
    _finish(ax2, "time / s", "power / W")
    return fig


def residuals_figure(reduction: Reduction) -> Figure:
    """Residuals of the fore- and after-period drift fits, with ±2σ of each period's readings."""
    fit = reduction.drift
    fig, (ax,) = _figure(height=3.2)
    rf = (fit.fore_y - fit.fore(fit.fore_t)) * 1e3
    ra = (fit.after_y - fit.after(fit.after_t)) * 1e3
    ax.plot(fit.fore_t, rf, ".", ms=2.5, color=FORE, label="fore-period residuals")
    ax.plot(fit.after_t, ra, ".", ms=2.5, color=AFTER, label="after-period residuals")
    for tt, s, c in ((fit.fore_t, fit.sigma_fore, FORE), (fit.after_t, fit.sigma_after, AFTER)):
        for sign in (-1, 1):
            ax.plot([tt[0], tt[-1]], [sign * K_PLOT * s * 1e3] * 2, ":", color=c, lw=1)
    ax.axhline(0.0, color="black", lw=0.8)
    ax.plot([], [], ":", color="grey", label="±2σ of the period's readings")
    _finish(ax, "time / s", "reading − fit / mK", f"Drift-fit residuals ({fit.model} drift)")
    return fig


def calibration_figure(fit: CalibrationFit, title: str = "") -> Figure:
    """Calibration points and fitted curve; residuals with the curve's k = 2 uncertainty band."""
    fig, (ax, axr) = _figure(rows=2, height=5.6)
    lo, hi = fit.range_C
    grid = np.linspace(lo, hi, 300)
    r_grid = np.asarray(fit.model.temperature_to_resistance(grid))
    ax.plot(fit.temp_C, fit.resistance_ohm, "o", color=FORE, label="calibration points")
    ax.plot(grid, r_grid, color=AFTER, label=f"{fit.model_name} fit")
    if fit.model.kind == "thermistor":
        ax.set_yscale("log")
    ax.set_ylabel("resistance / Ω")
    ax.set_title(title or f"Probe calibration: {fit.model_name}")
    ax.legend(fontsize="small")
    ax.grid(alpha=0.3, which="both")
    u = fit.u_combined(grid) * 1e3
    u_fit = fit.u_fit(grid) * 1e3
    axr.fill_between(
        grid,
        -K_PLOT * u,
        K_PLOT * u,
        color=BAND,
        alpha=0.25,
        label="±U(k=2): curve and reference",
    )
    axr.plot(grid, K_PLOT * u_fit, "--", color=BAND, lw=1, label="+U(k=2): curve only")
    axr.plot(fit.temp_C, fit.residuals_K * 1e3, "o", color=FORE, ms=4, label="residuals")
    axr.axhline(0.0, color="black", lw=0.8)
    _finish(axr, "temperature / °C", "fit − point / mK")
    return fig


def _thin_with(t: np.ndarray, y: np.ndarray, *others: np.ndarray) -> tuple[np.ndarray, ...]:
    """Thin (t, y) keeping extremes; pick the same samples of ``others`` (t strictly increasing)."""
    finite = np.isfinite(y)
    tt, yy = _thin(t[finite], y[finite])
    idx = np.searchsorted(t, tt)
    return (tt, yy, *(o[idx] for o in others))


def profile_figure(result: ProfileResult, title: str = "") -> Figure:
    """Heat-release rate P(t) and cumulative heat Q(t) (per gram when a sample mass is given),
    each with its k = 2 uncertainty band; long logs thinned keeping the extremes."""
    h = result.heat
    hours = (h.time_s - h.time_s[0]) / 3600.0
    per_g = result.settings.sample_g is not None
    scale = 1.0 / result.settings.sample_g.value if per_g else 1.0  # type: ignore[union-attr]
    rate_unit, q_unit = ("mW/g", "J/g") if per_g else ("W", "J")
    rate_scale = 1e3 * scale if per_g else 1.0
    fig, (ax_p, ax_q) = _figure(rows=2, height=6.0)
    th, p, up = _thin_with(hours, h.rate_W * rate_scale, h.u_rate_W * rate_scale)
    ax_p.fill_between(th, p - K_PLOT * up, p + K_PLOT * up, color=BAND, alpha=0.3, label="±U(k=2)")
    ax_p.plot(th, p, color=AFTER, lw=1.2, label="heat-release rate P(t)")
    ax_p.axhline(0.0, color="black", lw=0.6)
    _finish(
        ax_p, None, f"P / {rate_unit}", title or f"Heat-release profile ({result.settings.kind})"
    )
    th, q, uq = _thin_with(hours, h.heat_J * scale, h.u_heat_J * scale)
    ax_q.fill_between(th, q - K_PLOT * uq, q + K_PLOT * uq, color=BAND, alpha=0.3, label="±U(k=2)")
    ax_q.plot(th, q, color=FORE, lw=1.5, label="cumulative heat Q(t)")
    if not result.complete:
        t_gap = hours[min(h.first_incomplete, hours.size - 1)]
        ax_q.axvline(t_gap, color="black", ls=":", label="after a skipped gap: incomplete")
    _finish(ax_q, "time since start / h", f"Q / {q_unit}")
    return fig


def profile_temperature_figure(result: ProfileResult, title: str = "") -> Figure:
    """Temperature against time with the environment, the peak (or lowest point) and any
    threshold and band the metrics used; long logs thinned keeping the extremes."""
    h = result.heat
    m = result.metrics
    hours = (h.time_s - h.time_s[0]) / 3600.0
    fig, (ax,) = _figure(rows=1, height=4.2)
    th, y, env = _thin_with(hours, h.temp_C, h.env_C)
    ax.plot(th, y, color=AFTER, lw=1.3, label="temperature")
    ax.plot(th, env, color="grey", lw=1.0, ls="--", label="environment")
    label = "lowest point" if m.side == "below" else "peak"
    ax.plot([m.time_to_peak_s / 3600.0], [m.peak_C], "o", color=FORE, label=label)
    thr = m.thresholds
    if thr.threshold_C is not None:
        ax.axhline(
            thr.threshold_C, color="red", lw=0.8, ls=":", label=f"threshold {thr.threshold_C:g} °C"
        )
    if thr.band_C is not None:
        ax.axhspan(thr.band_C[0], thr.band_C[1], color=BAND, alpha=0.15,
                   label=f"band {thr.band_C[0]:g}–{thr.band_C[1]:g} °C")  # fmt: skip
    _finish(ax, "time since start / h", "T / °C", title or f"Temperature ({result.settings.kind})")
    return fig


def hess_figure(comparison: Comparison, label: str = "") -> Figure:
    """Measured and Hess's-law predicted enthalpy with k = 2 error bars and the z score."""
    c = comparison
    fig, (ax,) = _figure(height=2.6)
    names = ["measured", "Hess's law (ΔfH° table)"]
    values = [c.measured, c.predicted]
    errs = [K_PLOT * c.u_measured, K_PLOT * c.u_predicted]
    colours = [FORE, AFTER]
    for i, (v, e, col) in enumerate(zip(values, errs, colours, strict=True)):
        ax.errorbar([v], [i], xerr=[e], fmt="o", color=col, capsize=6, ms=7, label=names[i])
    ax.set_yticks([0, 1], names)
    ax.set_ylim(-0.7, 1.7)
    ax.set_xlabel(f"ΔH / {c.unit}   (bars: ±U, k = 2)")
    ax.set_title(
        (label + ": " if label else "") + f"measured − predicted = {c.difference:+.3g} {c.unit}, "
        f"U(k=2) = {K_PLOT * c.u_difference:.2g} {c.unit}, z = {c.z:.1f}"
    )
    ax.grid(alpha=0.3, axis="x")
    return fig


def figure_svg(fig: Figure) -> str:
    """The figure as an SVG document (text)."""
    buf = io.StringIO()
    fig.savefig(buf, format="svg")
    return buf.getvalue()


def figure_png(fig: Figure, dpi: int = 110) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def figure_png_base64(fig: Figure, dpi: int = 110) -> str:
    return base64.b64encode(figure_png(fig, dpi)).decode("ascii")


def save_figure(fig: Figure, stem: str | Path, dpi: int = 150) -> tuple[Path, Path]:
    """Write ``stem.png`` and ``stem.svg``; returns both paths."""
    stem = Path(stem)
    png, svg = stem.with_suffix(".png"), stem.with_suffix(".svg")
    fig.savefig(png, format="png", dpi=dpi)
    fig.savefig(svg, format="svg")
    return png, svg
