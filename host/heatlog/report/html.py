"""A self-contained HTML report of one run: inputs, results, budgets, methods, provenance, plots.

:func:`render_html` is pure: it takes a :class:`ReportInputs` (result objects gathered by
:mod:`heatlog.report.sources`) and returns one HTML document with every plot embedded as a
base64 PNG and the style inline, so the file opens anywhere with no network and no other files.
Every string that came from a user (titles, names, file names, notes, probe ids) goes through
:func:`html.escape`. ``progress`` (optional) is called with the name of each step before it runs.
"""

from __future__ import annotations

import datetime as dt
import html
import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field

from heatlog import __version__
from heatlog.energetics.hess import CORROSIVE_SPECIES
from heatlog.gum import Budget
from heatlog.probes.fitting import CalibrationFit
from heatlog.probes.probefile import ProbeFile
from heatlog.profile import ProfileResult
from heatlog.profile.analysis import METHOD as PROFILE_METHOD
from heatlog.reduce import Reduction
from heatlog.report import plots
from heatlog.runfile import RunResult
from heatlog.thermogram import Thermogram

Progress = Callable[[str], None]

#: Published names of the methods heatlog may use, by key.
METHOD_NAMES: dict[str, str] = {
    "regnault-pfaundler": "Regnault–Pfaundler correction for heat exchange (ISO 1928 Annex C form)",
    "dickinson": "Dickinson equal-area extrapolation (Dickinson 1914, Bull. Bur. Stand. 11)",
    "dickinson-60": "Dickinson 60 % rule (ASTM D240 / ASTM D5865 form)",
    "newton": "Newton-model fit of the whole curve: Newton's law of cooling, first-order release "
    "and probe lag (least squares)",
    "drift-linear": "Linear fore/after drift lines (ISO 1928 Annex C)",
    "drift-newtonian": "Newtonian drift, dT/dt = k(T∞ − T), joint fit of both periods; model "
    "choice by the Akaike information criterion (Akaike 1974)",
    "gum": "Uncertainty by the GUM law of propagation (JCGM 100:2008), k = 2",
    "water": "Water c_p from IAPWS-95 (as implemented by the iapws package)",
    "electrical": "Electrical calibration of the calorimeter: E = P·t (or U·I·t)",
    "hess": "Hess's law from standard enthalpies of formation (298.15 K, 0.1 MPa); table sources "
    "per species",
    "steinhart-hart": "Steinhart–Hart equation (Steinhart & Hart 1968)",
    "steinhart-hart-4": "Steinhart–Hart equation with the ln²R term (Steinhart & Hart 1968, "
    "four-term form)",
    "beta": "β (B-parameter) thermistor equation",
    "callendar-van-dusen": "Callendar–Van Dusen equation (IEC 60751)",
    "profile": PROFILE_METHOD,
    "maturity": "ASTM C1074 maturity: Nurse–Saul factor and Arrhenius equivalent age",
    "calibration-fit": "Calibration fit by least squares with coefficient covariance; curve "
    "uncertainty by JCGM 100:2008 with correlated inputs",
}

GENERAL_CAUTION = (
    "This report is guidance on measurements, not a safety clearance. Follow the safety data "
    "sheet of every substance and product used, your local codes, and licensed practice where "
    "it applies."
)
HOT_CAUTION = (
    "Heaters and hot water burn: keep heaters at low voltage, fused and attended; use "
    "heat-resistant vessels."
)
CORROSIVE_CAUTION = (
    "Acids and bases harm eyes and skin: wear eye protection and gloves, add acid to water and "
    "never the reverse."
)
SALT_CAUTION = (
    "Ammonium nitrate is an oxidiser; keep it away from fuels and heat. Cold packs can chill skin."
)

_STYLE = """
body{font-family:system-ui,-apple-system,"Segoe UI",sans-serif;max-width:1000px;margin:2em auto;
padding:0 1em;color:#1b1b1b;line-height:1.45}
h1{font-size:1.6em;margin-bottom:.2em}h2{border-bottom:2px solid #ddd;padding-bottom:.2em;
margin-top:1.8em}table{border-collapse:collapse;margin:.6em 0 1.2em;font-size:.92em}
th,td{border:1px solid #ccc;padding:.25em .6em;text-align:left;vertical-align:top}
th{background:#f2f2f2}td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
figure{margin:1em 0;border:1px solid #ddd;padding:.5em;background:#fff}
figure img{width:100%;height:auto;display:block}figcaption{font-size:.9em;color:#444}
.result{font-size:1.15em;font-weight:600}.caution{background:#fff4e5;border-left:5px solid #e67e00;
padding:.6em 1em}.note{color:#555;font-size:.92em}.meta{color:#555}
"""


