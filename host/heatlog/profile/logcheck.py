"""Checks a long log before anything is integrated: probe faults, clock resets and time gaps.

Long field logs (hours to days) break in three ways that must never be integrated over silently:

* a **probe fault** flagged by the board in a status column: the sample is dropped and counted;
* a **clock reset** (time goes backwards, or repeats): the log is split into segments at each
  reset, because the time elapsed across the reset is unknown;
* a **gap** (a step longer than ``gap_factor`` times the median step): reported with its start
  and length; by default the heat-loss integral is not taken across it (see
  :class:`GapPolicy`), so results that span it are flagged.

Pure: arrays in, a frozen :class:`LogCheck` out.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

import numpy as np

from heatlog.errors import InputError

#: A step longer than this many median steps is a gap (common practice, no source).
DEFAULT_GAP_FACTOR = 5.0
#: Fewest samples a segment needs to be analysed.
MIN_SEGMENT_ROWS = 3


class GapPolicy(StrEnum):
    """What to do with the integral across a gap.

    ``EXCLUDE`` (the default): the interval contributes nothing to the heat-loss integral, the
    maturity or the threshold times, and every result after the gap is flagged incomplete (the
    heat lost during the gap is estimated by linear interpolation and reported beside it).
    ``INTERPOLATE``: the readings either side are joined by a straight line (the trapezoid rule
    across the gap), only when the user asks; an uncertainty component covers the guess.
    """

    EXCLUDE = "exclude"
    INTERPOLATE = "interpolate"


@dataclass(frozen=True)
class Gap:
    """A step in time longer than the gap limit, inside one segment."""

    index: int  # the sample before the gap, in the segment's own numbering
    start_s: float
    length_s: float

    def to_dict(self) -> dict[str, float]:
        return {"start_s": self.start_s, "length_s": self.length_s}


@dataclass(frozen=True)
class Reset:
    """Time went backwards (or repeated) between two kept samples: the clock was reset."""

    row: int  # data row (1 = first below the header) of the sample after the reset
    time_before_s: float
    time_after_s: float

    def to_dict(self) -> dict[str, float]:
        return {
            "row": self.row,
            "time_before_s": self.time_before_s,
            "time_after_s": self.time_after_s,
        }


@dataclass(frozen=True, eq=False)
class Segment:
    """A stretch of log with strictly increasing time; ``rows`` are the data rows it came from."""

    time_s: np.ndarray
    temp_C: np.ndarray
    env_C: np.ndarray
    rows: np.ndarray
    gaps: tuple[Gap, ...]
    median_step_s: float

    @property
    def duration_s(self) -> float:
        return float(self.time_s[-1] - self.time_s[0])

    def excluded(self, policy: GapPolicy) -> np.ndarray:
        """Boolean mask over the n − 1 intervals: True where the interval is a gap to skip."""
        mask = np.zeros(self.time_s.size - 1, dtype=bool)
        if policy is GapPolicy.EXCLUDE:
            mask[[g.index for g in self.gaps]] = True
        return mask

    def to_dict(self) -> dict[str, object]:
        return {
            "first_row": int(self.rows[0]),
            "last_row": int(self.rows[-1]),
            "samples": int(self.time_s.size),
            "start_s": float(self.time_s[0]),
            "end_s": float(self.time_s[-1]),
            "duration_s": self.duration_s,
            "median_step_s": self.median_step_s,
            "gaps": [g.to_dict() for g in self.gaps],
        }


@dataclass(frozen=True, eq=False)
class LogCheck:
    """The log split into clean segments, with what was found on the way."""

    segments: tuple[Segment, ...]
    resets: tuple[Reset, ...]
    faulted: int
    rows: int
    gap_factor: float
    dropped: int = 0  # good samples in stretches too short to analyse (between close resets)

    def to_dict(self) -> dict[str, object]:
        return {
            "rows": self.rows,
            "faulted_samples_excluded": self.faulted,
            "samples_in_too_short_segments": self.dropped,
            "clock_resets": [r.to_dict() for r in self.resets],
            "gap_factor": self.gap_factor,
            "segments": [s.to_dict() for s in self.segments],
        }


def _as_env(env_C: np.ndarray | float, n: int, where: str) -> np.ndarray:
    env = np.asarray(env_C, dtype=np.float64)
    if env.ndim == 0:
        env = np.full(n, float(env))
    if env.shape != (n,):
        raise InputError(f"{where}: the environment channel has {env.size} values, time has {n}")
    return env


def check_log(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    env_C: np.ndarray | float,
    *,
    flags: np.ndarray | None = None,
    gap_factor: float = DEFAULT_GAP_FACTOR,
    where: str = "log",
) -> LogCheck:
    """Drop faulted samples, split at clock resets and find gaps (see the module docstring).

    ``env_C`` is the environment temperature per sample or one constant. ``flags`` is the
    board's status column: any non-zero value marks a probe fault. Segments shorter than
    :data:`MIN_SEGMENT_ROWS` samples are dropped (and reported through the resets around them).
    """
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    if t.ndim != 1 or y.shape != t.shape:
        raise InputError(f"{where}: time and temperature must be 1-D arrays of equal length")
    env = _as_env(env_C, t.size, where)
    if not gap_factor > 1.0:
        raise InputError(f"{where}: the gap factor must be above 1, got {gap_factor:g}")
    for name, arr in (("time", t), ("temperature", y), ("environment", env)):
        bad = ~np.isfinite(arr)
        if bad.any():
            raise InputError(
                f"{where}: {name} holds a non-finite value in data row {int(np.argmax(bad)) + 1}; "
                "remove the row or flag it as a probe fault"
            )
    rows = np.arange(1, t.size + 1)
    faulted = 0
    if flags is not None:
        f = np.asarray(flags)
        if f.shape != t.shape:
            raise InputError(f"{where}: the flags column has {f.size} values, time has {t.size}")
        good = f == 0
        faulted = int(t.size - np.count_nonzero(good))
        t, y, env, rows = t[good], y[good], env[good], rows[good]
    if t.size < MIN_SEGMENT_ROWS:
        raise InputError(
            f"{where}: need at least {MIN_SEGMENT_ROWS} good samples, got {t.size} "
            f"({faulted} flagged as probe faults)"
        )
    step = np.diff(t)
    breaks = np.flatnonzero(step <= 0)
    resets = tuple(Reset(int(rows[i + 1]), float(t[i]), float(t[i + 1])) for i in breaks)
    bounds = np.concatenate(([0], breaks + 1, [t.size]))
    segments = []
    for a, b in zip(bounds[:-1], bounds[1:], strict=True):
        if b - a < MIN_SEGMENT_ROWS:
            continue
        seg_step = step[a : b - 1]
        median = float(np.median(seg_step))
        gap_idx = np.flatnonzero(seg_step > gap_factor * median)
        gaps = tuple(Gap(int(i), float(t[a + i]), float(seg_step[i])) for i in gap_idx)
        segments.append(Segment(t[a:b], y[a:b], env[a:b], rows[a:b], gaps, median))
    if not segments:
        raise InputError(
            f"{where}: the clock resets leave no stretch of {MIN_SEGMENT_ROWS} or more samples "
            "with rising time; check the board's clock"
        )
    dropped = int(t.size - sum(seg.time_s.size for seg in segments))
    return LogCheck(
        tuple(segments), resets, faulted, int(np.asarray(time_s).size), gap_factor, dropped
    )
