"""Invented experiments for the virtual board (invented data throughout).

Each :class:`Scenario` is a board configuration plus a list of experiments; every run the host
starts on the virtual board begins the next experiment (cycling), with the vessel's time zero
at the run start. Values are invented for demonstration; enthalpies are roughly those of the
named salts (from memory) so the numbers look familiar, not reference data.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from heatlog.energetics.water import water_cp
from heatlog.probes.thermistor import SteinhartHart4
from heatlog.sim.thermal import Hydration, Reaction, Source, SuppliedHeater, Vessel

# The invented probe every scenario uses: the widely quoted 10 kΩ Steinhart–Hart set (from
# memory) with an invented D term, A re-solved so R(25 °C) = 10 kΩ. The bundled
# ntc_10k_calibration.csv points were made from it.
_B, _C, _D = 2.34125e-4, 8.76741e-8, -2.0e-7
_X25 = math.log(10_000.0)
PROBE_TRUTH = SteinhartHart4(
    1.0 / 298.15 - _B * _X25 - _C * _X25**3 - _D * _X25**2, _B, _C, _D, t_min_C=-20.0, t_max_C=100.0
)
PROBE_ID = "demo-ntc-1"
R_FIXED_OHM = 10_000.0


@dataclass(frozen=True)
class Experiment:
    name: str
    title: str
    vessel: Vessel
    sources: tuple[Source, ...]
    duration_s: float
    facts: dict[str, Any] = field(default_factory=dict)  # what the host would be told (masses...)


@dataclass(frozen=True)
class Scenario:
    name: str
    description: str
    interval_ms: int
    oversample: int
    experiments: tuple[Experiment, ...]
    caution: str = ""
    power_monitor: bool = False  # an INA226 on the heater (sim.monitor), logged beside the probe

    def config(self, board_id: str = "sim-1") -> dict[str, Any]:
        """The firmware config.json the virtual board boots with."""
        cfg = {
            "board_id": board_id,
            "interval_ms": self.interval_ms,
            "oversample": self.oversample,
            "flush_ms": 5000,
            "watchdog_ms": 8000,
            "channels": [
                {
                    "kind": "adc_divider",
                    "probe_id": PROBE_ID,
                    "pin": 26,
                    "r_fixed_ohm": int(R_FIXED_OHM),
                    "ntc_side": "low",
                    "model": {
                        "type": "steinhart_hart",
                        "A": 1.129148e-3,
                        "B": 2.34125e-4,
                        "C": 8.76741e-8,
                    },
                }
            ],
        }
        if self.power_monitor:
            cfg["channels"].append(dict(MONITOR_CHANNEL))  # type: ignore[attr-defined]
        return cfg


# -- the cup used by the calibration and the pack runs (invented) ---------------------------------
CUP_C_J_PER_K = 42.0  # cup, lid, stirrer and probe
WATER_G = 150.0
ROOM_C = 22.5
K_PER_S = 4e-4  # exchange rate constant of the lidded cup
STIR_W = 0.01  # heat from the magnetic stirrer
HEATER_W, HEATER_S = 5.0, 300.0  # nominal: the heater's power at switch-on is close to 5 W
SHUNT_OHM = 0.1
# The calibration heater (invented): 10 ohm with a 300 ppm/K resistor warming by 40 K, on a
# 7.5 V supply with 0.5 ohm inside that runs down by 1.5 % over the heating; its power falls
# by about 4 % while it is on, as a real heater's can.
HEATER = SuppliedHeater(
    600.0, HEATER_S, supply_V=7.5, internal_ohm=0.5, shunt_ohm=SHUNT_OHM, r_ohm=10.0,
    tcr_per_K=300e-6, warm_K=40.0, warm_tau_s=60.0, rundown_per_s=5e-5,
)  # fmt: skip
MONITOR_CHANNEL = {
    "kind": "ina226",
    "probe_id": "heater",
    "address": 0x40,
    "i2c": {"id": 0, "sda": 4, "scl": 5},
    "shunt_ohm": SHUNT_OHM,
    "averages": 16,
    "conversion_us": 1100,
    "max_current_A": 0.8,
}
NH4NO3_G, NH4NO3_CP, NH4NO3_M = 8.0, 1.74, 80.043  # cp from memory; M from atomic weights
NH4NO3_DH_KJ = 25.9  # invented dissolution enthalpy used by the scenario (absorbs heat)
CACL2_G, CACL2_CP, CACL2_M = 10.0, 0.67, 110.98
CACL2_DH_KJ = -81.0  # invented, near the literature value from memory (releases heat)


def _cup(
    extra_J_per_K: float, start_C: float, room_C: float = ROOM_C, cp_at_C: float = 22.0
) -> Vessel:
    c = CUP_C_J_PER_K + WATER_G * float(water_cp(cp_at_C)) + extra_J_per_K
    return Vessel(c, K_PER_S * c, room_C, start_C, stir_W=STIR_W, probe_lag_s=3.0)


# Reference-process calibration of the cup: tris dissolved in 150 g of 0.1 mol/L HCl, taken
# thermally as water (invented). The heat follows the published ΔH(25 °C) and ΔCp of tris
# (Prosen & Kilday 1973, docs/REFERENCES.md: PROSEN1973), written out here on their own so the
# simulator does not borrow the code it checks.
TRIS_G = 0.9
TRIS_DH_J_PER_G_25C, TRIS_DCP_J_PER_G_K = -245.76, 1.435


def tris_calibration(temp_C: float) -> Experiment:
    """Tris in dilute HCl starting at ``temp_C`` (room 0.3 K warmer): the heat released is
    m·(ΔH(25 °C) + ΔCp·(T − 25 °C)) at the rise's mean temperature."""
    vessel = _cup(0.0, temp_C, room_C=temp_C + 0.3, cp_at_C=temp_C)
    rise = -TRIS_G * TRIS_DH_J_PER_G_25C / vessel.heat_capacity_J_per_K  # first estimate
    t_mid = temp_C + rise / 2
    heat = -TRIS_G * (TRIS_DH_J_PER_G_25C + TRIS_DCP_J_PER_G_K * (t_mid - 25.0))
    return Experiment(
        f"tris-{temp_C:g}",
        f"{TRIS_G:g} g tris dissolved in {WATER_G:g} g of 0.1 mol/L HCl at {temp_C:g} °C "
        "(invented data)",
        vessel,
        (Reaction(600.0, heat, 30.0),),
        2400.0,
        {"tris_g": TRIS_G, "water_g": WATER_G, "cup_J_per_K": CUP_C_J_PER_K, "heat_J": heat,
         "temp_C": temp_C},
    )  # fmt: skip


