"""``heatlog probe``: fit calibration points, convert readings, design a thermistor divider."""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Any

import click
import numpy as np

from heatlog.cli.output import emit, json_option
from heatlog.csvtable import read_columns
from heatlog.errors import InputError, RangeError
from heatlog.gum import quantisation
from heatlog.probes.chains import CHAIN_SPEC_HELP, chain_from_spec
from heatlog.probes.design import CRITERIA, design_divider
from heatlog.probes.fitting import CalibrationFit, fit_counts, fit_resistance
from heatlog.probes.models import MODEL_NAMES, ProbeModel
from heatlog.probes.probefile import ID_RULE, load_probe, probe_from_fit, save_probe, valid_probe_id
from heatlog.probes.rtd import pt100, pt1000, tolerance_class
from heatlog.probes.thermistor import Beta

STANDARD_PROBES = {"pt100": pt100, "pt1000": pt1000}

# Above this a calibration bath can scald on contact (contact-burn guidance: ~44 °C for hours can
# burn skin, Moritz & Henriques 1947, from memory); below the cold one, baths are usually
# dry-ice/alcohol or cryogenic mixtures.
_HOT_BATH_C = 45.0
_COLD_BATH_C = -20.0


def bath_cautions(temps: np.ndarray) -> list[str]:
    """Usual cautions for the calibration baths that the points imply."""
    out = []
    if temps.size and float(np.max(temps)) > _HOT_BATH_C:
        out.append(
            "hot baths above about 45 °C scald: use a stable, lidded bath, splash protection and "
            "heat-resistant gloves, and follow your local lab safety rules"
        )
    if temps.size and float(np.min(temps)) < _COLD_BATH_C:
        out.append(
            "cold baths (dry ice, cryogens) burn skin and displace air: insulated gloves, eye "
            "protection, ventilation; follow the safety data sheets and local rules"
        )
    return out


@click.group("probe")
def probe() -> None:
    """Probe models: calibration fits, conversions and divider design."""


def _read_points(path: Path, chain_spec: str | None) -> tuple[np.ndarray, np.ndarray, bool]:
    """(temp_C, resistance or counts, is_counts) from a calibration CSV."""
    cols = read_columns(
        path, ["temp_C"], optional=["resistance_ohm", "counts"], what="calibration points"
    )
    if chain_spec is not None:
        if "counts" not in cols:
            raise InputError(f"{path}: --chain needs a 'counts' column beside 'temp_C'")
        return cols["temp_C"], cols["counts"], True
    if "resistance_ohm" not in cols:
        hint = " (it has 'counts': give --chain)" if "counts" in cols else ""
        raise InputError(f"{path}: missing column 'resistance_ohm'{hint}")
    return cols["temp_C"], cols["resistance_ohm"], False


def _fit_text(fit: CalibrationFit, wrote: Path | None, cautions: list[str]) -> str:
    lines = [
        f"{fit.model_name} fit: {fit.temp_C.size} points, {len(fit.fitted)} coefficients fitted, "
        f"{fit.dof} degrees of freedom",
    ]
    lines += [f"  {k:<5} = {v:.10g}" for k, v in fit.coefficients.items()]
    lines.append(f"  {'temp_C':>10}  {'resistance_ohm':>15}  {'residual_mK':>12}")
    for t, r, e in zip(fit.temp_C, fit.resistance_ohm, fit.residuals_K, strict=True):
        lines.append(f"  {t:>10.4f}  {r:>15.6g}  {e * 1e3:>12.3f}")
    lines.append(
        f"max |residual| {fit.max_abs_residual_K * 1e3:.3f} mK, "
        f"rms {fit.rms_residual_K * 1e3:.3f} mK"
    )
    table = fit.u_table()
    lo, hi = fit.range_C
    lines.append(
        f"standard uncertainty (k=1) over {lo:g}..{hi:g} °C: curve ≤ "
        f"{max(table['u_fit_K']) * 1e3:.3g} mK, with reference ({fit.ref_u_K * 1e3:.3g} mK) ≤ "
        f"{table['max_u_K'] * 1e3:.3g} mK"
    )
    lines += [f"note: {n}" for n in fit.notes]
    lines += [f"warning: {w}" for w in fit.warnings]
    lines += [f"caution: {c}" for c in cautions]
    if wrote is not None:
        lines.append(f"wrote {wrote}")
    return "\n".join(lines)


