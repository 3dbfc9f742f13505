"""``heatlog calibrate ...`` (calorimeter constant) and ``heatlog hess`` (Hess's law).

Thin commands: options become :class:`heatlog.gum.Input` values, the work is done in
:mod:`heatlog.energetics`, and the result is a budget table or, with ``--json``, one JSON object
holding ``Budget.to_dict()``.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click

from heatlog.cli.output import emit, json_option
from heatlog.energetics.hess import CORROSIVE_SPECIES
from heatlog.errors import InputError

CAUTION_HOT = (
    "Caution: hot water scalds; use heat-resistant vessels and follow the safety data sheets "
    "and local rules."
)
CAUTION_CORROSIVE = (
    "Caution: acids and bases (HCl, NaOH, ...) harm eyes and skin; wear eye protection and "
    "follow the safety data sheets and local rules."
)
CAUTION_GENERAL = (
    "Caution: handle the chemicals as their safety data sheets and your local rules require."
)

_number = click.FLOAT


def _inp(value: float, u: float, unit: str, name: str) -> Any:
    from heatlog.gum import Input
    from heatlog.inputgate import check_quantity

    if not math.isfinite(value):
        raise InputError(f"{name} must be a finite number, got {value}")
    if not (math.isfinite(u) and u >= 0):
        raise InputError(f"uncertainty of {name} must be a finite number ≥ 0, got {u}")
    check_quantity(name, value, u, unit)  # bounded before any arithmetic
    return Input(value, u, unit)


def _contents_options(f: Callable[..., Any]) -> Callable[..., Any]:
    options = [
        click.option("--water-g", type=_number, default=0.0, show_default=True,
                     help="Mass of liquid in the calorimeter (water unless --solute or --cp), g."),
        click.option("--u-water-g", type=_number, default=0.0, show_default=True,
                     help="Standard uncertainty of that mass, g."),
        click.option("--temp", "temp_c", type=_number, default=None,
                     help="Mean temperature of the run, °C (for c_p; default 25; required with "
                          "--reference, whose enthalpy depends on it)."),
        click.option("--solute", default=None,
                     help="Solute of a dilute solution (Laliberté 2009 model), e.g. NaCl."),
        click.option("--molality", type=_number, default=None, help="Solute molality, mol/kg."),
        click.option("--cp", type=_number, default=None, help="Your own c_p of the liquid, J/(g·K)."),
        click.option("--u-cp", type=_number, default=None, help="Standard uncertainty of --cp."),
    ]  # fmt: skip
    for opt in reversed(options):
        f = opt(f)
    return f


def _contents(water_g, u_water_g, temp_c, solute, molality, cp, u_cp) -> list[Any]:
    from heatlog.energetics import Content, given_cp, solution_cp, water_cp_input

    temp_c = 25.0 if temp_c is None else temp_c
    _inp(temp_c, 0.0, "°C", "--temp")
    if not (math.isfinite(water_g) and water_g >= 0):
        raise InputError(f"--water-g must be a finite number ≥ 0, got {water_g}")
    if water_g == 0:
        return []
    if cp is not None:
        if u_cp is None:
            raise InputError("--cp needs --u-cp (its standard uncertainty)")
        c = given_cp(cp, u_cp)
        name = "liquid"
    elif solute is not None:
        if molality is None:
            raise InputError("--solute needs --molality (mol per kg of water)")
        c = solution_cp(solute, molality, temp_c)
        name = f"{solute}(aq)"
    else:
        c = water_cp_input(temp_c)
        name = "water"
    return [Content(name, _inp(water_g, u_water_g, "g", "--water-g"), c)]


def _delta_t_options(f: Callable[..., Any]) -> Callable[..., Any]:
    options = [
        click.option("--delta-t", type=_number, default=None,
                     help="Corrected temperature change, K (signed)."),
        click.option("--u-delta-t", type=_number, default=None,
                     help="Standard uncertainty of --delta-t, K."),
        click.option("--reduce-json", type=click.Path(dir_okay=False, path_type=Path),
                     default=None,
                     help="Take ΔT and u(ΔT) from the JSON that 'heatlog reduce --json' printed."),
    ]  # fmt: skip
    for opt in reversed(options):
        f = opt(f)
    return f


def _delta_t(delta_t: float | None, u_delta_t: float | None, reduce_json: Path | None) -> Any:
    if reduce_json is not None:
        if delta_t is not None:
            raise InputError("give either --delta-t or --reduce-json, not both")
        try:
            data = json.loads(reduce_json.read_text(encoding="utf-8"))
            return _inp(float(data["delta_t_K"]), float(data["u_delta_t_K"]), "K", "ΔT")
        except FileNotFoundError:
            raise InputError(f"{reduce_json}: no such file") from None
        except (ValueError, KeyError, TypeError):
            raise InputError(
                f"{reduce_json}: expected the JSON of 'heatlog reduce --json' with "
                "'delta_t_K' and 'u_delta_t_K'"
            ) from None
    if delta_t is None or u_delta_t is None:
        raise InputError("give --delta-t and --u-delta-t (or --reduce-json FILE)")
    return _inp(delta_t, u_delta_t, "K", "--delta-t")


_allow_negative = click.option(
    "--allow-negative",
    is_flag=True,
    help="Print a significantly negative C_cal instead of refusing it.",
)


def _report(
    as_json: bool,
    budget: Any,
    caution: str,
    extra: dict[str, Any] | None = None,
    allow_negative: bool = False,
) -> None:
    from heatlog.inputgate import check_constant

    flag = None
    if budget.unit == "J/K":
        flag = check_constant(budget.value, budget.u, "C_cal", allow_negative=allow_negative)
    payload: dict[str, Any] = {
        "value": budget.value,
        "unit": budget.unit,
        "standard_uncertainty": budget.u,
        "expanded_uncertainty": budget.expanded,
        "coverage_factor": budget.k,
        "budget": budget.to_dict(),
        "caution": caution,
        "findings": [] if flag is None else [flag.to_dict()],
    }
    payload.update(extra or {})

    def text() -> str:
        lines = [budget.table()]
        ref = payload.get("reference")
        if ref:
            lines.append(
                f"Reference: {ref['process']}, ΔH = {ref['dh']:.5g} {ref['unit']}, "
                f"u = {ref['u_dh']:.2g} {ref['unit']} (k = 1) at {ref['temperature_C']:g} °C and "
                f"{ref['concentration']:.4g} {ref['concentration_unit']} "
                f"({ref['conditions']}; {ref['source']})"
            )
        he = payload.get("heater_energy")
        if he:
            lines.append(
                f"Heater energy ∫V·I dt = {he['energy_J']:.5g} J, U(k=2) = {he['U_energy_J']:.2g} J "
                f"from the logged {he['monitor']}: on at {he['t_on_s']:.1f} s, off at "
                f"{he['t_off_s']:.1f} s (u = {he['u_t_on_s']:.2g} s, {he['u_t_off_s']:.2g} s, k=1); "
                f"its power changed by {100 * he['power_change_rel']:+.2f} % while on"
            )
        if flag is not None:
            lines.append(f"Note: {flag.message}; {flag.action}.")
        if caution:
            lines.append(caution)
        return "\n".join(lines)

    emit(as_json, payload, text)


@click.group("calibrate")
def calibrate() -> None:
    """Find the calorimeter's own heat capacity (C_cal, J/K) with an uncertainty budget."""


