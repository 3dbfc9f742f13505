"""The input gate: plausibility checks every logged series passes before anything is computed.

Every thermogram, long-run log and raw-reading log goes through :func:`gate_series` after
:mod:`heatlog.csvtable` has read it and before the reduction or the profile maths see it. What
it finds is data, a :class:`Finding`: either a refusal (raised as :class:`InputRefused`, one
line saying what to do) or a flagged correction that is carried with the result into the text
output, the JSON (``findings``) and the report. The checks, in order:

* **absurd values**: a time beyond ±1e13 (epoch milliseconds fit below it) or a reading beyond
  ±1e6 is never used in arithmetic; a few isolated ones are left out and flagged, more are
  refused;
* **time glitches**: an exact duplicate row, or one time stamp out of order between two that
  are in order, is left out and flagged;
* **time units**: a unit in the header (``time [ms]``, ``[min]``, ``[h]``) is applied; without
  one, milliseconds and hours are recognised from the sampling pattern and the run's length
  and converted, flagged;
* **temperature units**: a unit in the header (``[K]``, ``(°F)``) is applied; readings that lie
  where kelvin would be (200–450) are converted from kelvin, flagged;
* **probe-fault sentinels** (−127, 85 for one-wire DS-type sensors, −40, ±999, ±9999) that
  jump away from their neighbours, and rows marked in a flags column, are left out, flagged;
* **spikes**: a Hampel test on the residuals to a running median (window of 7); a run of one to
  three readings that leaves the curve and comes back to it (both neighbours agree with each
  other) is left out and flagged. Physically impossible readings (below −273.15 °C or above
  2000 °C) that are not isolated are refused.

Pure: arrays in, a :class:`Gated` out.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

from heatlog import smoothing
from heatlog.errors import InputError
from heatlog.orderstats import median
from heatlog.runschema import QUANTITY_BOUNDS

Severity = Literal["refuse", "flag"]

#: Beyond these no number is used in arithmetic (chosen far outside any real log; common
#: practice, no source): epoch milliseconds (≈ 1.8e12) fit below the time bound.
MAX_ABS_TIME = 1e13
MAX_ABS_READING = 1e6
#: Physical bounds on a temperature in °C: absolute zero (docs/REFERENCES.md: SI-BROCHURE) and
#: a ceiling far above any calorimeter, warmer, pack or setting material (common practice, no
#: source).
MIN_TEMP_C = -273.15
MAX_TEMP_C = 2000.0
#: Readings loggers write when a probe fails: 85 (the power-on value of a one-wire DS18B20-type
#: sensor, docs/REFERENCES.md: DS18B20), −127 (what common one-wire libraries return for a
#: missing device, from memory), −40 (bottom of many digital sensors' range), −99, ±999, ±9999
#: (common practice, no source).
SENTINELS = (-127.0, 85.0, -40.0, -999.0, 999.0, -9999.0, 9999.0, -99.0)
#: A sentinel is a fault only when it jumps at least this far from its neighbours (K).
SENTINEL_JUMP_K = 2.0
#: Hampel test against a running median, scale 1.4826·MAD (docs/REFERENCES.md: HAMPEL-1974):
#: window, threshold in robust standard deviations, and the smallest threshold in K and in
#: reading steps (common practice, no source).
HAMPEL_WINDOW = 7
HAMPEL_SIGMAS = 10.0
MIN_SPIKE_K = 0.05
MIN_SPIKE_STEPS = 4.0
MAX_SPIKE_RUN = 3
#: More than this share of rows left out and the log is refused rather than patched.
MAX_DROPPED_SHARE = 0.05
#: Longest plausible run, s: a cup thermogram and a long run (common practice, no source).
MAX_RUN_S = {"thermogram": 3 * 86400.0, "profile": 400 * 86400.0}
#: Longest plausible long run by its kind (``heatlog profile --kind``): warmers and packs last
#: hours, setting materials weeks (common practice, no source).
MAX_PROFILE_S = {"warmer": 3 * 86400.0, "pack": 3 * 86400.0, "cement": 120 * 86400.0}
#: Kelvin readings: the median lies here and nothing lies below KELVIN_MIN.
KELVIN_RANGE = (200.0, 450.0)
KELVIN_MIN = 150.0

_TIME_UNITS = {
    "s": 1.0,
    "sec": 1.0,
    "secs": 1.0,
    "seconds": 1.0,
    "second": 1.0,
    "ms": 1e-3,
    "msec": 1e-3,
    "milliseconds": 1e-3,
    "min": 60.0,
    "mins": 60.0,
    "minutes": 60.0,
    "minute": 60.0,
    "h": 3600.0,
    "hr": 3600.0,
    "hrs": 3600.0,
    "hours": 3600.0,
    "hour": 3600.0,
    "d": 86400.0,
    "days": 86400.0,
    "day": 86400.0,
}
_TEMP_UNITS = {
    "°c": "C",
    "c": "C",
    "degc": "C",
    "deg c": "C",
    "celsius": "C",
    "k": "K",
    "kelvin": "K",
    "°f": "F",
    "f": "F",
    "degf": "F",
    "deg f": "F",
    "fahrenheit": "F",
}


@dataclass(frozen=True)
class Finding:
    """One thing the gate found: a refusal, or a correction made and flagged."""

    code: str
    severity: Severity
    message: str
    action: str
    lines: tuple[int, ...] = ()
    count: int = 0  # rows left out because of it

    def text(self) -> str:
        head = "refused" if self.severity == "refuse" else "flagged"
        return f"{head} [{self.code}]: {self.message}; {self.action}"

    def to_dict(self) -> dict[str, Any]:
        return {
            "code": self.code,
            "severity": self.severity,
            "message": self.message,
            "action": self.action,
            "lines": list(self.lines),
            "rows_left_out": self.count,
        }


class InputRefused(InputError):
    """The gate refused an input; ``finding`` says why and what to do."""

    def __init__(self, where: str, finding: Finding):
        super().__init__(f"{where}: {finding.message}; {finding.action}")
        self.finding = finding


def refuse(where: str, code: str, message: str, action: str, lines: Sequence[int] = ()) -> None:
    raise InputRefused(where, Finding(code, "refuse", message, action, tuple(lines)))


@dataclass(frozen=True, eq=False)
class Gated:
    """What passed the gate: the kept rows (converted to s and °C) and the findings."""

    time_s: np.ndarray
    temp_C: np.ndarray
    channels: dict[str, np.ndarray]
    keep: np.ndarray  # over the rows as read
    findings: tuple[Finding, ...] = field(default_factory=tuple)


def _line_list(lines: np.ndarray, rows: np.ndarray, limit: int = 5) -> tuple[int, ...]:
    return tuple(int(lines[r]) for r in rows[:limit])


def _lines_text(lines: tuple[int, ...], total: int) -> str:
    if not lines:
        return ""
    more = f" and {total - len(lines)} more" if total > len(lines) else ""
    return (
        ("line " if len(lines) == 1 and not more else "lines ") + ", ".join(map(str, lines)) + more
    )


def _beyond(
    a: np.ndarray, bound: float, span: tuple[float, float] | None = None
) -> np.ndarray | None:
    """Where |a| > bound, or None when nowhere: the range (``span``, (min, max) when the caller
    has it) is looked at first, so a clean column costs two reductions instead of full-size
    temporaries."""
    if a.size == 0:
        return None
    low, high = span if span is not None else (float(a.min()), float(a.max()))
    if high <= bound and low >= -bound:
        return None
    return np.abs(a) > bound


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """[start, stop) of each run of True."""
    if not mask.any():
        return []
    d = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    return list(zip(np.flatnonzero(d == 1).tolist(), np.flatnonzero(d == -1).tolist(), strict=True))


def running_median(y: np.ndarray, window: int = HAMPEL_WINDOW) -> np.ndarray:
    """Running median over ``window`` readings (fewer when the series is shorter), the ends
    repeated: equal to ``scipy.ndimage.median_filter(y, size=min(window, max(1, y.size)),
    mode="nearest")`` without importing scipy (:func:`heatlog.smoothing.running_median`)."""
    return smoothing.running_median(y, min(window, max(1, y.size)))


def _step(y: np.ndarray) -> float:
    """The reading step (quantisation) seen in the data: a low percentile of non-zero changes."""
    d = np.abs(np.diff(y))
    d = d[d > 0]
    return float(np.percentile(d, 5)) if d.size else 0.0


def _abs_second_differences(v: np.ndarray, out: np.ndarray | None = None) -> Iterator[np.ndarray]:
    """``np.abs(np.diff(v, 2))``, the same numbers, block by block: into ``out`` when given (one
    array instead of three of the series' length; each fresh array of a long log costs its page
    faults), else each block in a small array of its own."""
    size = max(v.size - 2, 0)
    step = smoothing.BLOCK
    for start in range(0, size, step):
        stop = min(start + step, size)
        first = np.diff(v[start : stop + 2])
        part = np.empty(stop - start) if out is None else out[start:stop]
        np.subtract(first[1:], first[:-1], out=part)
        np.abs(part, out=part)
        yield part


def _window_reach(v: np.ndarray) -> float:
    """max over i of |v_i − x| for x anywhere in the window of ``HAMPEL_WINDOW`` (7) readings
    around i (the ends repeated outward, as the running median has them). Those x are readings
    at most 3 rows from i (a repeated end is such a reading), so this is the largest
    |v_(i+lag) − v_i| for lag 1 to 3: each one subtraction, as max7 − v_i is, hence the same
    number, worked through block by block into one small buffer."""
    half = HAMPEL_WINDOW // 2
    n = v.size
    step = smoothing.BLOCK
    buf = np.empty(min(step, n))
    reach = 0.0
    for start in range(0, n - 1, step):
        stop = min(start + step, n)
        for lag in range(1, half + 1):
            m = min(stop, n - lag) - start
            if m > 0:
                d = np.subtract(v[start + lag : start + lag + m], v[start : start + m], out=buf[:m])
                reach = max(reach, float(d.max()), -float(d.min()))
    return reach


def spike_rows(y: np.ndarray, valid: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Isolated spikes among the ``valid`` readings (Hampel test on residuals to a running
    median, window 7): a run of at most three readings that leaves the curve and comes back,
    both neighbours agreeing with each other. Returns (spike rows, threshold-exceeding rows that
    are not isolated spikes), both as indices into ``y``."""
    none = np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    every = bool(valid.all())  # then the readings are used as they are, not gathered
    idx = np.arange(0) if every else np.flatnonzero(valid)
    if (y.size if every else idx.size) < HAMPEL_WINDOW:
        return none
    v = y if every else y[idx]

    # The threshold is at least max(10σ, MIN_SPIKE_K) (below): when the largest residual stays
    # within that, nothing is found, so a clean log passes without the reading step or σ's
    # median (a selection among all the readings). 10σ reaches the largest residual when the
    # median of |second differences| is `enough` (with a 1e-9 margin over rounding), and the
    # median is at least that when fewer than half of them lie below it.
    # Both tests below also hold for any bound above the largest residual, so a cheaper bound
    # is tried first (the median lies within its window, so |v − med| is at most the window's
    # reach from v: half the work of the median network); the running median and the exact
    # largest residual only when the bound does not settle it. A clean log needs neither a
    # full-size running median nor a residual array.
    def quiet(bound: float) -> bool:
        if not bound > MIN_SPIKE_K:
            return True
        enough = bound * (1.0 + 1e-9) * math.sqrt(6.0) / (HAMPEL_SIGMAS * 1.4826)
        below = sum(int(np.count_nonzero(part < enough)) for part in _abs_second_differences(v))
        return below <= (v.size - 3) // 2  # (the second differences number v.size − 2)

    if quiet(_window_reach(v)):
        return none
    med = running_median(v)
    r = v - med
    biggest = max(float(r.max()), -float(r.min()))  # max |r|, without a full-size |r|
    if quiet(biggest):
        return none
    second = np.empty(v.size - 2)
    for _ in _abs_second_differences(v, second):
        pass
    # the reading noise from second differences (sd √6·σ for independent noise): the residuals to
    # a running median understate it (the median is one of the readings, so a seventh of them
    # are exactly zero), which flagged ordinary 4σ readings of clean logs as spikes
    sigma = 1.4826 * float(median(second, overwrite=True)) / math.sqrt(6.0)
    floor = max(HAMPEL_SIGMAS * sigma, MIN_SPIKE_K)
    if not biggest > floor:
        return none
    thr = max(floor, MIN_SPIKE_STEPS * _step(med))
    out = np.abs(r) > thr
    spikes: list[int] = []
    other: list[int] = []
    for ra, rb in _runs(out):
        # the core of the run: a spike drags the running median of its neighbours by a step of
        # the curve, so only readings off by more than half the largest residual are its own
        big = np.abs(r[ra:rb])
        core = big > max(thr, 0.5 * float(big.max()))
        for ca, cb in _runs(core):
            a, b = ra + ca, ra + cb
            if b - a <= MAX_SPIKE_RUN and a > 0 and b < v.size:
                left, right = v[a - 1], v[b]
                dev = v[a:b] - 0.5 * (left + right)
                low = float(np.abs(dev).min())
                same_side = bool((dev > 0).all() or (dev < 0).all())
                if same_side and low > thr and abs(left - right) < 0.5 * low:
                    spikes.extend(range(a, b))
                    continue
            other.extend(range(a, b))
    at = np.asarray(spikes, dtype=np.int64), np.asarray(other, dtype=np.int64)
    return at if every else (idx[at[0]], idx[at[1]])


