"""``heatlog box fit``: C and G of an insulated box from a heater run or a cooling run, written
to a box file (:mod:`heatlog.boxfile`) that ``heatlog profile --box`` and a run file's
``[profile] box = "…"`` read."""

from __future__ import annotations

import datetime as dt
import math
from pathlib import Path
from typing import Any

import click

from heatlog.cli.output import emit, json_option
from heatlog.errors import InputError

CAUTION = (
    "Caution: heaters and their leads can burn or shock; do not leave a heated box unattended "
    "and follow local electrical rules."
)
NOTE_LOAD = (
    "C is the box as loaded during this run: fit it with the box holding what the real run holds "
    "(or a dummy load of the same heat capacity), or add the difference to C yourself."
)


def _finite(name: str, value: float | None) -> None:
    if value is not None and not math.isfinite(value):
        raise InputError(f"{name} must be a finite number, got {value}")


@click.group("box")
def box() -> None:
    """Characterise an insulated box: heat capacity C and heat-loss coefficient G."""


@box.command("fit")
@click.argument("log", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Box file to write (default: LOG with .box.toml).")  # fmt: skip
@click.option("--time-col", default="time_s", show_default=True, help="Time column, s.")
@click.option("--temp-col", default="temp_C", show_default=True, help="Box temperature, °C.")
@click.option("--env-temp", type=float, default=None, help="Room temperature, °C (constant).")
@click.option("--env-col", default=None, help="Column with the logged room temperature, °C.")
@click.option("--u-env-temp", type=click.FloatRange(min=0.0), default=None,
              help="Standard uncertainty of the room temperature relative to the box probe, K "
              "(default 0.5 K: common practice, no source).")  # fmt: skip
@click.option("--power", type=float, default=None,
              help="Heater run: steady heater power, W, between --on and --off.")  # fmt: skip
@click.option("--u-power", type=click.FloatRange(min=0.0), default=None,
              help="Standard uncertainty of --power, W (k=1).")  # fmt: skip
@click.option("--on", "t_on", type=float, default=None, help="Heater switched on at, s.")
@click.option("--off", "t_off", type=float, default=None, help="Heater switched off at, s.")
@click.option("--power-col", default=None, help="Heater run: column with the logged power, W.")
@click.option("--u-power-rel", type=click.FloatRange(min=0.0), default=None,
              help="Relative standard uncertainty of the logged power's scale (e.g. 0.005).")  # fmt: skip
@click.option("--cooling", is_flag=True,
              help="Cooling run (no heater): fits G/C; needs --heat-capacity.")  # fmt: skip
@click.option("--heat-capacity", type=float, default=None,
              help="Cooling run: C of the loaded box, J/K (from a heater run or the masses).")  # fmt: skip
@click.option("--u-heat-capacity", type=click.FloatRange(min=0.0), default=None,
              help="Standard uncertainty of --heat-capacity, J/K (k=1).")  # fmt: skip
@click.option("--start", "start_s", type=float, default=None,
              help="Cooling run: fit from this time, s (default: the first reading).")  # fmt: skip
@click.option("--probe-tau", type=click.FloatRange(min=0.0), default=None,
              help="The probe's time constant, s (`heatlog probe tau`): its lag is corrected "
              "before the fit.")  # fmt: skip
@click.option("--u-probe-tau", type=click.FloatRange(min=0.0), default=None,
              help="Standard uncertainty of --probe-tau, s (k=1); required with it.")  # fmt: skip
@json_option
def fit(
    log: Path, out: Path | None, time_col: str, temp_col: str, env_temp: float | None,
    env_col: str | None, u_env_temp: float | None, power: float | None, u_power: float | None,
    t_on: float | None, t_off: float | None, power_col: str | None, u_power_rel: float | None,
    cooling: bool, heat_capacity: float | None, u_heat_capacity: float | None,
    start_s: float | None, probe_tau: float | None, u_probe_tau: float | None, as_json: bool,
) -> None:  # fmt: skip
    """Find C (J/K) and G (W/K) of an insulated box from LOG, a heater run or a cooling run.

    Heater run (C and G together): the box is heated by a known power for a while and left to
    cool; give --power with --u-power, --on and --off, or a logged --power-col with
    --u-power-rel. Cooling run (G only, C given): a warm box cooling with nothing inside
    releasing heat; give --cooling with --heat-capacity and --u-heat-capacity. The room
    temperature comes from --env-temp or --env-col. Writes a box file for `heatlog profile --box`.
    """
    import numpy as np

    from heatlog.boxfile import BoxFile, box_to_toml
    from heatlog.csvtable import read_columns
    from heatlog.gum import Input
    from heatlog.profile.analysis import DEFAULT_U_ENV_K
    from heatlog.profile.heatloss import cooling_fit, heating_curve_fit, loss_from_cooling

    for name, value in (("--env-temp", env_temp), ("--power", power), ("--on", t_on),
                        ("--off", t_off), ("--heat-capacity", heat_capacity), ("--start", start_s)):  # fmt: skip
        _finite(name, value)
    missing: list[str] = []
    if (env_temp is None) == (env_col is None):
        missing.append("exactly one of --env-temp or --env-col (the room temperature)")
    heater = power is not None or power_col is not None
    if cooling and heater:
        raise InputError(
            "a run is either a heater run (--power/--power-col) or --cooling, not both"
        )
    if not cooling and not heater:
        missing.append("the kind of run: --power (or --power-col) for a heater run, or --cooling")
    if power is not None and power_col is not None:
        raise InputError("give --power (steady) or --power-col (logged), not both")
    if power is not None:
        missing += [
            n for n, v in (("--u-power", u_power), ("--on", t_on), ("--off", t_off)) if v is None
        ]
    if power_col is not None and u_power_rel is None:
        missing.append("--u-power-rel (relative standard uncertainty of the logged power)")
    if cooling:
        missing += [n for n, v in (("--heat-capacity", heat_capacity),
                                   ("--u-heat-capacity", u_heat_capacity)) if v is None]  # fmt: skip
    if probe_tau is not None and u_probe_tau is None:
        missing.append("--u-probe-tau (standard uncertainty of the probe's time constant)")
    if missing:
        raise InputError("missing input(s), all at once: " + "; ".join(missing))
    if power is not None and not power > 0:
        raise InputError(f"--power must be positive, got {power:g} W")
    if t_on is not None and t_off is not None and not t_off > t_on:
        raise InputError(f"--off ({t_off:g} s) must come after --on ({t_on:g} s)")

    wanted = [time_col, temp_col] + [c for c in (env_col, power_col) if c]
    cols = read_columns(log, wanted, min_rows=10, what="box run")
    look = {k.lower(): v for k, v in cols.items()}
    t, y = look[time_col.lower()], look[temp_col.lower()]
    env: Any = look[env_col.lower()] if env_col else float(env_temp)  # type: ignore[arg-type]
    u_env = DEFAULT_U_ENV_K if u_env_temp is None else u_env_temp
    result: dict[str, Any] = {"log": str(log), "u_env_temp_K": u_env}
    measured = y
    if probe_tau is not None:  # the box's temperature, not the lagging probe's
        from heatlog.profile.lag import correct_lag

        lag = correct_lag(t, measured, Input(probe_tau, float(u_probe_tau or 0.0), "s"))
        y = lag.corrected_C
        result["probe_lag"] = lag.to_dict()

    if heater:
        if power_col is not None:
            p, rel = look[power_col.lower()], float(u_power_rel)  # type: ignore[arg-type]
        else:
            p = np.where((t >= t_on) & (t <= t_off), float(power), 0.0)  # type: ignore[arg-type]
            rel = float(u_power) / float(power)  # type: ignore[arg-type]
        base = heating_curve_fit(t, y, env, p, u_power_rel=rel)
        # the room temperature's uncertainty: refit with T_env shifted by ±u (sensitivity)
        hi = heating_curve_fit(t, y, np.asarray(env) + u_env, p, sensitivity_only=True)
        lo = heating_curve_fit(t, y, np.asarray(env) - u_env, p, sensitivity_only=True)
        du_c = abs(hi.heat_capacity.value - lo.heat_capacity.value) / 2.0
        du_g = abs(hi.loss.G_W_per_K - lo.loss.G_W_per_K) / 2.0
        if probe_tau is not None and u_probe_tau:  # and τ's: refit with τ ± u(τ)
            from heatlog.profile.lag import correct_lag

            moved = [
                heating_curve_fit(
                    t, correct_lag(t, measured, Input(tau, 0.0, "s")).corrected_C, env, p,
                    sensitivity_only=True,
                )
                for tau in (probe_tau + u_probe_tau, max(probe_tau - u_probe_tau, 0.0))
            ]  # fmt: skip
            du_c = math.hypot(
                du_c, abs(moved[0].heat_capacity.value - moved[1].heat_capacity.value) / 2
            )
            du_g = math.hypot(du_g, abs(moved[0].loss.G_W_per_K - moved[1].loss.G_W_per_K) / 2)
        c_in = Input(base.heat_capacity.value, math.hypot(base.heat_capacity.u, du_c), "J/K")
        g_in = Input(base.loss.G_W_per_K, math.hypot(base.loss.u_G_W_per_K, du_g), "W/K")
        method, corr = "heating-curve fit", base.correlation
        result.update(fit=base.to_dict(), samples=base.samples, residual_rms_K=base.residual_K)
    else:
        cf = cooling_fit(t, y, env, start_s=start_s)
        c_in = Input(float(heat_capacity), float(u_heat_capacity), "J/K")  # type: ignore[arg-type]
        loss = loss_from_cooling(cf, c_in)
        hi_cf = cooling_fit(t, y, np.asarray(env) + u_env, start_s=start_s)
        lo_cf = cooling_fit(t, y, np.asarray(env) - u_env, start_s=start_s)
        du_g = abs(hi_cf.rate_per_s - lo_cf.rate_per_s) / 2.0 * c_in.value
        g_in = Input(loss.G_W_per_K, math.hypot(loss.u_G_W_per_K, du_g), "W/K")
        method, corr = "cooling-curve fit (C given)", None
        result.update(fit=cf.to_dict(), samples=cf.samples, residual_rms_K=cf.residual_K)
    if not (c_in.u > 0 and g_in.u > 0):
        raise InputError("the fit left C or G without an uncertainty; give the power's and C's")
    extra: tuple[tuple[str, Any], ...] = (
        ("log", log.name),
        ("fitted_utc", dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")),
        ("residual_rms_K", float(result["residual_rms_K"])),
        ("samples", int(result["samples"])),
    )
    box_file = BoxFile(c_in, g_in, method, corr, extra)
    target = out if out is not None else log.with_name(log.stem + ".box.toml")
    try:
        target.write_text(box_to_toml(box_file), encoding="utf-8")
    except OSError as exc:
        raise InputError(f"{target}: cannot write ({exc.strerror})") from None
    notes = [NOTE_LOAD]
    if corr is not None and abs(corr) > 0.3:
        # Q = C·ΔT + G·∫(T − T_env)dt: var = a² + b² + 2r·a·b ≤ (1 + r)(a² + b²)
        notes.append(
            f"C and G are correlated (r = {corr:+.2f}); `heatlog profile` treats them as "
            + (
                f"independent, so its u(Q) may be understated by up to a factor {math.sqrt(1 + corr):.2f}"
                if corr > 0
                else "independent, so its u(Q) is, if anything, overstated"
            )
        )
    payload = {**box_file.to_dict(), **result, "box_file": str(target), "notes": notes,
               "caution": CAUTION}  # fmt: skip

    def text() -> str:
        lines = [
            f"C = {c_in.value:.5g} J/K ± {c_in.u:.2g} J/K (u, k=1)",
            f"G = {g_in.value:.5g} W/K ± {g_in.u:.2g} W/K (u, k=1)",
            f"  {method}, {result['samples']} readings, residual {result['residual_rms_K']:.2g} K rms;"
            f" room temperature u = {u_env:g} K included",
        ]
        if corr is not None:
            lines.append(f"  correlation of C and G from the fit: {corr:+.2f}")
        lines += [f"box file written to {target}; use it with `heatlog profile --box {target}`"
                  " or [profile] box = \"...\" in a run file", *notes, CAUTION]  # fmt: skip
        return "\n".join(lines)

    emit(as_json, payload, text)