def esc(text: object) -> str:
    """HTML-escape any value shown in the report (quotes included)."""
    return html.escape(str(text), quote=True)


def num(x: float | None, fmt: str = ".6g") -> str:
    if x is None or not math.isfinite(x):
        return "—"
    return format(x, fmt)


@dataclass(frozen=True, eq=False)
class ReportInputs:
    """What a report shows. ``run`` or ``reduction`` (+ ``thermogram``) or ``profile``."""

    title: str
    source: str
    thermogram: Thermogram | None = None
    reduction: Reduction | None = None
    run: RunResult | None = None
    profile: ProfileResult | None = None
    probe: ProbeFile | None = None
    calibration: CalibrationFit | None = None
    inputs: tuple[tuple[str, str], ...] = ()  # (label, value) rows
    cautions: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default_factory=tuple)
    generated: str = ""


@dataclass(frozen=True)
class Figure:
    key: str
    caption: str
    png_base64: str


def methods_used(inputs: ReportInputs) -> list[str]:
    """Published names of the methods behind the figures in this report."""
    keys: list[str] = []
    red = inputs.run.reduction if inputs.run is not None else inputs.reduction
    if red is not None:
        keys += [red.method, *red.methods, f"drift-{red.drift.model}"]
    run = inputs.run
    if run is not None:
        if any(spec.cp is None for spec in run.spec.contents):
            keys.append("water")
        if run.spec.electrical is not None:
            keys.append("electrical")
        if run.hess is not None:
            keys.append("hess")
    if inputs.profile is not None:
        keys.append("profile")
        if inputs.profile.maturity is not None:
            keys.append("maturity")
    if inputs.probe is not None:
        keys.append(inputs.probe.model.name)
    if inputs.calibration is not None:
        keys.append("calibration-fit")
    keys.append("gum")
    names = [METHOD_NAMES.get(k, k) for k in dict.fromkeys(keys)]
    if red is not None:
        names[0] += " — gives the result; the other corrections are shown for comparison"
    if run is not None and run.predicted is not None:
        sources = sorted({c.note for c in run.predicted.components if c.note})
        names += [f"ΔfH° source: {s}" for s in sources]
    return names


def cautions_for(run: RunResult | None, profile: ProfileResult | None) -> tuple[str, ...]:
    """The cautions that apply to this kind of run, always ending with the general one."""
    out: list[str] = []
    if run is not None:
        if run.spec.electrical is not None:
            out.append(HOT_CAUTION)
        reaction = run.spec.sample.reaction if run.spec.sample is not None else None
        text = f"{reaction or ''} {run.spec.sample.name if run.spec.sample else ''}"
        if any(s in text for s in CORROSIVE_SPECIES):
            out.append(CORROSIVE_CAUTION)
        if "NH4NO3" in text:
            out.append(SALT_CAUTION)
        if run.mean_temp_C > 45.0:
            out.append(HOT_CAUTION)
    if profile is not None:
        out += [f"{f.level.upper()}: {f.message} [{f.source}]" for f in profile.safety]
    out.append(GENERAL_CAUTION)
    return tuple(dict.fromkeys(out))


# ----- pieces of HTML ------------------------------------------------------------------------


def _table(header: Iterable[str], rows: Iterable[Iterable[str]], numeric: set[int]) -> str:
    head = "".join(f"<th>{esc(h)}</th>" for h in header)
    body = []
    for row in rows:
        cells = [
            f'<td class="num">{c}</td>' if i in numeric else f"<td>{c}</td>"
            for i, c in enumerate(row)
        ]
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def budget_table(b: Budget) -> str:
    """One GUM budget as an HTML table with its summary line."""
    rows = [
        (
            esc(c.name),
            esc(f"{c.value:.6g} {c.unit}".strip()),
            num(c.u, ".3g"),
            num(abs(c.sensitivity), ".3g"),
            num(c.contribution, ".3g"),
            num(share, ".1f"),
            esc(c.evaluation),
            "—" if math.isinf(c.dof) else num(c.dof, ".0f"),
            esc(c.note),
        )
        for c, share in zip(b.components, b.shares(), strict=True)
    ]
    table = _table(
        ("component", "value", "u(x)", "|c|", "u_i(y)", "share %", "type", "ν", "note"),
        rows,
        {2, 3, 4, 5, 7},
    )
    dof = "∞" if math.isinf(b.dof) else f"{b.dof:.0f}"
    return (
        f"<h3>{esc(b.quantity)}</h3>{table}<p>{esc(b.quantity)} = <b>{num(b.value)} "
        f"{esc(b.unit)}</b>, u = {num(b.u, '.3g')} {esc(b.unit)}, U(k = {b.k:g}) = "
        f"{num(b.expanded, '.3g')} {esc(b.unit)}, ν_eff = {dof}</p>"
    )