def _time_scale(
    t: np.ndarray,
    unit: str,
    name: str,
    kind: str,
    findings: list[Finding],
    where: str,
    limit: float | None = None,
    ordered: bool = False,
) -> float:
    """Seconds per unit of the time column: from the header, else from the sampling pattern.
    ``ordered``: the caller knows ``t`` rises strictly (its range is then its ends)."""
    u = unit.strip().lower()
    if u:
        if u not in _TIME_UNITS:
            refuse(
                where,
                "time-unit",
                f"the time column {name!r} is marked {unit!r}, not a time unit heatlog knows",
                "mark it s, ms, min, h or d in the header, e.g. 'time [s]'",
            )
        scale = _TIME_UNITS[u]
        if scale != 1.0:
            findings.append(
                Finding(
                    "time-unit",
                    "flag",
                    f"time column {name!r} read in {unit} (from the header) and converted to s",
                    "nothing to do if the header is right",
                )
            )
        return scale
    # some step rises (else there is no pattern): certainly when the last stamp is the later
    if not (t.size >= 2 and t[-1] > t[0]) and not (t[1:] > t[:-1]).any():
        return 1.0
    span = float(t[-1] - t[0]) if ordered else float(np.max(t) - np.min(t))
    limit = MAX_RUN_S[kind] if limit is None else limit
    # the median step and the whole-number test only where a branch below needs them
    median_step: list[float] = []

    def step_() -> float:
        if not median_step:
            steps = np.diff(t)
            median_step.append(float(median(steps[steps > 0])))
        return median_step[0]

    def whole() -> bool:
        return bool(np.all(np.abs(t - np.round(t)) < 1e-9 * np.maximum(1.0, np.abs(t))))

    too_long = span > limit or (kind == "thermogram" and span > 86400.0 and step_() >= 100.0)
    if too_long and step_() >= 10.0 and 60.0 <= span / 1000.0 <= limit and whole():
        step = step_()
        findings.append(
            Finding(
                "time-unit",
                "flag",
                f"time column {name!r} looks like milliseconds (whole numbers, median step "
                f"{step:g}; in seconds the run would last {span / 86400:.3g} days) and was "
                "divided by 1000",
                "if it really is seconds, say so in the header: 'time [s]'",
            )
        )
        return 1e-3
    if span > limit:
        refuse(
            where,
            "time-unit",
            f"the time column {name!r} spans {span / 86400:.3g} days, longer than any "
            f"{'cup run' if kind == 'thermogram' else 'long run'} heatlog reduces",
            "check the time unit (mark it in the header, e.g. 'time [ms]') or the column",
        )
    if kind != "profile" or not span < 1000.0:
        return 1.0
    step = step_()
    per_hour = step * 3600.0
    if (
        per_hour >= 1.0
        and abs(per_hour - round(per_hour)) < 1e-3
        and abs(step * 100.0 - round(step * 100.0)) > 1e-3
    ):
        findings.append(
            Finding(
                "time-unit",
                "flag",
                f"time column {name!r} looks like hours (median step {step:.6g} = "
                f"{round(per_hour):d} s; in seconds the run would last {span:.3g} s) and was "
                "multiplied by 3600",
                "if it really is seconds, say so in the header: 'time [s]'",
            )
        )
        return 3600.0
    return 1.0