def _electrical_missing(
    voltage, u_voltage, current, u_current, power, u_power, power_log, u_power_rel,
    seconds, t_on, t_off, u_seconds, delta_t, u_delta_t, reduce_json, solute, molality, cp, u_cp,
    monitor_log=None, shunt_ohm=None, u_shunt_rel=None,
) -> list[str]:  # fmt: skip
    """Every input `calibrate electrical` still needs, so one error lists them all."""
    missing: list[str] = []
    if voltage is None and power is None and power_log is None and monitor_log is None:
        missing.append(
            "the heater energy: --voltage and --current, or --power, or --power-log, or --monitor-log"
        )
    if monitor_log is not None:
        missing += [
            f"{name} ({what})"
            for name, value, what in (
                ("--shunt-ohm", shunt_ohm, "the monitor's shunt resistor, ohm"),
                ("--u-shunt-rel", u_shunt_rel, "relative standard uncertainty of the shunt"),
            )
            if value is None
        ]
    elif power_log is not None:
        if u_power_rel is None:
            missing.append("--u-power-rel (relative standard uncertainty of the logged power)")
    else:
        if seconds is None and (t_on is None or t_off is None):
            missing.append("--seconds, or both --on and --off (the heating time)")
        if u_seconds is None:
            missing.append("--u-seconds (standard uncertainty of the heating time)")
        if voltage is not None:
            missing += [
                f"{name} ({what})"
                for name, value, what in (
                    ("--current", current, "heater current, A"),
                    ("--u-voltage", u_voltage, "standard uncertainty of the voltage"),
                    ("--u-current", u_current, "standard uncertainty of the current"),
                )
                if value is None
            ]
        if power is not None and u_power is None:
            missing.append("--u-power (standard uncertainty of the power)")
    if reduce_json is None:
        if delta_t is None:
            missing.append("--delta-t (or --reduce-json FILE)")
        if u_delta_t is None:
            missing.append("--u-delta-t (standard uncertainty of ΔT)")
    if cp is not None and u_cp is None:
        missing.append("--u-cp (standard uncertainty of --cp)")
    if solute is not None and cp is None and molality is None:
        missing.append("--molality (mol per kg of water, for --solute)")
    return missing


