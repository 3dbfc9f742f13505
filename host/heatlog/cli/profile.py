"""``heatlog profile FILE|RUN.toml``: heat-release profile of a long run in a leaky box."""

from __future__ import annotations

from pathlib import Path

import click

from heatlog.cli.output import emit, json_option
from heatlog.errors import InputError
from heatlog.gum import Input
from heatlog.inputgate import Finding, check_profile_settings, findings_text
from heatlog.probes.probefile import load_probe
from heatlog.profile import KINDS, GapPolicy, ProfileResult, ProfileSettings, Thresholds
from heatlog.profile.analysis import DEFAULT_U_ENV_K, DEFAULT_U_TEMP_K, analyse_profile
from heatlog.profile.logcheck import DEFAULT_GAP_FACTOR
from heatlog.profile.maturity import DEFAULT_ACTIVATION_K, DEFAULT_DATUM_C, DEFAULT_REFERENCE_C
from heatlog.runfile import load_run, profile_run_checked
from heatlog.thermogram import read_profile_csv

CAUTION = (
    "Caution: hand warmers, cold packs, heaters and wet cement can injure skin; follow the "
    "product's safety data sheet, local rules and licensed practice."
)


def _h(seconds: float | None, u: float | None = None) -> str:
    if seconds is None:
        return "never"
    text = f"{seconds / 3600.0:.3g} h"
    return text if u is None else f"{text} ± {u / 3600.0:.2g} h (u, k=1)"


def _from_box(
    path: Path, heat_capacity: float | None, loss: float | None
) -> tuple[float, float, float, float]:
    """C, u(C), G, u(G) from a box file (``--box``), which replaces --heat-capacity and --loss."""
    from heatlog.boxfile import load_box

    if heat_capacity is not None or loss is not None:
        raise InputError("give --box or --heat-capacity/--loss, not both")
    b = load_box(path)
    return b.heat_capacity.value, b.heat_capacity.u, b.loss.value, b.loss.u