def _to_celsius(
    y: np.ndarray,
    valid: np.ndarray,
    unit: str,
    name: str,
    findings: list[Finding],
    where: str,
) -> np.ndarray:
    """Readings in °C: the header's unit applied, or kelvin recognised from the range."""
    u = unit.strip().lower().replace("º", "°")
    if u:
        if u not in _TEMP_UNITS:
            refuse(
                where,
                "temp-unit",
                f"the temperature column {name!r} is marked {unit!r}, not a temperature unit",
                "mark it °C, K or °F in the header, e.g. 'temp [°C]'",
            )
        kind = _TEMP_UNITS[u]
        if kind == "C":
            return y
        findings.append(
            Finding(
                "temp-unit",
                "flag",
                f"column {name!r} read in {'kelvin' if kind == 'K' else 'degrees Fahrenheit'} "
                "(from the header) and converted to °C",
                "nothing to do if the header is right",
            )
        )
        # (docs/REFERENCES.md: SI-BROCHURE for kelvin, NIST-SP811 for Fahrenheit)
        return y - 273.15 if kind == "K" else (y - 32.0) * (5.0 / 9.0)
    good = y if valid.all() else y[valid]
    # the minimum first: it rules out kelvin for most logs without the median's sort
    if (
        good.size
        and float(np.min(good)) > KELVIN_MIN
        and KELVIN_RANGE[0] <= float(median(good)) <= KELVIN_RANGE[1]
    ):
        findings.append(
            Finding(
                "temp-unit",
                "flag",
                f"column {name!r} reads {float(median(good)):.5g} (median), where kelvin "
                "lies for these experiments; read as kelvin and converted to °C",
                "if these really are °C, say so in the header: 'temp [°C]'",
            )
        )
        return y - 273.15
    return y


