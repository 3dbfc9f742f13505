"""One call from logged arrays to a full heat-release profile: :func:`analyse_profile`.

Takes (time, temperature, environment) arrays as a :class:`~heatlog.thermogram.Thermogram` holds
them (plus an optional status column), checks the log (:mod:`~heatlog.profile.logcheck`), finds
or takes the heat-loss coefficient (:mod:`~heatlog.profile.heatloss`), then computes Q(t) and
P(t) (:mod:`~heatlog.profile.heat`), the kind's metrics and safety flags, and for setting
materials the maturity (ASTM C1074). Pure: no file access; :func:`settings_from_table` turns a
run file's ``[profile]`` table into :class:`ProfileSettings`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import cached_property
from typing import Any

import numpy as np

from heatlog.errors import InputError
from heatlog.gum import Budget, Input
from heatlog.profile.heat import HeatProfile, heat_profile
from heatlog.profile.heatloss import (
    CoolingFit,
    HeatLoss,
    cooling_fit,
    given_loss,
    loss_from_cooling,
)
from heatlog.profile.lag import LagCorrection, correct_lag, smoothed_slope
from heatlog.profile.logcheck import DEFAULT_GAP_FACTOR, GapPolicy, LogCheck, Segment, check_log
from heatlog.profile.maturity import (
    DEFAULT_ACTIVATION_K,
    DEFAULT_DATUM_C,
    DEFAULT_REFERENCE_C,
    Maturity,
    maturity,
)
from heatlog.profile.metrics import DEFAULT_THRESHOLDS, KINDS, Metrics, Thresholds, metrics
from heatlog.profile.peakrate import PeakRate, peak_rate
from heatlog.profile.safety import SafetyFlag, safety_flags
from heatlog.profile.tailcheck import TailDrift, tail_drift
from heatlog.thermogram import Thermogram

METHOD = (
    "semi-adiabatic heat balance Q(t) = C·(T(t) − T(0)) + G·∫(T − T_env)dt "
    "(method family of EN 196-9, RILEM TC 119, NT BUILD 388)"
)
SIGN = "Q > 0: heat released by the sample (warmer, setting); Q < 0: heat absorbed (cold pack)"
#: Standard uncertainty of a reading when none is given: an uncalibrated thermistor
#: (common practice, no source). Give the probe's calibrated value instead.
DEFAULT_U_TEMP_K = 0.5
#: Standard uncertainty of the environment reading relative to the sample probe when none is
#: given (common practice, no source).
DEFAULT_U_ENV_K = 0.5
#: Ages at which cement heat is tabulated; 41 h is the age EN 196-9 reports (from memory).
CEMENT_AGES_H = (12.0, 24.0, 41.0, 48.0, 72.0, 120.0, 168.0)
SERIES_POINTS = 200


@dataclass(frozen=True)
class ProfileSettings:
    """Everything :func:`analyse_profile` needs besides the arrays; see the CLI help for each."""

    heat_capacity: Input
    loss: Input | None = None
    cooling_fit_after_s: float | None = None  # seconds from the segment start
    env_C: float | None = None
    u_env_K: float = DEFAULT_U_ENV_K
    sample_g: Input | None = None
    kind: str = "generic"
    thresholds: Thresholds | None = None
    u_temp_K: float = DEFAULT_U_TEMP_K
    resolution_K: float = 0.0
    rate_window_s: float | None = None
    gap_factor: float = DEFAULT_GAP_FACTOR
    gap_policy: GapPolicy = GapPolicy.EXCLUDE
    segment: int = 0
    datum_C: float = DEFAULT_DATUM_C
    activation_K: float = DEFAULT_ACTIVATION_K
    u_activation_K: float = 0.0
    reference_C: float = DEFAULT_REFERENCE_C
    probe_tau: Input | None = None  # the probe's time constant (s) with its uncertainty

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise InputError(f"unknown kind {self.kind!r}; use one of {', '.join(KINDS)}")
        if self.loss is None and self.cooling_fit_after_s is None:
            raise InputError(
                "give the heat-loss coefficient (--loss W/K) or ask for a cooling fit "
                "(--cooling-fit SECONDS)"
            )
        if self.loss is not None and self.cooling_fit_after_s is not None:
            raise InputError("give either a heat-loss coefficient or a cooling fit, not both")
        for name, value in (
            ("u_env_K", self.u_env_K),
            ("u_temp_K", self.u_temp_K),
            ("resolution_K", self.resolution_K),
        ):
            if not (math.isfinite(value) and value >= 0):
                raise InputError(f"{name} must be zero or positive, got {value:g}")
        if self.sample_g is not None and not self.sample_g.value > 0:
            raise InputError(f"the sample mass must be positive, got {self.sample_g.value:g} g")


@dataclass(frozen=True, eq=False)
class ProfileResult:
    """The analysis of one log segment; ``to_dict`` is the CLI's JSON."""

    settings: ProfileSettings
    check: LogCheck
    segment_index: int
    heat: HeatProfile
    budget: Budget  # Q (J) at the end of the segment
    budget_per_g: Budget | None
    metrics: Metrics
    safety: tuple[SafetyFlag, ...]
    maturity: Maturity | None = None
    cooling: CoolingFit | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def complete(self) -> bool:
        h = self.heat
        return h.first_incomplete >= h.time_s.size

    def per_gram(self, values: np.ndarray) -> np.ndarray:
        m = self.settings.sample_g
        return values / m.value if m is not None else values * np.nan

    def heat_at_hours(self, hours: tuple[float, ...]) -> list[dict[str, float | bool]]:
        """Q (and Q/m) with their standard uncertainties at the given ages within the segment."""
        h = self.heat
        age_h = (h.time_s - h.time_s[0]) / 3600.0
        rows = []
        for a in hours:
            if a > age_h[-1]:
                continue
            i = int(np.searchsorted(age_h, a))
            b = h.budget(i, sample_g=self.settings.sample_g)
            row: dict[str, float | bool] = {
                "age_h": float(age_h[i]),
                "heat_J": float(h.heat_J[i]),
                "u_heat_J": float(h.u_heat_J[i]),
                "complete": bool(i < h.first_incomplete),
            }
            if self.settings.sample_g is not None:
                row.update(heat_J_per_g=b.value, u_heat_J_per_g=b.u)
            rows.append(row)
        return rows

    def series(self, points: int = SERIES_POINTS) -> dict[str, list[float]]:
        """About ``points`` samples evenly spaced in time, for a table or a quick plot."""
        h = self.heat
        grid = np.linspace(h.time_s[0], h.time_s[-1], points)
        idx = np.unique(np.minimum(np.searchsorted(h.time_s, grid), h.time_s.size - 1))
        out = {
            "time_h": ((h.time_s[idx] - h.time_s[0]) / 3600.0).tolist(),
            "temp_C": h.temp_C[idx].tolist(),
            "env_C": h.env_C[idx].tolist(),
            "heat_J": h.heat_J[idx].tolist(),
            "u_heat_J": h.u_heat_J[idx].tolist(),
            "rate_W": h.rate_W[idx].tolist(),
            "u_rate_W": h.u_rate_at(idx).tolist(),
        }
        if self.settings.sample_g is not None:
            out["heat_J_per_g"] = self.per_gram(h.heat_J[idx]).tolist()
            out["rate_mW_per_g"] = (1e3 * self.per_gram(h.rate_W[idx])).tolist()
        if self.maturity is not None:
            out["maturity_C_h"] = self.maturity.factor_Ch[idx].tolist()
            out["equivalent_age_h"] = self.maturity.equivalent_age_h[idx].tolist()
        return out

    @cached_property
    def drift(self) -> TailDrift | None:
        """Q(t) still drifting at the end in step with the loss integral (not for cement)."""
        return None if self.settings.kind == "cement" else tail_drift(self.heat)

    @cached_property
    def peak(self) -> PeakRate:
        """The peak rate with a window fitted to the event (:mod:`heatlog.profile.peakrate`)."""
        sign = -1.0 if self.settings.kind == "pack" else 1.0
        return peak_rate(self.heat, sign, self.settings.rate_window_s)

    @property
    def warnings(self) -> list[str]:
        """Warnings found on the result (peak rate, Q drifting at the end)."""
        out = list(self.peak.warnings)
        if self.drift is not None:
            out.append(self.drift.message())
        return out

    def peak_rate(self) -> tuple[float, float, float]:
        """Largest |P| (W, signed), its time from the segment start (s) and its uncertainty (W)."""
        p = self.peak
        return p.rate_W, p.time_s, p.u_rate_W

    def to_dict(self) -> dict[str, Any]:
        s = self.settings
        heat = self.heat.to_dict()
        rate, t_rate, u_rate = self.peak_rate()
        out: dict[str, Any] = {
            "kind": s.kind,
            "method": METHOD,
            "sign_convention": SIGN,
            "complete": self.complete,
            "log": self.check.to_dict(),
            "segment_used": self.segment_index,
            "heat_J": self.budget.value,
            "u_heat_J": self.budget.u,
            "U_heat_J": self.budget.expanded,
            "heat_budget": self.budget.to_dict(),
            "peak_rate_W": rate,
            "u_peak_rate_W": u_rate,
            "time_of_peak_rate_s": t_rate,
            "peak_rate": self.peak.to_dict(),
            "profile": heat,
            "metrics": self.metrics.to_dict(),
            "safety": [f.to_dict() for f in self.safety],
            "notes": list(self.notes) + [f"WARNING: {w}" for w in self.warnings],
            "tail_drift": None if self.drift is None else self.drift.to_dict(),
        }
        if self.budget_per_g is not None and s.sample_g is not None:
            out.update(
                sample_g=s.sample_g.value,
                u_sample_g=s.sample_g.u,
                heat_J_per_g=self.budget_per_g.value,
                u_heat_J_per_g=self.budget_per_g.u,
                U_heat_J_per_g=self.budget_per_g.expanded,
                heat_per_g_budget=self.budget_per_g.to_dict(),
                peak_rate_mW_per_g=1e3 * rate / s.sample_g.value,
            )
        if self.cooling is not None:
            out["cooling_fit"] = self.cooling.to_dict()
        out["probe_lag"] = None if self.heat.lag is None else self.heat.lag.to_dict()
        if self.maturity is not None:
            out["maturity"] = self.maturity.to_dict()
            out["heat_at_ages"] = self.heat_at_hours(CEMENT_AGES_H)
        out["series"] = self.series()
        return out


