"""Reading chains: from converter counts to probe resistance, and back.

Each chain is a frozen dataclass with ``to_resistance(counts)``, ``to_counts(resistance)``,
``dresistance_dcounts(counts)`` and ``reading(model, counts)``, which reports the temperature and
the temperature step of one count there (the resolution, from dT/dR · dR/dcount).

* :class:`VoltageDivider` — a thermistor and a series resistor across the ADC reference
  (ratiometric); counts are the sum of ``oversample`` raw codes of ``bits`` bits. Thermistor on
  the low side: R = R_s·c/(F − c), F = oversample·2^bits (the firmware's
  ``R_fixed·raw/(4096 − raw)``); high side: R = R_s·(F − c)/c.
  ``bits=15`` (spec ``ratio:rs=..,side=..``) reads a Q15 ratio: the value the board logs for an
  ADS1115 channel and an ESP32 microvolt divider (firmware/LOGFORMAT.md), R = R_s·x/(32768 − x).
* :class:`ADS1115Divider` — the same divider read by an ADS1115 at a PGA full scale of ±6.144 ..
  ±0.256 V (LSB = FSR/32768, ADS1115 datasheet) with a measured excitation voltage; not
  ratiometric, so the excitation must be measured. Counts here are single midpoint codes (a
  bench reading); a board log holds the Q15 ratio instead: use ``ratio:``.
* :class:`MAX31865Chain` — the MAX31865 15-bit RTD ratio: R = code·R_ref/32768 (MAX31865
  datasheet), less the loop resistance of the leads for a 2-wire RTD; ``oversample`` (spec key
  ``n``) for the sum of n codes the board logs: R = sum·R_ref/(32768 n).

``to_counts`` returns the ideal, unrounded count; round it to simulate a converter.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from heatlog.errors import InputError, RangeError
from heatlog.probes.models import ProbeModel
from heatlog.probes.validity import as_array, check_positive_resistance, restore

#: ADS1115 programmable-gain full-scale ranges, volts (ADS1115 datasheet).
ADS1115_FSR_V = (6.144, 4.096, 2.048, 1.024, 0.512, 0.256)
ADS1115_CODES = 32768
MAX31865_CODES = 32768
_SIDES = ("low", "high")


@dataclass(frozen=True)
class ChainReading:
    """Counts converted through a chain and a probe model, with the step of one count."""

    counts: Any
    resistance_ohm: Any
    temp_C: Any
    step_K: Any  # |dT/dcount|: the temperature step of one count at this point


class _Chain:
    """``reading`` for any chain that offers ``to_resistance`` and ``dresistance_dcounts``."""

    name: ClassVar[str] = ""

    def to_resistance(self, counts: Any) -> Any:
        raise NotImplementedError

    def dresistance_dcounts(self, counts: Any) -> Any:
        raise NotImplementedError

    def reading(self, model: ProbeModel, counts: Any) -> ChainReading:
        """Temperature at ``counts`` for ``model``, and the temperature step of one count."""
        r = self.to_resistance(counts)
        t = model.resistance_to_temperature(r)
        step = np.abs(
            np.asarray(model.dtemperature_dresistance(r))
            * np.asarray(self.dresistance_dcounts(counts))
        )
        scalar = np.ndim(counts) == 0
        return ChainReading(
            counts=restore(np.asarray(counts, dtype=np.float64), scalar),
            resistance_ohm=r,
            temp_C=t,
            step_K=restore(step, scalar),
        )


def _check_side(side: str, chain: str) -> None:
    if side not in _SIDES:
        raise RangeError(f"{chain}: thermistor_side must be 'low' or 'high', got {side!r}")


def _ratio_counts(counts: Any, full_scale: float, chain: str) -> tuple[np.ndarray, bool]:
    arr, scalar = as_array(counts, "counts", "counts")
    bad = (arr <= 0.0) | (arr >= full_scale)
    if np.any(bad):
        value = float(np.ravel(arr)[np.argmax(np.ravel(bad))])
        raise RangeError(
            f"{chain}: count {value:g} lies outside 0 < counts < {full_scale:g}; a reading at "
            "either end means a shorted or open probe (check wiring and the chain settings)"
        )
    return arr, scalar


def _divider_resistance(c: np.ndarray, full: float, r_s: float, side: str) -> np.ndarray:
    return r_s * c / (full - c) if side == "low" else r_s * (full - c) / c


def _divider_slope(c: np.ndarray, full: float, r_s: float, side: str) -> np.ndarray:
    return r_s * full / (full - c) ** 2 if side == "low" else -r_s * full / (c * c)


def _divider_counts(r: np.ndarray, full: float, r_s: float, side: str) -> np.ndarray:
    return full * r / (r + r_s) if side == "low" else full * r_s / (r + r_s)


@dataclass(frozen=True)
class VoltageDivider(_Chain):
    """Ratiometric divider: thermistor and series resistor across the ADC reference."""

    r_series_ohm: float
    thermistor_side: str = "low"
    bits: int = 12
    oversample: int = 1

    name: ClassVar[str] = "divider"

    def __post_init__(self) -> None:
        _check_side(self.thermistor_side, self.name)
        if not self.r_series_ohm > 0:
            raise RangeError(f"divider: series resistor must be positive, got {self.r_series_ohm}")
        if self.bits not in (10, 12, 14, 15, 16):
            raise RangeError(
                f"divider: bits must be 10, 12, 14, 15 (a Q15 ratio) or 16, got {self.bits}"
            )
        if not (isinstance(self.oversample, int) and 1 <= self.oversample <= 65536):
            raise RangeError(
                f"divider: oversample must be a whole number of reads 1..65536, got {self.oversample}"
            )

    @property
    def full_scale(self) -> float:
        """F = oversample·2^bits: the summed count that would mean the full reference voltage."""
        return float(self.oversample * 2**self.bits)

    def to_resistance(self, counts: Any) -> Any:
        c, scalar = _ratio_counts(counts, self.full_scale, self.name)
        return restore(
            _divider_resistance(c, self.full_scale, self.r_series_ohm, self.thermistor_side), scalar
        )

    def dresistance_dcounts(self, counts: Any) -> Any:
        c, scalar = _ratio_counts(counts, self.full_scale, self.name)
        return restore(
            _divider_slope(c, self.full_scale, self.r_series_ohm, self.thermistor_side), scalar
        )

    def to_counts(self, resistance: Any) -> Any:
        r, scalar = as_array(resistance, "resistance", "ohms")
        check_positive_resistance(r)
        return restore(
            _divider_counts(r, self.full_scale, self.r_series_ohm, self.thermistor_side), scalar
        )


@dataclass(frozen=True)
class ADS1115Divider(_Chain):
    """A divider read by an ADS1115 (single-ended, midpoint to ground) with measured excitation."""

    r_series_ohm: float
    excitation_V: float
    fsr_V: float = 4.096
    thermistor_side: str = "low"

    name: ClassVar[str] = "ads1115"

    def __post_init__(self) -> None:
        _check_side(self.thermistor_side, self.name)
        if not self.r_series_ohm > 0:
            raise RangeError(f"ads1115: series resistor must be positive, got {self.r_series_ohm}")
        if not self.excitation_V > 0:
            raise RangeError(f"ads1115: excitation must be positive volts, got {self.excitation_V}")
        if not any(abs(self.fsr_V - f) < 1e-9 for f in ADS1115_FSR_V):
            raise RangeError(
                f"ads1115: full scale {self.fsr_V} V is not a PGA setting; use one of "
                f"{', '.join(f'{f:g}' for f in ADS1115_FSR_V)}"
            )

    @property
    def lsb_V(self) -> float:
        """One count in volts: FSR/32768 (ADS1115 datasheet)."""
        return self.fsr_V / ADS1115_CODES

    @property
    def _full(self) -> float:
        # The count the excitation voltage itself would read (may exceed the converter's range).
        return self.excitation_V / self.lsb_V

    def _counts(self, counts: Any) -> tuple[np.ndarray, bool]:
        c, scalar = _ratio_counts(counts, self._full, self.name)
        if np.any(c > ADS1115_CODES - 1):
            raise RangeError(
                f"ads1115: count above {ADS1115_CODES - 1} is beyond the ±{self.fsr_V:g} V range; "
                "choose a larger full scale"
            )
        return c, scalar

    def to_resistance(self, counts: Any) -> Any:
        c, scalar = self._counts(counts)
        return restore(
            _divider_resistance(c, self._full, self.r_series_ohm, self.thermistor_side), scalar
        )

    def dresistance_dcounts(self, counts: Any) -> Any:
        c, scalar = self._counts(counts)
        return restore(
            _divider_slope(c, self._full, self.r_series_ohm, self.thermistor_side), scalar
        )

    def to_counts(self, resistance: Any) -> Any:
        r, scalar = as_array(resistance, "resistance", "ohms")
        check_positive_resistance(r)
        c = _divider_counts(r, self._full, self.r_series_ohm, self.thermistor_side)
        if np.any(c > ADS1115_CODES - 1):
            raise RangeError(
                f"ads1115: the midpoint voltage exceeds the ±{self.fsr_V:g} V range at this "
                "resistance; choose a larger full scale"
            )
        return restore(c, scalar)


@dataclass(frozen=True)
class MAX31865Chain(_Chain):
    """MAX31865 RTD converter: R = code·R_ref/32768 − lead loop resistance (2-wire RTDs)."""

    r_ref_ohm: float = 430.0
    lead_ohm: float = 0.0
    oversample: int = 1

    name: ClassVar[str] = "max31865"

    def __post_init__(self) -> None:
        if not self.r_ref_ohm > 0:
            raise RangeError(f"max31865: reference resistor must be positive, got {self.r_ref_ohm}")
        if not self.lead_ohm >= 0:
            raise RangeError(f"max31865: lead resistance cannot be negative, got {self.lead_ohm}")
        if not (isinstance(self.oversample, int) and 1 <= self.oversample <= 65536):
            raise RangeError(
                f"max31865: n must be a whole number of summed codes 1..65536, got {self.oversample}"
            )

    @property
    def full_scale(self) -> float:
        """The summed count that would mean R = R_ref: 32768·n."""
        return float(MAX31865_CODES * self.oversample)

    def to_resistance(self, counts: Any) -> Any:
        c, scalar = _ratio_counts(counts, self.full_scale, self.name)
        r = c * self.r_ref_ohm / self.full_scale - self.lead_ohm
        check_positive_resistance(r)
        return restore(r, scalar)

    def dresistance_dcounts(self, counts: Any) -> Any:
        c, scalar = _ratio_counts(counts, self.full_scale, self.name)
        return restore(np.full_like(c, self.r_ref_ohm / self.full_scale), scalar)

    def to_counts(self, resistance: Any) -> Any:
        r, scalar = as_array(resistance, "resistance", "ohms")
        check_positive_resistance(r)
        c = (r + self.lead_ohm) * self.full_scale / self.r_ref_ohm
        if np.any(c >= self.full_scale):
            raise RangeError(
                f"max31865: resistance plus leads reaches the reference {self.r_ref_ohm:g} Ω; "
                "use a larger reference resistor"
            )
        return restore(c, scalar)


Chain = VoltageDivider | ADS1115Divider | MAX31865Chain


# Short keys accepted by chain_from_spec, per chain: key -> (field name, converter).
_SPEC_KEYS: dict[str, dict[str, tuple[str, type]]] = {
    "divider": {
        "rs": ("r_series_ohm", float),
        "side": ("thermistor_side", str),
        "bits": ("bits", int),
        "oversample": ("oversample", int),
    },
    "ads1115": {
        "rs": ("r_series_ohm", float),
        "vexc": ("excitation_V", float),
        "fsr": ("fsr_V", float),
        "side": ("thermistor_side", str),
    },
    "ratio": {"rs": ("r_series_ohm", float), "side": ("thermistor_side", str)},
    "max31865": {
        "rref": ("r_ref_ohm", float),
        "lead": ("lead_ohm", float),
        "n": ("oversample", int),
    },
}
_CHAIN_CLASSES: dict[str, type] = {
    "divider": VoltageDivider,
    "ads1115": ADS1115Divider,
    "ratio": VoltageDivider,
    "max31865": MAX31865Chain,
}
# Fixed fields of a spec kind: ``ratio:`` is the divider read as a Q15 ratio (one value, not a sum).
_SPEC_FIXED: dict[str, dict[str, Any]] = {"ratio": {"bits": 15, "oversample": 1}}
CHAIN_SPEC_HELP = (
    "divider:rs=10000,side=low,bits=12,oversample=16 | ratio:rs=10000,side=low | "
    "ads1115:rs=10000,vexc=3.3,fsr=4.096,side=low | max31865:rref=430,lead=0,n=4"
)


def chain_from_spec(spec: str) -> Chain:
    """Build a chain from a short text such as ``divider:rs=10000,bits=12,oversample=16``.

    ``ratio:rs=R,side=S`` is ``divider:rs=R,side=S,bits=15,oversample=1`` (a Q15 ratio as the
    board logs it for ADS1115 and ESP32 divider channels); ``max31865:...,n=N`` reads the sum of
    N codes the board logs with oversampling N."""
    kind, _, rest = spec.strip().partition(":")
    kind = kind.strip().lower()
    if kind not in _SPEC_KEYS:
        raise InputError(f"unknown chain {kind!r}; write it as {CHAIN_SPEC_HELP}")
    keys = _SPEC_KEYS[kind]
    kwargs: dict[str, Any] = dict(_SPEC_FIXED.get(kind, {}))
    for item in filter(None, (part.strip() for part in rest.split(","))):
        key, eq, value = item.partition("=")
        key = key.strip().lower()
        if not eq or key not in keys:
            raise InputError(
                f"chain {kind}: cannot use {item!r}; keys are {', '.join(keys)} (as key=value)"
            )
        field_name, convert = keys[key]
        try:
            kwargs[field_name] = convert(value.strip())
        except ValueError:
            raise InputError(
                f"chain {kind}: {key} must be a {convert.__name__}, got {value!r}"
            ) from None
    try:
        chain: Chain = _CHAIN_CLASSES[kind](**kwargs)
    except TypeError:
        need = [k for k, (f, _) in keys.items() if f in ("r_series_ohm", "excitation_V")]
        raise InputError(f"chain {kind}: give {', '.join(need)} (as key=value)") from None
    return chain