def _temperature(
    y: np.ndarray,
    keep: np.ndarray,
    unit: str,
    name: str,
    lines: np.ndarray,
    findings: list[Finding],
    where: str,
    raw: bool,
    span: tuple[float, float] | None = None,
) -> np.ndarray:
    """Absurd values, unit, sentinels and spikes of one temperature (or raw reading) column
    (``span``: its (min, max) when the caller has it). Clears ``keep`` where a reading is left
    out; returns the converted column."""
    n = y.size
    # NaN (a channel's) fails the tests below
    low, high = span if span is not None else (float(np.min(y)), float(np.max(y)))
    beyond = _beyond(y, MAX_ABS_READING, (low, high))
    any_absurd = beyond is not None
    absurd = beyond if beyond is not None else np.zeros(n, dtype=bool)
    valid = keep & ~absurd if any_absurd else keep.copy()
    if not raw:
        possible = not low <= high or any(low <= s <= high for s in SENTINELS)
        sentinel = np.isin(y, SENTINELS) & valid if possible else None
        if sentinel is not None and sentinel.any():
            # neighbours' level: the nearest non-sentinel readings either side
            ok = np.flatnonzero(valid & ~sentinel)
            if ok.size:
                level = np.interp(np.arange(n), ok, y[ok])
                jump = np.abs(y - level) > SENTINEL_JUMP_K
                sentinel &= jump
            rows = np.flatnonzero(sentinel)
            if rows.size:
                shown = _line_list(lines, rows)
                findings.append(
                    Finding(
                        "sentinel",
                        "flag",
                        f"{rows.size} reading(s) of column {name!r} hold a probe-fault value "
                        f"({', '.join(f'{v:g}' for v in sorted(set(y[rows].tolist())))}) on "
                        f"{_lines_text(shown, rows.size)}; left out, not integrated as heat",
                        "check the probe and its wiring",
                        shown,
                        int(rows.size),
                    )
                )
                keep &= ~sentinel
                valid &= ~sentinel
        given = y
        y = np.where(absurd, 0.0, y) if any_absurd else y
        y = _to_celsius(y, valid, unit, name, findings, where)
        # the column as given (°C, nothing absurd): its range is the one taken above
        lo_c, hi_c = (low, high) if y is given else (float(y.min()), float(y.max()))
        if n and (lo_c < MIN_TEMP_C or hi_c > MAX_TEMP_C):
            impossible = valid & ((y < MIN_TEMP_C) | (y > MAX_TEMP_C))
            absurd = absurd | impossible
            valid = valid & ~impossible
            any_absurd = True
    elif any_absurd:
        y = np.where(absurd, 0.0, y)
    if not any_absurd:  # nothing absurd: no masks to look through
        return _spikes(y, keep, name, lines, findings, raw)
    for a, b in _runs(absurd & keep):
        if b - a > MAX_SPIKE_RUN or valid.sum() < HAMPEL_WINDOW:
            shown = _line_list(lines, np.arange(a, b))
            refuse(
                where,
                "absurd",
                f"column {name!r} holds {b - a} impossible reading(s) in a row on lines "
                f"{int(lines[a])}–{int(lines[b - 1])}"
                + ("" if raw else f" (outside {MIN_TEMP_C:g} … {MAX_TEMP_C:g} °C)"),
                "check the probe, the column and its unit; remove the broken stretch",
                shown,
            )
    rows = np.flatnonzero(absurd & keep)
    if rows.size:
        shown = _line_list(lines, rows)
        findings.append(
            Finding(
                "absurd",
                "flag",
                f"{rows.size} impossible reading(s) of column {name!r} on "
                f"{_lines_text(shown, rows.size)} left out",
                "check the logger; nothing to do if the rest of the run is sound",
                shown,
            )
        )
        keep &= ~absurd
    return _spikes(y, keep, name, lines, findings, raw)