@calibrate.command("electrical")
@click.option("--voltage", type=_number, default=None, help="Heater voltage, V (4-wire sense).")
@click.option("--u-voltage", type=_number, default=None, help="Standard uncertainty, V.")
@click.option("--current", type=_number, default=None, help="Heater current, A.")
@click.option("--u-current", type=_number, default=None, help="Standard uncertainty, A.")
@click.option(
    "--power", type=_number, default=None, help="Steady heater power, W (instead of V, I)."
)
@click.option("--u-power", type=_number, default=None, help="Standard uncertainty, W.")
@click.option(
    "--power-log",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="CSV with time_s and power_W columns, integrated by the trapezoid rule.",
)
@click.option(
    "--u-power-rel",
    type=_number,
    default=None,
    help="Relative standard uncertainty of the logged power's scale (e.g. 0.002).",
)
@click.option(
    "--monitor-log",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="CSV from `heatlog pull` holding a logged INA226/INA219: the energy is ∫V·I dt, "
    "with the switching instants found from the current.",
)
@click.option(
    "--monitor",
    type=click.Choice(["ina226", "ina219"]),
    default="ina226",
    show_default=True,
    help="The monitor that logged --monitor-log (its gain and offset errors enter the budget).",
)
@click.option("--bus-col", default="ch1_bus_V", show_default=True, help="Bus-voltage column.")
@click.option("--shunt-col", default="ch2_shunt_V", show_default=True, help="Shunt-voltage column.")
@click.option("--shunt-ohm", type=_number, default=None, help="The shunt resistor, ohm.")
@click.option(
    "--u-shunt-rel",
    type=_number,
    default=None,
    help="Relative standard uncertainty of the shunt (tolerance/√3, or its calibration's u).",
)
@click.option("--seconds", type=_number, default=None, help="Heating time, s.")
@click.option("--on", "t_on", type=_number, default=None, help="Heater switched on at, s.")
@click.option("--off", "t_off", type=_number, default=None, help="Heater switched off at, s.")
@click.option(
    "--u-seconds", type=_number, default=None, help="Standard uncertainty of the time, s."
)
@_delta_t_options
@_contents_options
@_allow_negative
@json_option
def electrical(
    voltage, u_voltage, current, u_current, power, u_power, power_log, u_power_rel,
    monitor_log, monitor, bus_col, shunt_col, shunt_ohm, u_shunt_rel, seconds, t_on, t_off,
    u_seconds, delta_t, u_delta_t, reduce_json,
    water_g, u_water_g, temp_c, solute, molality, cp, u_cp, allow_negative, as_json,
) -> None:  # fmt: skip
    """Electrical calibration: Q = V·I·t (or P·t, ∫P dt, or ∫V·I dt from a logged monitor),
    C_cal = Q/ΔT − m·c_p."""
    from heatlog.energetics import electrical_calibration, electrical_energy, power_energy
    from heatlog.energetics.calorimeter import logged_energy

    ways = sum(x is not None for x in (voltage, power, power_log, monitor_log))
    if ways > 1:
        raise InputError(
            "give exactly one of --voltage/--current, --power, --power-log or --monitor-log"
        )
    missing = _electrical_missing(
        voltage, u_voltage, current, u_current, power, u_power, power_log, u_power_rel,
        seconds, t_on, t_off, u_seconds, delta_t, u_delta_t, reduce_json, solute, molality, cp,
        u_cp, monitor_log, shunt_ohm, u_shunt_rel,
    )  # fmt: skip
    if missing:
        raise InputError("missing input(s), all at once: " + "; ".join(missing))
    extra: dict[str, Any] = {}
    if monitor_log is not None:
        from heatlog.csvtable import read_columns
        from heatlog.energetics.heater_energy import heater_energy

        cols = read_columns(
            monitor_log, ["time_s", bus_col, shunt_col], min_rows=5, what="monitor log"
        )
        lookup = {k.lower(): v for k, v in cols.items()}
        he = heater_energy(
            lookup["time_s"], lookup[bus_col.lower()], lookup[shunt_col.lower()],
            shunt_ohm=shunt_ohm, u_shunt_rel=u_shunt_rel, monitor=monitor,
        )  # fmt: skip
        energy = he.budget
        extra["heater_energy"] = he.to_dict()
    elif power_log is not None:
        from heatlog.csvtable import read_columns

        if u_power_rel is None:
            raise InputError("--power-log needs --u-power-rel (relative scale uncertainty)")
        cols = read_columns(power_log, ["time_s", "power_W"], min_rows=3, what="power log")
        energy = logged_energy(cols["time_s"], cols["power_W"], u_power_rel=u_power_rel)
    else:
        if seconds is None:
            if t_on is None or t_off is None:
                raise InputError("give --seconds, or both --on and --off")
            if not t_off > t_on:
                raise InputError(f"--off ({t_off:g} s) must come after --on ({t_on:g} s)")
            seconds = t_off - t_on
        elif t_on is not None or t_off is not None:
            raise InputError("give --seconds or --on/--off, not both")
        if u_seconds is None:
            raise InputError("give --u-seconds (standard uncertainty of the heating time)")
        t = _inp(seconds, u_seconds, "s", "heating time")
        if voltage is not None:
            if current is None or u_voltage is None or u_current is None:
                raise InputError("--voltage needs --current, --u-voltage and --u-current")
            energy = electrical_energy(
                _inp(voltage, u_voltage, "V", "--voltage"),
                _inp(current, u_current, "A", "--current"),
                t,
            )
        else:
            if u_power is None:
                raise InputError("--power needs --u-power")
            energy = power_energy(_inp(power, u_power, "W", "--power"), t)
    contents = _contents(water_g, u_water_g, temp_c, solute, molality, cp, u_cp)
    b = electrical_calibration(energy, _delta_t(delta_t, u_delta_t, reduce_json), contents)
    caution = (
        "Caution: heaters and their leads can burn or shock; keep the heater immersed while on "
        "and follow local electrical rules."
    )
    _report(as_json, b, caution, {"energy_budget": energy.to_dict(), **extra}, allow_negative)