def _notes(
    check: LogCheck, seg_index: int, heat: HeatProfile, settings: ProfileSettings
) -> list[str]:
    notes = []
    if check.faulted:
        notes.append(f"{check.faulted} sample(s) flagged as probe faults were excluded")
    for r in check.resets:
        notes.append(
            f"clock reset at data row {r.row}: time went from {r.time_before_s:g} s to "
            f"{r.time_after_s:g} s; the log was split there and not integrated across"
        )
    if check.dropped:
        notes.append(
            f"{check.dropped} sample(s) between clock resets formed stretches too short to use"
        )
    if len(check.segments) > 1:
        notes.append(
            f"{len(check.segments)} segments; analysed segment {seg_index} (choose with --segment)"
        )
    seg = check.segments[seg_index]
    for g in seg.gaps:
        what = (
            "bridged by a straight line (asked for); an uncertainty component covers it"
            if settings.gap_policy is GapPolicy.INTERPOLATE
            else "not integrated: results after it are flagged incomplete"
        )
        notes.append(f"gap of {g.length_s:g} s from {g.start_s:g} s: {what}")
    if settings.gap_policy is GapPolicy.EXCLUDE and seg.gaps:
        lost = heat.loss.G_W_per_K * float(heat.skipped_Ks[-1])
        notes.append(
            f"heat lost through the walls during the skipped gaps ≈ {lost:.4g} J by linear "
            "interpolation; it is NOT in Q (use --interpolate-gaps to include it)"
        )
    if settings.sample_g is None:
        notes.append("no sample mass given: per-gram figures omitted (--sample-g)")
    if settings.heat_capacity.u == 0:
        notes.append("u(C) not given and taken as 0: the budget is too small (--u-heat-capacity)")
    if heat.loss.u_G_W_per_K == 0:
        notes.append(
            "u(G) explicitly set to 0: the budget leaves out the heat-loss coefficient's "
            "uncertainty and is too small unless G is exact"
        )
    notes.append(
        "C must be the heat capacity of everything that warms: box, contents and the sample itself"
    )
    return notes