def _spikes(
    y: np.ndarray, keep: np.ndarray, name: str, lines: Any, findings: list[Finding], raw: bool
) -> np.ndarray:
    """Isolated spikes of a column among the ``keep`` rows: flagged and cleared from ``keep``;
    returns the column."""
    spikes, _ = spike_rows(y, keep)
    if spikes.size:
        shown = _line_list(lines, spikes)
        med = running_median(y[keep])
        pos = np.searchsorted(np.flatnonzero(keep), spikes)
        size = np.abs(y[spikes] - med[np.clip(pos, 0, med.size - 1)])
        findings.append(
            Finding(
                "spike",
                "flag",
                f"{spikes.size} isolated spike(s) in column {name!r} on "
                f"{_lines_text(shown, spikes.size)} (up to {float(size.max()):.3g} "
                f"{'units' if raw else 'K'} off the curve) left out",
                "check the logger's wiring and grounding if spikes recur",
                shown,
            )
        )
        keep[spikes] = False
    return y


def gate_table(
    table: Any,
    time_col: str,
    temp_col: str,
    channels: Sequence[str] = (),
    *,
    flags_col: str | None = None,
    raw: bool = False,
    **options: Any,
) -> Gated:
    """:func:`gate_series` on the columns of a :class:`heatlog.csvtable.Table` (the one mapping
    every CSV reader uses): the header's units, file line numbers and reading notes passed on.
    ``raw``: the reading column is raw counts, so a unit in its header is not a temperature's.
    Further ``options`` (``where``, ``kind``, ``temperature_channels``, ``run_kind``) go through."""
    lookup = {k.lower(): v for k, v in table.columns.items()}
    units = {k.lower(): v for k, v in table.units.items()}
    return gate_series(
        lookup[time_col.lower()],
        lookup[temp_col.lower()],
        time_name=time_col,
        temp_name=temp_col,
        time_unit=units.get(time_col.lower(), ""),
        temp_unit="" if raw else units.get(temp_col.lower(), ""),
        lines=table.line_numbers,
        channels={c: lookup[c.lower()] for c in channels},
        channel_units={c: units.get(c.lower(), "") for c in channels},
        flags=None if flags_col is None else lookup[flags_col.lower()],
        raw=raw,
        notes=table.notes,
        **options,
    )