@calibrate.command("mixing")
@click.option("--hot-g", type=_number, required=True, help="Mass of hot water, g.")
@click.option("--hot-c", type=_number, required=True, help="Hot water temperature, °C.")
@click.option(
    "--cold-g", type=_number, required=True, help="Mass of cold water (in the calorimeter), g."
)
@click.option("--cold-c", type=_number, required=True, help="Cold water temperature, °C.")
@click.option(
    "--final-c",
    type=_number,
    required=True,
    help="Final temperature extrapolated to the mixing time, °C.",
)
@click.option("--u-mass", type=_number, required=True, help="Standard uncertainty of each mass, g.")
@click.option(
    "--u-temp",
    type=_number,
    required=True,
    help="Standard uncertainty of the hot and cold temperatures, K.",
)
@click.option(
    "--u-final",
    type=_number,
    default=None,
    help="Standard uncertainty of the extrapolated final temperature, K (default --u-temp).",
)
@click.option(
    "--cp", type=_number, default=None, help="c_p of the water, J/(g·K) (default IAPWS-95)."
)
@click.option("--u-cp", type=_number, default=None, help="Standard uncertainty of --cp.")
@_allow_negative
@json_option
def mixing(
    hot_g, hot_c, cold_g, cold_c, final_c, u_mass, u_temp, u_final, cp, u_cp, allow_negative,
    as_json,
) -> None:  # fmt: skip
    """Method of mixtures: C_cal = [m_h c (T_h − T_f) − m_c c (T_f − T_c)]/(T_f − T_c)."""
    from heatlog.energetics import given_cp, mixing_calibration

    c = None
    if cp is not None:
        if u_cp is None:
            raise InputError("--cp needs --u-cp")
        c = given_cp(cp, u_cp)
    b = mixing_calibration(
        _inp(hot_g, u_mass, "g", "--hot-g"),
        _inp(hot_c, u_temp, "°C", "--hot-c"),
        _inp(cold_g, u_mass, "g", "--cold-g"),
        _inp(cold_c, u_temp, "°C", "--cold-c"),
        _inp(final_c, u_temp if u_final is None else u_final, "°C", "--final-c"),
        cp_hot=c,
        cp_cold=c,
    )
    _report(as_json, b, CAUTION_HOT, None, allow_negative)