@probe.command("fit")
@click.argument("points", type=click.Path(path_type=Path))
@click.option("--model", type=click.Choice(MODEL_NAMES), required=True, help="Curve to fit.")
@click.option(
    "--ref-u",
    type=float,
    default=0.0,
    show_default=True,
    help="Standard uncertainty (k=1, K) of the reference thermometer.",
)
@click.option(
    "--range", "range_C", type=(float, float), default=None, help="Range of use T1 T2 in °C."
)
@click.option(
    "--chain", "chain_spec", default=None, help=f"For a temp_C,counts CSV: {CHAIN_SPEC_HELP}."
)
@click.option("--r0", type=float, default=None, help="Hold R0 fixed (callendar-van-dusen), Ω.")
@click.option(
    "--t25", type=float, default=25.0, show_default=True, help="Reference temperature of beta, °C."
)
@click.option("--id", "probe_id", default=None, help="Probe id for --out (default: file stem).")
@click.option("--reference", default=None, help="Reference thermometer used (needed with --out).")
@click.option(
    "--date", "cal_date", default=None, help="Calibration date YYYY-MM-DD (default today)."
)
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), help="Write a probe file.")
@json_option
def fit_command(
    points: Path,
    model: str,
    ref_u: float,
    range_C: tuple[float, float] | None,
    chain_spec: str | None,
    r0: float | None,
    t25: float,
    probe_id: str | None,
    reference: str | None,
    cal_date: str | None,
    out: Path | None,
    as_json: bool,
) -> None:
    """Fit a probe curve to calibration points (CSV: temp_C,resistance_ohm or temp_C,counts)."""
    if out is not None:
        pid = probe_id or points.stem
        if not valid_probe_id(pid):
            source = "--id" if probe_id else f"the points file's name {points.name!r}"
            raise InputError(
                f"probe id {pid!r} (taken from {source}) must be {ID_RULE}; "
                "give one with --id, e.g. --id ntc-1"
            )
    temps, values, is_counts = _read_points(points, chain_spec)
    options: dict[str, Any] = {"ref_u_K": ref_u, "range_C": range_C, "r0_ohm": r0, "t25_C": t25}
    if is_counts:
        assert chain_spec is not None
        fit = fit_counts(temps, values, chain_from_spec(chain_spec), model, **options)
    else:
        fit = fit_resistance(temps, values, model, **options)
    payload = fit.to_dict()
    payload["cautions"] = bath_cautions(fit.temp_C)
    if out is not None:
        if not reference:
            raise InputError("--out needs --reference naming the reference thermometer used")
        try:
            when = dt.date.fromisoformat(cal_date) if cal_date else dt.datetime.now(dt.UTC).date()
        except ValueError:
            raise InputError(f"--date must be YYYY-MM-DD, got {cal_date!r}") from None
        probe_file = probe_from_fit(
            fit, probe_id or points.stem, reference=reference, calibration_date=when
        )
        try:
            save_probe(probe_file, out)
        except OSError as exc:
            raise InputError(f"{out}: cannot write ({exc.strerror})") from None
        payload["probe_file"] = str(out)
        payload["uncertainty_K"] = probe_file.uncertainty_K
    emit(as_json, payload, lambda: _fit_text(fit, out, payload["cautions"]))


def _model_from(
    probe_path: Path | None, standard: str | None
) -> tuple[str, ProbeModel, float | None]:
    if (probe_path is None) == (standard is None):
        raise InputError("give exactly one of --probe FILE or --standard pt100|pt1000")
    if probe_path is not None:
        pf = load_probe(probe_path)
        return pf.id, pf.model, pf.uncertainty_K
    assert standard is not None
    return standard, STANDARD_PROBES[standard](), None


