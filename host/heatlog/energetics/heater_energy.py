"""Electrical energy of a calibration heater from a logged current/voltage monitor (∫V·I dt).

The board logs the monitor's bus-voltage and shunt-voltage codes beside the temperature; this
module turns them into the heater's energy with a GUM budget (JCGM 100:2008): the switch-on
and switch-off instants found from the current (each known to within one sampling interval),
the monitor's gain and offset errors, the shunt's tolerance (or calibration), the codes'
quantisation and the integration rule. A heater's resistance drifts as it warms and a supply
sags under load: the integral follows both, where a power read once at switch-on does not.

Wiring assumed (hardware/power-monitor.md): the shunt on the supply side of the heater, the
monitor's bus input sensed at the heater's own terminals, the heater's other end at the board's
ground, so P = V_bus·I_shunt is the power dissipated in the heater.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..gum import SQRT12, Budget, Component, rectangular


@dataclass(frozen=True)
class MonitorSpec:
    """A monitor's code steps and its maximum errors (taken as rectangular half-widths)."""

    name: str
    shunt_lsb_V: float
    bus_lsb_V: float
    shunt_gain_max_rel: float
    bus_gain_max_rel: float
    shunt_offset_max_V: float
    bus_offset_max_V: float
    source: str


# Maximum errors at 25 °C (docs/REFERENCES.md: INA226, INA219; from memory).
MONITORS = {
    "ina226": MonitorSpec(
        "INA226", 2.5e-6, 1.25e-3, 0.001, 0.001, 10e-6, 7.5e-3,
        "TI INA226 datasheet SBOS547: gain error 0.1 % max, shunt offset ±10 µV max, "
        "bus offset ±7.5 mV max (from memory)",
    ),
    "ina219": MonitorSpec(
        "INA219", 10e-6, 4e-3, 0.005, 0.005, 100e-6, 16e-3,
        "TI INA219 datasheet SBOS448, B grade: current and bus error 0.5 % max, shunt offset "
        "±100 µV max, bus offset four codes (from memory)",
    ),
}  # fmt: skip

ON_FRACTION = (
    0.9  # a sample at or above 90 % of the on-level current is "on" (common practice, no source)
)
OFF_FRACTION = 0.1  # at or below 10 % is "off"; between them, the sample straddles a switching edge


@dataclass(frozen=True)
class HeaterEnergy:
    """The heater's energy and what it was found from."""

    budget: Budget
    t_on_s: float
    t_off_s: float
    u_t_on_s: float
    u_t_off_s: float
    samples_on: int
    power_first_W: float
    power_last_W: float
    mean_power_W: float
    monitor: str

    @property
    def heating_time_s(self) -> float:
        return self.t_off_s - self.t_on_s

    @property
    def power_change_rel(self) -> float:
        """(last − first) / first on-sample power: how far from constant the heater ran."""
        return (self.power_last_W - self.power_first_W) / self.power_first_W

    def to_dict(self) -> dict[str, object]:
        return {
            "energy_J": self.budget.value,
            "u_energy_J": self.budget.u,
            "U_energy_J": self.budget.expanded,
            "coverage_factor": self.budget.k,
            "t_on_s": self.t_on_s,
            "t_off_s": self.t_off_s,
            "u_t_on_s": self.u_t_on_s,
            "u_t_off_s": self.u_t_off_s,
            "heating_time_s": self.heating_time_s,
            "samples_on": self.samples_on,
            "power_first_W": self.power_first_W,
            "power_last_W": self.power_last_W,
            "mean_power_W": self.mean_power_W,
            "power_change_rel": self.power_change_rel,
            "monitor": self.monitor,
            "budget": self.budget.to_dict(),
        }


def _edges(on: np.ndarray, off: np.ndarray, t: np.ndarray) -> tuple[int, int, int, int]:
    """Indices (last off before, first on, last on, first off after) of the one on-interval."""
    idx_on = np.flatnonzero(on)
    if idx_on.size == 0:
        raise InputError("the heater current never rises to an on-level; is the monitor wired?")
    first, last = int(idx_on[0]), int(idx_on[-1])
    if np.any(off[first : last + 1]):
        raise InputError(
            "the heater was switched on more than once in this log; give the time range of one "
            "heating interval"
        )
    before = np.flatnonzero(off[:first])
    after = np.flatnonzero(off[last + 1 :])
    if before.size == 0 or after.size == 0:
        which = "before switch-on" if before.size == 0 else "after switch-off"
        raise InputError(
            f"the log has no reading with the heater off {which}; the switching instant is "
            "unknown: log a stretch with the heater off on both sides"
        )
    return int(before[-1]), first, last, last + 1 + int(after[0])