@calibrate.command("reaction")
@click.option(
    "--reference",
    type=click.Choice(["tris-hcl", "kcl"]),
    default=None,
    help="A reference process with a published enthalpy.",
)
@click.option("--dh", type=_number, default=None, help="Your own process enthalpy, J/g or J/mol.")
@click.option("--u-dh", type=_number, default=None, help="Standard uncertainty of --dh.")
@click.option("--per", type=click.Choice(["g", "mol"]), default=None, help="Unit of --dh's amount.")
@click.option(
    "--amount",
    type=_number,
    required=True,
    help="Amount of reference substance: g for tris-hcl, mol for kcl, else as --per.",
)
@click.option("--u-amount", type=_number, required=True, help="Standard uncertainty of --amount.")
@click.option(
    "--final-conc",
    type=_number,
    default=None,
    help="Final concentration of the reference process: mol/kg for kcl, g per kg for tris-hcl "
    "(default: --amount per kg of --water-g).",
)
@_delta_t_options
@_contents_options
@_allow_negative
@json_option
def reaction_cmd(
    reference, dh, u_dh, per, amount, u_amount, final_conc, delta_t, u_delta_t, reduce_json,
    water_g, u_water_g, temp_c, solute, molality, cp, u_cp, allow_negative, as_json,
) -> None:  # fmt: skip
    """Calibrate with a reaction or dissolution of known enthalpy (q = −ΔH·amount).

    A reference process is taken at the run's mean temperature (--temp) and final concentration,
    inside the range its published temperature and concentration dependence covers."""
    from heatlog.energetics import REFERENCE_PROCESSES, reaction_calibration

    if (reference is None) == (dh is None):
        raise InputError("give exactly one of --reference or --dh")
    extra: dict[str, Any] = {}
    where: dict[str, Any] = {}
    if reference is not None:
        process = REFERENCE_PROCESSES[reference]
        unit = process.per
        caution = CAUTION_CORROSIVE if process.hazard == "acid" else CAUTION_GENERAL
        if temp_c is None:
            raise InputError(
                f"give --temp, the run's mean temperature: the enthalpy of {reference} depends on it"
            )
        conc = (
            process.concentration(amount, water_g)
            if final_conc is None
            else _inp(final_conc, 0.0, process.conc_unit, "--final-conc").value
        )
        ref_b = process.enthalpy(temp_c, conc)
        where = {"t_c": temp_c, "concentration": conc}
        extra = {
            "reference": {
                "process": process.description,
                "dh": ref_b.value,
                "u_dh": ref_b.u,
                "dh_25C_certified": process.dh.value,
                "u_dh_25C_certified": process.dh.u,
                "unit": process.dh.unit,
                "temperature_C": temp_c,
                "concentration": conc,
                "concentration_unit": process.conc_unit,
                "conditions": process.conditions,
                "source": process.source,
            }
        }
        proc: Any = process
    else:
        if u_dh is None or per is None:
            raise InputError("--dh needs --u-dh and --per g|mol")
        unit = per
        proc = _inp(dh, u_dh, f"J/{per}", "--dh")
        caution = CAUTION_GENERAL
    contents = _contents(water_g, u_water_g, temp_c, solute, molality, cp, u_cp)
    b = reaction_calibration(
        proc,
        _inp(amount, u_amount, unit, "--amount"),
        _delta_t(delta_t, u_delta_t, reduce_json),
        contents,
        **where,
    )
    _report(as_json, b, caution, extra, allow_negative)