def _kv(rows: Iterable[tuple[str, str]]) -> str:
    body = "".join(f"<tr><th>{esc(k)}</th><td>{esc(v)}</td></tr>" for k, v in rows)
    return f"<table><tbody>{body}</tbody></table>"


def _pm(b: Budget, fmt: str = ".4g") -> str:
    return f"{b.value:{fmt}} {b.unit}, u = {b.u:.2g} {b.unit}, U(k = {b.k:g}) = {b.expanded:.2g} {b.unit}"


def _hours(seconds: float | None, u: float | None = None) -> str:
    if seconds is None:
        return "never"
    text = f"{seconds / 3600.0:.3g} h"
    return text if u is None else f"{text}, u = {u / 3600.0:.2g} h"


def profile_figure_rows(p: ProfileResult) -> list[tuple[str, str]]:
    """Every further figure `heatlog profile` prints: C and G, threshold and band times, the
    maturity and the heat at standard ages (label, text)."""
    m = p.metrics
    loss = p.heat.loss
    c = p.settings.heat_capacity
    rows = [
        ("heat capacity C", f"{c.value:.5g} J/K, u = {c.u:.2g} J/K"),
        (
            "heat-loss coefficient G",
            f"{loss.G_W_per_K:.4g} W/K, u = {loss.u_G_W_per_K:.2g} W/K ({loss.source})",
        ),
    ]
    th = m.thresholds
    if th.threshold_C is not None:
        if m.time_to_threshold_s is None:
            rows.append((f"threshold {th.threshold_C:g} °C ({th.source})", "never reached"))
        else:
            rows.append((
                f"threshold {th.threshold_C:g} °C ({th.source})",
                f"reached after {_hours(m.time_to_threshold_s, m.u_time_to_threshold_s)}; "
                f"{m.side} it for {_hours(m.time_beyond_threshold_s, m.u_time_beyond_threshold_s)}",
            ))  # fmt: skip
    if th.band_C is not None:
        rows.append((f"time within {th.band_C[0]:g}–{th.band_C[1]:g} °C",
                     _hours(m.time_in_band_s, m.u_time_in_band_s)))  # fmt: skip
    if p.maturity is not None:
        mt = p.maturity
        rows.append(("maturity (ASTM C1074), temperature–time factor",
                     f"{mt.factor_Ch[-1]:.4g} °C·h, u = {mt.factor_budget.u:.2g} °C·h (T₀ = {mt.datum_C:g} °C)"))  # fmt: skip
        rows.append(("equivalent age",
                     f"{mt.equivalent_age_h[-1]:.4g} h, u = {mt.age_budget.u:.2g} h at "
                     f"{mt.reference_C:g} °C (Q = {mt.activation_K:g} K)"))  # fmt: skip
        for row in p.to_dict()["heat_at_ages"]:
            per_g = (f"; {row['heat_J_per_g']:.4g} J/g, u = {row['u_heat_J_per_g']:.2g} J/g"
                     if "heat_J_per_g" in row else "")  # fmt: skip
            rows.append((f"Q at {row['age_h']:g} h",
                         f"{row['heat_J']:.5g} J, u = {row['u_heat_J']:.2g} J{per_g}"))  # fmt: skip
    return rows