def electrical_calibration() -> Experiment:
    return Experiment(
        "calibration",
        "Electrical calibration of the cup: about 5 W for 300 s (invented data)",
        _cup(0.0, 21.0),
        (HEATER,),
        2400.0,
        {
            "water_g": WATER_G,
            "heater_W": HEATER_W,
            "heater_s": HEATER_S,
            "heater_J": HEATER.total_J,
            "shunt_ohm": SHUNT_OHM,
            "cup_J_per_K": CUP_C_J_PER_K,
        },
    )


def _dissolution(
    name: str, salt: str, mass: float, cp: float, molar: float, dh_kj: float, start_C: float
) -> Experiment:
    n = mass / molar
    return Experiment(
        name,
        f"{mass:g} g {salt} dissolved in {WATER_G:g} g water (invented data)",
        _cup(mass * cp, start_C),
        (Reaction(480.0, -n * dh_kj * 1e3, 35.0),),
        2400.0,
        {"salt": salt, "salt_g": mass, "salt_cp": cp, "molar_mass": molar, "water_g": WATER_G,
         "enthalpy_kJ_per_mol": dh_kj, "amount_mol": n, "cup_J_per_K": CUP_C_J_PER_K},
    )  # fmt: skip


def endothermic_pack() -> Experiment:
    return _dissolution("endothermic", "NH4NO3", NH4NO3_G, NH4NO3_CP, NH4NO3_M, NH4NO3_DH_KJ, 22.0)


