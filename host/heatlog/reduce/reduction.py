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
from heatlog.orderstats import distinct, distinct_count, median
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
from heatlog.reduce.events import Event, detect_events, reading_noise
from heatlog.reduce.periods import FULL_PERIOD_S, min_period_s, period_shortfall
from heatlog.reduce.sampling import block_means
from heatlog.reduce.surroundings import (
    ENV_LAG_BOUND_S,
    ENV_NOISE_DRAWS,
    SurroundingsFit,
    env_response,
    fit_rooms,
    fit_surroundings,
    ramp_preferred,
    ramp_shape,
)
from heatlog.reduce.uncertainty import delta_t_budget, resolution_u
from heatlog.smoothing import moving_average
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
    u = distinct(sample)
    if u.size < 3 or u.size > sample.size // 2:
        return 0.0
    q = float(np.min(np.diff(u)))
    if q <= 0:
        return 0.0
    steps = (u - u[0]) / q
    return q if np.allclose(steps, np.round(steps), atol=1e-3) else 0.0


def _period_check(t: np.ndarray, lo: float, hi: float, what: str, advice: str) -> None:
    why = period_shortfall(t, lo, hi, what)
    if why is not None:
        raise ReductionError(f"{why}: {advice}" if advice else why)


@dataclass(frozen=True, eq=False)
class _Pass:
    choice: DriftChoice
    values: dict[str, float]
    main_t: np.ndarray
    block_fore: int
    block_after: int


def _one_pass(t, y, lo, t0, ta, hi, drift_model: str, k_fixed: float | None = None) -> _Pass:
    fm = (t >= lo) & (t <= t0)
    am = (t >= ta) & (t <= hi)
    ft, fy, bf = block_means(t[fm], y[fm], MAX_PERIOD_POINTS)
    at, ay, ba = block_means(t[am], y[am], MAX_PERIOD_POINTS)
    choice = fit_drift(ft, fy, at, ay, drift_model, k_fixed)
    fit = choice.chosen
    mp = main_period(t, y, fit, t0, ta)
    values = {
        "regnault-pfaundler": regnault_pfaundler(mp, fit),
        "dickinson": dickinson(mp, fit)[0],
        "dickinson-60": dickinson_60(mp, fit)[0],
    }
    return _Pass(choice, values, mp.t, bf, ba)


def _pair(a: float, b: float) -> str:
    """``"a K vs b K"`` with just enough digits that two different values never read alike."""
    for digits in range(2, 7):
        left, right = f"{a:.{digits}g}", f"{b:.{digits}g}"
        if left != right or a == b:
            break
    return f"{left} K vs {right} K"


def _rp_with(t, y_work, lo, t0, ta, hi, k: float) -> float:
    return _one_pass(t, y_work, lo, t0, ta, hi, "newtonian", k).values["regnault-pfaundler"]


def _surroundings_rows(
    t, y_meas, y_work, lo, t0, ta, hi, fit, sur, steady_alt, env, env_noise, k_fixed, base
) -> list[Component]:
    """Budget rows of the surroundings model (effects computed with Regnault–Pfaundler)."""
    rows: list[Component] = []

    def row(name: str, u: float, how: str, note: str) -> None:
        if math.isfinite(u):
            rows.append(Component(name, 0.0, u, 1.0, "K", math.inf, how, note))

    ref = base.values["regnault-pfaundler"]
    if steady_alt is not None:
        alt = _rp_with(t, y_meas - steady_alt.w, lo, t0, ta, hi, steady_alt.k_per_s)
        row(
            "steady-room assumption",
            abs(alt - ref) / math.sqrt(3.0),
            "B",
            f"fore/after drifts point to a room drifting {steady_alt.beta_K_per_s * 3600:+.2f} "
            "K/h; difference to that model, rectangular",
        )
    if sur is None or k_fixed is None:
        return rows
    k = k_fixed
    _, u_k, _, _ = fit.k_and_t_inf()
    if sur.kind == "ramp":
        e = ramp_shape(t)
        w1 = env_response(t, e, k)
        ub = sur.u_beta_K_per_s
        hi_v = _rp_with(t, y_meas - (sur.beta_K_per_s + ub) * w1, lo, t0, ta, hi, k)
        lo_v = _rp_with(t, y_meas - (sur.beta_K_per_s - ub) * w1, lo, t0, ta, hi, k)
        row("room drift (fitted)", abs(hi_v - lo_v) / 2, "A", "u(β) of the fitted room drift")
        # k and β are told apart only by the curvature of the drift periods: the spread to the
        # steady-room result stays in the budget as a rectangular row
        steady_v = _one_pass(t, y_meas, lo, t0, ta, hi, "auto").values["regnault-pfaundler"]
        row(
            "room-drift model",
            abs(steady_v - ref) / math.sqrt(3.0),
            "B",
            "difference to the steady-room result, rectangular",
        )
        return rows
    e = np.asarray(env, dtype=float) - float(np.mean(env))
    if math.isfinite(u_k) and u_k > 0:
        vals = [
            _rp_with(t, y_meas - env_response(t, e, kk), lo, t0, ta, hi, k)
            for kk in (max(k - u_k, 0.0), k + u_k)
        ]
        row(
            "surroundings term: k in T_env",
            abs(vals[1] - vals[0]) / 2,
            "A",
            "u(k) through w = k-filtered T_env",
        )
    if env_noise > 0:
        rng = np.random.default_rng(0)
        draws = [
            _rp_with(
                t,
                y_meas - env_response(t, e + rng.normal(0.0, env_noise, e.size), k),
                lo, t0, ta, hi, k,
            )
            - ref
            for _ in range(ENV_NOISE_DRAWS)
        ]  # fmt: skip
        row(
            "surroundings probe noise",
            float(np.sqrt(np.mean(np.square(draws)))),
            "A",
            f"σ = {env_noise:.2g} K per reading, {ENV_NOISE_DRAWS} seeded draws",
        )
    rate = np.gradient(e, t)
    if e.size > 7:
        rate = moving_average(rate, size=max(3, int(60.0 / max(median(np.diff(t)), 1e-9))))
    lagged = _rp_with(t, y_meas - env_response(t, e + ENV_LAG_BOUND_S * rate, k), lo, t0, ta, hi, k)
    row(
        "surroundings probe lag",
        abs(lagged - ref) / math.sqrt(3.0),
        "B",
        f"T_env read up to {ENV_LAG_BOUND_S:.0f} s late, rectangular",
    )
    return rows