#: A probe time constant typical of a thermistor in a thin sheath in still liquid, used only to
#: size the warning when none is given (common practice, no source).
TYPICAL_PROBE_TAU_S = 10.0


def _lag_notes(
    lagc: LagCorrection | None, seg: Segment, settings: ProfileSettings, heat: HeatProfile
) -> list[str]:
    if lagc is not None:
        return [
            f"probe lag corrected with τ = {lagc.tau.value:g} s, u = {lagc.tau.u:.2g} s (k=1) "
            f"({lagc.tau.note or 'given'}); slope smoothed over {lagc.window_s:.3g} s; the "
            f"correction reaches {lagc.max_shift_K:.2g} K"
        ]
    t = seg.time_s
    if t.size < 9:
        return []
    slope = smoothed_slope(t, seg.temp_C, 7 * float(np.median(np.diff(t))))
    shift = TYPICAL_PROBE_TAU_S * float(np.max(np.abs(slope)))
    dq = settings.heat_capacity.value * shift
    u_q = float(np.max(heat.u_heat_J))
    if shift <= 0.2 * math.hypot(settings.u_temp_K, heat.u_reading_K) and dq <= 0.2 * u_q:
        return []
    return [
        f"WARNING: probe time constant not given, so its lag is neither corrected nor in the "
        f"budget: the curve moves up to {60 * float(np.max(np.abs(slope))):.2g} K/min, so a "
        f"τ of {TYPICAL_PROBE_TAU_S:g} s would shift readings by up to {shift:.2g} K and Q by up "
        f"to {dq:.2g} J; give --probe-tau (or time_constant_s in the probe file)"
    ]


