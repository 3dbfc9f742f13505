"""Probe design helper: series resistor, resolution, self-heating and oversampling of a divider.

Series-resistor criteria (both derived here; thermistor on the low side, V = R_T/(R_T + R_s)):

* ``max-span`` — the largest change of V/V_ref between T1 and T2. The span
  R1/(R1 + R_s) − R2/(R2 + R_s) is stationary in R_s where R1/(R1 + R_s)² = R2/(R2 + R_s)², i.e.
  R_s = √(R(T1)·R(T2)).
* ``linearity`` — the inflection of V(T) at the mid-range temperature Tm (K), so V is most nearly
  linear around it. With R_T = R∞ e^(β/T) and u = ln(R_T/R_s), V = 1/(1 + e^(−u)) and
  du/dT = −β/T²; d²V/dT² = 0 gives (1 − 2V)β/T + 2 = 0, so V = (β + 2Tm)/(2β) and
  R_s = R(Tm)(β − 2Tm)/(β + 2Tm). For a Steinhart–Hart curve β is the local value
  β(Tm) = −Tm²·(dR/dT)/R.

Resolution is the temperature step of one ADC code, |dT/dR|·|dR/dcode|. Oversampling (summing N
reads) is taken to gain ½ bit per doubling of N, i.e. the step falls as 1/√N — only while the
noise at the input is at least about 1 LSB (common practice, no source); without noise, summing
identical codes gains nothing.

Self-heating: P = V²R_T/(R_s + R_T)² and ΔT = P/δ with δ the dissipation constant (datasheet,
mW/K, in the medium used).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from heatlog.errors import RangeError
from heatlog.probes.chains import VoltageDivider
from heatlog.probes.models import ProbeModel
from heatlog.probes.thermistor import ZERO_CELSIUS_K

CRITERIA = ("max-span", "linearity")
_MAX_OVERSAMPLE = 65536
OVERSAMPLING_NOTE = (
    "oversampling gains about 1/2 bit per doubling of the reads only while noise at the ADC "
    "input is at least 1 LSB (common practice, no source)"
)


def local_beta(model: ProbeModel, t_C: float) -> float:
    """β(T) = −T²·(dR/dT)/R, the β of the curve's tangent at ``t_C`` (K)."""
    r = float(model.temperature_to_resistance(t_C))
    t_k = t_C + ZERO_CELSIUS_K
    return float(-(t_k**2) / (r * float(model.dtemperature_dresistance(r))))


def series_resistor(
    model: ProbeModel, t1_C: float, t2_C: float, criterion: str = "max-span"
) -> float:
    """Series resistor (Ω) for a divider used over ``t1_C``..``t2_C`` by ``criterion``."""
    if criterion not in CRITERIA:
        raise RangeError(f"unknown criterion {criterion!r}; use one of {', '.join(CRITERIA)}")
    if not t1_C < t2_C:
        raise RangeError(f"design range must run from low to high, got {t1_C:g}..{t2_C:g} °C")
    if criterion == "max-span":
        r1, r2 = model.temperature_to_resistance(np.array([t1_C, t2_C]))
        return float(math.sqrt(r1 * r2))
    tm_c = 0.5 * (t1_C + t2_C)
    tm = tm_c + ZERO_CELSIUS_K
    beta = local_beta(model, tm_c)
    if beta <= 2.0 * tm:
        raise RangeError(
            f"local beta {beta:.0f} K at {tm_c:g} °C is below 2·Tm: no inflection point, use max-span"
        )
    return float(model.temperature_to_resistance(tm_c)) * (beta - 2.0 * tm) / (beta + 2.0 * tm)


def self_heating(
    excitation_V: Any, r_series_ohm: float, r_thermistor_ohm: Any, dissipation_mW_per_K: float
) -> tuple[Any, Any]:
    """Power in the thermistor (W) and its temperature rise (K): P = V²R_T/(R_s+R_T)², ΔT = P/δ."""
    if not dissipation_mW_per_K > 0:
        raise RangeError(f"dissipation constant must be positive mW/K, got {dissipation_mW_per_K}")
    r_t = np.asarray(r_thermistor_ohm, dtype=np.float64)
    p = np.asarray(excitation_V, dtype=np.float64) ** 2 * r_t / (r_series_ohm + r_t) ** 2
    dt = p / (dissipation_mW_per_K * 1e-3)
    if p.ndim == 0:
        return float(p), float(dt)
    return p, dt


def oversampling_for(step_K: float, target_K: float) -> int | None:
    """Reads to sum so that step/√N ≤ target (a power of 4), or None beyond 65536 reads."""
    if not target_K > 0:
        raise RangeError(f"target resolution must be positive, got {target_K}")
    if step_K <= target_K:
        return 1
    halvings = math.ceil(math.log2(step_K / target_K) - 1e-12)
    n = 4**halvings
    return n if n <= _MAX_OVERSAMPLE else None


