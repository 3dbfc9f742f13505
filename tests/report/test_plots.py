"""Plots: each figure is non-empty and carries the artists (lines, bands, labels) it promises."""

import numpy as np
import pytest
from matplotlib.collections import PolyCollection
from matplotlib.figure import Figure

from heatlog.csvtable import read_columns
from heatlog.energetics.hess import Comparison
from heatlog.gum import Input
from heatlog.probes import fit_resistance
from heatlog.profile import ProfileSettings, analyse_profile
from heatlog.profile.synthetic import warmer_run
from heatlog.report import plots
from heatlog.runfile import read_run_log


def _labels(fig: Figure) -> list[str]:
    return [line.get_label() for ax in fig.axes for line in ax.get_lines()]


def _drawn(fig: Figure) -> None:
    fig.canvas.draw()
    rgb = np.asarray(fig.canvas.buffer_rgba())[..., :3].astype(float)
    assert rgb.std() > 10.0  # not a blank canvas


def test_thermogram_figure_marks_fits_window_and_delta(demo):
    run = demo.run
    fig = plots.thermogram_figure(read_run_log(run.spec.log), run.reduction, run.spec.title)
    labels = _labels(fig)
    for want in ("readings", "fore-period extrapolated", "after-period extrapolated"):
        assert want in labels
    assert any(lbl.startswith("fore-period fit") for lbl in labels)
    assert any(f"{run.reduction.delta_t_K:+.4f}" in lbl for lbl in labels)
    ax = fig.axes[0]
    assert any(f"{run.reduction.delta_t_K:+.4f}" in t.get_text() for t in ax.texts)
    assert ax.get_title() == run.spec.title
    assert ax.patches  # the shaded event window
    x0, x1 = ax.patches[0].get_x(), ax.patches[0].get_x() + ax.patches[0].get_width()
    assert x0 == pytest.approx(run.reduction.event_start_s)
    assert x1 == pytest.approx(run.reduction.after_start_s)
    _drawn(fig)


def test_residuals_figure_has_both_periods(demo):
    fig = plots.residuals_figure(demo.run.reduction)
    labels = _labels(fig)
    assert "fore-period residuals" in labels and "after-period residuals" in labels
    fore = fig.axes[0].get_lines()[0]
    assert len(fore.get_xdata()) == demo.run.reduction.drift.fore_t.size
    _drawn(fig)


def test_calibration_figure_has_points_curve_and_band(demo_points):
    pts = read_columns(demo_points, ["temp_C", "resistance_ohm"])
    fit = fit_resistance(pts["temp_C"], pts["resistance_ohm"], "steinhart-hart", ref_u_K=0.01)
    fig = plots.calibration_figure(fit)
    assert len(fig.axes) == 2
    assert "calibration points" in _labels(fig) and "residuals" in _labels(fig)
    band = [c for c in fig.axes[1].collections if isinstance(c, PolyCollection)]
    assert band, "the uncertainty band is missing"
    # the band's top edge at the range ends is 2·u_combined (k = 2), in mK
    verts = band[0].get_paths()[0].vertices
    assert verts[:, 1].max() == pytest.approx(2e3 * fit.u_combined(fit.range_C).max(), rel=1e-6)
    assert fig.axes[0].get_yscale() == "log"  # a thermistor spans decades
    _drawn(fig)


def test_profile_figure_downsamples_and_bands():
    run = warmer_run(duration_s=24 * 3600.0, dt_s=2.0)  # 43 201 samples: more than the plot keeps
    settings = ProfileSettings(
        heat_capacity=Input(60.0, 1.0, "J/K"),
        loss=Input(0.06, 0.003, "W/K"),
        env_C=20.0,
        kind="warmer",
        sample_g=Input(40.0, 0.1, "g"),
    )
    result = analyse_profile(run.time_s, run.temp_C, settings)
    fig = plots.profile_figure(result)
    rate_ax, q_ax = fig.axes
    assert "P / mW/g" in rate_ax.get_ylabel() and "Q / J/g" in q_ax.get_ylabel()
    q_line = [ln for ln in q_ax.get_lines() if ln.get_label() == "cumulative heat Q(t)"][0]
    n = len(q_line.get_xdata())
    assert n <= 2 * plots.PLOT_BUCKETS + 2 < run.time_s.size
    # the extremes survive the thinning: the largest Q per gram is kept
    q = result.heat.heat_J / 40.0
    assert np.max(q_line.get_ydata()) == pytest.approx(np.max(q), rel=1e-12)
    assert any(isinstance(c, PolyCollection) for c in q_ax.collections)
    _drawn(fig)


def test_hess_figure_bars_are_expanded_uncertainties():
    c = Comparison(25.9, 0.07, 25.45, 0.33, "kJ/mol")
    fig = plots.hess_figure(c, "NH4NO3")
    ax = fig.axes[0]
    assert "z = 1.3" in ax.get_title()
    # the error bar of the measured point spans ±2u (k = 2)
    segs = [c for c in ax.collections if hasattr(c, "get_segments")]
    widths = sorted(float(np.ptp(s[0][:, 0])) for s in (x.get_segments() for x in segs))
    assert widths == pytest.approx(sorted([4 * 0.07, 4 * 0.33]))
    _drawn(fig)


def test_save_figure_writes_png_and_svg(tmp_path):
    fig = plots.hess_figure(Comparison(1.0, 0.1, 1.2, 0.1, "kJ/mol"))
    png, svg = plots.save_figure(fig, tmp_path / "hess")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert svg.read_text().lstrip().startswith("<?xml") and "<svg" in svg.read_text()
