"""A guided live run: fed readings one at a time, it says when to start and when to stop.

:class:`LiveGuide` is pure (no I/O, no clock): it is fed ``(time_s, temp_C)`` samples one at a
time or in chunks and returns a :class:`GuideState` after each. :func:`guide_stream` wraps it for
any iterable of samples (``heatlog watch`` feeds it from the board). :func:`render_terminal`
draws the curve and the state as plain text. :meth:`LiveGuide.csv_text` is the run as a CSV that
``heatlog reduce`` reads.

Phases and the criteria behind each signal (thresholds are options; the defaults are common
practice, no source):

1. ``settling`` → ``stable`` ("fore-period steady, start now"). Over the last ``window_s`` seconds (default
   180 s) a straight line is fitted to the readings. The fore-period is stable when the window is
   full, the residual standard deviation (noise) is at most ``max_noise_K`` (default 5 mK), the
   drift rate is below ``max_drift_K_per_min`` (default 50 mK/min) *with its uncertainty*:
   |b| + 2·u(b) ≤ max_drift, u(b) the least-squares standard error of the slope; and the drift
   is steady: the rates b₁, b₂ of lines fitted to the first and second half of the window differ
   by |b₂ − b₁| + 2·u(b₂ − b₁) ≤ ``max_drift_change_K_per_min`` (default 5 mK/min). A steady
   drift is what the corrections (Regnault–Pfaundler, Dickinson) assume for the fore-period; a
   small one keeps the exchange correction, and its uncertainty, small. The window is never
   shorter than :func:`heatlog.reduce.periods.baseline_needed_s` at the run's sampling step: the
   rule the reduction applies, so a run started at the signal leaves the reduction a fore-period
   it accepts.
2. ``stable`` → ``event``: once stable, a reading that leaves the extrapolated fore-period line
   by more than max(``event_sigmas``·σ, ``min_event_K``) (defaults 8σ and 5 mK), three readings
   in a row, marks the event at the first of them. A release started before the stable signal
   is still caught (see :meth:`LiveGuide._early_event`: a jump of the recent rate above the
   settling rate) and the state says the correction will be less certain.
3. ``event`` → ``after``: every ``reduce_every_s`` seconds of data (default 10 s, and not before
   the event is 120 s old) the readings from the start of the stable fore-period window on are
   reduced with :func:`heatlog.reduce.reduce_thermogram` (the detected event nearest the
   guide's is reduced); the running ΔT and u(ΔT) are reported once the reduction finds an
   after-period.
4. ``after`` → ``enough`` ("you may stop"): the after-period found by the
   reduction has lasted ``min_after_s`` (default 300 s), u(ΔT) ≤ ``target_u_K`` (default 5 mK),
   and the estimate has settled: it moved by no more than u(ΔT) since the previous reduction.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field, replace

import numpy as np

from heatlog.errors import InputError, ReductionError
from heatlog.reduce import reduce_thermogram
from heatlog.reduce.events import detect_events, reading_noise
from heatlog.reduce.periods import baseline_needed_s
from heatlog.reduce.reduction import MAX_POINTS, detect_resolution
from heatlog.reduce.sampling import block_means
from heatlog.thermogram import Thermogram

PHASES = ("settling", "stable", "event", "after", "enough")
_DEPARTURES = 3  # readings in a row off the fore-period line that make an event
_JUMP_S = 20.0  # span of the "recent rate" used to spot an event before the stable signal
_FIRST_REDUCE_S = 120.0  # age of the event before the first running reduction is tried


@dataclass(frozen=True)
class GuideOptions:
    """Thresholds of the guide's signals; defaults are common practice, no source."""

    window_s: float = 180.0
    max_drift_K_per_min: float = 0.050
    max_drift_change_K_per_min: float = 0.005
    max_noise_K: float = 0.005
    event_sigmas: float = 8.0
    min_event_K: float = 0.005
    reduce_every_s: float = 10.0
    min_after_s: float = 300.0
    target_u_K: float = 0.005

    def __post_init__(self) -> None:
        for name in self.__dataclass_fields__:
            value = getattr(self, name)
            if not (math.isfinite(value) and value > 0):
                raise InputError(f"guide option {name} must be a positive number, got {value!r}")