def gate_series(
    time_s: np.ndarray,
    temp: np.ndarray,
    *,
    where: str,
    kind: Literal["thermogram", "profile"] = "thermogram",
    time_name: str = "time_s",
    temp_name: str = "temp_C",
    time_unit: str = "",
    temp_unit: str = "",
    lines: np.ndarray | Callable[[], np.ndarray] | None = None,
    channels: Mapping[str, np.ndarray] | None = None,
    channel_units: Mapping[str, str] | None = None,
    temperature_channels: Sequence[str] = (),
    flags: np.ndarray | None = None,
    raw: bool = False,
    notes: Sequence[str] = (),
    run_kind: str = "generic",
) -> Gated:
    """Check one logged series (time and a temperature or raw-reading column, with channels).

    ``lines`` are the file line numbers of the rows (or a callable giving them, used only when
    something is found); ``kind`` sets the plausible run length ("thermogram": a cup run of
    minutes to hours; "profile": days to weeks, clock resets allowed). ``raw`` marks raw
    readings (counts or ohms: no unit or sentinel checks). ``temperature_channels`` are checked
    like the temperature; ``flags`` (non-zero = probe fault) leaves rows out. ``notes`` from the
    reader (decimal commas, date-time text) become flagged findings. ``run_kind`` (warmer, pack,
    cement, generic) narrows the plausible length of a long run.
    """
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp, dtype=np.float64)
    n = t.size
    channels = dict(channels or {})
    channel_units = dict(channel_units or {})
    findings: list[Finding] = [
        Finding("read-as", "flag", note, "nothing to do if that is how the file is written")
        for note in notes
    ]

    def line_numbers() -> np.ndarray:
        got = lines() if callable(lines) else lines
        if got is None or np.asarray(got).size != n:
            return np.arange(1, n + 1)
        return np.asarray(got)

    line_arr: list[np.ndarray] = []

    class _Lines:
        def __getitem__(self, i: Any) -> Any:
            if not line_arr:
                line_arr.append(line_numbers())
            return line_arr[0][i]

    ln: Any = _Lines()
    keep = np.ones(n, dtype=bool)
    if n == 0:
        return Gated(t, y, channels, keep, tuple(findings))
    # each column's range first: NaN carries through min and max, so finite ends mean every value
    # is finite, and the absurd-value tests below start from the same range. Strictly rising
    # times (a NaN fails every comparison) have their ends as their range.
    t_rises = n >= 2 and bool((t[1:] > t[:-1]).all())
    spans: dict[str, tuple[float, float]] = {}
    for name, arr in (("time", t), ("reading", y)):
        rises = t_rises and arr is t
        low, high = (float(t[0]), float(t[-1])) if rises else (float(arr.min()), float(arr.max()))
        spans[name] = low, high
        if math.isfinite(low) and math.isfinite(high):
            continue
        bad = ~np.isfinite(arr)
        if bad.any():
            line = int(ln[int(np.argmax(bad))])
            refuse(
                where,
                "non-finite",
                f"{name} holds a non-finite value (NaN or inf) on line {line}",
                "fix or delete that line",
                (line,),
            )

    # absurd times: never used in arithmetic
    absurd_t = _beyond(t, MAX_ABS_TIME, spans["time"])
    if absurd_t is not None:
        rows = np.flatnonzero(absurd_t)
        shown = _line_list(ln, rows)
        if rows.size > MAX_SPIKE_RUN or absurd_t.sum() > MAX_DROPPED_SHARE * n:
            refuse(
                where,
                "absurd",
                f"the time column {time_name!r} holds {rows.size} impossible value(s) on "
                f"{_lines_text(shown, rows.size)}",
                "check the time column and its unit",
                shown,
            )
        findings.append(
            Finding(
                "absurd",
                "flag",
                f"{rows.size} impossible time value(s) on {_lines_text(shown, rows.size)} left out",
                "check the logger's clock",
                shown,
            )
        )
        keep &= ~absurd_t
        t = np.where(absurd_t, 0.0, t)

    # flags column: non-zero marks a probe fault
    if flags is not None:
        f = np.asarray(flags, dtype=np.float64)
        fault = (f != 0) & keep
        if fault.any():
            rows = np.flatnonzero(fault)
            shown = _line_list(ln, rows)
            findings.append(
                Finding(
                    "flagged-rows",
                    "flag",
                    f"{rows.size} row(s) marked as probe faults in the flags column on "
                    f"{_lines_text(shown, rows.size)} left out",
                    "check the probe if faults recur",
                    shown,
                    int(rows.size),
                )
            )
            keep &= ~fault

    # temperature (or raw reading) and temperature channels
    y = _temperature(y, keep, temp_unit, temp_name, ln, findings, where, raw, spans["reading"])
    for name in temperature_channels:
        if name in channels:
            channels[name] = _temperature(
                np.asarray(channels[name], dtype=np.float64),
                keep,
                channel_units.get(name, ""),
                name,
                ln,
                findings,
                where,
                False,
            )
    for name, arr in channels.items():
        a = np.asarray(arr, dtype=np.float64)
        if name not in temperature_channels and (np.abs(a) > MAX_ABS_READING).any():
            row = int(np.argmax(np.abs(a) > MAX_ABS_READING))
            refuse(
                where,
                "absurd",
                f"column {name!r} holds an impossible value on line {int(ln[row])}",
                "fix or delete that line",
                (int(ln[row]),),
            )

    # time glitches among the kept rows: duplicates and single stamps out of order
    # (a log with every row kept and no duplicate is not copied or indexed on the way)
    every = bool(keep.all())
    # no repeat, nothing out of order (the check above holds while no absurd time was zeroed)
    rising = every and n >= 2 and (t_rises if absurd_t is None else bool((t[1:] > t[:-1]).all()))
    idx = None if rising else np.arange(n) if every else np.flatnonzero(keep)
    if idx is not None and idx.size >= 3:
        tk, yk = (t, y) if every else (t[idx], y[idx])
        dup = np.concatenate([[False], (np.diff(tk) == 0) & (np.diff(yk) == 0)])
        any_dup = bool(dup.any())
        rest = idx[~dup] if any_dup else idx
        tr = t[rest] if any_dup else tk
        mid = (tr[:-2] < tr[2:]) & ((tr[1:-1] <= tr[:-2]) | (tr[1:-1] >= tr[2:]))
        glitch = np.concatenate([[False], mid, [False]])
        for code, rows, what in (
            ("duplicate-row", idx[dup], "repeated row(s)"),
            ("time-glitch", rest[glitch], "time stamp(s) out of order between neighbours in order"),
        ):
            if rows.size:
                shown = _line_list(ln, rows)
                findings.append(
                    Finding(
                        code,
                        "flag",
                        f"{rows.size} {what} on {_lines_text(shown, rows.size)} left out",
                        "check the logger's clock and the file's history",
                        shown,
                    )
                )
                keep[rows] = False

    faults = sum(f.count for f in findings if f.code in ("sentinel", "flagged-rows"))
    kept = int(np.count_nonzero(keep))
    dropped = n - kept - faults
    if dropped > max(MAX_SPIKE_RUN, MAX_DROPPED_SHARE * n) or kept < n / 2:
        refuse(
            where,
            "too-many-faults",
            f"{dropped} of {n} rows are faults, spikes or glitches",
            "the log is not usable as it is; check the probe and the logger, then log again or "
            "cut the broken stretch out",
        )

    # time unit from the header or the sampling pattern (on the rows kept)
    limit = MAX_PROFILE_S.get(run_kind, MAX_RUN_S[kind]) if kind == "profile" else None
    every = bool(keep.all())  # then nothing is gathered: the columns go on as they are

    def kept_rows(a: np.ndarray) -> np.ndarray:
        a = np.asarray(a, dtype=np.float64)
        return a if every else a[keep]

    t_kept = kept_rows(t)
    scale = _time_scale(
        t_kept, time_unit, time_name, kind, findings, where, limit, ordered=rising and every
    )
    return Gated(
        t_kept * scale if scale != 1.0 else t_kept,
        kept_rows(y),
        {k: kept_rows(v) for k, v in channels.items()},
        keep,
        tuple(findings),
    )