def _text(result: ProfileResult, source: str, findings: tuple[Finding, ...] = ()) -> str:
    d = result.to_dict()
    s = result.settings
    m = result.metrics
    seg = result.check.segments[result.segment_index]
    lines = [
        f"{source}: {s.kind}, {seg.time_s.size} samples over {_h(seg.duration_s)} "
        f"(segment {result.segment_index} of {len(result.check.segments)})",
        *(f"  {line}" for line in findings_text(findings)),
        f"  method: {d['method']}",
        f"  G = {result.heat.loss.G_W_per_K:.4g} ± {result.heat.loss.u_G_W_per_K:.2g} W/K (u, k=1) "
        f"({result.heat.loss.source}); C = {s.heat_capacity.value:.5g} ± {s.heat_capacity.u:.2g} J/K (u, k=1)",
        f"  Q(end) = {result.budget.value:.5g} J, u = {result.budget.u:.2g} J, "
        f"U(k=2) = {result.budget.expanded:.2g} J" + ("" if result.complete else "  [INCOMPLETE]"),
    ]
    if result.budget_per_g is not None:
        b = result.budget_per_g
        lines.append(
            f"  Q/m = {b.value:.4g} J/g, u = {b.u:.2g} J/g, U(k=2) = {b.expanded:.2g} J/g; "
            f"peak rate {d['peak_rate_mW_per_g']:.3g} mW/g, "
            f"u = {1e3 * d['u_peak_rate_W'] / d['sample_g']:.2g} mW/g (k=1), at "
            f"{_h(d['time_of_peak_rate_s'])} (window {result.peak.window_s:.3g} s)"
        )
    else:
        lines.append(
            f"  peak rate {d['peak_rate_W']:.3g} W, u = {d['u_peak_rate_W']:.2g} W (k=1), at "
            f"{_h(d['time_of_peak_rate_s'])} (window {result.peak.window_s:.3g} s)"
        )
    lines.append(
        f"  {'lowest' if m.side == 'below' else 'peak'} {m.peak_C:.2f} ± {m.u_peak_C:.2g} °C (u, k=1) at {_h(m.time_to_peak_s, m.u_time_to_peak_s)}"
    )
    th = m.thresholds
    if th.threshold_C is not None:
        lines.append(
            f"  threshold {th.threshold_C:g} °C ({th.source}): never reached"
            if m.time_to_threshold_s is None
            else f"  threshold {th.threshold_C:g} °C ({th.source}): reached after "
            f"{_h(m.time_to_threshold_s, m.u_time_to_threshold_s)}; {m.side} it for "
            f"{_h(m.time_beyond_threshold_s, m.u_time_beyond_threshold_s)}"
        )
    if th.band_C is not None:
        lines.append(
            f"  within {th.band_C[0]:g}–{th.band_C[1]:g} °C for "
            f"{_h(m.time_in_band_s, m.u_time_in_band_s)}"
        )
    if result.maturity is not None:
        mt = result.maturity
        lines.append(
            f"  maturity (ASTM C1074): M = {mt.factor_Ch[-1]:.4g} ± {mt.factor_budget.u:.2g} °C·h (u, k=1) "
            f"(T₀ = {mt.datum_C:g} °C); t_e = {mt.equivalent_age_h[-1]:.4g} ± "
            f"{mt.age_budget.u:.2g} h (u, k=1) at {mt.reference_C:g} °C (Q = {mt.activation_K:g} K)"
        )
        for row in d["heat_at_ages"]:
            per_g = (
                f" = {row['heat_J_per_g']:.4g} ± {row['u_heat_J_per_g']:.2g} J/g (u, k=1)"
                if "heat_J_per_g" in row
                else ""
            )
            lines.append(
                f"    {row['age_h']:6.1f} h: Q = {row['heat_J']:.5g} ± {row['u_heat_J']:.2g} J (u, k=1)"
                + per_g
            )
    lines += ["", result.budget.table(), ""]
    lines += [f"{f.level.upper()}: {f.message} [{f.source}]" for f in result.safety]
    lines += [n if n.startswith("WARNING:") else f"note: {n}" for n in result.notes]
    lines += [f"WARNING: {w}" for w in result.warnings]
    lines.append(CAUTION)
    return "\n".join(lines)


def _quantity(value: float | None, u: float, unit: str) -> Input | None:
    return None if value is None else Input(value, u, unit)


def _probe_tau(tau: float | None, u_tau: float | None, probe_path: str | None) -> Input | None:
    """τ from --probe-tau (with --u-probe-tau) or from a probe file's time_constant_s."""
    if tau is not None and probe_path is not None:
        raise InputError("give --probe-tau or --probe, not both")
    if tau is not None:
        if u_tau is None:
            raise InputError("give the standard uncertainty of --probe-tau (--u-probe-tau s)")
        return Input(tau, u_tau, "s", note="--probe-tau")
    if u_tau is not None:
        raise InputError("--u-probe-tau needs --probe-tau")
    if probe_path is None:
        return None
    probe = load_probe(probe_path)
    if probe.time_constant_s is None:
        raise InputError(
            f"{probe_path}: the probe file has no time_constant_s; measure it with "
            "'heatlog probe tau PLUNGE.csv' or give --probe-tau"
        )
    return Input(
        probe.time_constant_s,
        probe.u_time_constant_s or 0.0,
        "s",
        note=f"probe file {probe.id}",
    )


@click.command("profile")
@click.argument("file", type=click.Path(dir_okay=False, path_type=str))
@click.option("--time-col", default="time_s", show_default=True, help="Column with the time (s).")
@click.option("--temp-col", default="temp_C", show_default=True, help="Column with the sample °C.")
@click.option("--env-col", default=None, help="Column with the environment temperature (°C).")
@click.option("--env-temp", type=float, default=None, help="Constant environment temperature, °C.")
@click.option(
    "--u-env-temp",
    type=click.FloatRange(min=0.0),
    default=DEFAULT_U_ENV_K,
    show_default=True,
    help="Standard uncertainty of T_env relative to the sample probe, K "
    "(default: common practice, no source).",
)
@click.option("--flags-col", default=None, help="Status column; non-zero marks a probe fault.")
@click.option(
    "--heat-capacity",
    type=float,
    default=None,
    help="C of box + contents + sample, J/K (required for a CSV).",
)
@click.option("--u-heat-capacity", type=click.FloatRange(min=0.0), default=0.0, show_default=True,
              help="Standard uncertainty of C, J/K (k=1).")  # fmt: skip
