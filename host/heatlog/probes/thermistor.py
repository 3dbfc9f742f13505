"""NTC thermistor curves: Steinhart–Hart (three and four terms) and the β model.

* Steinhart–Hart (Steinhart & Hart, Deep-Sea Research 15, 1968): 1/T = A + B ln R + C (ln R)³;
  the extended form adds D (ln R)². T in kelvin, R in ohms.
* β model: R = R25 exp[β(1/T − 1/T25)], with T25 = 298.15 K unless stated otherwise.

Conversions take and return °C; they accept floats (returning floats) and numpy arrays (returning
arrays). Inverses: β is closed form; the three-term Steinhart–Hart curve is a cubic in ln R with
one real root when B, C > 0 (Cardano's formula, polished by one Newton step); the four-term curve
(and any three-term set with C ≤ 0) uses bracketed vectorised Newton on the branch where the
curve falls monotonically over the stated range.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import Any, ClassVar

import numpy as np

from heatlog.errors import CalibrationError
from heatlog.probes.inversion import solve_increasing
from heatlog.probes.validity import (
    RANGE_MARGIN_K,
    ForwardCurve,
    as_array,
    check_range_order,
    check_resistance,
    check_temperature,
    restore,
)

ZERO_CELSIUS_K = 273.15

#: Default validity of a thermistor curve when none is stated: the usual rating of epoxy-bead
#: NTC parts (common practice, no source). A fitted curve states its own range.
THERMISTOR_DEFAULT_RANGE_C = (-40.0, 125.0)

#: Envelope for any thermistor curve: glass-encapsulated NTC parts are rarely used outside it
#: (common practice, no source).
THERMISTOR_LIMITS_C = (-80.0, 300.0)

# ln R grid used to find the monotonic branch of a Steinhart–Hart polynomial: 1 mΩ .. 10 GΩ.
_LN_R_GRID = np.linspace(np.log(1e-3), np.log(1e10), 8001)


class _SteinhartHartCurve:
    """Shared maths of the three- and four-term forms: 1/T = A + B x + D x² + C x³, x = ln R."""

    kind: ClassVar[str] = "thermistor"
    name: ClassVar[str] = ""
    t_min_C: float
    t_max_C: float

    def _abcd(self) -> tuple[float, float, float, float]:
        raise NotImplementedError

    def _g(self, x: np.ndarray) -> np.ndarray:
        a, b, c, d = self._abcd()
        return a + x * (b + x * (d + x * c))

    def _dg(self, x: np.ndarray) -> np.ndarray:
        _, b, c, d = self._abcd()
        return b + x * (2.0 * d + 3.0 * c * x)

    @cached_property
    def _x_bracket(self) -> tuple[float, float]:
        """ln R at the warm and cold ends of the range (with margin), on a monotonic branch."""
        t_min, t_max = self.t_min_C, self.t_max_C
        check_range_order(t_min, t_max, self.name)
        if t_min - RANGE_MARGIN_K <= -ZERO_CELSIUS_K:
            raise CalibrationError(f"{self.name}: valid range must lie above absolute zero")
        g_lo = 1.0 / (t_max + RANGE_MARGIN_K + ZERO_CELSIUS_K)
        g_hi = 1.0 / (t_min - RANGE_MARGIN_K + ZERO_CELSIUS_K)
        x = _LN_R_GRID
        g = self._g(x)
        rising = self._dg(x) > 0.0
        # Runs of consecutive grid points where the curve rises with ln R (falls in T).
        edges = np.flatnonzero(np.diff(np.concatenate(([0], rising.astype(np.int8), [0]))))
        for start, stop in zip(edges[0::2], edges[1::2], strict=True):
            i0, i1 = start, stop - 1
            if g[i0] <= g_lo and g[i1] >= g_hi:
                lo, hi = solve_increasing(self._g, self._dg, np.array([g_lo, g_hi]), x[i0], x[i1])
                return float(lo), float(hi)
        raise CalibrationError(
            f"{self.name} coefficients {self.coefficients()} do not describe one falling NTC "
            f"curve over {t_min:g}..{t_max:g} °C; check the coefficients and their order"
        )

    def __post_init__(self) -> None:
        coeffs = self.coefficients()
        if not all(np.isfinite(v) for v in coeffs.values()):
            raise CalibrationError(f"{self.name}: coefficients must be finite, got {coeffs}")
        self._x_bracket  # noqa: B018 - validate at construction, one clear error early

    def coefficients(self) -> dict[str, float]:
        raise NotImplementedError

    @property
    def resistance_limits(self) -> tuple[float, float]:
        """Lowest and highest resistance converted (the range with its margin), in ohms."""
        lo, hi = self._x_bracket
        return float(np.exp(lo)), float(np.exp(hi))

    def resistance_to_temperature(self, r: Any) -> Any:
        """Temperature in °C for resistance ``r`` in ohms."""
        arr, scalar = as_array(r, "resistance", "ohms")
        r_lo, r_hi = self.resistance_limits
        check_resistance(arr, r_lo, r_hi, self.t_min_C, self.t_max_C, self.name)
        return restore(1.0 / self._g(np.log(arr)) - ZERO_CELSIUS_K, scalar)

    def _ln_r(self, inv_t: np.ndarray) -> np.ndarray:
        x_lo, x_hi = self._x_bracket
        return solve_increasing(self._g, self._dg, inv_t, x_lo, x_hi)

    def temperature_to_resistance(self, t_C: Any) -> Any:
        """Resistance in ohms at temperature ``t_C`` in °C."""
        arr, scalar = as_array(t_C, "temperature", "°C")
        check_temperature(arr, self.t_min_C, self.t_max_C, self.name)
        return restore(np.exp(self._ln_r(1.0 / (arr + ZERO_CELSIUS_K))), scalar)

    def dtemperature_dresistance(self, r: Any) -> Any:
        """Slope dT/dR in K/Ω at resistance ``r`` (negative for an NTC)."""
        arr, scalar = as_array(r, "resistance", "ohms")
        x = np.log(arr)
        g = self._g(x)
        return restore(-self._dg(x) / (g * g) / arr, scalar)

    def _sensitivity_columns(self, x: np.ndarray) -> dict[str, np.ndarray]:
        return {"A": np.ones_like(x), "B": x, "C": x**3, "D": x**2}

    def coefficient_sensitivities(self, r: Any) -> np.ndarray:
        """∂T/∂coefficient (K per unit of each coefficient, in :meth:`coefficients` order) at ``r``.

        From 1/T = g(ln R; A, B, C, D): ∂T/∂p = −T² ∂g/∂p.
        """
        arr, _ = as_array(r, "resistance", "ohms")
        x = np.log(np.atleast_1d(arr))
        t_k = 1.0 / self._g(x)
        cols = self._sensitivity_columns(x)
        return np.column_stack([-(t_k**2) * cols[k] for k in self.coefficients()])


@dataclass(frozen=True)
class SteinhartHart(_SteinhartHartCurve):
    """Three-term Steinhart–Hart curve, 1/T = A + B ln R + C (ln R)³ (T in K, R in Ω)."""

    A: float
    B: float
    C: float
    t_min_C: float = THERMISTOR_DEFAULT_RANGE_C[0]
    t_max_C: float = THERMISTOR_DEFAULT_RANGE_C[1]

    name: ClassVar[str] = "steinhart-hart"

    def _abcd(self) -> tuple[float, float, float, float]:
        return self.A, self.B, self.C, 0.0

    def coefficients(self) -> dict[str, float]:
        return {"A": self.A, "B": self.B, "C": self.C}

    def _ln_r(self, inv_t: np.ndarray) -> np.ndarray:
        if not (self.B > 0.0 and self.C > 0.0):
            return super()._ln_r(inv_t)
        # C x³ + B x + (A − 1/T) = 0 → x³ + p x + q = 0 with p > 0: one real root (Cardano).
        p = self.B / self.C
        q = (self.A - inv_t) / self.C
        s = np.sqrt(0.25 * q * q + p**3 / 27.0)
        x = np.cbrt(-0.5 * q + s) + np.cbrt(-0.5 * q - s)
        # One Newton step removes the rounding left by the difference of cube roots.
        return x - (self._g(x) - inv_t) / self._dg(x)


@dataclass(frozen=True)
class SteinhartHart4(_SteinhartHartCurve):
    """Extended Steinhart–Hart curve, 1/T = A + B ln R + D (ln R)² + C (ln R)³."""

    A: float
    B: float
    C: float
    D: float
    t_min_C: float = THERMISTOR_DEFAULT_RANGE_C[0]
    t_max_C: float = THERMISTOR_DEFAULT_RANGE_C[1]

    name: ClassVar[str] = "steinhart-hart-4"

    def _abcd(self) -> tuple[float, float, float, float]:
        return self.A, self.B, self.C, self.D

    def coefficients(self) -> dict[str, float]:
        return {"A": self.A, "B": self.B, "C": self.C, "D": self.D}


@dataclass(frozen=True)
class Beta(ForwardCurve):
    """β model, R = R25 exp[β(1/T − 1/T25)]; both directions in closed form."""

    R25: float
    beta: float
    T25_C: float = 25.0
    t_min_C: float = THERMISTOR_DEFAULT_RANGE_C[0]
    t_max_C: float = THERMISTOR_DEFAULT_RANGE_C[1]

    kind: ClassVar[str] = "thermistor"
    name: ClassVar[str] = "beta"

    def __post_init__(self) -> None:
        check_range_order(self.t_min_C, self.t_max_C, self.name)
        if not (np.isfinite(self.R25) and self.R25 > 0):
            raise CalibrationError(f"beta model: R25 must be a positive resistance, got {self.R25}")
        if not (np.isfinite(self.beta) and self.beta > 0):
            raise CalibrationError(f"beta model: beta must be positive (in K), got {self.beta}")
        if self.t_min_C - RANGE_MARGIN_K <= -ZERO_CELSIUS_K:
            raise CalibrationError("beta model: valid range must lie above absolute zero")

    def coefficients(self) -> dict[str, float]:
        return {"R25": self.R25, "beta": self.beta}

    def _r(self, t_C: np.ndarray) -> np.ndarray:
        return self.R25 * np.exp(
            self.beta * (1.0 / (t_C + ZERO_CELSIUS_K) - 1.0 / (self.T25_C + ZERO_CELSIUS_K))
        )

    def resistance_to_temperature(self, r: Any) -> Any:
        """Temperature in °C for resistance ``r`` in ohms: 1/T = 1/T25 + ln(R/R25)/β."""
        arr, scalar = as_array(r, "resistance", "ohms")
        check_resistance(arr, *self.resistance_limits, self.t_min_C, self.t_max_C, self.name)
        inv_t = 1.0 / (self.T25_C + ZERO_CELSIUS_K) + np.log(arr / self.R25) / self.beta
        return restore(1.0 / inv_t - ZERO_CELSIUS_K, scalar)

    def dtemperature_dresistance(self, r: Any) -> Any:
        """Slope dT/dR = −T²/(β R) in K/Ω."""
        arr, scalar = as_array(r, "resistance", "ohms")
        inv_t = 1.0 / (self.T25_C + ZERO_CELSIUS_K) + np.log(arr / self.R25) / self.beta
        return restore(-1.0 / (inv_t**2) / (self.beta * arr), scalar)

    def coefficient_sensitivities(self, r: Any) -> np.ndarray:
        """∂T/∂R25 and ∂T/∂β at ``r``: ∂T/∂p = −T² ∂(1/T)/∂p."""
        arr, _ = as_array(r, "resistance", "ohms")
        arr = np.atleast_1d(arr)
        u = np.log(arr / self.R25)
        inv_t = 1.0 / (self.T25_C + ZERO_CELSIUS_K) + u / self.beta
        t2 = 1.0 / inv_t**2
        d_r25 = -1.0 / (self.beta * self.R25)
        d_beta = -u / self.beta**2
        return np.column_stack([-t2 * d_r25, -t2 * d_beta])