def findings_of(*sources: Any) -> tuple[Finding, ...]:
    """The findings carried by thermograms' metadata, results or plain sequences."""
    out: list[Finding] = []
    for s in sources:
        if s is None:
            continue
        if isinstance(s, Finding):
            out.append(s)
        elif hasattr(s, "findings"):
            out.extend(s.findings)
        elif hasattr(s, "metadata"):
            out.extend(s.metadata.get("findings", ()))
        else:
            out.extend(s)
    return tuple(out)


def findings_text(findings: Sequence[Finding]) -> list[str]:
    """One printed line per finding (empty when the input was clean)."""
    return [f"input check: {f.text()}" for f in findings]


def check_constant(
    value: float, u: float, where: str, *, allow_negative: bool = False
) -> Finding | None:
    """A calorimeter constant C_cal must be positive (a calorimeter cannot have a negative heat
    capacity). Significantly negative (below zero by more than U(k=2)) is refused unless
    ``allow_negative``; negative within U(k=2) is flagged (a vessel with a very small C_cal,
    such as a foam cup, can come out so)."""
    if not value < 0:
        return None
    why = (
        "a calorimeter cannot have a negative heat capacity; probably ΔT has the wrong sign or "
        "belongs to another event, the heat or the contents' mass or c_p are off, or a "
        "calibration and a measuring run were swapped"
    )
    if value + 2.0 * u < 0 and not allow_negative:
        refuse(
            where,
            "negative-constant",
            f"C_cal = {value:.4g} J/K, u = {u:.2g} J/K (k=1): {why}",
            "check those, or pass --allow-negative to print it anyway",
        )
    return Finding(
        "negative-constant",
        "flag",
        f"C_cal = {value:.4g} J/K, u = {u:.2g} J/K (k=1) is negative"
        + (" (allowed on request)" if value + 2.0 * u < 0 else ", though within U(k=2) of zero"),
        why if value + 2.0 * u < 0 else "a very small vessel constant; treat the result with care",
    )


