"""Pack, warmer and setting-material metrics from a temperature curve.

For a product that warms (hand warmer, setting material, anything ``generic``) the interesting
side of a threshold is *above*; for a cold pack it is *below*. Metrics, all from the start of the
log segment:

* peak (maximum, or minimum for a pack) temperature and the time to reach it;
* time to first reach the threshold (linear interpolation between readings);
* time beyond the threshold, and time within a band [low, high] (piecewise-linear curve: each
  interval counts the fraction of its length on the wanted side);
* total heat per gram (from :mod:`heatlog.profile.heat`).

Intervals skipped as gaps count for nothing (the caller flags the result). Uncertainties: the
temperature uncertainty u_T (probe calibration and reading noise) shifts the curve against the
threshold, so time figures are re-evaluated at threshold ± u_T and half the spread is the
standard uncertainty (a numerical GUM sensitivity); the time to the peak is uncertain over the
span where the curve stays within u_T of the peak (rectangular).

Default thresholds are rules of thumb (common practice, no source); they are not product or
safety limits. Set your own with the options.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from heatlog.errors import InputError
from heatlog.gum import SQRT3

KINDS = ("warmer", "pack", "cement", "generic")


@dataclass(frozen=True)
class Thresholds:
    """A threshold (°C) and a band (low, high) in °C; either may be None (not evaluated)."""

    threshold_C: float | None = None
    band_C: tuple[float, float] | None = None
    source: str = "given"

    def __post_init__(self) -> None:
        if self.band_C is not None and not self.band_C[0] < self.band_C[1]:
            raise InputError(
                f"the band's low end ({self.band_C[0]:g} °C) must lie below its high end "
                f"({self.band_C[1]:g} °C)"
            )


#: Defaults per kind. Rules of thumb for useful warmth and coolness, not limits of any standard.
DEFAULT_THRESHOLDS: dict[str, Thresholds] = {
    "warmer": Thresholds(40.0, (40.0, 50.0), "common practice, no source; warm to the touch"),
    "pack": Thresholds(10.0, (0.0, 15.0), "common practice, no source; cool, not freezing"),
    "cement": Thresholds(None, None, "none by default"),
    "generic": Thresholds(None, None, "none by default"),
}


def direction(kind: str) -> int:
    """+1 when the wanted side of a threshold is above (warmers, setting), −1 for packs."""
    if kind not in KINDS:
        raise InputError(f"unknown kind {kind!r}; use one of {', '.join(KINDS)}")
    return -1 if kind == "pack" else 1


def time_beyond(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    level_C: float,
    sign: int,
    skip: np.ndarray | None = None,
) -> float:
    """Seconds the piecewise-linear curve spends on the ``sign`` side of ``level_C`` (inclusive)."""
    z = sign * (np.asarray(temp_C, dtype=np.float64) - level_C)
    dt = np.diff(time_s)
    z0, z1 = z[:-1], z[1:]
    full = (z0 >= 0) & (z1 >= 0)
    cross = (z0 >= 0) != (z1 >= 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(cross, np.maximum(z0, z1) / np.abs(z1 - z0), 0.0)
    part = np.where(full, dt, frac * dt)
    if skip is not None:
        part = np.where(skip, 0.0, part)
    return float(np.sum(part))


def first_reach(time_s: np.ndarray, temp_C: np.ndarray, level_C: float, sign: int) -> float | None:
    """Seconds from the first sample until the curve first reaches ``level_C``; None if never."""
    t = np.asarray(time_s, dtype=np.float64)
    z = sign * (np.asarray(temp_C, dtype=np.float64) - level_C)
    hit = z >= 0
    if not hit.any():
        return None
    i = int(np.argmax(hit))
    if i == 0:
        return 0.0
    frac = -z[i - 1] / (z[i] - z[i - 1])
    return float(t[i - 1] + frac * (t[i] - t[i - 1]) - t[0])


def _spread(low: float | None, high: float | None) -> float | None:
    if low is None or high is None:
        return None
    return abs(high - low) / 2.0


@dataclass(frozen=True)
class Metrics:
    """Peak, threshold and band figures with standard uncertainties (seconds and °C)."""

    kind: str
    side: str  # "above" or "below"
    peak_C: float
    u_peak_C: float
    time_to_peak_s: float
    u_time_to_peak_s: float
    thresholds: Thresholds
    u_temp_K: float
    time_to_threshold_s: float | None = None
    u_time_to_threshold_s: float | None = None
    time_beyond_threshold_s: float | None = None
    u_time_beyond_threshold_s: float | None = None
    time_in_band_s: float | None = None
    u_time_in_band_s: float | None = None

    def to_dict(self) -> dict[str, object]:
        th = self.thresholds
        out: dict[str, object] = {
            "kind": self.kind,
            "side": self.side,
            "peak_C": self.peak_C,
            "u_peak_C": self.u_peak_C,
            "time_to_peak_s": self.time_to_peak_s,
            "u_time_to_peak_s": self.u_time_to_peak_s,
            "u_temp_K_used": self.u_temp_K,
            "threshold_C": th.threshold_C,
            "band_C": None if th.band_C is None else list(th.band_C),
            "thresholds_source": th.source,
        }
        if th.threshold_C is not None:
            out.update(
                time_to_threshold_s=self.time_to_threshold_s,
                u_time_to_threshold_s=self.u_time_to_threshold_s,
                **{
                    f"time_{self.side}_threshold_s": self.time_beyond_threshold_s,
                    f"u_time_{self.side}_threshold_s": self.u_time_beyond_threshold_s,
                },
            )
        if th.band_C is not None:
            out.update(time_in_band_s=self.time_in_band_s, u_time_in_band_s=self.u_time_in_band_s)
        return out


def metrics(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    *,
    kind: str,
    thresholds: Thresholds | None = None,
    u_temp_K: float = 0.0,
    skip: np.ndarray | None = None,
) -> Metrics:
    """Peak, threshold and band metrics of one segment (see the module docstring).

    ``thresholds`` default to :data:`DEFAULT_THRESHOLDS` for the kind; ``u_temp_K`` is the
    standard uncertainty of a temperature reading (probe calibration and noise combined).
    """
    sign = direction(kind)
    th = DEFAULT_THRESHOLDS[kind] if thresholds is None else thresholds
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    if t.size < 2 or y.shape != t.shape:
        raise InputError("metrics need at least 2 samples with matching time and temperature")
    if not (math.isfinite(u_temp_K) and u_temp_K >= 0):
        raise InputError(f"the temperature uncertainty must be zero or positive, got {u_temp_K:g}")
    i_peak = int(np.argmax(sign * y))
    peak = float(y[i_peak])
    near = np.flatnonzero(sign * (y - peak) >= -u_temp_K)
    u_tpeak = float(t[near[-1]] - t[near[0]]) / 2.0 / SQRT3
    fields: dict[str, float | None] = {}
    if th.threshold_C is not None:
        level = th.threshold_C
        reach = first_reach(t, y, level, sign)
        fields["time_to_threshold_s"] = reach
        if reach is not None:
            # A higher reading is the same as a lower threshold: shift the level by ∓u_T.
            spread = _spread(
                first_reach(t, y, level - sign * u_temp_K, sign),
                first_reach(t, y, level + sign * u_temp_K, sign),
            )
            fields["u_time_to_threshold_s"] = (
                spread if spread is not None else float(t[-1] - t[0]) / SQRT3
            )
        fields["time_beyond_threshold_s"] = time_beyond(t, y, level, sign, skip)
        fields["u_time_beyond_threshold_s"] = (
            abs(
                time_beyond(t, y, level - u_temp_K, sign, skip)
                - time_beyond(t, y, level + u_temp_K, sign, skip)
            )
            / 2.0
        )
    if th.band_C is not None:
        lo, hi = th.band_C

        def in_band(shift: float) -> float:
            return time_beyond(t, y, lo + shift, 1, skip) - time_beyond(t, y, hi + shift, 1, skip)

        fields["time_in_band_s"] = in_band(0.0)
        fields["u_time_in_band_s"] = abs(in_band(-u_temp_K) - in_band(u_temp_K)) / 2.0
    return Metrics(
        kind=kind,
        side="below" if sign < 0 else "above",
        peak_C=peak,
        u_peak_C=u_temp_K,
        time_to_peak_s=float(t[i_peak] - t[0]),
        u_time_to_peak_s=u_tpeak,
        thresholds=th,
        u_temp_K=u_temp_K,
        **fields,
    )
