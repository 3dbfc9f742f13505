"""From a thermogram to a corrected temperature change with its uncertainty budget.

:func:`reduce_thermogram` finds the events (``events``), fits the drift (``drift``), applies every
correction (``correction``) and builds the budget (``uncertainty``).

Automatic method choice (``method="auto"``), stated criterion: of the methods whose assumptions the
data support, the one with the smallest standard uncertainty (budget without the method spread).
Regnault–Pfaundler always qualifies (it assumes only Newtonian exchange, nothing about the shape
of the release). The Newton-model fit qualifies when it describes the main period within the noise
(RMS residual there ≤ 2× the drift-period noise, resolution and 1 µK floor); it then uses the
whole curve and is often more precise. The Dickinson forms are reported and, equal-area,
enter the method spread; they are chosen only on request.

Long logs are averaged in blocks down to ``MAX_POINTS`` points first (block means keep the time
integral and the drift fits are unchanged in expectation), so the work is O(n) and small.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from heatlog.errors import ReductionError
from heatlog.gum import Budget, Component
from heatlog.reduce.correction import (
    METHODS,
    NewtonFit,
    dickinson,
    dickinson_60,
    main_period,
    newton_fit,
    regnault_pfaundler,
    trapezoid_weights,
)
from heatlog.reduce.drift import DriftChoice, DriftFit, fit_drift
from heatlog.reduce.events import (
    MIN_PERIOD_POINTS,
    MIN_PERIOD_S,
    Event,
    detect_events,
    reading_noise,
)
from heatlog.reduce.sampling import block_means
from heatlog.reduce.uncertainty import delta_t_budget, resolution_u
from heatlog.thermogram import Thermogram

MAX_POINTS = 4000
MAX_PERIOD_POINTS = 800  # drift fits: block means beyond this many readings per period
NEWTON_RMS_FACTOR = 2.0


@dataclass(frozen=True)
class MethodResult:
    name: str
    delta_t_K: float
    applicable: bool
    note: str = ""

    def to_dict(self) -> dict[str, object]:
        return dict(self.__dict__)


@dataclass(frozen=True, eq=False)
class Reduction:
    """The result of :func:`reduce_thermogram`. ``delta_t_K`` is signed (negative: cooling)."""

    delta_t_K: float
    u_delta_t_K: float
    budget: Budget
    method: str
    method_reason: str
    methods: dict[str, MethodResult]
    event_start_s: float
    after_start_s: float
    fore_start_s: float
    after_end_s: float
    events: tuple[Event, ...]
    event_index: int | None
    drift: DriftFit
    drift_reason: str
    naive_delta_t_K: float
    noise_K: float
    resolution_K: float
    newton: NewtonFit | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def U_delta_t_K(self) -> float:  # noqa: N802 - the GUM symbol
        return self.budget.expanded

    @property
    def k_per_s(self) -> float:
        return self.drift.k_per_s

    @property
    def t_inf_C(self) -> float:
        return self.drift.t_inf_C

    def to_dict(self) -> dict[str, object]:
        drift = self.drift.to_dict()
        drift["reason"] = self.drift_reason
        return {
            "delta_t_K": self.delta_t_K,
            "u_delta_t_K": self.u_delta_t_K,
            "U_delta_t_K": self.U_delta_t_K,
            "k_coverage": self.budget.k,
            "coverage_factor": self.budget.k,  # the key every U_* sits beside (one convention)
            "method": self.method,
            "method_reason": self.method_reason,
            "methods": {k: v.delta_t_K for k, v in self.methods.items()},
            "methods_detail": {k: v.to_dict() for k, v in self.methods.items()},
            "event_index": self.event_index,
            "event_start_s": self.event_start_s,
            "after_start_s": self.after_start_s,
            "fore_start_s": self.fore_start_s,
            "after_end_s": self.after_end_s,
            "drift": drift,
            "naive_delta_t_K": self.naive_delta_t_K,
            "noise_K": self.noise_K,
            "resolution_K": self.resolution_K,
            "newton_fit": None if self.newton is None else self.newton.to_dict(),
            "budget": self.budget.to_dict(),
            "events": [e.to_dict() for e in self.events],
            "notes": list(self.notes),
        }


def detect_resolution(y: np.ndarray) -> float:
    """The reading step if the readings sit on a grid (ADC counts, printed decimals), else 0."""
    sample = y[:20000]
    u = np.unique(sample)
    if u.size < 3 or u.size > sample.size // 2:
        return 0.0
    q = float(np.min(np.diff(u)))
    if q <= 0:
        return 0.0
    steps = (u - u[0]) / q
    return q if np.allclose(steps, np.round(steps), atol=1e-3) else 0.0


def _period_check(t: np.ndarray, lo: float, hi: float, what: str, advice: str) -> None:
    n = int(np.count_nonzero((t >= lo) & (t <= hi)))
    length = hi - lo
    if length < MIN_PERIOD_S or n < MIN_PERIOD_POINTS:
        span = (
            f"{lo:.0f} s to {hi:.0f} s" if hi > lo else f"would run from {lo:.0f} s to {hi:.0f} s"
        )
        raise ReductionError(
            f"the {what} ({span}) lasts {max(length, 0):.0f} s with {n} readings; it needs at "
            f"least {MIN_PERIOD_S:.0f} s and {MIN_PERIOD_POINTS} readings: {advice}"
        )


@dataclass(frozen=True, eq=False)
class _Pass:
    choice: DriftChoice
    values: dict[str, float]
    main_t: np.ndarray
    block_fore: int
    block_after: int


def _one_pass(t, y, lo, t0, ta, hi, drift_model: str) -> _Pass:
    fm = (t >= lo) & (t <= t0)
    am = (t >= ta) & (t <= hi)
    ft, fy, bf = block_means(t[fm], y[fm], MAX_PERIOD_POINTS)
    at, ay, ba = block_means(t[am], y[am], MAX_PERIOD_POINTS)
    choice = fit_drift(ft, fy, at, ay, drift_model)
    fit = choice.chosen
    mp = main_period(t, y, fit, t0, ta)
    values = {
        "regnault-pfaundler": regnault_pfaundler(mp, fit),
        "dickinson": dickinson(mp, fit)[0],
        "dickinson-60": dickinson_60(mp, fit)[0],
    }
    return _Pass(choice, values, mp.t, bf, ba)


def reduce_thermogram(
    thermogram: Thermogram,
    *,
    method: str = "auto",
    event_index: int = 0,
    event_start_s: float | None = None,
    after_start_s: float | None = None,
    resolution_K: float | None = None,
    drift_model: str = "auto",
) -> Reduction:
    """Corrected, signed temperature change of one event with its GUM budget.

    ``event_index`` selects among detected events (time order). ``event_start_s`` and
    ``after_start_s`` override the detected boundaries. ``resolution_K`` is the reading step
    (ADC/probe resolution); ``None`` takes it from the data when the readings sit on a grid.
    Raises :class:`ReductionError` when no event is found or a period is too short.
    """
    if method != "auto" and method not in METHODS:
        raise ReductionError(f"unknown method {method!r}; use auto or one of {', '.join(METHODS)}")
    t_raw, y_raw = thermogram.time_s, thermogram.temp_C
    t, y, _ = block_means(t_raw, y_raw, MAX_POINTS)
    q = detect_resolution(y_raw) if resolution_K is None else float(resolution_K)
    if q < 0 or not math.isfinite(q):
        raise ReductionError("the resolution must be a step of zero or more kelvin")
    noise = reading_noise(y)
    events, rr = detect_events(t, y, noise_K=noise, resolution_K=q)

    notes: list[str] = []
    ev: Event | None = None
    chosen_index: int | None = None
    if event_start_s is None or after_start_s is None:
        if not events:
            raise ReductionError(
                "no event found: the temperature never leaves its steady drift by more than the "
                "noise; check the file and columns, or give --event-start and --after-start"
            )
        if not 0 <= event_index < len(events):
            raise ReductionError(
                f"event {event_index} does not exist; {len(events)} event(s) found "
                f"(numbered 0 to {len(events) - 1})"
            )
        ev = events[event_index]
        chosen_index = event_index
    t0 = float(event_start_s) if event_start_s is not None else ev.start_s  # type: ignore[union-attr]
    ta = float(after_start_s) if after_start_s is not None else ev.after_start_s  # type: ignore[union-attr]
    if ta <= t0:
        raise ReductionError(
            f"the after-period start ({ta:g} s) must come after the event start ({t0:g} s)"
        )
    before = [e for e in events if e.after_start_s <= t0 and e is not ev]
    after = [e for e in events if e.start_s >= ta and e is not ev]
    lo = before[-1].after_start_s if before else float(t[0])
    hi = after[0].start_s if after else float(t[-1])
    _period_check(
        t,
        lo,
        t0,
        "fore-period",
        "start logging earlier before the event, or give --event-start",
    )
    _period_check(
        t,
        ta,
        hi,
        "after-period",
        "keep logging longer after the event (until the drift is steady again), "
        "or give --after-start",
    )

    base = _one_pass(t, y, lo, t0, ta, hi, drift_model)
    fit = base.choice.chosen
    mp = main_period(t, y, fit, t0, ta)

    tau = ev.tail_s if ev is not None else 60.0
    onset = ev.onset_s if ev is not None else t0
    newton = newton_fit(
        t,
        y,
        fit,
        t0,
        ta,
        guess_delta=base.values["regnault-pfaundler"],
        guess_start=max(t0, onset - 2 * rr.step_s),
        guess_tau=tau,
    )
    ref_noise = max(fit.sigma_fore, fit.sigma_after, q / math.sqrt(12.0), 1e-6)
    newton_ok = (
        newton.converged
        and math.isfinite(newton.delta_t_K)
        and newton.rms_main_K <= NEWTON_RMS_FACTOR * ref_noise
    )
    values = dict(base.values)
    values["newton"] = newton.delta_t_K
    methods = {
        "regnault-pfaundler": MethodResult(
            "regnault-pfaundler", values["regnault-pfaundler"], True, "ISO 1928 Annex C form"
        ),
        "dickinson": MethodResult(
            "dickinson", values["dickinson"], True, "equal-area extrapolation time"
        ),
        "dickinson-60": MethodResult(
            "dickinson-60",
            values["dickinson-60"],
            True,
            "60 % rule, ASTM D240/D5865; approximation, not in the spread",
        ),
        "newton": MethodResult(
            "newton",
            values["newton"],
            newton_ok,
            f"main-period RMS residual {newton.rms_main_K:.3g} K vs noise {ref_noise:.3g} K",
        ),
    }

    nf, na = fit.fore_t.size, fit.after_t.size
    funcs = {
        "regnault-pfaundler": lambda f: regnault_pfaundler(main_period(t, y, f, t0, ta), f),
        "dickinson": lambda f: dickinson(main_period(t, y, f, t0, ta), f)[0],
        "dickinson-60": lambda f: dickinson_60(main_period(t, y, f, t0, ta), f)[0],
    }
    levels = [
        int(np.unique(y[(t >= lo) & (t <= t0)]).size),
        int(np.unique(y[(t >= ta) & (t <= hi)]).size),
    ]
    u_res = resolution_u(q, noise, levels)

    def parts(name: str) -> tuple[float, float, float, list[Component]]:
        """Fore, after and main-noise uncertainty and extra components of one method."""
        if name == "newton":
            comp = Component(
                "Newton-model fit",
                0.0,
                newton.u_delta_t_K,
                1.0,
                "K",
                max(fit.n - 7, 1),
                "A",
                "covariance of the whole-curve fit",
            )
            return 0.0, 0.0, 0.0, [comp]
        u_f, u_a, _ = fit.u_of(funcs[name])
        # per-reading noise: the drift periods may have been fitted on block means
        sigma_main = max(
            fit.sigma_fore * math.sqrt(base.block_fore),
            fit.sigma_after * math.sqrt(base.block_after),
        )
        w = trapezoid_weights(mp.t)[1:-1]
        u_n = abs(fit.k_per_s) * sigma_main * float(np.sqrt(np.sum(w**2)))
        return u_f, u_a, (u_n if math.isfinite(u_n) else 0.0), []

    # boundaries: main-period start earlier, after-period start later
    shift0 = max(rr.window_s / 2, 30.0)
    shift1 = max(2 * tau, 30.0)
    alternatives = []
    for d0, d1 in ((shift0, 0.0), (0.0, shift1), (shift0, shift1)):
        a0, a1 = t0 - d0, ta + d1
        try:
            _period_check(t, lo, a0, "fore-period", "")
            _period_check(t, a1, hi, "after-period", "")
        except ReductionError:
            continue
        alternatives.append(_one_pass(t, y, lo, a0, a1, hi, fit.model).values)
    if not alternatives:
        notes.append("periods too short to vary the boundaries; boundary component omitted")

    def boundary_spread(name: str) -> float:
        ref = name if name != "newton" else "regnault-pfaundler"
        return max((abs(a[ref] - base.values[ref]) for a in alternatives), default=0.0)

    def u_without_spread(name: str) -> float:
        u_f, u_a, u_n, extra = parts(name)
        b = boundary_spread(name) / math.sqrt(3.0)
        return math.sqrt(u_f**2 + u_a**2 + u_n**2 + b**2 + u_res**2 + sum(c.u**2 for c in extra))

    if method == "auto":
        u_rp = u_without_spread("regnault-pfaundler")
        u_nt = u_without_spread("newton") if newton_ok else math.inf
        if u_nt < u_rp:
            chosen = "newton"
            reason = (
                f"the Newton-model fit matches the main period within the noise and is more "
                f"precise (u {u_nt:.2g} K vs {u_rp:.2g} K for Regnault–Pfaundler)"
            )
        else:
            chosen = "regnault-pfaundler"
            reason = "Regnault–Pfaundler needs only Newtonian exchange; " + (
                f"it is at least as precise as the Newton fit (u {u_rp:.2g} K vs {u_nt:.2g} K)"
                if newton_ok
                else "the Newton-model fit does not match the main period within the noise"
            )
    else:
        chosen = method
        reason = "requested"
        if method == "newton" and not newton_ok:
            notes.append("the Newton-model fit does not describe the main period within the noise")
    value = values[chosen]
    if not math.isfinite(value):
        raise ReductionError(
            f"the {chosen} method failed on this log; try --method regnault-pfaundler"
        )

    others = ["regnault-pfaundler", "dickinson"] + (["newton"] if newton_ok else [])
    if chosen == "dickinson-60":
        others = ["regnault-pfaundler"]
    method_spread = max((abs(values[m] - value) for m in others if m != chosen), default=0.0)
    u_fore, u_after, u_noise, extra = parts(chosen)
    budget = delta_t_budget(
        value=value,
        u_fore=u_fore,
        u_after=u_after,
        dof_fore=max(nf - 2, 1),
        dof_after=max(na - 2, 1),
        u_noise=u_noise,
        u_resolution=u_res,
        boundary_spread=boundary_spread(chosen),
        method_spread=method_spread,
        method=chosen,
        extra=extra,
    )

    # naive: extreme reading after the start minus the reading at the start
    i0 = min(int(np.searchsorted(t_raw, t0)), t_raw.size - 1)
    i1 = max(int(np.searchsorted(t_raw, hi, side="right")), i0 + 1)
    window = y_raw[i0:i1]
    naive = float((window.max() if value >= 0 else window.min()) - y_raw[i0])

    if fit.model == "newtonian" and fit.k_per_s < 0:
        notes.append("fitted exchange constant is negative: the drift is not Newtonian")
    return Reduction(
        delta_t_K=float(value),
        u_delta_t_K=budget.u,
        budget=budget,
        method=chosen,
        method_reason=reason,
        methods=methods,
        event_start_s=t0,
        after_start_s=ta,
        fore_start_s=lo,
        after_end_s=hi,
        events=events,
        event_index=chosen_index,
        drift=fit,
        drift_reason=base.choice.criterion,
        naive_delta_t_K=naive,
        noise_K=noise,
        resolution_K=q,
        newton=newton,
        notes=tuple(notes),
    )
