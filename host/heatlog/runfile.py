"""Run files: a TOML description of one experiment, so a result can be reproduced from files alone.

A run file names the log, how to read it (columns, probe file and reading chain for raw logs), how
to reduce it, what was in the calorimeter, and either what the run measures (a sample and its
reaction) or what it calibrates (an electrical heater, a reference process). ``heatlog reduce
RUN.toml`` evaluates it. The layout, with every key optional unless marked::

    title = "invented example"
    [log]
    file = "run.csv"              # required; relative to the run file
    time_col = "time_s"
    temp_col = "temp_C"           # a calibrated temperature column, or instead:
    raw_col = "counts"            # raw readings, converted with `probe` (and `chain` for counts)
    chain = "divider:rs=10000,side=low,bits=12,oversample=64"
    probe = "probe.toml"
    env_col = "env_C"             # logged surroundings temperature, °C (reduced against it)
    [reduce]
    method = "auto"   event = 0   event_start_s = …   after_start_s = …   resolution_K = …
    [calorimeter]
    heat_capacity_J_per_K = 38.0  u_heat_capacity_J_per_K = 2.0    # or:
    calibrations = ["cal-1.toml", "cal-2.toml"]                    # run files with [electrical]
    [[contents]]
    name = "water"  mass_g = 150.0  u_mass_g = 0.05  cp = "water"  # or cp = 4.0, u_cp = 0.02
    [electrical]                 # this run calibrates: heater energy
    power_W = 5.0  u_power_W = 0.01  seconds = 300.0  u_seconds = 0.1   # or voltage_V/current_A
    # or the energy ∫V·I dt from a logged INA226/INA219 (columns of the same log):
    monitor = "ina226"  bus_col = "ch1_bus_V"  shunt_col = "ch2_shunt_V"
    shunt_ohm = 0.1  u_shunt_rel = 0.0005          # the shunt's tolerance/√3 or calibration u
    [sample]                     # this run measures
    name = "NH4NO3"  mass_g = 8.0  u_mass_g = 0.002
    molar_mass_g_per_mol = 80.043                  # or taken from the reaction's first reactant
    reaction = "NH4NO3(s) -> NH4+(aq) + NO3-(aq)"  # for the Hess's-law comparison
    formation_table = "my_dhf.csv"  # your own cited ΔfH rows, in front of the NBS 1982 table
    contents_state = "initial"   # [[contents]] describe the cup before the reaction (so ΔH
                                 # refers to the final temperature) or "final" (the initial one)
    delta_cp_J_per_mol_K = -150.0  u_delta_cp_J_per_mol_K = 20.0   # ΔrCp: ΔH moved to 25 °C
    [profile]                    # a long run: heat-release profile (``heatlog profile RUN.toml``)
    box = "box.toml"             # C and G from ``heatlog box fit`` (boxfile.py), or:
    heat_capacity_J_per_K = 2500.0  u_heat_capacity_J_per_K = 50.0     # box + contents + sample
    loss_W_per_K = 0.03  u_loss_W_per_K = 0.002    # or: cooling_fit_after_s = 200000.0
    env_col = "env_C"            # or: env_temp_C = 20.0; u_env_temp_K = 0.5
    flags_col = "status"         # optional; non-zero = probe fault
    sample_mass_g = 100.0  u_sample_mass_g = 0.1  kind = "cement"   # warmer|pack|cement|generic
    threshold_C = …  band_low_C = …  band_high_C = …  u_temp_K = …  resolution_K = …
    rate_window_s = …  gap_factor = 5.0  interpolate_gaps = false  segment = 0
    datum_C = 0.0  activation_K = 5000.0  u_activation_K = …  reference_C = 20.0

Parsing (:func:`parse_run`) and evaluation (:func:`evaluate_run`) are pure; :func:`load_run` and
:func:`read_run_log` do the file reading.
"""

from __future__ import annotations

import dataclasses
import math
import tomllib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Literal

import numpy as np