@dataclass(frozen=True)
class GuideState:
    """What the guide knows after the latest sample (NaN/None where not yet known)."""

    phase: str
    time_s: float
    temp_C: float
    n: int
    drift_K_per_min: float = math.nan
    u_drift_K_per_min: float = math.nan
    noise_K: float = math.nan
    stable: bool = False
    start_signal_s: float | None = None
    event_s: float | None = None
    delta_t_K: float = math.nan
    u_delta_t_K: float = math.nan
    method: str = ""
    after_start_s: float | None = None
    reduced_at_s: float | None = None
    enough: bool = False
    enough_signal_s: float | None = None
    message: str = ""
    criteria: dict[str, str] = field(default_factory=dict)

    def to_dict(self) -> dict[str, object]:
        return dict(self.__dict__)


def _line(t: np.ndarray, y: np.ndarray) -> tuple[float, float, float, float, float]:
    """Least-squares line y = a + b(t − t̄): (a, b, u(b), σ, t̄)."""
    tm = float(t.mean())
    x = t - tm
    sxx = float(x @ x)
    b = float(x @ (y - y.mean())) / sxx if sxx > 0 else 0.0
    a = float(y.mean())
    r = y - a - b * x
    dof = max(t.size - 2, 1)
    s = math.sqrt(float(r @ r) / dof)
    u_b = s / math.sqrt(sxx) if sxx > 0 else math.inf
    return a, b, u_b, s, tm