#: Settings of a long run that must be positive (the rest finite and within ±1e12).
_POSITIVE_SETTINGS = {"heat_capacity": "J/K", "sample_g": "g"}
_NON_NEGATIVE_SETTINGS = {"loss": "W/K"}


def check_profile_settings(settings: Any, where: str) -> None:
    """Every number of a long run's settings finite and bounded before any arithmetic; the heat
    capacity and sample mass positive, the loss coefficient not negative."""
    import dataclasses

    for f in dataclasses.fields(settings):
        value = getattr(settings, f.name)
        pairs: list[tuple[str, Any]] = []
        if hasattr(value, "value") and hasattr(value, "u"):
            pairs = [(f.name, value.value), (f"u({f.name})", value.u)]
        elif isinstance(value, int | float) and not isinstance(value, bool):
            pairs = [(f.name, value)]
        for name, v in pairs:
            if not np.isfinite(v) or abs(v) > 1e12:
                refuse(
                    where,
                    "absurd-setting",
                    f"{name} = {v!r} is not a usable number",
                    "give a finite value in its unit (check for a typing or unit mistake)",
                )
            if name.startswith("u(") and v < 0:
                refuse(where, "absurd-setting", f"{name} = {v!r} is negative", "give u ≥ 0")
        if hasattr(value, "value"):
            if f.name in _POSITIVE_SETTINGS and not value.value > 0:
                refuse(
                    where,
                    "absurd-setting",
                    f"{f.name} = {value.value!r} {_POSITIVE_SETTINGS[f.name]} must be positive",
                    "check its sign and unit",
                )
            if f.name in _NON_NEGATIVE_SETTINGS and value.value < 0:
                refuse(
                    where,
                    "absurd-setting",
                    f"{f.name} = {value.value!r} {_NON_NEGATIVE_SETTINGS[f.name]} must not be "
                    "negative",
                    "check its sign and unit",
                )


def check_quantity(name: str, value: float, u: float, unit: str) -> None:
    """A number given on the command line, bounded before any arithmetic: finite, its magnitude
    within :data:`QUANTITY_BOUNDS` for its unit (zero allowed), its uncertainty ≥ 0 and not
    larger than the largest plausible value."""
    if not (np.isfinite(value) and np.isfinite(u)):
        refuse(name, "absurd", f"{value!r} ± {u!r} is not a finite number", "give a finite value")
    lo, hi = QUANTITY_BOUNDS.get(unit, (0.0, 1e12))
    mag = abs(value)
    if unit == "°C" and value < -273.15:
        refuse(name, "absurd", f"{value:g} °C is below absolute zero", "check the value and unit")
    if mag > hi or (0.0 < mag < lo):
        refuse(
            name,
            "absurd",
            f"{value:g} {unit} is not a plausible value (|x| from {lo:g} to {hi:g} {unit})",
            "check for a typing or unit mistake",
        )
    if u < 0 or u > hi:
        refuse(
            name,
            "absurd",
            f"uncertainty {u:g} {unit} must be ≥ 0 and at most {hi:g} {unit}",
            "check for a typing or unit mistake",
        )