from heatlog import runschema
from heatlog.csvtable import read_table
from heatlog.energetics import calorimeter, hess, water
from heatlog.energetics.heat import (
    SIGN_CONVENTION,
    Content,
    as_input,
    carry_calibration,
    heat,
    kirchhoff,
    molar_enthalpy,
    specific_enthalpy,
    substitute,
)
from heatlog.energetics.heater_energy import HeaterEnergy, heater_energy
from heatlog.errors import InputError
from heatlog.gum import Budget, Component, Input
from heatlog.inputgate import (
    Finding,
    check_constant,
    check_profile_settings,
    findings_of,
    gate_table,
)
from heatlog.probes import ProbeFile, chain_from_spec, load_probe
from heatlog.profile import ProfileResult, ProfileSettings, analyse_profile, settings_from_table
from heatlog.profile.analysis import _TABLE_KEYS as PROFILE_KEYS
from heatlog.reduce import Reduction, reduce_thermogram
from heatlog.storedpath import resolve_stored
from heatlog.thermogram import Thermogram, read_thermogram_csv


@dataclass(frozen=True)
class LogSpec:
    file: Path
    time_col: str = "time_s"
    temp_col: str = "temp_C"
    raw_col: str | None = None
    chain: str | None = None
    probe: Path | None = None
    extra_cols: tuple[str, ...] = ()  # further columns read beside the temperature
    env_col: str | None = None  # logged surroundings temperature (°C)


@dataclass(frozen=True)
class ContentSpec:
    name: str
    mass_g: Input
    cp: Input | None  # None: water c_p (IAPWS-95) at the run's mean temperature


@dataclass(frozen=True)
class LoggedPowerSpec:
    """The heater's energy from a logged current/voltage monitor (energetics.heater_energy)."""

    monitor: str
    bus_col: str
    shunt_col: str
    shunt_ohm: float
    u_shunt_rel: float


@dataclass(frozen=True)
class ElectricalSpec:
    seconds: Input | None
    power_W: Input | None = None
    voltage_V: Input | None = None
    current_A: Input | None = None
    logged: LoggedPowerSpec | None = None


@dataclass(frozen=True)
class SampleSpec:
    name: str
    mass_g: Input
    molar_mass_g_per_mol: float | None = None
    reaction: str | None = None
    formation_table: Path | None = None  # the user's ΔfH rows (hess.load_formation_table)
    contents_state: str = "initial"  # "initial": ΔH at the final temperature; "final": initial
    delta_cp: Input | None = None  # ΔrCp, J/(K·mol), for the Kirchhoff step to 25 °C


@dataclass(frozen=True)
class RunSpec:
    path: Path
    title: str
    log: LogSpec
    reduce: Mapping[str, Any]
    contents: tuple[ContentSpec, ...]
    heat_capacity: Input | None = None
    calibrations: tuple[Path, ...] = ()
    electrical: ElectricalSpec | None = None
    sample: SampleSpec | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)
    profile: ProfileSettings | None = None
    profile_columns: Mapping[str, str] = field(default_factory=dict)  # "env", "flags"


_REDUCE_KEYS = {"method", "event", "event_start_s", "after_start_s", "resolution_K"}


def _table(doc: Mapping[str, Any], key: str, where: str) -> Mapping[str, Any]:
    value = doc.get(key, {})
    if not isinstance(value, Mapping):
        raise InputError(f"{where}: [{key}] must be a table")
    return value


def _number(doc: Mapping[str, Any], key: str, where: str, default: float | None = None) -> float:
    value = doc.get(key, default)
    if value is None:
        raise InputError(f"{where}: missing {key}")
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise InputError(f"{where}: {key} must be a number, got {value!r}")
    return float(value)


def _quantity(
    doc: Mapping[str, Any], key: str, unit: str, where: str, u_default: float = 0.0
) -> Input:
    value = _number(doc, key, where)
    u = _number(doc, f"u_{key}", where, u_default)
    if u < 0:
        raise InputError(f"{where}: u_{key} must not be negative")
    return Input(value, u, unit)


def _path(base: Path, value: Any, where: str) -> Path:
    if not isinstance(value, str) or not value:
        raise InputError(f"{where}: expected a file name, got {value!r}")
    return resolve_stored(value, base)  # either separator, on any system (storedpath.py)


def _with_box(table: Mapping[str, Any], base: Path, where: str) -> Mapping[str, Any]:
    """A ``[profile]`` table with ``box = "box.toml"`` replaced by the box file's C and G."""
    if "box" not in table:
        return table
    from heatlog.boxfile import load_box

    given = [k for k in ("heat_capacity_J_per_K", "loss_W_per_K") if k in table]
    if given:
        raise InputError(f"{where} [profile]: give box or {' and '.join(given)}, not both")
    merged = {k: v for k, v in table.items() if k != "box"}
    merged.update(load_box(_path(base, table["box"], where)).profile_keys())
    return merged


