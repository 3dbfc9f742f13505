"""The built-in demonstration: the whole job on invented data, with no board attached.

Scenario (invented data throughout): a 10 kΩ NTC bead is calibrated in a water bath (the bundled
``ntc_10k_calibration.csv``); it then sits in a stirred, lidded cup of 150 g of water read through
a 12-bit ratiometric divider summed over 64 reads. First a 5 W heater runs for 300 s (electrical
calibration of the cup); then 8 g of ammonium nitrate, the active salt of many instant cold packs,
is dissolved in fresh water in the same cup. The demo writes the raw logs and run files, then
evaluates them exactly as ``heatlog reduce RUN.toml`` would: counts → ohms → °C through the fitted
probe, event detection, corrected ΔT, calorimeter constant, heat, molar enthalpy, and the
Hess's-law prediction — and prints the result beside the value the invented runs were made with.

:func:`make_demo_files` writes the files; :func:`run_demo` evaluates them.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np

from heatlog.csvtable import read_columns
from heatlog.energetics.water import water_cp
from heatlog.probes import VoltageDivider, fit_resistance, probe_from_fit, save_probe
from heatlog.probes.thermistor import SteinhartHart4
from heatlog.reduce.synthetic import Release, synthetic_run
from heatlog.runfile import RunResult, run_file

# The invented probe the bundled calibration points were made from: the widely quoted 10 kΩ
# Steinhart–Hart set (from memory) with an invented D term, A re-solved so R(25 °C) = 10 kΩ.
_B, _C, _D = 2.34125e-4, 8.76741e-8, -2.0e-7
_X25 = float(np.log(10_000.0))
DEMO_PROBE_TRUTH = SteinhartHart4(
    1.0 / 298.15 - _B * _X25 - _C * _X25**3 - _D * _X25**2, _B, _C, _D, t_min_C=-20.0, t_max_C=100.0
)
CHAIN_SPEC = "divider:rs=10000,side=low,bits=12,oversample=64"
CHAIN = VoltageDivider(10_000.0, "low", bits=12, oversample=64)

WATER_G = 150.0
C_CAL_TRUE_J_PER_K = 42.0  # the invented cup, lid, stirrer and probe
HEATER_W = 5.0
HEATER_S = 300.0
SALT_G = 8.0
SALT_CP = 1.74  # J/(g·K), solid NH4NO3 near 25 °C (from memory; invented scenario value)
SALT_M = 80.043  # g/mol, NH4NO3 from standard atomic weights
DH_TRUE_KJ_PER_MOL = 25.9  # what the invented dissolution releases (absorbs), per mole


@dataclass(frozen=True)
class DemoTruth:
    c_cal_J_per_K: float
    enthalpy_kJ_per_mol: float
    heater_J: float


def _calibration_points() -> Path:
    return Path(str(resources.files("heatlog") / "data" / "examples" / "ntc_10k_calibration.csv"))


def _raw_log(path: Path, times: np.ndarray, temps: np.ndarray, seed: int) -> None:
    """Temperatures → true probe resistance → divider counts with read noise, rounded."""
    rng = np.random.default_rng(seed)
    counts = np.asarray(CHAIN.to_counts(DEMO_PROBE_TRUTH.temperature_to_resistance(temps)))
    counts = np.round(counts + rng.normal(0.0, 8.0, counts.size))  # ~1 LSB per read, 64 reads
    lines = ["# invented data: heatlog demo, raw divider counts", "time_s,counts"]
    lines += [f"{t:.1f},{int(c)}" for t, c in zip(times, counts, strict=True)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def make_demo_files(out: Path) -> DemoTruth:
    """Write the probe file, two raw logs and two run files of the invented scenario into ``out``."""
    out.mkdir(parents=True, exist_ok=True)
    pts = read_columns(_calibration_points(), ["temp_C", "resistance_ohm"])
    fit = fit_resistance(pts["temp_C"], pts["resistance_ohm"], "steinhart-hart", ref_u_K=0.01)
    probe = probe_from_fit(
        fit,
        "demo-ntc-1",
        reference="invented reference thermometer, u = 0.01 K",
        calibration_date=dt.date(2026, 11, 30),
    )
    save_probe(probe, out / "probe.toml")

    cp = float(water_cp(22.0))
    c_total_cal = C_CAL_TRUE_J_PER_K + WATER_G * cp
    heater_J = HEATER_W * HEATER_S
    cal = synthetic_run(
        releases=(Release(600.0, heater_J / c_total_cal, HEATER_S, kind="heater"),),
        duration_s=2400.0,
        dt_s=2.0,
        k_per_s=4e-4,
        jacket_C=22.5,
        start_C=21.0,
        probe_lag_s=3.0,
        seed=11,
    )
    _raw_log(out / "calibration.csv", cal.thermogram.time_s, cal.thermogram.temp_C, seed=12)

    c_total_run = C_CAL_TRUE_J_PER_K + WATER_G * cp + SALT_G * SALT_CP
    heat_J = SALT_G / SALT_M * DH_TRUE_KJ_PER_MOL * 1e3
    run = synthetic_run(
        releases=(Release(480.0, -heat_J / c_total_run, 35.0),),
        duration_s=2400.0,
        dt_s=2.0,
        k_per_s=4e-4,
        jacket_C=22.5,
        start_C=22.0,
        probe_lag_s=3.0,
        seed=21,
    )
    _raw_log(out / "dissolution.csv", run.thermogram.time_s, run.thermogram.temp_C, seed=22)

    log = f'time_col = "time_s"\nraw_col = "counts"\nchain = "{CHAIN_SPEC}"\nprobe = "probe.toml"\n'
    water = f'[[contents]]\nname = "water"\nmass_g = {WATER_G}\nu_mass_g = 0.05\ncp = "water"\n'
    (out / "calibration.toml").write_text(
        "# invented data: heatlog demo\n"
        'title = "Electrical calibration of the cup: 5 W for 300 s"\n'
        f'[log]\nfile = "calibration.csv"\n{log}\n{water}\n'
        f"[electrical]\npower_W = {HEATER_W}\nu_power_W = 0.01\nseconds = {HEATER_S}\nu_seconds = 0.2\n",
        encoding="utf-8",
    )
    (out / "dissolution.toml").write_text(
        "# invented data: heatlog demo\n"
        'title = "Cold-pack salt: 8 g ammonium nitrate dissolved in 150 g water"\n'
        f'[log]\nfile = "dissolution.csv"\n{log}\n'
        '[calorimeter]\ncalibrations = ["calibration.toml"]\n\n'
        f"{water}\n"
        f'[[contents]]\nname = "NH4NO3"\nmass_g = {SALT_G}\nu_mass_g = 0.002\ncp = {SALT_CP}\nu_cp = 0.1\n\n'
        f'[sample]\nname = "NH4NO3"\nmass_g = {SALT_G}\nu_mass_g = 0.002\n'
        'reaction = "NH4NO3(s) -> NH4+(aq) + NO3-(aq)"\n',
        encoding="utf-8",
    )
    return DemoTruth(C_CAL_TRUE_J_PER_K, DH_TRUE_KJ_PER_MOL, heater_J)


@dataclass(frozen=True, eq=False)
class DemoResult:
    out: Path
    truth: DemoTruth
    calibration: RunResult
    run: RunResult

    def to_dict(self) -> dict[str, Any]:
        h = self.run.molar
        c = self.calibration.c_cal
        assert h is not None and c is not None
        return {
            "out": str(self.out),
            "data": "invented data (heatlog demo scenario)",
            "enthalpy_kJ_per_mol": h.value,
            "u_enthalpy_kJ_per_mol": h.u,
            "U_enthalpy_kJ_per_mol": h.expanded,
            "true_enthalpy_kJ_per_mol": self.truth.enthalpy_kJ_per_mol,
            "calorimeter_constant_J_per_K": c.value,
            "u_calorimeter_constant_J_per_K": c.u,
            "true_calorimeter_constant_J_per_K": self.truth.c_cal_J_per_K,
            "calibration_run": self.calibration.to_dict(),
            "dissolution_run": self.run.to_dict(),
        }


def run_demo(out: Path) -> DemoResult:
    """Write the scenario's files into ``out`` and evaluate both run files."""
    truth = make_demo_files(out)
    cal = run_file(out / "calibration.toml")
    run = run_file(out / "dissolution.toml")
    return DemoResult(out, truth, cal, run)