def result_rows(inputs: ReportInputs) -> list[tuple[str, str]]:
    """The headline results with their uncertainties (label, text)."""
    rows: list[tuple[str, str]] = []
    red = inputs.run.reduction if inputs.run is not None else inputs.reduction
    if red is not None:
        rows += [
            (
                "corrected ΔT",
                f"{red.delta_t_K:+.5f} K, u = {red.u_delta_t_K:.2g} K, "
                f"U(k = {red.budget.k:g}) = {red.U_delta_t_K:.2g} K",
            ),
            ("method", f"{red.method}: {red.method_reason}"),
            ("naive ΔT (extreme − start reading, uncorrected)", f"{red.naive_delta_t_K:+.5f} K"),
            (
                "periods",
                f"fore {red.fore_start_s:.1f}–{red.event_start_s:.1f} s, main "
                f"{red.event_start_s:.1f}–{red.after_start_s:.1f} s, after "
                f"{red.after_start_s:.1f}–{red.after_end_s:.1f} s",
            ),
            ("all methods", ", ".join(f"{k} {v.delta_t_K:+.5f} K" for k, v in red.methods.items())),
        ]
    run = inputs.run
    if run is not None:
        if run.c_cal is not None:
            what = "calorimeter constant" if run.spec.electrical else "calorimeter constant used"
            rows.append((what, _pm(run.c_cal, ".5g")))
        if run.heat_J is not None:
            rows.append(("heat taken up by calorimeter + contents, q", _pm(run.heat_J, ".5g")))
        if run.molar is not None:
            rows.append(("ΔH per mole (system)", _pm(run.molar, "+.3f")))
            if run.enthalpy_temp_C is not None:
                rows.append(
                    (
                        "temperature ΔH refers to",
                        f"{run.enthalpy_temp_C:.2f} °C ({run.enthalpy_temp_basis})",
                    )
                )
        if run.molar_25 is not None:
            rows.append(("ΔH at 25 °C (Kirchhoff, given ΔrCp)", _pm(run.molar_25, "+.3f")))
        if run.specific is not None:
            rows.append(("ΔH per gram of sample (system)", _pm(run.specific, "+.4g")))
        if run.hess_warning is not None:
            rows.append(("Hess's law prediction", f"warning: {run.hess_warning}"))
        if run.hess is not None:
            h = run.hess
            rows.append(
                (
                    "Hess's law prediction",
                    f"{h.predicted:+.3f} {h.unit} at 25 °C, U(k = 2) = {2 * h.u_predicted:.3f} "
                    f"{h.unit}; measured − predicted = {h.difference:+.3f} {h.unit}, U(k = 2) = "
                    f"{2 * h.u_difference:.3f} {h.unit}, z = {h.z:.1f}: {h.verdict}",
                )
            )
        rows.append(("sign convention", "q = heat taken up by calorimeter and contents; ΔH = −q"))
    p = inputs.profile
    if p is not None:
        rows.append(("cumulative heat Q at the end", _pm(p.budget, ".5g")))
        if p.budget_per_g is not None:
            rows.append(("Q per gram of sample", _pm(p.budget_per_g, ".4g")))
        rate, t_rate, u_rate = p.peak_rate()
        rows.append(
            (
                "peak heat-release rate",
                f"{rate:.4g} W, u = {u_rate:.2g} W, at {t_rate / 3600:.3g} h",
            )
        )
        m = p.metrics
        rows.append(
            (
                "lowest temperature" if m.side == "below" else "peak temperature",
                f"{m.peak_C:.2f} °C, u = {m.u_peak_C:.2g} °C, at {m.time_to_peak_s / 3600:.3g} h",
            )
        )
        rows += profile_figure_rows(p)
        if not p.complete:
            rows.append(("completeness", "INCOMPLETE: a skipped gap leaves heat out of Q"))
    return rows


def _budgets(inputs: ReportInputs) -> list[Budget]:
    out: list[Budget] = []
    run = inputs.run
    red = run.reduction if run is not None else inputs.reduction
    if red is not None:
        out.append(red.budget)
    if run is not None:
        heater = run.heater.budget if run.heater is not None else None
        out += [
            b
            for b in (heater, run.c_cal, run.heat_J, run.molar, run.specific, run.predicted)
            if b is not None
        ]
    if inputs.profile is not None:
        out.append(inputs.profile.budget)
        if inputs.profile.budget_per_g is not None:
            out.append(inputs.profile.budget_per_g)
    return out


