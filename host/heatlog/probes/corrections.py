"""One- and two-point corrections of a standard or nominal curve.

A full fit needs several bath points; often a probe is only checked at the ice point (0 °C,
shaved ice and air-saturated water, ASTM E563) or at one more fixed point (the gallium melt,
29.7646 °C on ITS-90). These functions keep the shape of the nominal curve and move only what the
readings determine:

* platinum RTD: one point sets R0; two points set R0 and A (B and C kept);
* Steinhart–Hart: one point shifts A (an offset in 1/T); two points set A and B;
* β model: one point scales R25; two points set R25 and β.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from heatlog.errors import CalibrationError
from heatlog.probes.models import ProbeModel
from heatlog.probes.rtd import CallendarVanDusen
from heatlog.probes.thermistor import ZERO_CELSIUS_K, Beta, SteinhartHart, SteinhartHart4

Point = tuple[float, float]  # (temp_C, resistance_ohm)


def _check_point(point: Point) -> tuple[float, float]:
    t, r = float(point[0]), float(point[1])
    if not (math.isfinite(t) and math.isfinite(r)):
        raise CalibrationError("a check point must be a finite temperature and resistance")
    if r <= 0:
        raise CalibrationError(f"check-point resistance must be positive, got {r:g} Ω")
    return t, r


def _unsupported(model: ProbeModel) -> CalibrationError:
    return CalibrationError(f"no point correction is defined for a {type(model).__name__} model")


def _cvd_shape(model: CallendarVanDusen, t: float) -> tuple[float, float]:
    """(1 + B t² + C-term, t): R/R0 = first + A·second."""
    c_term = model.C * (t - 100.0) * t**3 if t < 0 else 0.0
    return 1.0 + model.B * t * t + c_term, t


def one_point_correction(model: ProbeModel, point: Point) -> ProbeModel:
    """Adjust ``model`` so that it reads ``point`` = (temp_C, resistance_ohm) exactly."""
    t, r = _check_point(point)
    model.temperature_to_resistance(t)  # range check
    if isinstance(model, CallendarVanDusen):
        base, lin = _cvd_shape(model, t)
        return dataclasses.replace(model, R0=r / (base + model.A * lin))
    if isinstance(model, (SteinhartHart, SteinhartHart4)):
        x = math.log(r)
        shift = 1.0 / (t + ZERO_CELSIUS_K) - float(model._g(np.array(x)))
        return dataclasses.replace(model, A=model.A + shift)
    if isinstance(model, Beta):
        r_nominal = float(model.temperature_to_resistance(t))
        return dataclasses.replace(model, R25=model.R25 * r / r_nominal)
    raise _unsupported(model)


def two_point_correction(model: ProbeModel, first: Point, second: Point) -> ProbeModel:
    """Adjust two coefficients of ``model`` so that it reads both points exactly."""
    (t1, r1), (t2, r2) = _check_point(first), _check_point(second)
    if abs(t1 - t2) < 1.0:
        raise CalibrationError(
            f"two-point correction needs points at least 1 K apart, got {t1:g} and {t2:g} °C"
        )
    model.temperature_to_resistance(np.array([t1, t2]))  # range check
    if isinstance(model, CallendarVanDusen):
        # r_i = R0·base_i + (R0·A)·t_i: linear in R0 and R0·A.
        (b1, l1), (b2, l2) = _cvd_shape(model, t1), _cvd_shape(model, t2)
        r0, r0a = np.linalg.solve([[b1, l1], [b2, l2]], [r1, r2])
        return dataclasses.replace(model, R0=float(r0), A=float(r0a / r0))
    if isinstance(model, (SteinhartHart, SteinhartHart4)):
        # 1/T_i − (C x_i³ + D x_i²) = A + B x_i.
        x1, x2 = math.log(r1), math.log(r2)
        d = model.D if isinstance(model, SteinhartHart4) else 0.0
        y1 = 1.0 / (t1 + ZERO_CELSIUS_K) - model.C * x1**3 - d * x1**2
        y2 = 1.0 / (t2 + ZERO_CELSIUS_K) - model.C * x2**3 - d * x2**2
        b = (y2 - y1) / (x2 - x1)
        return dataclasses.replace(model, A=y1 - b * x1, B=b)
    if isinstance(model, Beta):
        inv1, inv2 = 1.0 / (t1 + ZERO_CELSIUS_K), 1.0 / (t2 + ZERO_CELSIUS_K)
        beta = math.log(r1 / r2) / (inv1 - inv2)
        r25 = r1 * math.exp(-beta * (inv1 - 1.0 / (model.T25_C + ZERO_CELSIUS_K)))
        return dataclasses.replace(model, R25=r25, beta=beta)
    raise _unsupported(model)