def parse_run(doc: Mapping[str, Any], path: Path) -> RunSpec:
    """Check a run file's parsed TOML and turn it into a :class:`RunSpec` (no file access)."""
    where = str(path)
    base = path.parent
    runschema.check_run_document(doc, where)
    log = _table(doc, "log", where)
    if "file" not in log:
        raise InputError(f'{where}: [log] needs file = "…" (the logged CSV)')
    raw_col = log.get("raw_col")
    if raw_col is not None and "probe" not in log:
        raise InputError(f'{where}: [log] raw_col needs probe = "…" to convert raw readings')
    log_spec = LogSpec(
        file=_path(base, log["file"], where),
        time_col=str(log.get("time_col", "time_s")),
        temp_col=str(log.get("temp_col", "temp_C")),
        raw_col=None if raw_col is None else str(raw_col),
        chain=None if log.get("chain") is None else str(log["chain"]),
        probe=None if log.get("probe") is None else _path(base, log["probe"], where),
        env_col=None if log.get("env_col") is None else str(log["env_col"]),
    )
    red = dict(_table(doc, "reduce", where))
    unknown = set(red) - _REDUCE_KEYS
    if unknown:
        key = sorted(unknown)[0]
        raise InputError(
            f"{where}: [reduce] does not know {sorted(unknown)}{runschema.closest(key, _REDUCE_KEYS)}; "
            f"use {sorted(_REDUCE_KEYS)}"
        )

    contents = []
    for i, item in enumerate(doc.get("contents", [])):
        w = f"{where} [[contents]] #{i + 1}"
        if not isinstance(item, Mapping) or "name" not in item:
            raise InputError(f"{w}: needs name and mass_g")
        cp_value = item.get("cp", "water")
        cp = None if cp_value == "water" else _quantity(item, "cp", "J/(g·K)", w)
        contents.append(ContentSpec(str(item["name"]), _quantity(item, "mass_g", "g", w), cp))

    cal = _table(doc, "calorimeter", where)
    heat_capacity = None
    calibrations: tuple[Path, ...] = ()
    if "heat_capacity_J_per_K" in cal:
        heat_capacity = _quantity(cal, "heat_capacity_J_per_K", "J/K", f"{where} [calorimeter]")
    elif "calibrations" in cal:
        files = cal["calibrations"]
        if not isinstance(files, list) or not files:
            raise InputError(f"{where}: [calorimeter] calibrations must be a list of run files")
        calibrations = tuple(_path(base, f, where) for f in files)

    electrical = None
    if "electrical" in doc:
        e = _table(doc, "electrical", where)
        w = f"{where} [electrical]"
        if "monitor" in e:
            for key in ("bus_col", "shunt_col"):
                if not isinstance(e.get(key), str):
                    raise InputError(f'{w}: monitor needs {key} = "…" (a column of the log)')
            logged = LoggedPowerSpec(
                str(e["monitor"]),
                e["bus_col"],
                e["shunt_col"],
                _number(e, "shunt_ohm", w),
                _number(e, "u_shunt_rel", w),
            )
            electrical = ElectricalSpec(None, logged=logged)
            log_spec = replace(log_spec, extra_cols=(logged.bus_col, logged.shunt_col))
        elif "power_W" in e:
            electrical = ElectricalSpec(
                _quantity(e, "seconds", "s", w), power_W=_quantity(e, "power_W", "W", w)
            )
        elif "voltage_V" in e and "current_A" in e:
            electrical = ElectricalSpec(
                _quantity(e, "seconds", "s", w),
                voltage_V=_quantity(e, "voltage_V", "V", w),
                current_A=_quantity(e, "current_A", "A", w),
            )
        else:
            raise InputError(
                f"{w}: give power_W, or voltage_V and current_A, and seconds; or monitor with "
                "bus_col, shunt_col, shunt_ohm and u_shunt_rel"
            )

    sample = None
    if "sample" in doc:
        s = _table(doc, "sample", where)
        w = f"{where} [sample]"
        sample = SampleSpec(
            name=str(s.get("name", "sample")),
            mass_g=_quantity(s, "mass_g", "g", w),
            molar_mass_g_per_mol=None
            if "molar_mass_g_per_mol" not in s
            else _number(s, "molar_mass_g_per_mol", w),
            reaction=None if s.get("reaction") is None else str(s["reaction"]),
            formation_table=None
            if s.get("formation_table") is None
            else _path(base, s["formation_table"], w),
            contents_state=str(s.get("contents_state", "initial")),
            delta_cp=None
            if "delta_cp_J_per_mol_K" not in s
            else _quantity(s, "delta_cp_J_per_mol_K", "J/(K·mol)", w),
        )
        if sample.contents_state not in ("initial", "final"):
            raise InputError(
                f'{w}: contents_state must be "initial" or "final", got {sample.contents_state!r}'
            )
    if electrical is not None and sample is not None:
        raise InputError(
            f"{where}: a run either calibrates ([electrical]) or measures ([sample]), not both"
        )
    if sample is not None and heat_capacity is None and not calibrations:
        raise InputError(
            f"{where}: [calorimeter] needs heat_capacity_J_per_K or calibrations to turn ΔT into heat"
        )
    if isinstance(doc.get("profile"), Mapping):
        runschema.check_profile_keys(doc["profile"], PROFILE_KEYS | {"box"}, where)
    profile, profile_columns = (
        settings_from_table(_with_box(_table(doc, "profile", where), base, where), where)
        if "profile" in doc
        else (None, {})
    )
    return RunSpec(
        path=path,
        title=str(doc.get("title", path.stem)),
        log=log_spec,
        reduce=red,
        contents=tuple(contents),
        heat_capacity=heat_capacity,
        calibrations=calibrations,
        electrical=electrical,
        sample=sample,
        profile=profile,
        profile_columns=profile_columns,
    )