@probe.command("convert")
@click.option("--probe", "probe_path", type=click.Path(path_type=Path), help="Probe file (TOML).")
@click.option("--standard", type=click.Choice(tuple(STANDARD_PROBES)), help="IEC 60751 curve.")
@click.option("--ohm", "ohms", type=float, multiple=True, help="Resistance to convert, Ω.")
@click.option("--temp", "temps", type=float, multiple=True, help="Temperature to convert, °C.")
@click.option(
    "--counts", "counts", type=float, multiple=True, help="Converter counts (needs --chain)."
)
@click.option("--chain", "chain_spec", default=None, help=CHAIN_SPEC_HELP)
@json_option
def convert_command(
    probe_path: Path | None,
    standard: str | None,
    ohms: tuple[float, ...],
    temps: tuple[float, ...],
    counts: tuple[float, ...],
    chain_spec: str | None,
    as_json: bool,
) -> None:
    """Convert resistance ↔ temperature (or counts → temperature) with a probe's curve."""
    name, model, u = _model_from(probe_path, standard)
    if not (ohms or temps or counts):
        raise InputError("nothing to convert: give --ohm, --temp or --counts values")
    if counts and chain_spec is None:
        raise InputError("--counts needs --chain describing the converter")
    rows: list[dict[str, Any]] = []
    if ohms:
        t = np.atleast_1d(model.resistance_to_temperature(np.array(ohms)))
        rows += [{"resistance_ohm": r, "temp_C": x} for r, x in zip(ohms, t, strict=True)]
    if temps:
        r = np.atleast_1d(model.temperature_to_resistance(np.array(temps)))
        rows += [{"temp_C": x, "resistance_ohm": y} for x, y in zip(temps, r, strict=True)]
    if counts:
        assert chain_spec is not None
        reading = chain_from_spec(chain_spec).reading(model, np.array(counts))
        rows += [
            {
                "counts": c,
                "resistance_ohm": r,
                "temp_C": t,
                "step_K": s,
                "u_quantisation_K": quantisation(s),
            }
            for c, r, t, s in zip(
                counts, reading.resistance_ohm, reading.temp_C, reading.step_K, strict=True
            )
        ]
    if standard is not None:
        # A nominal curve's honest bound is the sensor's tolerance class (IEC 60751), only
        # inside the range the standard gives each class (wire-wound elements); outside: null.
        for row in rows:
            for cls in ("A", "B"):
                try:
                    row[f"tolerance_class_{cls}_K"] = tolerance_class(row["temp_C"], cls)
                except RangeError as exc:
                    row[f"tolerance_class_{cls}_K"] = None
                    row.setdefault("tolerance_notes", []).append(str(exc))
    payload = {
        "probe": name,
        "model": model.name,
        "valid_range_C": [model.t_min_C, model.t_max_C],
        "uncertainty_K": u,
        "results": rows,
    }

    def text() -> str:
        head = f"{name} ({model.name}, valid {model.t_min_C:g}..{model.t_max_C:g} °C"
        head += (
            f", u = {u:.3g} K k=1)"
            if u is not None
            else ", nominal IEC 60751 curve: the sensor's tolerance class bounds its error)"
        )
        lines = [head]
        for row in rows:
            parts = []
            if "counts" in row:
                parts.append(f"{row['counts']:g} counts")
            parts.append(f"{row['resistance_ohm']:.6f} Ω")
            parts.append(f"{row['temp_C']:.4f} °C")
            if "step_K" in row:
                parts.append(f"one count = {row['step_K'] * 1e3:.3g} mK")
            if "tolerance_class_A_K" in row:
                for cls in ("A", "B"):
                    lim = row[f"tolerance_class_{cls}_K"]
                    parts.append(
                        f"class {cls} limit ±{lim:.3g} K (IEC 60751 tolerance, not u)"
                        if lim is not None
                        else f"class {cls}: outside its IEC 60751 range"
                    )
            lines.append("  " + "  ↔  ".join(parts))
        return "\n".join(lines)

    emit(as_json, payload, text)


@probe.command("design")
@click.option(
    "--probe", "probe_path", type=click.Path(path_type=Path), help="Thermistor probe file."
)
@click.option("--beta", type=float, default=None, help="β (K) of a nominal thermistor.")
@click.option("--r25", type=float, default=None, help="R25 (Ω) of a nominal thermistor.")
@click.option("--range", "range_C", type=(float, float), required=True, help="T1 T2 in °C.")
@click.option("--criterion", type=click.Choice(CRITERIA), default="max-span", show_default=True,
              help="What the series resistor is chosen for.")  # fmt: skip
