"""Reduction of a thermogram to a corrected temperature change with an honest uncertainty."""

from heatlog.reduce.correction import METHODS
from heatlog.reduce.drift import DriftFit, fit_drift
from heatlog.reduce.events import Event, detect_events
from heatlog.reduce.reduction import MethodResult, Reduction, reduce_thermogram

__all__ = [
    "METHODS",
    "DriftFit",
    "Event",
    "MethodResult",
    "Reduction",
    "detect_events",
    "fit_drift",
    "reduce_thermogram",
]