def load_run(path: str | Path) -> RunSpec:
    """Read and check a run file."""
    p = Path(path)
    try:
        doc = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"{p}: no such run file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{p}: cannot read the run file ({exc})") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{p}: not valid TOML ({exc})") from None
    return parse_run(doc, p)


def read_log_arrays(
    log: LogSpec,
    extra: Sequence[str] = (),
    probe: ProbeFile | None = None,
    *,
    kind: Literal["thermogram", "profile"] = "profile",
    temperature_channels: Sequence[str] = (),
    run_kind: str = "generic",
) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray], dict[str, Any]]:
    """Time, temperature (through the probe file for raw readings), ``extra`` columns and
    metadata, in file order and unchecked for order (long runs handle clock resets themselves).
    ``probe`` replaces the run file's probe file (the archive applies a recorded calibration).
    Every row has passed the input gate (:mod:`heatlog.inputgate`, ``kind`` "thermogram" or
    "profile"); its findings are in the metadata under ``findings``."""
    temp_col = log.temp_col if log.raw_col is None else log.raw_col
    table = read_table(
        log.file, [log.time_col, temp_col, *extra], what="log", clock_col=log.time_col
    )
    gated = gate_table(
        table,
        log.time_col,
        temp_col,
        extra,
        raw=log.raw_col is not None,
        where=str(log.file),
        kind=kind,
        temperature_channels=temperature_channels,
        run_kind=run_kind,
    )
    time_s, reading, extras = gated.time_s, gated.temp_C, gated.channels
    meta: dict[str, Any] = {"source": str(log.file), "findings": gated.findings}
    if log.raw_col is None:
        return time_s, reading, extras, meta
    if probe is None:
        assert log.probe is not None  # parse_run requires it
        probe = load_probe(log.probe)
    if log.chain is None:
        resistance = reading
    else:
        chain = chain_from_spec(log.chain)
        resistance = chain.to_resistance(reading)
        meta["count_step_K"] = float(np.median(chain.reading(probe.model, reading).step_K))
    temp = probe.model.resistance_to_temperature(resistance)
    meta.update(probe_id=probe.id, probe_u_K=probe.uncertainty_K, probe_file=probe)
    return time_s, np.asarray(temp, dtype=np.float64), extras, meta


