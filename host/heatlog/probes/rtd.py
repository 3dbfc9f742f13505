"""Platinum resistance thermometers: the Callendar–Van Dusen curve of IEC 60751.

R(t) = R0 [1 + A t + B t² + C (t − 100) t³], the C term only below 0 °C; t in °C (ITS-90).
IEC 60751 coefficients: A = 3.9083e-3 /°C, B = −5.775e-7 /°C², C = −4.183e-12 /°C⁴, with
R0 = 100 Ω (Pt100) or 1000 Ω (Pt1000); the standard covers −200..850 °C.

Inverse: at and above 0 °C the quadratic is solved in closed form (the cancellation-free root
t = 2(R/R0 − 1)/(A + √(A² + 4B(R/R0 − 1)))); below 0 °C bracketed vectorised Newton, started
from that quadratic root.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from heatlog.errors import CalibrationError, RangeError
from heatlog.probes.inversion import solve_increasing
from heatlog.probes.validity import (
    RANGE_MARGIN_K,
    ForwardCurve,
    as_array,
    check_range_order,
    check_resistance,
    restore,
)

# IEC 60751 Callendar–Van Dusen coefficients.
IEC_A = 3.9083e-3
IEC_B = -5.775e-7
IEC_C = -4.183e-12
#: Temperature range of IEC 60751 (°C).
IEC_RANGE_C = (-200.0, 850.0)


@dataclass(frozen=True)
class CallendarVanDusen(ForwardCurve):
    """Callendar–Van Dusen curve (IEC 60751) for a platinum RTD."""

    R0: float = 100.0
    A: float = IEC_A
    B: float = IEC_B
    C: float = IEC_C
    t_min_C: float = IEC_RANGE_C[0]
    t_max_C: float = IEC_RANGE_C[1]

    kind: ClassVar[str] = "rtd"
    name: ClassVar[str] = "callendar-van-dusen"

    def __post_init__(self) -> None:
        check_range_order(self.t_min_C, self.t_max_C, self.name)
        if not all(np.isfinite(v) for v in self.coefficients().values()):
            raise CalibrationError(f"{self.name}: coefficients must be finite")
        if self.R0 <= 0:
            raise CalibrationError(f"{self.name}: R0 must be a positive resistance, got {self.R0}")
        grid = np.linspace(self.t_min_C - RANGE_MARGIN_K, self.t_max_C + RANGE_MARGIN_K, 2001)
        if np.any(self._slope(grid) <= 0) or self._r(grid[:1])[0] <= 0:
            raise CalibrationError(
                f"{self.name}: coefficients {self.coefficients()} do not give a positive resistance "
                f"that rises with temperature over {self.t_min_C:g}..{self.t_max_C:g} °C"
            )

    def coefficients(self) -> dict[str, float]:
        return {"R0": self.R0, "A": self.A, "B": self.B, "C": self.C}

    def _r(self, t: np.ndarray) -> np.ndarray:
        c_term = np.where(t < 0.0, self.C * (t - 100.0) * t**3, 0.0)
        return self.R0 * (1.0 + self.A * t + self.B * t * t + c_term)

    def _slope(self, t: np.ndarray) -> np.ndarray:
        c_term = np.where(t < 0.0, self.C * (4.0 * t**3 - 300.0 * t * t), 0.0)
        return self.R0 * (self.A + 2.0 * self.B * t + c_term)

    def _quadratic_root(self, ratio_minus_one: np.ndarray) -> np.ndarray:
        disc = self.A * self.A + 4.0 * self.B * ratio_minus_one
        return 2.0 * ratio_minus_one / (self.A + np.sqrt(np.maximum(disc, 0.0)))

    def resistance_to_temperature(self, r: Any) -> Any:
        """Temperature in °C for resistance ``r`` in ohms."""
        arr, scalar = as_array(r, "resistance", "ohms")
        check_resistance(arr, *self.resistance_limits, self.t_min_C, self.t_max_C, self.name)
        t = self._quadratic_root(arr / self.R0 - 1.0)
        cold = arr < self.R0
        if np.any(cold) and self.C != 0.0:
            r_cold = arr[cold] if arr.ndim else arr
            t_cold = solve_increasing(
                self._r,
                self._slope,
                r_cold,
                self.t_min_C - RANGE_MARGIN_K - 1.0,
                0.0,
                x0=t[cold] if arr.ndim else t,
            )
            if arr.ndim:
                t = t.copy()
                t[cold] = t_cold
            else:
                t = t_cold
        return restore(np.asarray(t, dtype=np.float64), scalar)

    def dtemperature_dresistance(self, r: Any) -> Any:
        """Slope dt/dR in K/Ω at resistance ``r``."""
        arr, scalar = as_array(r, "resistance", "ohms")
        t = np.asarray(self.resistance_to_temperature(arr), dtype=np.float64)
        return restore(1.0 / self._slope(t), scalar)

    def coefficient_sensitivities(self, r: Any) -> np.ndarray:
        """∂t/∂(R0, A, B, C) at ``r`` by implicit differentiation: ∂t/∂p = −(∂R/∂p)/(∂R/∂t)."""
        arr, _ = as_array(r, "resistance", "ohms")
        arr = np.atleast_1d(arr)
        t = np.asarray(self.resistance_to_temperature(arr), dtype=np.float64)
        slope = self._slope(t)
        cold = t < 0.0
        d_r0 = self._r(t) / self.R0
        d_a = self.R0 * t
        d_b = self.R0 * t * t
        d_c = np.where(cold, self.R0 * (t - 100.0) * t**3, 0.0)
        return -np.column_stack([d_r0, d_a, d_b, d_c]) / slope[:, None]


def pt100(**overrides: float) -> CallendarVanDusen:
    """A Pt100 with the IEC 60751 coefficients (R0 = 100 Ω)."""
    return CallendarVanDusen(**{"R0": 100.0, **overrides})


def pt1000(**overrides: float) -> CallendarVanDusen:
    """A Pt1000 with the IEC 60751 coefficients (R0 = 1000 Ω)."""
    return CallendarVanDusen(**{"R0": 1000.0, **overrides})


#: IEC 60751:2008 tolerance classes: ±(base + per_degree·|t|) °C, and the temperature range in
#: which the standard gives each class, for wire-wound and for film elements (IEC 60751:2008;
#: AA, A, B ranges checked in a copy quoting it, class C's from memory; docs/REFERENCES.md:
#: IEC60751). Outside that range a class says nothing.
_TOLERANCE_CLASSES = {
    "AA": (0.10, 0.0017),
    "A": (0.15, 0.002),
    "B": (0.30, 0.005),
    "C": (0.6, 0.01),
}
TOLERANCE_RANGES_C = {
    "wire": {
        "AA": (-50.0, 250.0),
        "A": (-100.0, 450.0),
        "B": (-196.0, 600.0),
        "C": (-196.0, 600.0),
    },
    "film": {"AA": (0.0, 150.0), "A": (-30.0, 300.0), "B": (-50.0, 500.0), "C": (-50.0, 600.0)},
}


def tolerance_class(t_C: Any, cls: str = "B", element: str = "wire") -> Any:
    """Permitted deviation (±°C, a limit, not an uncertainty) of an IEC 60751 platinum sensor of
    class ``cls`` at ``t_C``, only inside the range the standard gives that class.

    Class AA ±(0.10 + 0.0017|t|), A ±(0.15 + 0.002|t|), B ±(0.30 + 0.005|t|),
    C ±(0.6 + 0.01|t|) (IEC 60751:2008; class C's range from memory). ``element`` is
    "wire" (wire-wound) or "film"; a temperature outside the class's range is refused
    (:class:`RangeError`) rather than given a number the standard does not back.
    """
    key = cls.upper()
    if key not in _TOLERANCE_CLASSES:
        raise CalibrationError(
            f"unknown IEC 60751 tolerance class {cls!r}; use one of {', '.join(_TOLERANCE_CLASSES)}"
        )
    if element not in TOLERANCE_RANGES_C:
        raise CalibrationError(f"unknown element type {element!r}; use wire or film")
    base, per_degree = _TOLERANCE_CLASSES[key]
    arr, scalar = as_array(t_C, "temperature", "°C")
    lo, hi = TOLERANCE_RANGES_C[element][key]
    outside = ~((arr >= lo) & (arr <= hi))
    if np.any(outside):
        bad = float(np.asarray(arr)[outside].flat[0])
        raise RangeError(
            f"{bad:g} °C is outside {lo:g}…{hi:g} °C, where IEC 60751 gives class {key} for "
            f"{element} elements; the class says nothing there: calibrate the sensor instead"
        )
    return restore(base + per_degree * np.abs(arr), scalar)