def _probe_section(probe: ProbeFile | None, fit: CalibrationFit | None) -> str:
    if probe is None and fit is None:
        return (
            "<p>No probe file: the log holds calibrated temperatures, so the probe's own "
            "calibration is not part of this report.</p>"
        )
    parts = []
    if probe is not None:
        rows = [
            ("probe id", probe.id),
            ("kind", probe.kind),
            ("model", f"{probe.model.name} — {METHOD_NAMES.get(probe.model.name, '')}"),
            (
                "coefficients",
                ", ".join(f"{k} = {v:.8g}" for k, v in probe.model.coefficients().items()),
            ),
            ("calibration date", probe.calibration_date.isoformat()),
            ("reference", probe.reference),
            ("standard uncertainty of a reading (k = 1)", f"{probe.uncertainty_K:.3g} K"),
            ("valid range", f"{probe.valid_range_C[0]:g} to {probe.valid_range_C[1]:g} °C"),
        ]
        rows += [(f"fit: {k}", str(v)) for k, v in probe.fit.items()]
        parts.append(_kv(rows))
    if fit is None:
        parts.append(
            '<p class="note">Calibration points not given (<code>--probe-points</code>): the '
            "calibration curve is not plotted.</p>"
        )
    else:
        tab = fit.u_table()
        parts.append(
            _kv(
                [
                    ("calibration points", str(fit.temp_C.size)),
                    ("fitted model", fit.model_name),
                    ("rms residual", f"{fit.rms_residual_K * 1e3:.3g} mK"),
                    (
                        "largest u of the curve (k = 1, with reference)",
                        f"{tab['max_u_K'] * 1e3:.3g} mK",
                    ),
                    ("covariance from", fit.covariance_from),
                ]
            )
        )
        if probe is not None:
            mismatch = [
                k
                for k, v in probe.model.coefficients().items()
                if not math.isclose(v, fit.coefficients.get(k, math.nan), rel_tol=1e-6)
            ]
            if mismatch:
                parts.append(
                    '<p class="caution">The calibration points given do not reproduce the probe '
                    f"file's coefficients ({esc(', '.join(mismatch))}): the plot shows a refit, "
                    "not necessarily the calibration this run used.</p>"
                )
    return "".join(parts)


def make_figures(inputs: ReportInputs, progress: Progress | None = None) -> list[Figure]:
    """Render every plot that the inputs allow (the slow part of a report)."""
    say = progress or (lambda _step: None)
    figs: list[Figure] = []
    red = inputs.run.reduction if inputs.run is not None else inputs.reduction
    if red is not None and inputs.thermogram is not None:
        say("plotting the thermogram")
        f = plots.thermogram_figure(inputs.thermogram, red, inputs.title)
        figs.append(
            Figure(
                "thermogram",
                "Readings, fore- and after-period drift fits (solid) and their extrapolations "
                "(dashed), the main period shaded, the corrected ΔT as an arrow.",
                plots.figure_png_base64(f),
            )
        )
        say("plotting the drift-fit residuals")
        figs.append(
            Figure(
                "residuals",
                "Residuals of the drift fits; dotted lines at ±2σ of each period's readings.",
                plots.figure_png_base64(plots.residuals_figure(red)),
            )
        )
    run = inputs.run
    logged = run.spec.electrical.logged if run and run.spec.electrical else None
    th = inputs.thermogram
    if run is not None and run.heater is not None and logged is not None and th is not None:
        say("plotting the logged heater power")
        power = th.channels[logged.bus_col] * th.channels[logged.shunt_col] / logged.shunt_ohm
        figs.append(
            Figure(
                "heater",
                "Readings (top) and the heater power logged by the current/voltage monitor "
                "(bottom); shaded: the switching instants found from the current, ±2u (k = 2).",
                plots.figure_png_base64(plots.heater_power_figure(th, power, run.heater)),
            )
        )
    if inputs.run is not None and inputs.run.hess is not None:
        say("plotting the Hess's-law comparison")
        name = inputs.run.spec.sample.name if inputs.run.spec.sample else ""
        figs.append(
            Figure(
                "hess",
                "Measured enthalpy against the Hess's-law prediction, bars at ±U (k = 2).",
                plots.figure_png_base64(plots.hess_figure(inputs.run.hess, name)),
            )
        )
    if inputs.profile is not None:
        say("plotting the heat profile")
        figs.append(
            Figure(
                "profile",
                "Heat-release rate P(t) and cumulative heat Q(t), bands at ±U (k = 2).",
                plots.figure_png_base64(plots.profile_figure(inputs.profile, inputs.title)),
            )
        )
        figs.append(
            Figure(
                "profile-temperature",
                "Temperature and environment against time, with the peak, threshold and band.",
                plots.figure_png_base64(plots.profile_temperature_figure(inputs.profile)),
            )
        )
    if inputs.calibration is not None:
        say("plotting the probe calibration")
        figs.append(
            Figure(
                "calibration",
                "Probe calibration points, fitted curve, residuals and the curve's ±U (k = 2).",
                plots.figure_png_base64(plots.calibration_figure(inputs.calibration)),
            )
        )
    return figs