def read_run_log(log: LogSpec, probe: ProbeFile | None = None) -> Thermogram:
    """The run's thermogram: a temperature column, or raw readings through the probe file
    (or through ``probe``, when given)."""
    env = (log.env_col,) if log.env_col else ()
    if log.raw_col is None and not log.extra_cols:
        th = read_thermogram_csv(
            log.file, time_col=log.time_col, temp_col=log.temp_col, channels=env
        )
        if not env:
            return th
        return replace(th, metadata={**th.metadata, "env_col": log.env_col})
    time_s, temp, extras, meta = read_log_arrays(
        log, (*env, *log.extra_cols), probe=probe, kind="thermogram", temperature_channels=env
    )
    if env:
        meta["env_col"] = log.env_col
    return Thermogram(time_s, temp, channels=extras, metadata=meta)


@dataclass(frozen=True, eq=False)
class RunResult:
    """Everything a run file yields: the reduction and, when the inputs allow, heat and enthalpy."""

    spec: RunSpec
    reduction: Reduction
    mean_temp_C: float
    contents: tuple[Content, ...]
    c_cal: Budget | None = None  # what this run calibrates, or the constant it used
    heat_J: Budget | None = None
    molar: Budget | None = None
    specific: Budget | None = None
    hess: hess.Comparison | None = None
    predicted: Budget | None = None
    heater: HeaterEnergy | None = None  # the energy from a logged monitor, when that was used
    hess_warning: str | None = None  # why no prediction could be made (the measurement stands)
    enthalpy_temp_C: float | None = None  # the temperature the measured ΔH refers to
    enthalpy_temp_basis: str = ""  # why that temperature (which heat capacity was used)
    molar_25: Budget | None = None  # ΔH moved to 25 °C with the run file's ΔrCp (Kirchhoff)
    findings: tuple[Finding, ...] = ()  # the input gate's, this run's and its calibrations'

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"title": self.spec.title, "run_file": str(self.spec.path)}
        out.update(self.reduction.to_dict())
        out["mean_temp_C"] = self.mean_temp_C
        if self.c_cal is not None:
            key = "calorimeter_constant" if self.spec.electrical else "calorimeter_constant_used"
            out[key] = {
                "value_J_per_K": self.c_cal.value,
                "u_J_per_K": self.c_cal.u,
                "budget": self.c_cal.to_dict(),
            }
        if self.heater is not None:
            out["heater_energy"] = self.heater.to_dict()
        if self.heat_J is not None:
            out.update(
                heat_J=self.heat_J.value, u_heat_J=self.heat_J.u, heat_budget=self.heat_J.to_dict()
            )
        if self.molar is not None:
            out.update(
                enthalpy_kJ_per_mol=self.molar.value,
                u_enthalpy_kJ_per_mol=self.molar.u,
                U_enthalpy_kJ_per_mol=self.molar.expanded,
                enthalpy_budget=self.molar.to_dict(),
            )
        if self.enthalpy_temp_C is not None:
            out["enthalpy_temperature_C"] = self.enthalpy_temp_C
            out["enthalpy_temperature_basis"] = self.enthalpy_temp_basis
        if self.molar_25 is not None:
            out.update(
                enthalpy_25C_kJ_per_mol=self.molar_25.value,
                u_enthalpy_25C_kJ_per_mol=self.molar_25.u,
                U_enthalpy_25C_kJ_per_mol=self.molar_25.expanded,
                enthalpy_25C_budget=self.molar_25.to_dict(),
            )
        if self.molar is not None:
            out["coverage_factor"] = self.molar.k
        if self.specific is not None:
            out.update(enthalpy_J_per_g=self.specific.value, u_enthalpy_J_per_g=self.specific.u)
        if self.hess is not None and self.predicted is not None:
            out["hess"] = {
                "predicted_kJ_per_mol": self.predicted.value,
                "u_predicted_kJ_per_mol": self.predicted.u,
                "U_predicted_kJ_per_mol": self.predicted.expanded,
                "coverage_factor": self.predicted.k,
                "reference_temperature_C": 25.0,
                "comparison": self.hess.to_dict(),
            }
        if self.hess_warning is not None:
            out["hess_warning"] = self.hess_warning
        out["sign_convention"] = SIGN_CONVENTION
        out["findings"] = [f.to_dict() for f in self.findings]
        return out


def _contents(spec: RunSpec, mean_temp_C: float) -> tuple[Content, ...]:
    out = []
    for c in spec.contents:
        cp = c.cp if c.cp is not None else water.water_cp_input(mean_temp_C)
        out.append(Content(c.name, c.mass_g, cp))
    return tuple(out)


