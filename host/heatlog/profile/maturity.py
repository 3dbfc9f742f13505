"""Maturity of setting materials (ASTM C1074): Nurse–Saul temperature–time factor and equivalent age.

* Nurse–Saul: M(t) = Σ (T_a − T₀)·Δt, with T_a the mean temperature of each interval and T₀ the
  datum temperature (default 0 °C). An interval with T_a below the datum adds nothing (ASTM C1074,
  from memory — check against the text of the edition you work to). Reported in °C·h.
* Arrhenius equivalent age at the reference temperature T_s:
  t_e = Σ exp[−Q·(1/T_a − 1/T_s)]·Δt with temperatures in kelvin and Q = E/R the activation-energy
  constant (default 5000 K ≈ 41.6 kJ/mol, ASTM C1074, from memory; default T_s = 20 °C, common in
  European practice — C1074's examples may use another; both are options).

The mean of the interval's end readings is T_a (the trapezoid rule). Intervals skipped as gaps
add nothing and the result is flagged by the caller. Uncertainty: a common offset u_T of the
temperature probe shifts every T_a; sensitivities ∂M/∂T = time above the datum and
∂t_e/∂T = Σ e^(…)·Q/T_a²·Δt (GUM, JCGM 100:2008); u(Q) enters t_e when given.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from heatlog.errors import InputError
from heatlog.gum import Budget, Component

KELVIN = 273.15
#: Datum temperature T₀ for the Nurse–Saul function (ASTM C1074 uses 0 °C as a typical value).
DEFAULT_DATUM_C = 0.0
#: Activation-energy constant Q = E/R in kelvin (≈ 41.6 kJ/mol; ASTM C1074, from memory).
DEFAULT_ACTIVATION_K = 5000.0
#: Reference temperature for equivalent age (common in European practice, an option).
DEFAULT_REFERENCE_C = 20.0


@dataclass(frozen=True, eq=False)
class Maturity:
    """Temperature–time factor M(t) (°C·h) and equivalent age t_e(t) (h) at every sample."""

    time_s: np.ndarray
    factor_Ch: np.ndarray
    equivalent_age_h: np.ndarray
    datum_C: float
    activation_K: float
    reference_C: float
    factor_budget: Budget
    age_budget: Budget

    def to_dict(self) -> dict[str, object]:
        return {
            "method": "ASTM C1074: Nurse–Saul M = Σ(T_a − T₀)Δt (T_a < T₀ adds 0); "
            "equivalent age t_e = Σ exp[−Q(1/T_a − 1/T_s)]Δt",
            "datum_C": self.datum_C,
            "activation_energy_constant_K": self.activation_K,
            "activation_energy_kJ_per_mol": self.activation_K * 8.314462618e-3,
            "reference_C": self.reference_C,
            "temperature_time_factor_C_h": float(self.factor_Ch[-1]),
            "u_temperature_time_factor_C_h": self.factor_budget.u,
            "equivalent_age_h": float(self.equivalent_age_h[-1]),
            "u_equivalent_age_h": self.age_budget.u,
            "factor_budget": self.factor_budget.to_dict(),
            "age_budget": self.age_budget.to_dict(),
        }


def maturity(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    *,
    datum_C: float = DEFAULT_DATUM_C,
    activation_K: float = DEFAULT_ACTIVATION_K,
    u_activation_K: float = 0.0,
    reference_C: float = DEFAULT_REFERENCE_C,
    u_temp_K: float = 0.0,
    skip: np.ndarray | None = None,
) -> Maturity:
    """Nurse–Saul factor and Arrhenius equivalent age along one segment (see the module docstring).

    ``skip`` marks intervals (n − 1 of them) that add nothing (gaps excluded by the caller).
    """
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    if t.size < 2 or y.shape != t.shape or np.any(np.diff(t) <= 0):
        raise InputError("maturity needs at least 2 samples with strictly increasing time")
    if not (math.isfinite(activation_K) and activation_K > 0):
        raise InputError(f"the activation-energy constant must be positive, got {activation_K:g} K")
    if reference_C + KELVIN <= 0 or datum_C + KELVIN <= 0:
        raise InputError("the reference and datum temperatures must lie above absolute zero")
    dt_h = np.diff(t) / 3600.0
    if skip is not None:
        dt_h = np.where(skip, 0.0, dt_h)
    t_a = 0.5 * (y[1:] + y[:-1])
    if np.any(t_a + KELVIN <= 0):
        raise InputError("a temperature lies at or below absolute zero; check the column")
    above = t_a > datum_C
    zero = np.zeros(1)
    m = np.concatenate((zero, np.cumsum(np.where(above, (t_a - datum_C) * dt_h, 0.0))))
    ta_k = t_a + KELVIN
    factor = np.exp(-activation_K * (1.0 / ta_k - 1.0 / (reference_C + KELVIN)))
    te = np.concatenate((zero, np.cumsum(factor * dt_h)))
    time_above_h = float(np.sum(dt_h[above]))
    d_te_dT = float(np.sum(factor * activation_K / ta_k**2 * dt_h))
    d_te_dQ = float(np.sum(factor * -(1.0 / ta_k - 1.0 / (reference_C + KELVIN)) * dt_h))
    fb = Budget(
        "Nurse–Saul M",
        float(m[-1]),
        "°C·h",
        (
            Component(
                "temperature offset",
                0.0,
                u_temp_K,
                time_above_h,
                "K",
                note="common to all readings",
            ),
        ),
    )
    ab = Budget(
        "equivalent age t_e",
        float(te[-1]),
        "h",
        (
            Component(
                "temperature offset", 0.0, u_temp_K, d_te_dT, "K", note="common to all readings"
            ),
            Component("Q = E/R", activation_K, u_activation_K, d_te_dQ, "K"),
        ),
    )
    return Maturity(t, m, te, datum_C, activation_K, reference_C, fb, ab)
