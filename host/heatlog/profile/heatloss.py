"""The box's heat-loss coefficient G (W/K): given, from an electrical calibration, or fitted.

The box, its contents and the sample are one lumped body of heat capacity C that loses heat to
its surroundings by Newton's law, C·dT/dt = P(t) − G·(T − T_env). G comes from

* a **steady state** with a heater of known power in the box: G = P/(T_ss − T_env);
* a **heating and cooling curve** with a logged heater power: integrating the balance gives
  C·(T − T(0)) = ∫P dt − G·∫(T − T_env) dt, linear in 1/C and G/C, so one least-squares fit yields
  both C and G (the semi-adiabatic calibration of the EN 196-9 / RILEM TC 119 / NT BUILD 388
  method family);
* a **cooling curve** (a run's tail or a separate cool-down with no heat released):
  T − T_env = ΔT₀·e^(−G·t/C). The fit uses the integrated form T(t) − T(t_a) = −k·∫(T − T_env)dt
  (k = G/C), which holds for a varying T_env too and needs no derivative of noisy data; with C
  known, G = k·C.

Pure: arrays and :class:`heatlog.gum.Input` in, frozen dataclasses out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.stats import f as f_dist

from heatlog.errors import InputError, ReductionError
from heatlog.gum import Budget, Input, propagate
from heatlog.profile.noise import reading_noise

#: Fewest samples a curve fit accepts.
MIN_FIT_ROWS = 10


@dataclass(frozen=True)
class HeatLoss:
    """G in W/K with its standard uncertainty and where it came from.

    When G was found as k·C from a cooling fit, ``rate_per_s`` (k = G/C) and its uncertainty are
    kept, so the heat budget can carry k and C as the independent inputs (G and C are then
    correlated through C).
    """

    G_W_per_K: float
    u_G_W_per_K: float
    source: str
    rate_per_s: float | None = None
    u_rate_per_s: float | None = None
    budget: Budget | None = None

    def to_dict(self) -> dict[str, object]:
        out: dict[str, object] = {
            "G_W_per_K": self.G_W_per_K,
            "u_G_W_per_K": self.u_G_W_per_K,
            "source": self.source,
        }
        if self.rate_per_s is not None:
            out.update(rate_G_over_C_per_s=self.rate_per_s, u_rate_per_s=self.u_rate_per_s)
        if self.budget is not None:
            out["budget"] = self.budget.to_dict()
        return out


def _check_input(name: str, x: Input, *, positive: bool = True) -> None:
    if not math.isfinite(x.value) or (positive and x.value <= 0):
        raise InputError(f"{name} must be a positive number, got {x.value:g}")
    if not (math.isfinite(x.u) and x.u >= 0):
        raise InputError(f"the uncertainty of {name} must be zero or positive, got {x.u:g}")


def given_loss(G: Input) -> HeatLoss:
    """A heat-loss coefficient measured elsewhere (W/K). G = 0 means an ideal adiabatic box."""
    if not math.isfinite(G.value) or G.value < 0:
        raise InputError(f"the heat-loss coefficient must be zero or positive, got {G.value:g} W/K")
    _check_input("the heat-loss coefficient", G, positive=False)
    return HeatLoss(G.value, G.u, "given")


def steady_state_loss(power: Input, t_steady: Input, t_env: Input) -> HeatLoss:
    """G = P/(T_ss − T_env) from a heater of power P (W) holding the box at T_ss (°C).

    The two temperatures are taken as uncorrelated; if one probe read both, its offset cancels
    and this budget is conservative.
    """
    _check_input("the heater power", power)
    if not t_steady.value > t_env.value:
        raise InputError(
            f"the steady temperature ({t_steady.value:g} °C) must lie above the environment "
            f"({t_env.value:g} °C) with the heater on"
        )
    b = propagate(
        lambda P, T_ss, T_env: P / (T_ss - T_env),
        {"P": power, "T_ss": t_steady, "T_env": t_env},
        quantity="G = P/(T_ss − T_env)",
        unit="W/K",
    )
    return HeatLoss(b.value, b.u, "electrical calibration, steady state", budget=b)


def _cumtrapz(y: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Cumulative trapezoid integral starting at 0 (vectorised)."""
    out = np.empty_like(y)
    out[0] = 0.0
    np.cumsum(0.5 * (y[1:] + y[:-1]) * np.diff(t), out=out[1:])
    return out