@click.option("--series", type=float, default=None, help="Evaluate this series resistor, Ω.")
@click.option(
    "--bits",
    type=click.Choice(["10", "12", "14", "16"]),
    default="12",
    show_default=True,
    help="ADC resolution, bits.",
)
@click.option("--oversample", type=int, default=1, show_default=True, help="Reads summed.")
@click.option("--vexc", type=float, default=3.3, show_default=True, help="Excitation, V.")
@click.option(
    "--dissipation", type=float, default=1.5, show_default=True, help="Dissipation constant, mW/K."
)
@click.option("--target-mk", type=float, default=None, help="Wanted resolution, mK.")
@json_option
def design_command(
    probe_path: Path | None,
    beta: float | None,
    r25: float | None,
    range_C: tuple[float, float],
    criterion: str,
    series: float | None,
    bits: str,
    oversample: int,
    vexc: float,
    dissipation: float,
    target_mk: float | None,
    as_json: bool,
) -> None:
    """Choose the series resistor of a thermistor divider; report resolution and self-heating."""
    if probe_path is not None:
        if beta is not None or r25 is not None:
            raise InputError("give either --probe or --beta with --r25, not both")
        model = load_probe(probe_path).model
        if model.kind != "thermistor":
            raise InputError(
                f"{probe_path}: design is for thermistors, this probe is a {model.kind}"
            )
    elif beta is not None and r25 is not None:
        lo, hi = sorted(range_C)
        model = Beta(r25, beta, t_min_C=min(lo, -40.0), t_max_C=max(hi, 125.0))
    else:
        raise InputError("give --probe FILE, or --beta and --r25 of a nominal thermistor")
    design = design_divider(
        model,
        range_C[0],
        range_C[1],
        criterion=criterion,
        r_series_ohm=series,
        bits=int(bits),
        oversample=oversample,
        excitation_V=vexc,
        dissipation_mW_per_K=dissipation,
        target_mK=target_mk,
    )

    def text() -> str:
        d = design
        lines = [
            f"series resistor {d.r_series_ohm:.6g} Ω ({d.criterion}), {d.bits}-bit ADC, "
            f"{d.oversample} read(s) summed, {d.excitation_V:g} V",
            f"  {'temp_C':>8} {'R_T_ohm':>10} {'V/Vref':>7} {'res_mK':>8} {'P_mW':>7} {'dT_self_K':>9}",
        ]
        for i in range(0, d.temp_C.size, max(1, d.temp_C.size // 10)):
            lines.append(
                f"  {d.temp_C[i]:>8.2f} {d.resistance_ohm[i]:>10.5g} {d.ratio[i]:>7.3f} "
                f"{d.resolution_mK[i]:>8.3g} {d.self_heating_mW[i]:>7.3g} {d.self_heating_K[i]:>9.3g}"
            )
        lines.append(
            f"worst resolution {d.worst_resolution_mK:.3g} mK; self-heating up to "
            f"{d.max_self_heating_K:.3g} K at {d.dissipation_mW_per_K:g} mW/K"
        )
        if d.target_mK is not None:
            need = d.oversample_needed
            lines.append(
                f"for {d.target_mK:g} mK: sum {need} reads"
                if need
                else f"{d.target_mK:g} mK: not reachable"
            )
        lines += [f"note: {n}" for n in d.notes]
        return "\n".join(lines)

    emit(as_json, design.to_dict(), text)


@probe.command("tau")
@click.argument("plunge", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--time-col", default="time_s", show_default=True, help="Column with the time (s).")
@click.option("--temp-col", default="temp_C", show_default=True, help="Column with the reading °C.")
@json_option
def tau_command(plunge: Path, time_col: str, temp_col: str, as_json: bool) -> None:
    """The probe's time constant from a plunge test in PLUNGE (CSV): the probe moved quickly
    from air or one stirred bath into another, logged fast (several readings per τ)."""
    from heatlog.profile.lag import plunge_fit

    cols = read_columns(plunge, [time_col, temp_col], what="plunge test")
    lookup = {k.lower(): v for k, v in cols.items()}
    fit = plunge_fit(lookup[time_col.lower()], lookup[temp_col.lower()])
    cautions = bath_cautions(np.array([fit.initial_C, fit.final_C]))
    payload = {"file": str(plunge), **fit.to_dict(), "cautions": cautions}

    def text() -> str:
        lines = [
            f"{plunge}: first-order step from {fit.initial_C:.3g} °C to {fit.final_C:.3g} °C "
            f"at {fit.start_s:.4g} s ({fit.samples} readings)",
            f"  τ = {fit.tau_s:.3g} s, u = {fit.u_tau_s:.2g} s (k=1), "
            f"U(k=2) = {2 * fit.u_tau_s:.2g} s",
            f"  residual rms {fit.residual_K:.2g} K, reading noise {fit.noise_K:.2g} K",
            "  for the probe file:",
            f"    time_constant_s = {fit.tau_s:.4g}",
            f"    u_time_constant_s = {fit.u_tau_s:.2g}",
        ]
        lines += [f"WARNING: {w}" for w in fit.warnings]
        lines += [f"Caution: {c}" for c in cautions]
        return "\n".join(lines)

    emit(as_json, payload, text)
