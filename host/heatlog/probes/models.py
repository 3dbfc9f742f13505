"""What every probe model offers, and how to build one from its name and coefficients."""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from typing import Any, ClassVar, Protocol

import numpy as np

from heatlog.errors import CalibrationError
from heatlog.probes.rtd import CallendarVanDusen
from heatlog.probes.thermistor import Beta, SteinhartHart, SteinhartHart4


class ProbeModel(Protocol):
    """A resistance–temperature curve with a stated validity range (°C)."""

    name: ClassVar[str]
    kind: ClassVar[str]

    @property
    def t_min_C(self) -> float: ...
    @property
    def t_max_C(self) -> float: ...

    def coefficients(self) -> dict[str, float]: ...
    def resistance_to_temperature(self, r: Any) -> Any: ...
    def temperature_to_resistance(self, t_C: Any) -> Any: ...
    def dtemperature_dresistance(self, r: Any) -> Any: ...
    def coefficient_sensitivities(self, r: Any) -> np.ndarray: ...

    @property
    def resistance_limits(self) -> tuple[float, float]: ...


#: Model classes by the name used in probe files and on the command line.
MODEL_CLASSES: dict[str, type[SteinhartHart | SteinhartHart4 | Beta | CallendarVanDusen]] = {
    SteinhartHart.name: SteinhartHart,
    SteinhartHart4.name: SteinhartHart4,
    Beta.name: Beta,
    CallendarVanDusen.name: CallendarVanDusen,
}
MODEL_NAMES = tuple(MODEL_CLASSES)
MODEL_KINDS = {name: cls.kind for name, cls in MODEL_CLASSES.items()}


def build_model(
    name: str,
    coefficients: Mapping[str, float],
    t_range_C: tuple[float, float] | None = None,
    **extra: float,
) -> ProbeModel:
    """Build a model from its name and coefficients by their published names.

    ``extra`` carries stated constants that are not fitted (``T25_C`` of the β model).
    """
    if name not in MODEL_CLASSES:
        raise CalibrationError(f"unknown probe model {name!r}; use one of {', '.join(MODEL_NAMES)}")
    cls = MODEL_CLASSES[name]
    needed = {f.name for f in dataclasses.fields(cls)} - {"t_min_C", "t_max_C", *extra}
    optional = {"T25_C"} if name == Beta.name else set()
    if name == CallendarVanDusen.name:
        optional = {"A", "B", "C"}  # IEC 60751 values unless stated
    given = set(coefficients)
    missing = sorted(needed - optional - given)
    unknown = sorted(given - needed - optional)
    if missing or unknown:
        parts = []
        if missing:
            parts.append(f"missing {', '.join(missing)}")
        if unknown:
            parts.append(f"unknown {', '.join(unknown)}")
        raise CalibrationError(
            f"{name} coefficients: {'; '.join(parts)} (expected {', '.join(sorted(needed))})"
        )
    kwargs: dict[str, float] = {}
    for key, value in {**coefficients, **extra}.items():
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise CalibrationError(f"{name} coefficient {key} must be a number, got {value!r}")
        kwargs[key] = float(value)
    if t_range_C is not None:
        kwargs["t_min_C"], kwargs["t_max_C"] = float(t_range_C[0]), float(t_range_C[1])
    model: ProbeModel = cls(**kwargs)
    return model