def heater_energy(
    time_s: np.ndarray,
    bus_V: np.ndarray,
    shunt_V: np.ndarray,
    *,
    shunt_ohm: float,
    u_shunt_rel: float,
    monitor: str = "ina226",
) -> HeaterEnergy:
    """Q = ∫V·I dt over the one interval in which the heater was on.

    ``u_shunt_rel``: relative standard uncertainty of the shunt's resistance (its tolerance as
    a rectangular half-width /√3, or its calibration's u). The switching instants lie between
    the last off and the first on reading (and the last on and first off): each is taken at the
    middle with a rectangular uncertainty over that span; between them the power is the
    trapezoid of the on readings, held at the first and last on reading out to the edges.
    """
    spec = MONITORS.get(monitor)
    if spec is None:
        raise InputError(f"unknown monitor {monitor!r}; one of {', '.join(MONITORS)}")
    if not (math.isfinite(shunt_ohm) and 1e-5 <= shunt_ohm <= 1e3):
        raise InputError(f"shunt resistance must be 1e-5..1000 ohm, got {shunt_ohm}")
    if not (math.isfinite(u_shunt_rel) and 0 <= u_shunt_rel < 0.1):
        raise InputError(f"the shunt's relative uncertainty must be 0..0.1, got {u_shunt_rel}")
    t = np.asarray(time_s, dtype=float)
    v = np.asarray(bus_V, dtype=float)
    i = np.asarray(shunt_V, dtype=float) / shunt_ohm
    if t.ndim != 1 or not t.shape == v.shape == i.shape or t.size < 5:
        raise InputError("the power channels need matching time, bus and shunt columns (≥ 5 rows)")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(v)) and np.all(np.isfinite(i))):
        raise InputError("the power channels hold a non-finite value (a monitor fault?)")
    if np.any(np.diff(t) <= 0):
        raise InputError("the power channels' times must increase strictly")
    level = float(np.percentile(np.abs(i), 95))
    if not level * shunt_ohm > 100 * spec.shunt_lsb_V:
        raise InputError("the heater current never rises to an on-level; is the monitor wired?")
    if float(np.mean(i[np.abs(i) > 0.5 * level])) < 0:
        raise InputError("the heater current is never positive; check the shunt's polarity")
    on = i >= ON_FRACTION * level
    off = i <= OFF_FRACTION * level
    b_off, a_on, z_on, a_off = _edges(on, off, t)
    p = v * i
    t_on = 0.5 * (t[b_off] + t[a_on])
    t_off = 0.5 * (t[z_on] + t[a_off])
    u_on = (t[a_on] - t[b_off]) / SQRT12
    u_off = (t[a_off] - t[z_on]) / SQRT12
    ts, ps = t[a_on : z_on + 1], p[a_on : z_on + 1]
    core = float(np.trapezoid(ps, ts)) if ts.size > 1 else 0.0
    q = core + ps[0] * (ts[0] - t_on) + ps[-1] * (t_off - ts[-1])
    if not q > 0:
        raise InputError(f"the logged heater energy is {q:.4g} J; expected a positive energy")
    v_int = (
        float(np.trapezoid(v[a_on : z_on + 1], ts))
        + v[a_on] * (ts[0] - t_on)
        + v[z_on] * (t_off - ts[-1])
    )
    i_int = (
        float(np.trapezoid(i[a_on : z_on + 1], ts))
        + i[a_on] * (ts[0] - t_on)
        + i[z_on] * (t_off - ts[-1])
    )
    dt = np.diff(ts)
    # held edge values vs the trapezoid's own straight line: the rule's error is at most the
    # curvature between readings; bound it by the trapezoid − rectangle difference
    rule = float(np.sum(np.abs(np.diff(ps)) * dt)) / 2.0 if ts.size > 1 else 0.0
    n = int(ts.size)
    step = float(np.median(dt)) if dt.size else 0.0
    quant = (
        math.sqrt(n)
        * step
        * math.hypot(
            float(np.mean(v[a_on : z_on + 1])) * spec.shunt_lsb_V / shunt_ohm,
            float(np.mean(i[a_on : z_on + 1])) * spec.bus_lsb_V,
        )
        / SQRT12
    )
    comps = (
        Component("∫V·I dt (logged)", q, 0.0, 1.0, "J", note=f"{n} readings with the heater on"),
        Component("switch-on instant", t_on, u_on, -float(ps[0]), "s", note="between two readings"),
        Component("switch-off instant", t_off, u_off, float(ps[-1]), "s", note="between two readings"),
        Component(
            "shunt resistance", 1.0, u_shunt_rel, -q, "", note="tolerance or calibration (relative)"
        ),
        Component(
            f"{spec.name} shunt gain", 1.0, rectangular(spec.shunt_gain_max_rel), q, "",
            note="maximum error, rectangular",
        ),
        Component(
            f"{spec.name} bus gain", 1.0, rectangular(spec.bus_gain_max_rel), q, "",
            note="maximum error, rectangular",
        ),
        Component(
            f"{spec.name} shunt offset", 0.0, rectangular(spec.shunt_offset_max_V),
            v_int / shunt_ohm, "V", note="maximum offset, rectangular",
        ),
        Component(
            f"{spec.name} bus offset", 0.0, rectangular(spec.bus_offset_max_V), i_int, "V",
            note="maximum offset, rectangular",
        ),
        Component("code quantisation", 0.0, quant, 1.0, "J", note="one code per reading, /√12"),
        Component("integration rule", 0.0, rectangular(rule / 2.0), 1.0, "J",
                  note="trapezoid between readings"),
    )  # fmt: skip
    return HeaterEnergy(
        budget=Budget("Q = ∫V·I dt", q, "J", comps),
        t_on_s=t_on,
        t_off_s=t_off,
        u_t_on_s=u_on,
        u_t_off_s=u_off,
        samples_on=n,
        power_first_W=float(ps[0]),
        power_last_W=float(ps[-1]),
        mean_power_W=q / (t_off - t_on),
        monitor=spec.name,
    )
