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


Source = Heater | Reaction | Hydration


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
            if isinstance(s, Heater):
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