def _fit_notes(fit: CoolingFit | None, t0: float, kind: str) -> list[str]:
    if fit is None:
        return []
    if kind == "cement":
        caution = [
            "WARNING: a setting material releases heat for weeks, so a cooling fit on its own "
            "tail takes that release for slower cooling and G comes out low; a release decaying "
            "as slowly as the box cools cannot be told from cooling by any fit. Calibrate the "
            "box with a heater (electrical calibration) and give G"
        ]
    else:
        caution = []
    k, u_stat, u_rel = fit.rate_per_s, fit.u_rate_per_s, fit.u_release_per_s
    notes = [
        f"cooling fit from {fit.start_s - t0:g} s to {fit.end_s - t0:g} s after the segment start: "
        f"k = G/C = {k:.4g} 1/s, u = {fit.u_total_per_s:.2g} 1/s (k=1; statistical "
        f"{u_stat:.2g}, release still under way {u_rel:.2g}); "
        f"residual rms {fit.residual_K:.2g} K = {fit.residual_ratio:.2g}× the reading noise"
    ]
    return notes + [f"WARNING: {w}" for w in fit.warnings] + caution


def analyse_profile(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    settings: ProfileSettings,
    *,
    env_C: np.ndarray | None = None,
    flags: np.ndarray | None = None,
    where: str = "log",
) -> ProfileResult:
    """Check the log, then compute heat, rate, metrics, safety flags and (cement) maturity.

    ``env_C`` is the environment channel (°C per sample); without it ``settings.env_C`` is used
    as a constant. ``flags`` is an optional status column (non-zero = probe fault).
    """
    s = settings
    if env_C is None:
        if s.env_C is None:
            raise InputError(
                f"{where}: give the environment temperature (--env-temp °C) or its column (--env-col)"
            )
        env: np.ndarray | float = s.env_C
    else:
        env = env_C
    check = check_log(time_s, temp_C, env, flags=flags, gap_factor=s.gap_factor, where=where)
    if not 0 <= s.segment < len(check.segments):
        raise InputError(
            f"{where}: segment {s.segment} does not exist; the log has {len(check.segments)} "
            f"segment(s) numbered from 0"
        )
    seg = check.segments[s.segment]
    lagc = None
    if s.probe_tau is not None:
        lagc = correct_lag(seg.time_s, seg.temp_C, s.probe_tau)
        seg = replace(seg, temp_C=lagc.corrected_C)
    fit = None
    if s.loss is not None:
        loss: HeatLoss = given_loss(s.loss)
    else:
        after = float(s.cooling_fit_after_s or 0.0)
        if not (math.isfinite(after) and 0.0 <= after < seg.duration_s):
            raise InputError(
                f"{where}: the cooling fit starts {after:g} s after the segment start (time is "
                f"counted from the segment start, as printed), but segment {s.segment} lasts "
                f"{seg.duration_s:g} s; give a start inside it"
            )
        fit = cooling_fit(
            seg.time_s,
            seg.temp_C,
            seg.env_C,
            start_s=seg.time_s[0] + after,
            resolution_K=s.resolution_K,
            origin_s=float(seg.time_s[0]),
        )
        loss = loss_from_cooling(fit, s.heat_capacity)
    heat = heat_profile(
        seg,
        s.heat_capacity,
        loss,
        u_env_K=s.u_env_K,
        resolution_K=s.resolution_K,
        rate_window_s=s.rate_window_s,
        gap_policy=s.gap_policy,
        lag=lagc,
    )
    skip = seg.excluded(s.gap_policy)
    u_t = math.hypot(s.u_temp_K, heat.u_reading_K)
    mets = metrics(
        seg.time_s, seg.temp_C, kind=s.kind, thresholds=s.thresholds, u_temp_K=u_t, skip=skip
    )
    mat = None
    if s.kind == "cement":
        mat = maturity(
            seg.time_s,
            seg.temp_C,
            datum_C=s.datum_C,
            activation_K=s.activation_K,
            u_activation_K=s.u_activation_K,
            reference_C=s.reference_C,
            u_temp_K=s.u_temp_K,
            skip=skip,
        )
    return ProfileResult(
        settings=s,
        check=check,
        segment_index=s.segment,
        heat=heat,
        budget=heat.budget(-1),
        budget_per_g=None if s.sample_g is None else heat.budget(-1, sample_g=s.sample_g),
        metrics=mets,
        safety=tuple(safety_flags(seg.time_s, seg.temp_C, kind=s.kind, skip=skip)),
        maturity=mat,
        cooling=fit,
        notes=tuple(
            _notes(check, s.segment, heat, s)
            + _fit_notes(fit, seg.time_s[0], s.kind)
            + _lag_notes(lagc, seg, s, heat)
        ),
    )