class LiveGuide:
    """Feed samples with :meth:`feed` (one) or :meth:`feed_many` (a chunk); see the module doc."""

    def __init__(self, options: GuideOptions | None = None) -> None:
        self.options = options or GuideOptions()
        self._t: list[float] = []
        self._y: list[float] = []
        self._line: tuple[float, float, float, float, float] | None = None
        self._fore_from: float | None = None
        self._departures: list[float] = []
        self._last_reduce: float | None = None
        self._prev_delta = math.nan
        self._state = GuideState("settling", math.nan, math.nan, 0, message="waiting for readings")

    @property
    def state(self) -> GuideState:
        return self._state

    @property
    def time_s(self) -> np.ndarray:
        return np.asarray(self._t, dtype=np.float64)

    @property
    def temp_C(self) -> np.ndarray:
        return np.asarray(self._y, dtype=np.float64)

    def feed_many(self, time_s: Iterable[float], temp_C: Iterable[float]) -> GuideState:
        for t, y in zip(time_s, temp_C, strict=True):
            self.feed(t, y)
        return self._state

    def feed(self, time_s: float, temp_C: float) -> GuideState:
        t, y = float(time_s), float(temp_C)
        if not (math.isfinite(t) and math.isfinite(y)):
            raise InputError(f"reading ({time_s!r}, {temp_C!r}) is not a finite number pair")
        if self._t and t <= self._t[-1]:
            raise InputError(
                f"time went back or stood still ({t:g} s after {self._t[-1]:g} s); "
                "start a new run after a clock reset"
            )
        self._t.append(t)
        self._y.append(y)
        s = replace(self._state, time_s=t, temp_C=y, n=len(self._t))
        s = self._fore(s) if s.phase in ("settling", "stable") else self._after(s)
        self._state = s
        return s

    # ----- fore-period ----------------------------------------------------------------------
    def _window(self) -> tuple[np.ndarray, np.ndarray]:
        t, y = self.time_s, self.temp_C
        # keep only readings not flagged as departures (they are at the end)
        end = t.size - len(self._departures)
        t, y = t[:end], y[:end]
        lo = int(np.searchsorted(t, t[-1] - self._window_s())) if t.size else 0
        return t[lo:], y[lo:]

    def _window_s(self) -> float:
        """The stable window: the option, and never less than the reduction needs."""
        t = self._t
        step = float(np.median(np.diff(t[-50:]))) if len(t) > 2 else 0.0
        return max(self.options.window_s, baseline_needed_s(step))

    def _fore(self, s: GuideState) -> GuideState:
        o = self.options
        t_now, y_now = s.time_s, s.temp_C
        if self._line is not None and s.phase == "stable":
            a, b, u_b, sigma, tm = self._line
            dev = y_now - (a + b * (t_now - tm))
            limit = max(o.event_sigmas * sigma, o.min_event_K)
            if abs(dev) > limit:
                self._departures.append(t_now)
                if len(self._departures) >= _DEPARTURES:
                    return replace(
                        s,
                        phase="event",
                        event_s=self._departures[0],
                        stable=False,
                        message=f"at {self._departures[0]:.0f} s: the release is under "
                        "way; keep logging",
                    )
                return s
            self._departures.clear()
        t, y = self._window()
        window = self._window_s()
        if t.size < 5 or t[-1] - t[0] < 0.95 * window:
            have = t[-1] - t[0] if t.size else 0.0
            return replace(
                s,
                message=f"{have:.0f} of {window:.0f} s of fore-period readings so far",
            )
        a, b, u_b, sigma, tm = _line(t, y)
        drift, u_drift = 60.0 * b, 60.0 * u_b
        half = t < tm
        _, b1, u_b1, _, _ = _line(t[half], y[half])
        _, b2, u_b2, _, _ = _line(t[~half], y[~half])
        change, u_change = 60.0 * (b2 - b1), 60.0 * math.hypot(u_b1, u_b2)
        steady = abs(change) + 2.0 * u_change <= o.max_drift_change_K_per_min
        criteria = {
            "drift": f"|{drift * 1e3:.2f}| + 2·{u_drift * 1e3:.2f} mK/min ≤ "
            f"{o.max_drift_K_per_min * 1e3:g} mK/min",
            "steady": f"|{change * 1e3:.2f}| + 2·{u_change * 1e3:.2f} mK/min ≤ "
            f"{o.max_drift_change_K_per_min * 1e3:g} mK/min (second-half minus first-half rate)",
            "noise": f"{sigma * 1e3:.2f} mK ≤ {o.max_noise_K * 1e3:g} mK",
            "window": f"last {window:g} s (at least what the reduction needs at this sampling)",
            "source": "thresholds: common practice, no source",
        }
        stable = (
            abs(drift) + 2.0 * u_drift <= o.max_drift_K_per_min
            and steady
            and sigma <= o.max_noise_K
        )
        if s.phase == "settling" and not stable and self._early_event():
            return replace(
                s,
                phase="event",
                event_s=self._departures[0],
                message=f"at {self._departures[0]:.0f} s, before the fore-period was "
                "stable: the correction will be less certain; keep logging",
            )
        s = replace(
            s,
            drift_K_per_min=drift,
            u_drift_K_per_min=u_drift,
            noise_K=sigma,
            stable=stable,
            criteria=criteria,
        )
        if stable:
            if s.phase == "settling":
                self._departures.clear()
            self._line = (a, b, u_b, sigma, tm)
            first = s.start_signal_s is None
            if first:
                self._fore_from = float(t[0])
            return replace(
                s,
                phase="stable",
                start_signal_s=t_now if first else s.start_signal_s,
                message=f"fore-period steady, start now (drift {drift * 1e3:+.2f} ± {u_drift * 1e3:.2f} "
                f"mK/min (u, k=1), noise {sigma * 1e3:.2f} mK)",
            )
        why = []
        if abs(drift) + 2.0 * u_drift > o.max_drift_K_per_min:
            why.append(f"drift {drift * 1e3:+.2f} mK/min, u = {u_drift * 1e3:.2f} mK/min (k=1)")
        if not steady:
            why.append(
                f"drift rate changing by {change * 1e3:+.2f} mK/min, u = {u_change * 1e3:.2f} (k=1)"
            )
        if sigma > o.max_noise_K:
            why.append(f"noise {sigma * 1e3:.2f} mK")
        if s.phase == "stable":
            # keep the last stable line for event detection; say the drift has changed
            return replace(s, message="fore-period no longer steady (" + ", ".join(why) + "): wait")
        return replace(s, message=", ".join(why) + " too large: wait")

    def _early_event(self) -> bool:
        """A release started while still settling. Reference: a line through the window's
        readings older than ``_JUMP_S`` seconds. An event is when the rate over the last
        ``_JUMP_S`` seconds is over 3× the reference rate (plus the drift limit) and the newest
        reading is off the extrapolated reference line by max(event_sigmas·σ, min_event_K), in
        the same direction, three readings in a row. A settling transient slows down, so its
        recent rate stays below the reference rate."""
        o = self.options
        t, y = self.time_s, self.temp_C  # all readings, the newest included
        recent = t >= t[-1] - _JUMP_S
        ref = (t >= t[-1] - o.window_s) & ~recent
        if np.count_nonzero(recent) < 4 or np.count_nonzero(ref) < 5:
            return False
        a, b, _, sigma, tm = _line(t[ref], y[ref])
        _, b_recent, _, _, _ = _line(t[recent], y[recent])
        dev = float(y[-1] - (a + b * (t[-1] - tm)))
        jump = (
            abs(b_recent) > 3.0 * abs(b) + o.max_drift_K_per_min / 60.0
            and abs(dev) > max(o.event_sigmas * sigma, o.min_event_K)
            and math.copysign(1.0, b_recent) == math.copysign(1.0, dev)
        )
        if not jump:
            self._departures.clear()
            return False
        self._departures.append(float(t[-1]))
        return len(self._departures) >= _DEPARTURES

    # ----- event and after-period -----------------------------------------------------------
    def _after(self, s: GuideState) -> GuideState:
        o = self.options
        assert s.event_s is not None
        t_now = s.time_s
        if t_now - s.event_s < _FIRST_REDUCE_S:
            return s
        if self._last_reduce is not None and t_now - self._last_reduce < o.reduce_every_s:
            return s
        self._last_reduce = t_now
        t, y = self.time_s, self.temp_C
        lo = int(np.searchsorted(t, self._fore_from if self._fore_from is not None else t[0]))
        t, y = t[lo:], y[lo:]
        try:
            red = reduce_thermogram(Thermogram(t, y), event_index=_nearest_event(t, y, s.event_s))
        except (ReductionError, InputError) as exc:
            return replace(
                s, reduced_at_s=t_now, message=f"release under way; no after-period yet ({exc})"
            )
        prev, self._prev_delta = self._prev_delta, red.delta_t_K
        after_len = t_now - red.after_start_s
        settled = math.isfinite(prev) and abs(red.delta_t_K - prev) <= red.u_delta_t_K
        enough = after_len >= o.min_after_s and red.u_delta_t_K <= o.target_u_K and settled
        s = replace(
            s,
            phase="enough" if (enough or s.enough) else "after",
            delta_t_K=red.delta_t_K,
            u_delta_t_K=red.u_delta_t_K,
            method=red.method,
            after_start_s=red.after_start_s,
            reduced_at_s=t_now,
            enough=enough or s.enough,
            enough_signal_s=s.enough_signal_s if s.enough else (t_now if enough else None),
            criteria={
                "after-period": f"{after_len:.0f} s ≥ {o.min_after_s:g} s",
                "u(ΔT)": f"{red.u_delta_t_K * 1e3:.3g} mK ≤ {o.target_u_K * 1e3:g} mK",
                "settled": "ΔT moved by ≤ u(ΔT) since the last estimate"
                + ("" if settled else " — not yet"),
                "source": "thresholds: common practice, no source",
            },
        )
        head = f"ΔT = {red.delta_t_K:+.4f} K, u = {red.u_delta_t_K * 1e3:.2g} mK ({red.method})"
        if s.enough:
            return replace(s, message=f"{head}: you may stop")
        return replace(s, message=f"{head}: after-period {after_len:.0f} s; keep logging")

    # ----- output ---------------------------------------------------------------------------
    def thermogram(self) -> Thermogram:
        return Thermogram(self.time_s, self.temp_C, metadata={"source": "live run"})

    def csv_text(self, note: str = "", *, keep_settling: bool = False) -> str:
        """The readings as a CSV (``time_s,temp_C``) that ``heatlog reduce`` reads.

        Readings from before the stable fore-period window (the settling of probe and cup) are
        left out unless ``keep_settling``: ``heatlog reduce`` would otherwise take the settling
        as the first event. A comment line says how many were left out.
        """
        lines = [f"# heatlog live run{': ' + note if note else ''}"]
        lo = 0
        if not keep_settling and self._fore_from is not None:
            lo = int(np.searchsorted(self.time_s, self._fore_from))
            if lo:
                lines.append(f"# {lo} settling readings before {self._fore_from:.3f} s left out")
        if self._state.start_signal_s is not None:
            lines.append(f"# start signal at {self._state.start_signal_s:.3f} s")
        if self._state.event_s is not None:
            lines.append(f"# event detected at {self._state.event_s:.3f} s")
        lines.append("time_s,temp_C")
        lines += [f"{t:.3f},{y:.6f}" for t, y in zip(self._t[lo:], self._y[lo:], strict=True)]
        return "\n".join(lines) + "\n"

    def render(self, width: int = 72, height: int = 12, color: bool = False) -> str:
        """The terminal view; once the fore-period is stable, the settling is left off the plot."""
        t, y = self.time_s, self.temp_C
        if self._fore_from is not None:
            lo = int(np.searchsorted(t, self._fore_from))
            t, y = t[lo:], y[lo:]
        return render_terminal(t, y, self._state, width, height, color)