@dataclass(frozen=True, eq=False)
class DividerDesign:
    """A divider over a temperature range: the resistor chosen and what it gives."""

    r_series_ohm: float
    criterion: str  # "max-span", "linearity" or "given"
    bits: int
    oversample: int
    excitation_V: float
    dissipation_mW_per_K: float
    temp_C: np.ndarray
    resistance_ohm: np.ndarray
    ratio: np.ndarray  # V/V_ref at the ADC pin
    step_raw_mK: np.ndarray  # one raw code
    resolution_mK: np.ndarray  # one raw code / √oversample
    self_heating_mW: np.ndarray
    self_heating_K: np.ndarray
    target_mK: float | None
    oversample_needed: int | None
    notes: tuple[str, ...]

    @property
    def worst_resolution_mK(self) -> float:
        return float(np.max(self.resolution_mK))

    @property
    def max_self_heating_K(self) -> float:
        return float(np.max(self.self_heating_K))

    def to_dict(self) -> dict[str, Any]:
        return {
            "r_series_ohm": self.r_series_ohm,
            "criterion": self.criterion,
            "bits": self.bits,
            "oversample": self.oversample,
            "excitation_V": self.excitation_V,
            "dissipation_mW_per_K": self.dissipation_mW_per_K,
            "temp_C": self.temp_C,
            "resistance_ohm": self.resistance_ohm,
            "ratio": self.ratio,
            "step_raw_mK": self.step_raw_mK,
            "resolution_mK": self.resolution_mK,
            "worst_resolution_mK": self.worst_resolution_mK,
            "self_heating_mW": self.self_heating_mW,
            "self_heating_K": self.self_heating_K,
            "max_self_heating_K": self.max_self_heating_K,
            "target_mK": self.target_mK,
            "oversample_needed": self.oversample_needed,
            "notes": list(self.notes),
        }


def design_divider(
    model: ProbeModel,
    t1_C: float,
    t2_C: float,
    *,
    criterion: str = "max-span",
    r_series_ohm: float | None = None,
    bits: int = 12,
    oversample: int = 1,
    excitation_V: float = 3.3,
    dissipation_mW_per_K: float = 1.5,
    target_mK: float | None = None,
    n: int = 21,
) -> DividerDesign:
    """Choose (or evaluate a given) series resistor and report resolution and self-heating."""
    if r_series_ohm is None:
        r_s = series_resistor(model, t1_C, t2_C, criterion)
    else:
        if not t1_C < t2_C:
            raise RangeError(f"design range must run from low to high, got {t1_C:g}..{t2_C:g} °C")
        if not r_series_ohm > 0:
            raise RangeError(f"series resistor must be positive, got {r_series_ohm}")
        r_s, criterion = float(r_series_ohm), "given"
    if not excitation_V > 0:
        raise RangeError(f"excitation must be positive volts, got {excitation_V}")
    raw = VoltageDivider(r_s, "low", bits, 1)
    VoltageDivider(r_s, "low", bits, oversample)  # validates oversample
    t = np.linspace(t1_C, t2_C, n)
    r = np.asarray(model.temperature_to_resistance(t))
    counts = raw.to_counts(r)
    step_k = np.abs(np.asarray(model.dtemperature_dresistance(r)) * raw.dresistance_dcounts(counts))
    resolution_k = step_k / math.sqrt(oversample)
    p_w, dt_k = self_heating(excitation_V, r_s, r, dissipation_mW_per_K)
    notes = [OVERSAMPLING_NOTE]
    needed = None
    if target_mK is not None:
        needed = oversampling_for(float(np.max(step_k)), target_mK * 1e-3)
        if needed is None:
            notes.append(
                f"{target_mK:g} mK is not reachable by oversampling up to {_MAX_OVERSAMPLE} reads; "
                "use a converter with more bits or a narrower range"
            )
    worst_heat = float(np.max(dt_k))
    if worst_heat > float(np.max(resolution_k)):
        notes.append(
            f"self-heating up to {worst_heat:.3g} K exceeds the resolution; excite the divider only "
            "while reading, raise R_s or lower the excitation"
        )
    return DividerDesign(
        r_series_ohm=r_s,
        criterion=criterion,
        bits=bits,
        oversample=oversample,
        excitation_V=excitation_V,
        dissipation_mW_per_K=dissipation_mW_per_K,
        temp_C=t,
        resistance_ohm=r,
        ratio=counts / raw.full_scale,
        step_raw_mK=step_k * 1e3,
        resolution_mK=resolution_k * 1e3,
        self_heating_mW=np.asarray(p_w) * 1e3,
        self_heating_K=np.asarray(dt_k),
        target_mK=target_mK,
        oversample_needed=needed,
        notes=tuple(notes),
    )