def reduce_thermogram(
    thermogram: Thermogram,
    *,
    method: str = "auto",
    event_index: int = 0,
    event_start_s: float | None = None,
    after_start_s: float | None = None,
    resolution_K: float | None = None,
    drift_model: str = "auto",
    env_channel: str | None = None,
) -> Reduction:
    """Corrected, signed temperature change of one event with its GUM budget.

    ``event_index`` selects among detected events (time order). ``event_start_s`` and
    ``after_start_s`` override the detected boundaries. ``resolution_K`` is the reading step
    (ADC/probe resolution); ``None`` takes it from the data when the readings sit on a grid.
    ``env_channel`` names the thermogram channel with the logged surroundings temperature; the
    exchange then runs against it (module ``surroundings``). Without one, a steadily drifting
    room is fitted too and taken when the data call for it (stated criterion there).
    Raises :class:`ReductionError` when no event is found or a period is below the stated minimum
    (module ``periods``).
    """
    if method != "auto" and method not in METHODS:
        raise ReductionError(f"unknown method {method!r}; use auto or one of {', '.join(METHODS)}")
    t_raw, y_raw = thermogram.time_s, thermogram.temp_C
    t, y, _ = block_means(t_raw, y_raw, MAX_POINTS)
    env: np.ndarray | None = None
    env_noise = 0.0
    if env_channel is not None:
        if env_channel not in thermogram.channels:
            have = ", ".join(repr(c) for c in thermogram.channels) or "none"
            raise ReductionError(
                f"no surroundings column {env_channel!r} in the log (channels read: {have}); "
                "name the logged ambient column, or leave it out"
            )
        env_raw = thermogram.channels[env_channel]
        if not np.all(np.isfinite(env_raw)) or np.ptp(env_raw) > 200.0:
            raise ReductionError(
                f"the surroundings column {env_channel!r} holds non-finite or implausible values "
                "(a spread over 200 K); check the column"
            )
        _, env, m_env = block_means(t_raw, env_raw, MAX_POINTS)
        env_noise = reading_noise(np.asarray(env_raw)) / math.sqrt(m_env)
    q = detect_resolution(y_raw) if resolution_K is None else float(resolution_K)
    if q < 0 or not math.isfinite(q):
        raise ReductionError("the resolution must be a step of zero or more kelvin")
    noise = reading_noise(y)
    events, rr = detect_events(t, y, noise_K=noise, resolution_K=q, env=env)

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
    tail_K = ev.tail_K if (ev is not None and after_start_s is None) else 0.0
    if ev is not None and after_start_s is None:
        # a long release: the after-period may start earlier than the detector's choice, as long
        # as the release left is carried in the budget (``Event.tail_K``) and it is past the peak
        need = min_period_s(rr.step_s)
        if hi - ta < need and hi - need > ev.peak_s + 2 * ev.tail_s:
            new_ta = hi - need
            tail_K = ev.tail_K * math.exp((ta - new_ta) / ev.tail_s)
            notes.append(
                f"the log ends soon after the release: after-period started at {new_ta:.0f} s "
                f"instead of {ta:.0f} s; the release still to come (≈{tail_K:.2g} K) is in the "
                "budget"
            )
            ta = new_ta
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

    for what, a, b in (("fore-period", lo, t0), ("after-period", ta, hi)):
        if b - a < FULL_PERIOD_S:
            notes.append(
                f"short {what} ({b - a:.0f} s): reduced with the uncertainty its own readings "
                f"give; {FULL_PERIOD_S:.0f} s or more is better"
            )

    # the surroundings: measured, or a steady/drifting room fitted from the drift periods
    fm = (t >= lo) & (t <= t0)
    am = (t >= ta) & (t <= hi)
    sur: SurroundingsFit | None = None
    steady_alt: SurroundingsFit | None = None
    k_fixed: float | None = None
    y_raw_b = y
    if env is not None:
        sur = fit_surroundings(t, y, fm, am, env)
    elif drift_model == "auto":
        ramp, steady = fit_rooms(t, y, fm, am)
        if ramp_preferred(ramp, steady.aic):
            sur = ramp
        elif (
            math.isfinite(ramp.u_beta_K_per_s) and abs(ramp.beta_K_per_s) > 2 * ramp.u_beta_K_per_s
        ):
            steady_alt = ramp
    if sur is not None:
        y = y - sur.w
        k_fixed = sur.k_per_s
    base = _one_pass(t, y, lo, t0, ta, hi, "newtonian" if sur else drift_model, k_fixed)
    fit = base.choice.chosen
    mp = main_period(t, y, fit, t0, ta)
    drift_reason = base.choice.criterion
    if sur is not None and sur.kind == "measured":
        drift_reason = (
            f"surroundings measured ({env_channel}): Newton's law against the logged T_env(t), "
            f"k fitted over fore- and after-periods together"
        )
    elif sur is not None:
        drift_reason = (
            f"AIC drifting room {sur.aic:.1f} vs steady room {steady.aic:.1f}: the surroundings "
            f"drift by {sur.beta_K_per_s * 3600:+.2f} K/h (u {sur.u_beta_K_per_s * 3600:.2g} "
            "K/h, k=1); Newton's law against a steadily drifting room"
        )

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
        distinct_count(y[(t >= lo) & (t <= t0)]),
        distinct_count(y[(t >= ta) & (t <= hi)]),
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

    # boundaries: main-period start earlier, after-period start later; a short period is
    # shortened only down to the stated minimum (the shift shrinks with it)
    need = min_period_s(rr.step_s)
    shift0 = min(max(rr.window_s / 2, 30.0), (t0 - lo) - need)
    shift1 = min(max(2 * tau, 30.0), (hi - ta) - need)
    alternatives = []
    for d0, d1 in ((shift0, 0.0), (0.0, shift1), (shift0, shift1)):
        if d0 < 0 or d1 < 0 or (d0 == 0 and d1 == 0):
            continue
        a0, a1 = t0 - d0, ta + d1
        try:
            _period_check(t, lo, a0, "fore-period", "")
            _period_check(t, a1, hi, "after-period", "")
        except ReductionError:
            continue
        alternatives.append(_one_pass(t, y, lo, a0, a1, hi, fit.model, k_fixed).values)
    if not alternatives:
        notes.append("periods too short to vary the boundaries; boundary component omitted")

    more = _surroundings_rows(
        t, y_raw_b, y, lo, t0, ta, hi, fit, sur, steady_alt, env, env_noise, k_fixed, base
    )
    if tail_K > 0:
        more.append(
            Component(
                "release after the after-period start",
                0.0,
                tail_K / math.sqrt(3.0),
                1.0,
                "K",
                math.inf,
                "B",
                "exponential tail beyond the after-period start, rectangular",
            )
        )

    def boundary_spread(name: str) -> float:
        ref = name if name != "newton" else "regnault-pfaundler"
        return max((abs(a[ref] - base.values[ref]) for a in alternatives), default=0.0)

    def u_without_spread(name: str) -> float:
        u_f, u_a, u_n, extra = parts(name)
        b = boundary_spread(name) / math.sqrt(3.0)
        rows = extra + (more if name != "newton" else [c for c in more if "tail" not in c.note])
        return math.sqrt(u_f**2 + u_a**2 + u_n**2 + b**2 + u_res**2 + sum(c.u**2 for c in rows))

    if method == "auto":
        u_rp = u_without_spread("regnault-pfaundler")
        u_nt = u_without_spread("newton") if newton_ok else math.inf
        if u_nt < u_rp:
            chosen = "newton"
            reason = (
                f"the Newton-model fit matches the main period within the noise and is more "
                f"precise (u {_pair(u_nt, u_rp)} for Regnault–Pfaundler)"
            )
        else:
            chosen = "regnault-pfaundler"
            reason = "Regnault–Pfaundler needs only Newtonian exchange; " + (
                f"it is at least as precise as the Newton fit (u {_pair(u_rp, u_nt)})"
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
        more=more if chosen != "newton" else [c for c in more if "tail" not in c.note],
    )

    # naive: extreme reading after the start minus the reading at the start
    i0 = min(int(np.searchsorted(t_raw, t0)), t_raw.size - 1)
    i1 = max(int(np.searchsorted(t_raw, hi, side="right")), i0 + 1)
    window = y_raw[i0:i1]
    naive = float((window.max() if value >= 0 else window.min()) - y_raw[i0])

    if sur is not None:
        notes.append(
            "drift periods and corrections use the readings minus the surroundings term "
            f"w(t) (k = {sur.k_per_s:.3g} 1/s); the drift values shown are of those"
        )
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
        drift_reason=drift_reason,
        naive_delta_t_K=naive,
        noise_K=noise,
        resolution_K=q,
        newton=newton,
        notes=tuple(notes),
    )