def exothermic_pack() -> Experiment:
    return _dissolution("exothermic", "CaCl2", CACL2_G, CACL2_CP, CACL2_M, CACL2_DH_KJ, 21.5)


def hand_warmer() -> Experiment:
    # an iron-powder pouch (40 g) in a foam box: 20 kJ over a few hours (invented)
    return Experiment(
        "hand-warmer",
        "Hand-warmer pouch in a foam box, six hours (invented data)",
        Vessel(60.0, 0.08, 21.0, 21.0, probe_lag_s=20.0),
        (Reaction(300.0, 20_000.0, 7200.0),),
        6 * 3600.0,
        {"pouch_g": 40.0},
    )


def cement_paste() -> Experiment:
    # 100 g cement + 40 g water in a semi-adiabatic box; 30 kJ released over days (invented)
    return Experiment(
        "cement",
        "Semi-adiabatic cement paste, 48 hours (invented data)",
        Vessel(600.0, 0.1, 20.0, 20.0, probe_lag_s=60.0),
        (Hydration(0.0, 30_000.0, 10 * 3600.0, 1.3),),
        48 * 3600.0,
        {"cement_g": 100.0, "water_g": 40.0},
    )


_CUP_CAUTION = (
    "Caution: ammonium nitrate is an oxidiser, calcium chloride heats up when it dissolves, "
    "hydrochloric acid harms eyes and skin (wear eye protection), cold "
    "packs can chill skin and heaters and hot water burn. Follow the safety data sheets, local "
    "codes and licensed practice when you do this for real."
)

SCENARIOS: dict[str, Scenario] = {
    s.name: s
    for s in (
        Scenario("demo", "electrical calibration, then NH4NO3 dissolution (cold pack)", 2000, 64,
                 (electrical_calibration(), endothermic_pack()), _CUP_CAUTION, power_monitor=True),
        Scenario("calibration", "electrical calibration of the cup", 2000, 64,
                 (electrical_calibration(),), _CUP_CAUTION, power_monitor=True),
        Scenario("endothermic", "NH4NO3 dissolution (cold-pack formulation)", 2000, 64,
                 (endothermic_pack(),), _CUP_CAUTION),
        Scenario("exothermic", "CaCl2 dissolution (hot-pack formulation)", 2000, 64,
                 (exothermic_pack(),), _CUP_CAUTION),
        Scenario("tris-20", "tris reference calibration of the cup at 20 °C", 2000, 64,
                 (tris_calibration(20.0),), _CUP_CAUTION),
        Scenario("tris-30", "tris reference calibration of the cup near 30 °C", 2000, 64,
                 (tris_calibration(29.5),), _CUP_CAUTION),
        Scenario("hand-warmer", "hand-warmer pouch over six hours", 10_000, 16, (hand_warmer(),),
                 "Caution: hand warmers can burn skin held against them for long (about 44 °C for "
                 "hours can be enough); follow the maker's instructions and local guidance."),
        Scenario("cement", "semi-adiabatic cement paste over two days", 60_000, 16, (cement_paste(),),
                 "Caution: wet cement is alkaline and burns skin; wear gloves and eye protection and "
                 "follow the safety data sheet."),
    )
}  # fmt: skip


def scenario(name: str) -> Scenario:
    from heatlog.errors import InputError

    if name not in SCENARIOS:
        raise InputError(f"unknown scenario {name!r}; choose one of {', '.join(SCENARIOS)}")
    return SCENARIOS[name]
