"""Input checks shared by every probe model: finite numbers, positive resistance, valid range.

A model converts inside its stated validity range widened by :data:`RANGE_MARGIN_K` on each side,
so a bath that settles a few tenths of a kelvin past the end point of a calibration is still read;
beyond that the conversion stops with a :class:`~heatlog.errors.RangeError`.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, ClassVar

import numpy as np

from heatlog.errors import RangeError

#: How far past its stated range (each side, in K) a model still converts (common practice, no
#: source: a small extrapolation of a smooth curve costs far less than a stopped run).
RANGE_MARGIN_K = 1.0

Scalar = float
ArrayLike = Any  # a float, a sequence of floats or a numpy array


def as_array(x: ArrayLike, what: str, unit: str) -> tuple[np.ndarray, bool]:
    """Return ``x`` as a float64 array and whether it was a scalar; reject NaN and inf."""
    try:
        arr = np.asarray(x, dtype=np.float64)
    except (TypeError, ValueError):
        raise RangeError(f"{what} must be a number or an array of numbers, got {x!r}") from None
    if not np.all(np.isfinite(arr)):
        raise RangeError(f"{what} must be a finite number in {unit}; got NaN or inf")
    return arr, arr.ndim == 0


def restore(arr: np.ndarray, scalar: bool) -> Any:
    """Give back a Python float for scalar input, else the array."""
    return float(arr) if scalar else arr


def _refuse(values: np.ndarray, bad: np.ndarray, message: Callable[[float], str]) -> None:
    """Raise one RangeError naming the first bad value (and how many there are), if any."""
    flat_bad = np.ravel(bad)
    if not flat_bad.any():
        return
    n = int(flat_bad.sum())
    count = "" if n <= 1 else f" ({n} values out of range)"
    first = float(np.ravel(values)[np.argmax(flat_bad)])
    text = message(first)
    head, _, tail = text.partition("; ")
    raise RangeError(f"{head}{count}; {tail}" if tail else f"{head}{count}")


def check_positive_resistance(r: np.ndarray) -> None:
    """Resistances must be positive: zero or negative means a short, an open or a chain error."""
    _refuse(
        r,
        r <= 0.0,
        lambda v: (
            f"resistance must be positive, got {v:g} Ω; "
            "check the probe wiring and the reading chain settings"
        ),
    )


def check_temperature(t_C: np.ndarray, t_min_C: float, t_max_C: float, model: str) -> None:
    """Temperatures must lie inside the model's range widened by the margin."""
    _refuse(
        t_C,
        (t_C < t_min_C - RANGE_MARGIN_K) | (t_C > t_max_C + RANGE_MARGIN_K),
        lambda v: (
            f"{v:g} °C lies outside the valid range {t_min_C:g}..{t_max_C:g} °C of this "
            f"{model} model (±{RANGE_MARGIN_K:g} K margin); "
            "recalibrate over a wider range or use a model made for that range"
        ),
    )


def check_resistance(
    r: np.ndarray, r_lo: float, r_hi: float, t_min_C: float, t_max_C: float, model: str
) -> None:
    """Resistances must map into the model's range (``r_lo``..``r_hi`` hold the margin already)."""
    check_positive_resistance(r)
    # A relative slack of 1e-9 (far below a microkelvin) keeps the end points themselves inside
    # whatever rounding the forward and inverse conversions leave.
    _refuse(
        r,
        (r < r_lo * (1.0 - 1e-9)) | (r > r_hi * (1.0 + 1e-9)),
        lambda v: (
            f"{v:.6g} Ω lies outside {r_lo:.6g}..{r_hi:.6g} Ω, the resistances this "
            f"{model} model covers ({t_min_C:g}..{t_max_C:g} °C ±{RANGE_MARGIN_K:g} K); "
            "check the probe, the chain settings or the probe file"
        ),
    )


def check_range_order(t_min_C: float, t_max_C: float, model: str) -> None:
    """A validity range must be finite and have its lower end first."""
    if not (np.isfinite(t_min_C) and np.isfinite(t_max_C)) or t_min_C >= t_max_C:
        raise RangeError(
            f"{model}: valid range must run from low to high, got {t_min_C:g}..{t_max_C:g} °C"
        )


class ForwardCurve:
    """Range-checked ``temperature_to_resistance`` and resistance limits for a curve R = _r(t).

    The subclass (a frozen dataclass) holds ``t_min_C``, ``t_max_C`` and ``name`` and defines
    ``_r`` on float arrays in °C.
    """

    t_min_C: float
    t_max_C: float
    name: ClassVar[str]

    def _r(self, t_C: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    @property
    def resistance_limits(self) -> tuple[float, float]:
        """Lowest and highest resistance converted (the range with its margin), in ohms."""
        ends = self._r(np.array([self.t_min_C - RANGE_MARGIN_K, self.t_max_C + RANGE_MARGIN_K]))
        return float(np.min(ends)), float(np.max(ends))

    def temperature_to_resistance(self, t_C: ArrayLike) -> Any:
        """Resistance in ohms at ``t_C`` in °C."""
        arr, scalar = as_array(t_C, "temperature", "°C")
        check_temperature(arr, self.t_min_C, self.t_max_C, self.name)
        return restore(self._r(arr), scalar)