reaction_cmd.name = "reaction"


def _value_u(text: str) -> Any:
    for sep in ("±", "+/-", ":"):
        if sep in text:
            a, b = text.split(sep, 1)
            try:
                return _inp(float(a), float(b), "J/K", text)
            except ValueError:
                break
    raise InputError(f"cannot read {text!r}; write each calibration as VALUE:U, e.g. 152.3:1.1")


@calibrate.command("combine")
@click.argument("results", nargs=-1, required=True)
@_allow_negative
@json_option
def combine(results: tuple[str, ...], allow_negative: bool, as_json: bool) -> None:
    """Combine repeated C_cal results (VALUE:U in J/K) into a weighted mean with the scatter."""
    from heatlog.energetics import combine_calibrations

    b = combine_calibrations([_value_u(r) for r in results])
    _report(as_json, b, "", None, allow_negative)


@click.command("hess")
@click.argument("reaction_text", metavar="REACTION")
@click.option("--measured", type=_number, default=None, help="Your measured ΔH, kJ/mol.")
@click.option("--u-measured", type=_number, default=None, help="Its standard uncertainty, kJ/mol.")
@click.option(
    "--table",
    "table_path",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Your own ΔfH rows: CSV with species, phase, dHf_kJ_per_mol, u_kJ_per_mol, source "
    "(used in front of the packaged table).",
)
@click.option(
    "--compilation",
    type=click.Choice(["nbs1982", "codata1989"]),
    default="nbs1982",
    show_default=True,
    help="Packaged table: NBS 1982 (every species), or the CODATA 1989 alternative (few salts).",
)
@json_option
def hess(
    reaction_text: str,
    measured: float | None,
    u_measured: float | None,
    table_path: Path | None,
    compilation: str,
    as_json: bool,
) -> None:
    """Predict a reaction's standard enthalpy (298.15 K) by Hess's law from the cited table.

    Example: heatlog hess "NH4NO3(s) -> NH4+(aq) + NO3-(aq)"
    """
    from heatlog.energetics import compare, reaction, reaction_enthalpy
    from heatlog.energetics.hess import load_formation_table

    table = load_formation_table(table_path, compilation)
    r = reaction(reaction_text, table)
    b = reaction_enthalpy(r, table)
    payload: dict[str, Any] = {"reaction": str(r), "table": table.name, "budget": b.to_dict()}
    payload["value"], payload["unit"], payload["standard_uncertainty"] = b.value, b.unit, b.u
    payload["u_value"], payload["U_value"] = b.u, b.expanded
    payload["coverage_factor"] = b.k
    cmp = None
    if (measured is None) != (u_measured is None):
        raise InputError("give both --measured and --u-measured, or neither")
    if measured is not None and u_measured is not None:
        cmp = compare(_inp(measured, u_measured, "kJ/mol", "--measured"), b)
        payload["comparison"] = cmp.to_dict()
    corrosive = any(any(s in c.name for s in CORROSIVE_SPECIES) for c in b.components)
    caution = CAUTION_CORROSIVE if corrosive else CAUTION_GENERAL
    payload["caution"] = caution

    def text() -> str:
        lines = [b.table(), f"table: {table.name}"]
        if cmp is not None:
            lines.append(
                f"measured {cmp.measured:.4g} kJ/mol, u = {cmp.u_measured:.2g} (k = 1), vs "
                f"predicted {cmp.predicted:.4g} kJ/mol, u = {cmp.u_predicted:.2g} (k = 1): "
                f"difference {cmp.difference:+.3g} kJ/mol, z = {cmp.z:.2f} — {cmp.verdict}"
            )
        lines.append(caution)
        return "\n".join(lines)

    emit(as_json, payload, text)