def _fit_arrays(
    time_s: np.ndarray, temp_C: np.ndarray, env_C: np.ndarray | float, what: str
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    env = np.broadcast_to(np.asarray(env_C, dtype=np.float64), t.shape)
    if t.size < MIN_FIT_ROWS:
        raise ReductionError(f"the {what} needs at least {MIN_FIT_ROWS} samples, got {t.size}")
    if np.any(np.diff(t) <= 0):
        raise InputError(f"the {what} needs strictly increasing time (one log segment)")
    return t, y, env


def _least_squares(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """Ordinary least squares y ≈ x·β: coefficients, their covariance and the residual rms."""
    beta, *_ = np.linalg.lstsq(x, y, rcond=None)
    resid = y - x @ beta
    dof = max(y.size - x.shape[1], 1)
    s2 = float(resid @ resid) / dof
    cov = s2 * np.linalg.inv(x.T @ x)
    return beta, cov, math.sqrt(s2)


#: Fit residual (rms) against the reading noise above which a curve fit is refused, and above
#: which it is kept with a warning (common practice, no source).
REFUSE_RESIDUAL_RATIO = 3.0
WARN_RESIDUAL_RATIO = 1.5
#: Smallest noise a residual is compared with, K: below a millikelvin a logged curve's noise is
#: not resolved (common practice, no source).
NOISE_FLOOR_K = 1e-3
#: Relative change of k when a decaying release term is added above which the fit is refused
#: (common practice, no source).
REFUSE_RELEASE_REL = 0.05
#: Excess over the environment at the fit's start, in reading noises, below which a cooling
#: fit is refused, and at which the stretch is ended (common practice, no source).
MIN_EXCESS_NOISE = 20.0
END_EXCESS_NOISE = 5.0
#: Decay times tried for a residual release term.
RELEASE_GRID = 40


def residual_check(
    rms_K: float, noise_K: float, resolution_K: float, what: str
) -> tuple[float, str | None]:
    """Ratio of a fit's residual rms to the reading noise, and a warning (or a refusal).

    The noise comes from the curve's second differences (:func:`reading_noise`), with the reading
    step's q/√12 and a 1 mK floor. A model that fits (Newton's law with no heat released, or the
    heater balance) leaves residuals at the noise; a release still under way, a wrong stretch or
    a wrong model leaves a curved residual many times larger.
    """
    floor = max(math.hypot(noise_K, resolution_K / math.sqrt(12.0)), NOISE_FLOOR_K)
    ratio = rms_K / floor
    if ratio > REFUSE_RESIDUAL_RATIO:
        raise ReductionError(
            f"the {what} does not follow its model: residual rms {rms_K:.2g} K against reading "
            f"noise {floor:.2g} K ({ratio:.0f}×); heat is still released in the stretch or the "
            "stretch is wrong — start later (time counted from the segment start) or give G"
        )
    if ratio > WARN_RESIDUAL_RATIO:
        return ratio, (
            f"the {what} leaves residuals {ratio:.1f}× the reading noise ({rms_K:.2g} K vs "
            f"{floor:.2g} K): the model fits only roughly; its result is less certain than stated"
        )
    return ratio, None


@dataclass(frozen=True)
class CoolingFit:
    """k = G/C (1/s) from Newton's-law cooling between ``start_s`` and ``end_s``.

    ``u_rate_per_s`` is the statistical part; ``u_release_per_s`` the bias a release still under
    way leaves (the change of k when a decaying release term is fitted beside Newton's law and
    proves significant); :attr:`u_total_per_s` combines them.
    """

    rate_per_s: float
    u_rate_per_s: float
    start_s: float
    end_s: float
    samples: int
    residual_K: float
    excess_start_K: float  # T − T_env at the start of the fit
    noise_K: float = 0.0
    residual_ratio: float = 0.0
    u_release_per_s: float = 0.0
    sub_rates_per_s: tuple[float, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def time_constant_s(self) -> float:
        return 1.0 / self.rate_per_s

    @property
    def u_total_per_s(self) -> float:
        return math.hypot(self.u_rate_per_s, self.u_release_per_s)

    def to_dict(self) -> dict[str, object]:
        return {
            "rate_G_over_C_per_s": self.rate_per_s,
            "u_rate_per_s": self.u_total_per_s,
            "u_rate_statistical_per_s": self.u_rate_per_s,
            "u_rate_release_bias_per_s": self.u_release_per_s,
            "rate_with_release_term_per_s": list(self.sub_rates_per_s),
            "time_constant_h": self.time_constant_s / 3600.0,
            "start_s": self.start_s,
            "end_s": self.end_s,
            "samples": self.samples,
            "residual_rms_K": self.residual_K,
            "reading_noise_K": self.noise_K,
            "residual_to_noise": self.residual_ratio,
            "excess_at_start_K": self.excess_start_K,
            "warnings": list(self.warnings),
            "model": "Newton's law, integrated form T(t) − T(t_a) = −k∫(T − T_env)dt",
        }


def _newton_rate(ts: np.ndarray, ys: np.ndarray, es: np.ndarray) -> tuple[float, float, float]:
    x = _cumtrapz(ys - es, ts)
    if abs(x[-1]) == 0.0:
        raise ReductionError("the cooling fit's stretch stays at the environment temperature")
    design = np.column_stack([np.ones_like(x), -x])
    beta, cov, rms = _least_squares(design, ys)
    return float(beta[1]), math.sqrt(float(cov[1, 1])), rms


def _release_term(
    ts: np.ndarray, ys: np.ndarray, es: np.ndarray, rms0: float, k0: float
) -> tuple[float, float] | None:
    """k with a decaying residual release added, when that term is significant.

    Fits y = a − k·x + b·(1 − e^(−(t − t_a)/τ_r)) (the integral of a release P₀·e^(−(t − t_a)/τ_r)
    over C) for τ_r on a log grid, keeping the best; linear in (a, k, b) at each τ_r. Returns
    (k, τ_r) when the extra term lowers the residual sum beyond the F test at 99 % (2 and n − 4
    degrees of freedom, the level divided by the grid's size since the best τ_r is picked;
    scipy.stats; docs/REFERENCES.md: SCIPY) and moves k by more than twice its own standard
    uncertainty, else None.
    """
    x = _cumtrapz(ys - es, ts)
    tt = ts - ts[0]
    span = float(tt[-1])
    step = float(np.median(np.diff(ts)))
    best: tuple[float, float, float, float] | None = None
    for tau_r in np.geomspace(max(3.0 * step, span / 300.0), 3.0 * span, RELEASE_GRID):
        design = np.column_stack([np.ones_like(x), -x, -np.expm1(-tt / tau_r)])
        beta, cov, rms = _least_squares(design, ys)
        if best is None or rms < best[2]:
            best = (float(beta[1]), float(tau_r), rms, math.sqrt(float(cov[1, 1])))
    assert best is not None
    n = ts.size
    rss0, rss1 = rms0**2 * (n - 2), best[2] ** 2 * (n - 4)
    if n <= 6 or rss1 <= 0:
        return None
    f_stat = ((rss0 - rss1) / 2.0) / (rss1 / (n - 4))
    if f_stat <= float(f_dist.ppf(1.0 - 0.01 / RELEASE_GRID, 2, n - 4)):
        return None
    if abs(best[0] - k0) <= 2.0 * best[3]:
        return None  # the release term and the cooling are not told apart on this stretch
    return best[0], best[1]


def cooling_fit(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    env_C: np.ndarray | float,
    *,
    start_s: float | None = None,
    end_s: float | None = None,
    resolution_K: float = 0.0,
    origin_s: float = 0.0,
) -> CoolingFit:
    """Fit k = G/C on a stretch with no heat released (see the module docstring).

    The stretch must start at least 20 reading noises from the environment and is ended where
    the excess (smoothed over 11 samples) sinks below 5 noises. The fit is y = a − k·x with
    y = T, x = ∫(T − T_env)dt from ``start_s`` (on the same clock as
    ``time_s``; messages count from ``origin_s``); the intercept absorbs the noise of the first reading. Heat still released during
    the stretch (a cement's slow tail) biases k low, so the fit is checked twice: its residuals
    against the reading noise (:func:`residual_check`: refused far above it, warned above it),
    and k refitted on the later half and the last third of the stretch. The largest change is
    the release-bias component of u(k) (a standard uncertainty; it also holds the later fits'
    own scatter, so it errs large); a significant change above 5 % is refused;
    a later part with too little excess left (u(k) there above 20 %) is not used.
    """
    t, y, env = _fit_arrays(time_s, temp_C, env_C, "cooling fit")
    lo = t[0] if start_s is None else start_s
    hi = t[-1] if end_s is None else end_s
    sel = (t >= lo) & (t <= hi)
    if np.count_nonzero(sel) < MIN_FIT_ROWS:
        raise ReductionError(
            f"the cooling fit from {lo - origin_s:g} s to {hi - origin_s:g} s holds {np.count_nonzero(sel)} samples; "
            f"need {MIN_FIT_ROWS} — choose an earlier start"
        )
    ts, ys, es = t[sel], y[sel], env[sel]
    noise = reading_noise(ys)
    floor = max(math.hypot(noise, resolution_K / math.sqrt(12.0)), NOISE_FLOOR_K)
    kernel = min(11, ys.size)
    smooth = np.convolve(ys - es, np.ones(kernel) / kernel, mode="same")
    excess = float(smooth[kernel // 2])
    if abs(excess) < MIN_EXCESS_NOISE * floor:
        raise ReductionError(
            f"the cooling fit from {max(lo, t[0]) - origin_s:g} s starts only {abs(excess):.2g} K from the "
            f"environment, {abs(excess) / floor:.0f}× the reading noise ({floor:.2g} K); it needs "
            f"{MIN_EXCESS_NOISE:g}× — start the fit earlier (but after the release has ended)"
        )
    # end where the excess sinks into the noise: the integral of noise alone is a random walk
    # that a regression would mistake for cooling
    live = np.flatnonzero(np.abs(smooth) >= END_EXCESS_NOISE * floor)
    last = int(live[-1]) + 1 if live.size else ys.size
    if last >= MIN_FIT_ROWS:
        ts, ys, es = ts[:last], ys[:last], es[:last]
    k, u_k, rms = _newton_rate(ts, ys, es)
    if not k > 0 or u_k > abs(k):
        raise ReductionError(
            f"the cooling fit gives k = {k:.3g} 1/s with u = {u_k:.2g} 1/s: the stretch from "
            f"{lo - origin_s:g} s does not cool towards the environment (heat still released, or too little "
            "excess)"
        )
    ratio, warn = residual_check(rms, noise, resolution_K, "cooling fit")
    warnings = [warn] if warn else []
    rel = _release_term(ts, ys, es, rms, k)
    u_rel = 0.0
    subs: tuple[float, ...] = ()
    if rel is not None:
        k_rel, tau_rel = rel
        subs = (k_rel,)
        u_rel = abs(k_rel - k)
        if u_rel > REFUSE_RELEASE_REL * k:
            raise ReductionError(
                f"the cooling fit from {lo - origin_s:g} s is not steady: Newton's law alone gives "
                f"k = {k:.3g} 1/s, with a release decaying over {tau_rel:.3g} s k = {k_rel:.3g} 1/s; "
                "heat is still released there — start the fit later (time counted from the "
                "segment start) or give G"
            )
        warnings.append(
            f"heat is still released in the cooling fit's stretch (a decaying release over "
            f"{tau_rel:.3g} s fits significantly better): k changes by {100 * u_rel / k:.2g} %, "
            "which u(G) now includes; a later start is better"
        )
    return CoolingFit(
        k,
        u_k,
        float(ts[0]),
        float(ts[-1]),
        int(ts.size),
        rms,
        excess,
        noise,
        ratio,
        u_rel,
        subs,
        tuple(warnings),
    )


def loss_from_cooling(fit: CoolingFit, heat_capacity: Input) -> HeatLoss:
    """G = k·C with k from :func:`cooling_fit` and the box's heat capacity C (J/K)."""
    _check_input("the heat capacity", heat_capacity)
    b = propagate(
        lambda k, C: k * C,
        {
            "k": Input(
                fit.rate_per_s, fit.u_total_per_s, "1/s", note="cooling fit, incl. release bias"
            ),
            "C": heat_capacity,
        },
        quantity="G = k·C",
        unit="W/K",
    )
    return HeatLoss(b.value, b.u, "cooling-curve fit", fit.rate_per_s, fit.u_total_per_s, b)


@dataclass(frozen=True)
class HeatingCurveFit:
    """C (J/K) and G (W/K) from a heating and cooling curve with a logged heater power."""

    heat_capacity: Input
    loss: HeatLoss
    correlation: float  # between C and G from the fit alone
    residual_K: float
    samples: int
    noise_K: float = 0.0
    residual_ratio: float = 0.0
    warnings: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        return {
            "reading_noise_K": self.noise_K,
            "residual_to_noise": self.residual_ratio,
            "warnings": list(self.warnings),
            "heat_capacity_J_per_K": self.heat_capacity.value,
            "u_heat_capacity_J_per_K": self.heat_capacity.u,
            "loss": self.loss.to_dict(),
            "correlation_C_G": self.correlation,
            "residual_rms_K": self.residual_K,
            "samples": self.samples,
        }


def heating_curve_fit(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    env_C: np.ndarray | float,
    power_W: np.ndarray,
    *,
    u_power_rel: float = 0.0,
    resolution_K: float = 0.0,
    sensitivity_only: bool = False,
) -> HeatingCurveFit:
    """C and G from T(t) while a heater of logged power P(t) (W, 0 when off) heats the box.

    ``sensitivity_only``: a refit with one input moved by its uncertainty, to find how far C
    and G move with it; the residual check then does not refuse (the moved input is what makes
    the fit worse), and the caller uses only the change in C and G.

    Fits T − T(0) = a·∫P dt − b·∫(T − T_env)dt + c with a = 1/C, b = G/C; then C = 1/a, G = b/a.
    ``u_power_rel`` is the relative standard uncertainty of the power's scale; it scales C and G
    alike and is added to both in quadrature. The residuals are checked against the reading
    noise (:func:`residual_check`): a fit far above it is refused, one above it warned.
    """
    t, y, env = _fit_arrays(time_s, temp_C, env_C, "heating-curve fit")
    p = np.asarray(power_W, dtype=np.float64)
    if p.shape != t.shape or not np.all(np.isfinite(p)) or np.any(p < 0):
        raise InputError("the heater power needs one finite, non-negative value per sample")
    energy = _cumtrapz(p, t)
    if energy[-1] <= 0:
        raise InputError("the heater power is zero throughout; nothing to calibrate with")
    loss_int = _cumtrapz(y - env, t)
    design = np.column_stack([energy, -loss_int, np.ones_like(t)])
    beta, cov, rms = _least_squares(design, y - y[0])
    a, b = float(beta[0]), float(beta[1])
    if not (a > 0 and b > 0):
        raise ReductionError(
            f"the heating-curve fit gives 1/C = {a:.3g}, G/C = {b:.3g}; both must be positive — "
            "log longer, with the heater both on and off"
        )
    if sensitivity_only:
        ratio, warn = rms / max(reading_noise(y), NOISE_FLOOR_K), None
    else:
        ratio, warn = residual_check(rms, reading_noise(y), resolution_K, "heating-curve fit")
    c_val, g_val = 1.0 / a, b / a
    # Jacobians of C = 1/a and G = b/a with respect to (a, b).
    jc = np.array([-1.0 / a**2, 0.0])
    jg = np.array([-b / a**2, 1.0 / a])
    sub = cov[:2, :2]
    var_c, var_g = float(jc @ sub @ jc), float(jg @ sub @ jg)
    corr = float(jc @ sub @ jg) / math.sqrt(var_c * var_g) if var_c > 0 and var_g > 0 else 0.0
    u_c = math.hypot(math.sqrt(var_c), u_power_rel * c_val)
    u_g = math.hypot(math.sqrt(var_g), u_power_rel * g_val)
    loss = HeatLoss(g_val, u_g, "electrical calibration, heating and cooling curve")
    return HeatingCurveFit(
        Input(c_val, u_c, "J/K", note="heating-curve fit"),
        loss,
        corr,
        rms,
        int(t.size),
        reading_noise(y),
        ratio,
        () if warn is None else (warn,),
    )