def analyse_thermogram(
    thermogram: Thermogram,
    settings: ProfileSettings,
    *,
    env_channel: str | None = None,
    flags_channel: str | None = None,
) -> ProfileResult:
    """:func:`analyse_profile` on a :class:`~heatlog.thermogram.Thermogram` and its channels.

    A Thermogram already has strictly increasing time, so no clock resets are found here; logs
    that may hold resets go through :func:`analyse_profile` on the raw arrays.
    """
    ch = thermogram.channels
    for name in (env_channel, flags_channel):
        if name is not None and name not in ch:
            raise InputError(f"the thermogram has no channel {name!r}; it has {sorted(ch)}")
    return analyse_profile(
        thermogram.time_s,
        thermogram.temp_C,
        settings,
        env_C=None if env_channel is None else ch[env_channel],
        flags=None if flags_channel is None else ch[flags_channel],
        where=str(thermogram.metadata.get("source", "thermogram")),
    )


# --- the [profile] table of a run file -------------------------------------------------------

_TABLE_KEYS = {
    "heat_capacity_J_per_K",
    "u_heat_capacity_J_per_K",
    "loss_W_per_K",
    "u_loss_W_per_K",
    "cooling_fit_after_s",
    "env_col",
    "env_temp_C",
    "u_env_temp_K",
    "flags_col",
    "sample_mass_g",
    "u_sample_mass_g",
    "kind",
    "threshold_C",
    "band_low_C",
    "band_high_C",
    "u_temp_K",
    "resolution_K",
    "rate_window_s",
    "gap_factor",
    "interpolate_gaps",
    "segment",
    "datum_C",
    "activation_K",
    "u_activation_K",
    "reference_C",
    "probe_time_constant_s",
    "u_probe_time_constant_s",
}


def _num(table: Mapping[str, Any], key: str, where: str) -> float | None:
    value = table.get(key)
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise InputError(f"{where}: {key} must be a number, got {value!r}")
    return float(value)