def with_probe_curve(red: Reduction, probe: ProbeFile | None) -> Reduction:
    """Add the probe calibration curve's share of u(ΔT) to the reduction's budget.

    The rise runs from the fore-period line at the event start, T₁, to T₁ + ΔT; the curve's
    error in that difference is split into the probe's independent modes
    (:meth:`ProbeFile.curve_modes`), one budget row each, so that two rises read with the same
    probe (a calibration and a measurement) stay correlated in a combined budget.
    """
    if probe is None or not math.isfinite(red.delta_t_K):
        return red
    t1 = float(red.drift.fore(red.event_start_s))
    ends = probe.model.temperature_to_resistance(np.array([t1, t1 + red.delta_t_K]))
    modes = probe.curve_modes(float(ends[0]), float(ends[1]))
    if not modes:
        return red
    rows = tuple(
        Component(
            f"probe {probe.id} curve mode {i + 1}",
            0.0,
            1.0,
            k,
            "",
            note=f"calibration curve ({probe.calibration_date}), {t1:.2f} → {t1 + red.delta_t_K:.2f} °C",
        )
        for i, k in enumerate(modes)
    )
    budget = replace(red.budget, components=red.budget.components + rows)
    return replace(red, budget=budget, u_delta_t_K=budget.u)


def reduce_with_settings(thermogram: Thermogram, r: Mapping[str, Any]) -> Reduction:
    """Reduce with a run file's ``[reduce]`` settings (method, event, event_start_s,
    after_start_s, resolution_K; the resolution defaults to the log's count step), with the
    probe calibration curve in the budget when the log was read through a probe file."""
    resolution = r.get("resolution_K", thermogram.metadata.get("count_step_K"))
    red = reduce_thermogram(
        thermogram,
        method=str(r.get("method", "auto")),
        event_index=int(r.get("event", 0)),
        event_start_s=r.get("event_start_s"),
        after_start_s=r.get("after_start_s"),
        resolution_K=None if resolution is None else float(resolution),
        env_channel=thermogram.metadata.get("env_col"),
    )
    return with_probe_curve(red, thermogram.metadata.get("probe_file"))


def _energy(e: ElectricalSpec, thermogram: Thermogram) -> tuple[Budget, HeaterEnergy | None]:
    if e.logged is not None:
        g = e.logged
        for col in (g.bus_col, g.shunt_col):
            if col not in thermogram.channels:
                raise InputError(f"the log has no column {col!r} for the heater monitor")
        he = heater_energy(
            thermogram.time_s,
            thermogram.channels[g.bus_col],
            thermogram.channels[g.shunt_col],
            shunt_ohm=g.shunt_ohm,
            u_shunt_rel=g.u_shunt_rel,
            monitor=g.monitor,
        )
        return he.budget, he
    assert e.seconds is not None
    if e.power_W is not None:
        return calorimeter.power_energy(e.power_W, e.seconds), None
    assert e.voltage_V is not None and e.current_A is not None
    return calorimeter.electrical_energy(e.voltage_V, e.current_A, e.seconds), None


def _molar_mass(sample: SampleSpec) -> float | None:
    if sample.molar_mass_g_per_mol is not None:
        return sample.molar_mass_g_per_mol
    if sample.reaction is None:
        return None
    reaction = hess.reaction(sample.reaction)
    first = reaction.reactants[0]
    # Per mole of reaction as written: the extent is n(sample)/ν, so the mass per extent is M·ν.
    return first.species.molar_mass * float(first.coefficient)