def _figure_html(f: Figure) -> str:
    return (
        f'<figure id="fig-{esc(f.key)}"><img alt="{esc(f.caption)}" '
        f'src="data:image/png;base64,{f.png_base64}"><figcaption>{esc(f.caption)}</figcaption>'
        "</figure>"
    )


def _findings_section(inputs: ReportInputs) -> list[str]:
    """The input gate's findings (spikes left out, units converted, ...): a short section."""
    from heatlog.inputgate import findings_of

    found = findings_of(inputs.run) if inputs.run is not None else findings_of(inputs.thermogram)
    if not found:
        return []
    items = [
        f"<li><strong>{esc('refused' if f.severity == 'refuse' else 'flagged')} "
        f"[{esc(f.code)}]</strong>: {esc(f.message)}; {esc(f.action)}</li>"
        for f in found
    ]
    return ["<h2>Input checks</h2><ul>", *items, "</ul>"]


def render_html(inputs: ReportInputs, progress: Progress | None = None) -> str:
    """The whole report as one HTML document (no external resources)."""
    figs = make_figures(inputs, progress)
    if progress is not None:
        progress("writing the HTML")
    generated = inputs.generated or dt.datetime.now(dt.UTC).strftime("%Y-%m-%d %H:%M UTC")
    by_key = {f.key: f for f in figs}
    body: list[str] = [
        f"<h1>{esc(inputs.title)}</h1>",
        f'<p class="meta">Source: <code>{esc(inputs.source)}</code> · heatlog {esc(__version__)}'
        f" · generated {esc(generated)}</p>",
        "<h2>Results</h2>",
        _kv(result_rows(inputs)).replace("<table>", '<table class="result-table">', 1),
    ]
    for key in ("thermogram", "profile", "profile-temperature", "hess"):
        if key in by_key:
            body.append(_figure_html(by_key[key]))
    if inputs.inputs:
        body += ["<h2>Inputs</h2>", _kv(inputs.inputs)]
    budgets = _budgets(inputs)
    if budgets:
        body.append("<h2>Uncertainty budgets</h2>")
        body += [budget_table(b) for b in budgets]
    if "residuals" in by_key:
        body += ["<h2>Drift fit</h2>", _figure_html(by_key["residuals"])]
    red = inputs.run.reduction if inputs.run is not None else inputs.reduction
    if red is not None:
        k, u_k, t_inf, u_t = red.drift.k_and_t_inf()
        body.append(
            _kv(
                [
                    ("drift model", f"{red.drift.model}: {red.drift_reason}"),
                    ("exchange constant k", f"{k:.4g} 1/s, u = {u_k:.2g} 1/s (k = 1)"),
                    (
                        "convergence temperature T∞",
                        f"{num(t_inf, '.4f')} °C, u = {num(u_t, '.2g')} K (k = 1)",
                    ),
                    ("reading noise", f"{red.noise_K * 1e3:.3g} mK"),
                    ("reading step", f"{red.resolution_K * 1e3:.3g} mK"),
                    ("events found", str(len(red.events))),
                ]
            )
        )
    body += ["<h2>Methods</h2>", "<ul>"]
    body += [f"<li>{esc(m)}</li>" for m in methods_used(inputs)]
    body.append("</ul>")
    body += ["<h2>Probe and calibration</h2>", _probe_section(inputs.probe, inputs.calibration)]
    if "calibration" in by_key:
        body.append(_figure_html(by_key["calibration"]))
    body += _findings_section(inputs)
    notes = list(inputs.notes)
    if red is not None:
        notes += list(red.notes)
    if inputs.profile is not None:
        notes += list(inputs.profile.notes)
        notes += [f"WARNING: {w}" for w in inputs.profile.warnings]
    if notes:
        body += ["<h2>Notes</h2><ul>"] + [f"<li>{esc(n)}</li>" for n in notes] + ["</ul>"]
    body.append("<h2>Safety</h2>")
    body += [f'<p class="caution">{esc(c)}</p>' for c in inputs.cautions or (GENERAL_CAUTION,)]
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        f'<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{esc(inputs.title)} — heatlog report</title><style>{_STYLE}</style></head>"
        f"<body>{''.join(body)}</body></html>\n"
    )