def settings_from_table(
    table: Mapping[str, Any], where: str
) -> tuple[ProfileSettings, dict[str, str]]:
    """A run file's ``[profile]`` table → settings, plus the column names it names.

    Returns ``(settings, columns)`` where ``columns`` may hold ``env`` and ``flags`` column names
    for the caller to read from the log. Every problem is one :class:`InputError` line.
    """
    w = f"{where} [profile]"
    unknown = sorted(set(table) - _TABLE_KEYS)
    if unknown:
        raise InputError(f"{w}: does not know {unknown}; use {sorted(_TABLE_KEYS)}")

    def num(key: str) -> float | None:
        return _num(table, key, w)

    def quantity(key: str, unit: str) -> Input | None:
        value = num(key)
        if value is None:
            return None
        u = num(f"u_{key}") or 0.0
        if u < 0:
            raise InputError(f"{w}: u_{key} must not be negative")
        return Input(value, u, unit)

    c = quantity("heat_capacity_J_per_K", "J/K")
    if c is None:
        raise InputError(f"{w}: needs heat_capacity_J_per_K (box, contents and sample)")
    loss = quantity("loss_W_per_K", "W/K")
    tau = quantity("probe_time_constant_s", "s")
    if tau is not None and "u_probe_time_constant_s" not in table:
        raise InputError(f"{w}: probe_time_constant_s needs u_probe_time_constant_s")
    if loss is not None and "u_loss_W_per_K" not in table:
        raise InputError(
            f"{w}: loss_W_per_K needs its standard uncertainty u_loss_W_per_K "
            "(write u_loss_W_per_K = 0 to accept a G without uncertainty; the result is flagged)"
        )
    mass = quantity("sample_mass_g", "g")
    columns = {k: str(table[f"{k}_col"]) for k in ("env", "flags") if table.get(f"{k}_col")}
    env = num("env_temp_C")
    if env is None and "env" not in columns:
        raise InputError(f"{w}: needs env_temp_C or env_col")
    if env is not None and "env" in columns:
        raise InputError(f"{w}: give env_temp_C or env_col, not both")
    kind = str(table.get("kind", "generic"))
    th = None
    if any(k in table for k in ("threshold_C", "band_low_C", "band_high_C")):
        lo, hi = num("band_low_C"), num("band_high_C")
        if (lo is None) != (hi is None):
            raise InputError(f"{w}: give both band_low_C and band_high_C")
        band = None if lo is None or hi is None else (lo, hi)
        th = Thresholds(num("threshold_C"), band, "given")
    interpolate = table.get("interpolate_gaps", False)
    if not isinstance(interpolate, bool):
        raise InputError(f"{w}: interpolate_gaps must be true or false")
    segment = table.get("segment", 0)
    if isinstance(segment, bool) or not isinstance(segment, int):
        raise InputError(f"{w}: segment must be a whole number")
    u_env = num("u_env_temp_K")
    u_temp = num("u_temp_K")
    gap = num("gap_factor")
    datum, act, ref = num("datum_C"), num("activation_K"), num("reference_C")
    settings = ProfileSettings(
        heat_capacity=c,
        loss=loss,
        cooling_fit_after_s=num("cooling_fit_after_s"),
        env_C=env,
        u_env_K=DEFAULT_U_ENV_K if u_env is None else u_env,
        sample_g=mass,
        kind=kind,
        thresholds=th,
        u_temp_K=DEFAULT_U_TEMP_K if u_temp is None else u_temp,
        resolution_K=num("resolution_K") or 0.0,
        rate_window_s=num("rate_window_s"),
        gap_factor=DEFAULT_GAP_FACTOR if gap is None else gap,
        gap_policy=GapPolicy.INTERPOLATE if interpolate else GapPolicy.EXCLUDE,
        segment=segment,
        datum_C=DEFAULT_DATUM_C if datum is None else datum,
        activation_K=DEFAULT_ACTIVATION_K if act is None else act,
        u_activation_K=num("u_activation_K") or 0.0,
        reference_C=DEFAULT_REFERENCE_C if ref is None else ref,
        probe_tau=None if tau is None else replace(tau, note="run file"),
    )
    return settings, columns


__all__ = [
    "DEFAULT_THRESHOLDS",
    "ProfileResult",
    "ProfileSettings",
    "analyse_profile",
    "analyse_thermogram",
    "settings_from_table",
]