def evaluate_run(
    spec: RunSpec,
    thermogram: Thermogram,
    *,
    calibrate: Callable[[Path], RunResult] | None = None,
    allow_negative: bool = False,
) -> RunResult:
    """Reduce the run and derive what its inputs allow (pure apart from ``calibrate``).

    ``calibrate`` evaluates a calibration run file named in ``[calorimeter] calibrations``; the
    CLI passes one that loads and evaluates the file. A significantly negative calorimeter
    constant is refused unless ``allow_negative`` (:func:`heatlog.inputgate.check_constant`).
    """
    runschema.refuse_profile_for_reduce(spec.profile is not None, str(spec.path))
    found_in: list[Finding] = list(findings_of(thermogram))
    red = reduce_with_settings(thermogram, spec.reduce)
    lo, hi = red.fore_start_s, red.after_end_s
    mask = (thermogram.time_s >= lo) & (thermogram.time_s <= hi)
    mean_temp = (
        float(np.mean(thermogram.temp_C[mask])) if mask.any() else float(np.mean(thermogram.temp_C))
    )
    contents = _contents(spec, mean_temp)
    dt = red.budget

    if spec.electrical is not None:
        energy, heater = _energy(spec.electrical, thermogram)
        c = calorimeter.electrical_calibration(energy, as_input(dt), list(contents))
        c = substitute(c, "ΔT", dt)  # ΔT's own parts, so a later run can share its probe rows
        flag = check_constant(c.value, c.u, str(spec.path), allow_negative=allow_negative)
        found_in += [flag] if flag else []
        return RunResult(
            spec, red, mean_temp, contents, c_cal=c, findings=tuple(found_in), heater=heater
        )

    c_cal: Budget | Input | None = spec.heat_capacity
    if spec.calibrations:
        if calibrate is None:
            raise InputError(f"{spec.path}: calibration run files need a loader")
        constants: list[Budget] = []
        for p in spec.calibrations:
            cal_run = calibrate(p)
            found = cal_run.c_cal
            runschema.refuse_non_calibration(
                cal_run.spec.electrical is not None and found is not None, str(p), str(spec.path)
            )
            assert found is not None
            constants.append(found)
            found_in += [
                replace(f, message=f"calibration {p.name}: {f.message}") for f in cal_run.findings
            ]
        c_cal = constants[0] if len(constants) == 1 else calorimeter.combine_calibrations(constants)
        flag = check_constant(c_cal.value, c_cal.u, str(spec.path), allow_negative=allow_negative)
        found_in += [flag] if flag and len(constants) > 1 else []
    if spec.sample is None:
        found_in.append(
            Finding(
                "no-sample",
                "flag",
                "the run file has neither [sample] nor [electrical]: only ΔT"
                + ("" if c_cal is None else " and the heat q")
                + " are given",
                "add a [sample] table (name, mass_g, u_mass_g) for ΔH per gram and per mole",
            )
        )
    if c_cal is None:
        return RunResult(spec, red, mean_temp, contents, findings=tuple(found_in))
    c_budget = (
        c_cal
        if isinstance(c_cal, Budget)
        else Budget(
            "C_cal (given in the run file)",
            c_cal.value,
            "J/K",
            (Component("C_cal", c_cal.value, c_cal.u, 1.0, "J/K", note="given in the run file"),),
        )
    )

    def carried(b: Budget) -> Budget:
        # ΔT brings its own parts; a constant from calibration runs brings its inputs, the
        # water c_p and the probe curve rows it shares with this run merging into one row each
        b = substitute(b, "ΔT", dt)
        return carry_calibration(b, c_cal) if isinstance(c_cal, Budget) else b

    liquid = [c for c in contents if spec.sample is None or c.name != spec.sample.name]
    for code, message, action in runschema.proportion_findings(
        c_budget.value,
        sum(c.mass_g.value * c.cp.value for c in contents),
        sum(c.mass_g.value for c in liquid),
        None if spec.sample is None else spec.sample.mass_g.value,
    ):
        found_in.append(Finding(code, "flag", message, action))
    q = carried(heat(dt, c_cal, list(contents)))
    result = RunResult(
        spec, red, mean_temp, contents, c_cal=c_budget, heat_J=q, findings=tuple(found_in)
    )
    sample = spec.sample
    if sample is None:
        return result
    spec_h = carried(specific_enthalpy(dt, c_cal, list(contents), sample.mass_g))
    mm = _molar_mass(sample)
    molar = predicted = comparison = molar_25 = None
    warning: str | None = None
    # The heat capacity used decides the temperature ΔH refers to (Hess cycle): the initial
    # state's (reactants: water + undissolved sample) gives ΔH at the final temperature, the
    # final state's (products) ΔH at the initial one. T₁ is the fore-period line at the event.
    t1 = float(red.drift.fore(red.event_start_s))
    if sample.contents_state == "initial":
        t_ref = t1 + red.delta_t_K
        basis = "final temperature: the contents' heat capacity is that of the initial state"
    else:
        t_ref = t1
        basis = "initial temperature: the contents' heat capacity is that of the final state"
    u_t_ref = float(thermogram.metadata.get("probe_u_K") or 0.1)
    if mm is not None:
        n = Input(
            sample.mass_g.value / mm,
            sample.mass_g.u / mm,
            "mol",
            note=f"{sample.name}: m/M, M = {mm:.4f} g/mol",
        )
        molar = carried(molar_enthalpy(dt, c_cal, list(contents), n))
        if sample.delta_cp is not None:
            # Kirchhoff to 25 °C; u(T) is the probe's (0.1 K without one: common practice, no
            # source); the measured ΔH keeps its own rows.
            k25 = kirchhoff(molar, Input(t_ref, u_t_ref, "°C"), sample.delta_cp)
            molar_25 = substitute(k25, "ΔH(T)", molar)
        if sample.reaction is not None:
            # A table that lacks a species costs the prediction, never the measured result.
            try:
                table = hess.load_formation_table(sample.formation_table)
                predicted = hess.reaction_enthalpy(sample.reaction, table)
                comparison = hess.compare(molar if molar_25 is None else molar_25, predicted)
                if molar_25 is None and abs(t_ref - 25.0) > 0.5:
                    warning = (
                        f"the measured ΔH refers to {t_ref:.2f} °C and the prediction to 25 °C; no "
                        "ΔrCp given ([sample] delta_cp_J_per_mol_K), so no Kirchhoff step was "
                        "applied and the comparison carries that difference"
                    )
            except hess.MissingSpecies as exc:
                warning = f"no Hess's-law prediction: {exc}"
    return RunResult(
        spec,
        red,
        mean_temp,
        contents,
        c_cal=result.c_cal,
        heat_J=q,
        molar=molar,
        specific=spec_h,
        hess=comparison,
        predicted=predicted,
        hess_warning=warning,
        enthalpy_temp_C=t_ref if molar is not None else None,
        enthalpy_temp_basis=basis,
        molar_25=molar_25,
        findings=tuple(found_in),
    )


