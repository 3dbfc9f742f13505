"""Probe physics: resistance–temperature curves, reading chains, calibration fits, design, files.

Everything here is pure computation on floats, numpy arrays and frozen dataclasses, except
:mod:`heatlog.probes.probefile`, which reads and writes probe files.
"""

from heatlog.probes.chains import (
    ADS1115Divider,
    Chain,
    ChainReading,
    MAX31865Chain,
    VoltageDivider,
    chain_from_spec,
)
from heatlog.probes.corrections import one_point_correction, two_point_correction
from heatlog.probes.design import (
    DividerDesign,
    design_divider,
    local_beta,
    oversampling_for,
    self_heating,
    series_resistor,
)
from heatlog.probes.fitting import CalibrationFit, fit_counts, fit_resistance
from heatlog.probes.models import MODEL_NAMES, ProbeModel, build_model
from heatlog.probes.probefile import (
    ProbeFile,
    load_probe,
    parse_probe,
    probe_from_fit,
    probe_to_toml,
    save_probe,
)
from heatlog.probes.rtd import CallendarVanDusen, pt100, pt1000, tolerance_class
from heatlog.probes.thermistor import Beta, SteinhartHart, SteinhartHart4
from heatlog.probes.validity import RANGE_MARGIN_K

__all__ = [
    "ADS1115Divider",
    "Beta",
    "CalibrationFit",
    "CallendarVanDusen",
    "Chain",
    "ChainReading",
    "DividerDesign",
    "MAX31865Chain",
    "MODEL_NAMES",
    "ProbeFile",
    "ProbeModel",
    "RANGE_MARGIN_K",
    "SteinhartHart",
    "SteinhartHart4",
    "VoltageDivider",
    "build_model",
    "chain_from_spec",
    "design_divider",
    "fit_counts",
    "fit_resistance",
    "load_probe",
    "local_beta",
    "one_point_correction",
    "oversampling_for",
    "parse_probe",
    "probe_from_fit",
    "probe_to_toml",
    "pt100",
    "pt1000",
    "save_probe",
    "self_heating",
    "series_resistor",
    "tolerance_class",
    "two_point_correction",
]