def _nearest_event(t: np.ndarray, y: np.ndarray, event_s: float) -> int:
    """Index of the detected event (as :func:`reduce_thermogram` numbers them) whose onset is
    nearest the guide's event; a settling transient in the data may be detected as event 0."""
    tb, yb, _ = block_means(t, y, MAX_POINTS)
    events, _ = detect_events(tb, yb, noise_K=reading_noise(yb), resolution_K=detect_resolution(y))
    if not events:
        return 0
    return int(np.argmin([abs(e.onset_s - event_s) for e in events]))


def guide_stream(
    samples: Iterable[tuple[float, float]], options: GuideOptions | None = None
) -> Iterator[GuideState]:
    """Feed ``(time_s, temp_C)`` samples to a :class:`LiveGuide`, yielding its state after each."""
    guide = LiveGuide(options)
    for t, y in samples:
        yield guide.feed(t, y)


_MARK = {"settling": "·", "stable": "•", "event": "*", "after": "•", "enough": "•"}


def render_terminal(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    state: GuideState,
    width: int = 72,
    height: int = 12,
    color: bool = False,
) -> str:
    """A character plot of the readings (each column: that slice's min–max) and the state.

    Plain text unless ``color`` (ANSI colours, no cursor control), so it can be printed again
    for every update or logged to a file.
    """
    width, height = max(int(width), 20), max(int(height), 4)
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    plot_w = width - 10
    lines: list[str] = []
    if t.size >= 2:
        edges = np.linspace(t[0], t[-1], plot_w + 1)
        col = np.clip(np.searchsorted(edges, t, side="right") - 1, 0, plot_w - 1)
        lo_y, hi_y = float(y.min()), float(y.max())
        span = hi_y - lo_y or 1e-3
        row = np.clip(((y - lo_y) / span * (height - 1)).round().astype(int), 0, height - 1)
        grid = [[" "] * plot_w for _ in range(height)]
        ev_col = (
            int(np.clip(np.searchsorted(edges, state.event_s) - 1, 0, plot_w - 1))
            if state.event_s is not None
            else None
        )
        for c in range(plot_w):
            rows = row[col == c]
            if rows.size:
                for r in range(int(rows.min()), int(rows.max()) + 1):
                    grid[height - 1 - r][c] = "█"
            elif ev_col == c:
                grid[height - 1][c] = "|"
        for r in range(height):
            label = f"{hi_y - span * r / (height - 1):8.3f} " if r in (0, height - 1) else " " * 9
            cells = "".join(grid[r])
            if ev_col is not None and grid[r][ev_col] == " ":
                cells = cells[:ev_col] + "|" + cells[ev_col + 1 :]
            lines.append(f"{label}│{cells}")
        lines.append(" " * 9 + "└" + "─" * plot_w)
        left, right = f"{t[0]:.0f} s", f"{t[-1]:.0f} s"
        lines.append(" " * 10 + left + right.rjust(plot_w - len(left)))
    status = f"[{state.phase}] {state.message}"
    if color:
        code = {"stable": "32", "enough": "32", "event": "33", "after": "36"}.get(state.phase, "0")
        status = f"\x1b[{code}m{status}\x1b[0m"
    lines.append(status)
    if math.isfinite(state.delta_t_K):
        lines.append(
            f"running ΔT = {state.delta_t_K:+.4f} K, u = {state.u_delta_t_K:.2g} K (k = 1)"
        )
    return "\n".join(lines)
