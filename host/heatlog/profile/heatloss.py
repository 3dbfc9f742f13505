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

from heatlog.errors import InputError, ReductionError
from heatlog.gum import Budget, Input, propagate

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


@dataclass(frozen=True)
class CoolingFit:
    """k = G/C (1/s) from Newton's-law cooling between ``start_s`` and ``end_s``."""

    rate_per_s: float
    u_rate_per_s: float
    start_s: float
    end_s: float
    samples: int
    residual_K: float
    excess_start_K: float  # T − T_env at the start of the fit

    @property
    def time_constant_s(self) -> float:
        return 1.0 / self.rate_per_s

    def to_dict(self) -> dict[str, float | int | str]:
        return {
            "rate_G_over_C_per_s": self.rate_per_s,
            "u_rate_per_s": self.u_rate_per_s,
            "time_constant_h": self.time_constant_s / 3600.0,
            "start_s": self.start_s,
            "end_s": self.end_s,
            "samples": self.samples,
            "residual_rms_K": self.residual_K,
            "excess_at_start_K": self.excess_start_K,
            "model": "Newton's law, integrated form T(t) − T(t_a) = −k∫(T − T_env)dt",
        }


def cooling_fit(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    env_C: np.ndarray | float,
    *,
    start_s: float | None = None,
    end_s: float | None = None,
) -> CoolingFit:
    """Fit k = G/C on a stretch with no heat released (see the module docstring).

    The fit is y = a − k·x with y = T, x = ∫(T − T_env)dt from ``start_s``; the intercept absorbs
    the noise of the first reading. Heat still released during the stretch (a cement's slow tail)
    biases k low; choose a start where the release has died away.
    """
    t, y, env = _fit_arrays(time_s, temp_C, env_C, "cooling fit")
    lo = t[0] if start_s is None else start_s
    hi = t[-1] if end_s is None else end_s
    sel = (t >= lo) & (t <= hi)
    if np.count_nonzero(sel) < MIN_FIT_ROWS:
        raise ReductionError(
            f"the cooling fit from {lo:g} s to {hi:g} s holds {np.count_nonzero(sel)} samples; "
            f"need {MIN_FIT_ROWS} — choose an earlier start"
        )
    ts, ys, es = t[sel], y[sel], env[sel]
    x = _cumtrapz(ys - es, ts)
    excess = float(ys[0] - es[0])
    if abs(x[-1]) == 0.0:
        raise ReductionError("the cooling fit's stretch stays at the environment temperature")
    design = np.column_stack([np.ones_like(x), -x])
    beta, cov, rms = _least_squares(design, ys)
    k, u_k = float(beta[1]), math.sqrt(float(cov[1, 1]))
    if not k > 0 or u_k > abs(k):
        raise ReductionError(
            f"the cooling fit gives k = {k:.3g} ± {u_k:.2g} 1/s (u, k=1): the stretch from {lo:g} s does "
            "not cool towards the environment (heat still released, or too little excess)"
        )
    return CoolingFit(k, u_k, float(ts[0]), float(ts[-1]), int(ts.size), rms, excess)


def loss_from_cooling(fit: CoolingFit, heat_capacity: Input) -> HeatLoss:
    """G = k·C with k from :func:`cooling_fit` and the box's heat capacity C (J/K)."""
    _check_input("the heat capacity", heat_capacity)
    b = propagate(
        lambda k, C: k * C,
        {
            "k": Input(fit.rate_per_s, fit.u_rate_per_s, "1/s", note="cooling fit"),
            "C": heat_capacity,
        },
        quantity="G = k·C",
        unit="W/K",
    )
    return HeatLoss(b.value, b.u, "cooling-curve fit", fit.rate_per_s, fit.u_rate_per_s, b)


@dataclass(frozen=True)
class HeatingCurveFit:
    """C (J/K) and G (W/K) from a heating and cooling curve with a logged heater power."""

    heat_capacity: Input
    loss: HeatLoss
    correlation: float  # between C and G from the fit alone
    residual_K: float
    samples: int

    def to_dict(self) -> dict[str, object]:
        return {
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
) -> HeatingCurveFit:
    """C and G from T(t) while a heater of logged power P(t) (W, 0 when off) heats the box.

    Fits T − T(0) = a·∫P dt − b·∫(T − T_env)dt + c with a = 1/C, b = G/C; then C = 1/a, G = b/a.
    ``u_power_rel`` is the relative standard uncertainty of the power's scale; it scales C and G
    alike and is added to both in quadrature.
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
        Input(c_val, u_c, "J/K", note="heating-curve fit"), loss, corr, rms, int(t.size)
    )