@click.option("--loss", type=float, default=None, help="Heat-loss coefficient G, W/K.")
@click.option("--box", "box_path", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Box file from `heatlog box fit`: C and G with their uncertainties.")  # fmt: skip
@click.option(
    "--u-loss",
    type=click.FloatRange(min=0.0),
    default=None,
    help="Standard uncertainty of G, W/K; required with --loss (0 is accepted and flagged).",
)
@click.option(
    "--cooling-fit",
    "cooling_after",
    type=float,
    default=None,
    metavar="SECONDS",
    help="Fit G/C by Newton's law on the tail starting this many seconds after the segment "
    "start (the time base of everything printed); no heat may be released there.",
)
@click.option("--sample-g", type=float, default=None, help="Sample (binder) mass, g.")
@click.option("--u-sample-g", type=click.FloatRange(min=0.0), default=0.0, show_default=True,
              help="Standard uncertainty of the sample mass, g (k=1).")  # fmt: skip
@click.option("--kind", type=click.Choice(KINDS), default="generic", show_default=True,
              help="What is measured: sets the default threshold, band and safety checks.")  # fmt: skip
@click.option(
    "--threshold",
    type=float,
    default=None,
    help="Threshold °C (warmer: above; pack: below). Default per kind.",
)
@click.option(
    "--band",
    type=(float, float),
    default=None,
    metavar="LOW HIGH",
    help="Band in °C for the time-within-band figure. Default per kind.",
)
@click.option(
    "--u-temp",
    type=click.FloatRange(min=0.0),
    default=DEFAULT_U_TEMP_K,
    show_default=True,
    help="Standard uncertainty of a reading (probe calibration), K "
    "(default: uncalibrated thermistor, common practice, no source).",
)
@click.option(
    "--resolution",
    type=click.FloatRange(min=0.0),
    default=0.0,
    show_default=True,
    help="Reading step in K.",
)
@click.option(
    "--rate-window",
    type=click.FloatRange(min=0.0, min_open=True),
    default=None,
    help="Window for the rate P(t), s (default: max(10 steps, run/200)).",
)
@click.option(
    "--gap-factor",
    type=click.FloatRange(min=1.0, min_open=True),
    default=DEFAULT_GAP_FACTOR,
    show_default=True,
    help="A step longer than this many median steps is a gap.",
)
@click.option(
    "--interpolate-gaps",
    is_flag=True,
    help="Bridge gaps with a straight line (default: skip them and flag the result).",
)
@click.option(
    "--segment",
    type=click.IntRange(min=0),
    default=0,
    show_default=True,
    help="Which segment between clock resets to analyse (0 = first).",
)
@click.option(
    "--datum",
    type=float,
    default=DEFAULT_DATUM_C,
    show_default=True,
    help="Datum temperature T₀ for the Nurse–Saul factor, °C (cement).",
)
@click.option(
    "--activation",
    type=click.FloatRange(min=0.0, min_open=True),
    default=DEFAULT_ACTIVATION_K,
    show_default=True,
    help="Activation-energy constant Q = E/R, K, for equivalent age (cement).",
)
@click.option("--u-activation", type=click.FloatRange(min=0.0), default=0.0, show_default=True,
              help="Standard uncertainty of the activation energy / R, K (k=1).")  # fmt: skip
@click.option(
    "--reference",
    type=float,
    default=DEFAULT_REFERENCE_C,
    show_default=True,
    help="Reference temperature for equivalent age, °C (cement).",
)
@click.option(
    "--probe-tau",
    type=click.FloatRange(min=0.0),
    default=None,
    metavar="SECONDS",
    help="The probe's time constant: its lag is corrected (T + τ·dT/dt) and u(τ) budgeted.",
)
@click.option(
    "--u-probe-tau",
    type=click.FloatRange(min=0.0),
    default=None,
    help="Standard uncertainty of --probe-tau, s (required with it).",
)
@click.option(
    "--probe",
    "probe_path",
    type=click.Path(dir_okay=False, path_type=str),
    default=None,
    help="Probe file whose time_constant_s (heatlog probe tau) corrects the lag.",
)
@json_option
def profile(
    file: str,
    time_col: str,
    temp_col: str,
    env_col: str | None,
    env_temp: float | None,
    u_env_temp: float,
    flags_col: str | None,
    heat_capacity: float | None,
    u_heat_capacity: float,
    loss: float | None,
    box_path: Path | None,
    u_loss: float | None,
    cooling_after: float | None,
    sample_g: float | None,
    u_sample_g: float,
    kind: str,
    threshold: float | None,
    band: tuple[float, float] | None,
    u_temp: float,
    resolution: float,
    rate_window: float | None,
    gap_factor: float,
    interpolate_gaps: bool,
    segment: int,
    datum: float,
    activation: float,
    u_activation: float,
    reference: float,
    probe_tau: float | None,
    u_probe_tau: float | None,
    probe_path: str | None,
    as_json: bool,
) -> None:
    """Cumulative heat Q(t), rate P(t), metrics, safety flags (and maturity for cement) of a long
    run in FILE (CSV), or as a run file RUN.toml with a [profile] table describes it.

    With a run file every setting comes from the file and the options below are not used.
    """
    if file.lower().endswith(".toml"):
        spec = load_run(file)
        result, findings = profile_run_checked(spec)
        source = str(spec.log.file)
    else:
        if box_path is not None:
            heat_capacity, u_heat_capacity, loss, u_loss = _from_box(box_path, heat_capacity, loss)
        if heat_capacity is None:
            raise InputError(
                "give the heat capacity of box, contents and sample (--heat-capacity J/K)"
            )
        if loss is not None and u_loss is None:
            raise InputError(
                "give the standard uncertainty of the heat-loss coefficient (--u-loss W/K); "
                "--u-loss 0 accepts a G without uncertainty and flags the result"
            )
        if env_col is not None and env_temp is not None:
            raise InputError("give either --env-col or --env-temp, not both")
        tau = _probe_tau(probe_tau, u_probe_tau, probe_path)
        th = None
        if threshold is not None or band is not None:
            th = Thresholds(threshold, band, "given")
        settings = ProfileSettings(
            heat_capacity=Input(heat_capacity, u_heat_capacity, "J/K"),
            loss=_quantity(loss, u_loss or 0.0, "W/K"),
            cooling_fit_after_s=cooling_after,
            env_C=env_temp,
            u_env_K=u_env_temp,
            sample_g=_quantity(sample_g, u_sample_g, "g"),
            kind=kind,
            thresholds=th,
            u_temp_K=u_temp,
            resolution_K=resolution,
            rate_window_s=rate_window,
            gap_factor=gap_factor,
            gap_policy=GapPolicy.INTERPOLATE if interpolate_gaps else GapPolicy.EXCLUDE,
            segment=segment,
            datum_C=datum,
            activation_K=activation,
            u_activation_K=u_activation,
            reference_C=reference,
            probe_tau=tau,
        )
        check_profile_settings(settings, "heatlog profile")
        time_s, temp, env, flags, findings = read_profile_csv(
            Path(file), time_col, temp_col, env_col, flags_col, run_kind=kind
        )
        source = file
        result = analyse_profile(time_s, temp, settings, env_C=env, flags=flags, where=source)
    payload = result.to_dict()
    payload["file"] = file
    payload["findings"] = [f.to_dict() for f in findings]
    payload["caution"] = CAUTION
    emit(as_json, payload, lambda: _text(result, source, findings))