def run_file(
    path: str | Path, _seen: Sequence[Path] = (), *, allow_negative: bool = False
) -> RunResult:
    """Load, read and evaluate a run file, following its calibration run files."""
    spec = load_run(path)
    runschema.refuse_profile_for_reduce(spec.profile is not None, str(spec.path))
    here = spec.path.resolve()
    if any(p.resolve() in (*_seen, here) for p in spec.calibrations):
        raise InputError(f"{spec.path}: calibration run files refer to each other in a loop")
    thermogram = read_run_log(spec.log)
    return evaluate_run(
        spec,
        thermogram,
        calibrate=lambda p: run_file(p, (*_seen, here), allow_negative=allow_negative),
        allow_negative=allow_negative,
    )


def profile_run(spec: RunSpec) -> ProfileResult:
    """Read the log of a run file with a ``[profile]`` table (its environment and flag columns
    too) and compute the long-run heat profile (``heatlog profile RUN.toml``). The input gate's
    findings are added to the result's notes; :func:`profile_run_checked` returns them apart."""
    result, findings = profile_run_checked(spec)
    return replace(result, notes=tuple(result.notes) + tuple(f.text() for f in findings))


def profile_run_checked(spec: RunSpec) -> tuple[ProfileResult, tuple[Finding, ...]]:
    """:func:`profile_run` with the input gate's findings returned beside the result."""
    if spec.profile is None:
        raise InputError(f"{spec.path}: the run file has no [profile] table")
    check_profile_settings(spec.profile, f"{spec.path} [profile]")
    cols = spec.profile_columns
    extra = [c for c in (cols.get("env"), cols.get("flags")) if c]
    env = [cols["env"]] if "env" in cols else []
    time_s, temp, extras, meta = read_log_arrays(
        spec.log, extra, kind="profile", temperature_channels=env, run_kind=spec.profile.kind
    )
    settings = spec.profile
    probe = meta.get("probe_file")  # raw readings: the probe file's time constant, if it has one
    if settings.probe_tau is None and probe is not None and probe.time_constant_s is not None:
        tau = Input(probe.time_constant_s, probe.u_time_constant_s or 0.0, "s", note=probe.id)
        settings = dataclasses.replace(settings, probe_tau=tau)
    result = analyse_profile(
        time_s,
        temp,
        settings,
        env_C=extras.get(cols["env"]) if "env" in cols else None,
        flags=extras.get(cols["flags"]) if "flags" in cols else None,
        where=str(spec.log.file),
    )
    return result, tuple(meta["findings"])
