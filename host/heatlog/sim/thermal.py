"""The vessel the virtual board measures: Newton's-law exchange with the room, stirring heat,
heaters and reactions, and a probe that lags the contents (docs/REFERENCES.md: NEWTON-VESSEL,
Newton's-law vessel model: dT/dt = k(T_room − T) + (P_stir + P(t))/C).

Pure and deterministic: :class:`ThermalModel` is advanced to a time and read; the heat it has
put in is known exactly, which is what the simulator reports as the truth.
"""

from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass(frozen=True)
class Heater:
    """An electrical heater: constant power for a set time (electrical calibration)."""

    start_s: float
    duration_s: float
    power_W: float

    def power(self, t: float) -> float:
        return self.power_W if self.start_s <= t < self.start_s + self.duration_s else 0.0

    def energy(self, t: float) -> float:
        return self.power_W * min(max(t - self.start_s, 0.0), self.duration_s)

    @property
    def total_J(self) -> float:
        return self.power_W * self.duration_s


@dataclass(frozen=True)
class Reaction:
    """A first-order heat release (dissolution, neutralisation): P = Q/τ·e^(−(t−t₀)/τ).
    ``heat_J`` > 0 releases heat (exothermic), < 0 absorbs it (endothermic)."""

    start_s: float
    heat_J: float
    tau_s: float

    def power(self, t: float) -> float:
        if t < self.start_s:
            return 0.0
        return self.heat_J / self.tau_s * math.exp(-(t - self.start_s) / self.tau_s)

    def energy(self, t: float) -> float:
        if t <= self.start_s:
            return 0.0
        return self.heat_J * -math.expm1(-(t - self.start_s) / self.tau_s)

    @property
    def total_J(self) -> float:
        return self.heat_J


@dataclass(frozen=True)
class Hydration:
    """Slow heat release of a setting paste, Q(t) = Q∞·exp(−(τ/t)^β) after mixing at
    ``start_s`` (the three-parameter exponential hydration curve; form from memory)."""

    start_s: float
    heat_J: float
    tau_s: float
    beta: float

    def energy(self, t: float) -> float:
        dt = t - self.start_s
        if dt <= 0:
            return 0.0
        return self.heat_J * math.exp(-((self.tau_s / dt) ** self.beta))

    def power(self, t: float) -> float:
        dt = t - self.start_s
        if dt <= 0:
            return 0.0
        x = (self.tau_s / dt) ** self.beta
        if x > 700:
            return 0.0
        return self.heat_J * math.exp(-x) * self.beta * x / dt

    @property
    def total_J(self) -> float:
        return self.heat_J


@dataclass(frozen=True)
class SuppliedHeater:
    """A heater on a real supply (invented model): a shunt in series, the supply's open-circuit
    voltage running down linearly and sagging under load through its internal resistance, and
    the heater's resistance rising as it warms, R = R₀·(1 + α·ΔT_h) with ΔT_h relaxing to
    ``warm_K`` with time constant ``warm_tau_s``. Its power drifts, as a real one's does."""

    start_s: float
    duration_s: float
    supply_V: float
    internal_ohm: float
    shunt_ohm: float
    r_ohm: float
    tcr_per_K: float
    warm_K: float
    warm_tau_s: float
    rundown_per_s: float

    def _on(self, t: float) -> bool:
        return self.start_s <= t < self.start_s + self.duration_s

    def resistance_ohm(self, t: float) -> float:
        warm = self.warm_K * -math.expm1(-max(t - self.start_s, 0.0) / self.warm_tau_s)
        return self.r_ohm * (1.0 + self.tcr_per_K * warm)

    def current_A(self, t: float) -> float:
        if not self._on(t):
            return 0.0
        v_oc = self.supply_V * (1.0 - self.rundown_per_s * (t - self.start_s))
        return v_oc / (self.internal_ohm + self.shunt_ohm + self.resistance_ohm(t))

    def voltage_V(self, t: float) -> float:
        """Across the heater's own terminals (where the monitor's bus input senses)."""
        return self.current_A(t) * self.resistance_ohm(t)

    def power(self, t: float) -> float:
        i = self.current_A(t)
        return i * i * self.resistance_ohm(t)

    def energy(self, t: float) -> float:
        from scipy import integrate

        end = min(t, self.start_s + self.duration_s)
        if end <= self.start_s:
            return 0.0
        return float(integrate.quad(self.power, self.start_s, end, limit=200, epsabs=1e-9)[0])

    @property
    def total_J(self) -> float:
        return self.energy(self.start_s + self.duration_s)


Source = Heater | SuppliedHeater | Reaction | Hydration


@dataclass(frozen=True)
class Vessel:
    """The calorimeter and its contents as one lumped heat capacity."""

    heat_capacity_J_per_K: float
    exchange_W_per_K: float  # G: heat flow to the room per kelvin of difference
    room_C: float
    start_C: float
    stir_W: float = 0.0
    probe_lag_s: float = 3.0


class ThermalModel:
    """Vessel temperature and probe temperature, advanced with exact exponential steps over
    sub-intervals short against the probe lag and every source's time scale (power taken at
    each sub-interval's midpoint)."""

    def __init__(self, vessel: Vessel, sources: tuple[Source, ...] = ()):
        self.vessel = vessel
        self.sources = sources
        self.t = 0.0
        self.temp_C = vessel.start_C
        self.probe_C = vessel.start_C
        scales = [vessel.probe_lag_s / 4 if vessel.probe_lag_s > 0 else 1.0, 1.0]
        for s in sources:
            scales.append(s.tau_s / 20 if isinstance(s, Reaction) else 1.0)
            if isinstance(s, Heater | SuppliedHeater):
                scales.append(max(s.duration_s / 50, 0.05))
        self.max_step_s = max(min(scales), 0.01)

    def power_W(self, t: float) -> float:
        return sum(s.power(t) for s in self.sources)

    def released_J(self, t: float | None = None) -> float:
        """Heat put in by the sources (heaters and reactions) up to t (default: now)."""
        t = self.t if t is None else t
        return sum(s.energy(t) for s in self.sources)

    def advance(self, t: float) -> None:
        v = self.vessel
        c, g = v.heat_capacity_J_per_K, v.exchange_W_per_K
        while self.t < t:
            h = min(self.max_step_s, t - self.t)
            p = v.stir_W + self.power_W(self.t + h / 2)
            if g > 0:
                t_eq = v.room_C + p / g
                self.temp_C = t_eq + (self.temp_C - t_eq) * math.exp(-g * h / c)
            else:
                self.temp_C += p * h / c
            if v.probe_lag_s > 0:
                self.probe_C = self.temp_C + (self.probe_C - self.temp_C) * math.exp(
                    -h / v.probe_lag_s
                )
            else:
                self.probe_C = self.temp_C
            self.t += h
