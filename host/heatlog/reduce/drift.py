"""Fore- and after-period drift: straight lines, or Newton's law fitted jointly to both periods.

Both models describe the drift rate as a straight line in temperature, g(T) = s_f − k·(T − T_f),
where T_f and s_f are the fitted temperature and drift rate at the centre time of the fore-period:

* ``linear`` (the classic ISO 1928 Annex C form): a straight line in time through each period;
  k = (s_f − s_a)/(T_a − T_f) from the two slopes and mean temperatures (Regnault–Pfaundler).
* ``newtonian``: both periods follow dT/dt = k(T∞ − T) with one k and one T∞, so each period is an
  exponential approach, T(t) = T_ref + s·(1 − e^(−k(t − t_ref)))/k. For a fixed k the model is
  linear in (T_f, T_a, s_f), so k is found by a one-dimensional search (variable projection).

Choice (``model="auto"``): both models have four parameters. Newton's law is the physical model
(the linear form is its limit for k·period → 0, and straight lines extrapolated to the ends of a
long curved period are biased even where noise hides the curvature), so it is taken unless the
linear model's Akaike information criterion (Akaike 1974, AIC = n·ln(RSS/n) + 2p) is lower by more
than 2, i.e. unless the data contradict Newton's law (e.g. drift rates that do not fall on one line
in temperature).

Uncertainties use the sandwich form: parameter changes are a linear map P of the readings
(P = (JᵀJ)⁻¹Jᵀ), each reading has the residual variance of its own period, inflated by
(1 + ρ)/(1 − ρ) for the lag-1 autocorrelation ρ of that period's residuals. Readings of the fore- and
after-period are independent, so their contributions to any derived result are reported apart.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from heatlog.errors import ReductionError
from heatlog.orderstats import median
from heatlog.solvers import minimize_bounded

MODELS = ("linear", "newtonian")
AIC_MARGIN = 2.0


def _expo(k: float, dt: np.ndarray | float) -> np.ndarray:
    """(1 − e^(−k·dt))/k, which tends to dt as k → 0."""
    dt = np.asarray(dt, dtype=float)
    if abs(k) < 1e-14:
        return dt
    return -np.expm1(-k * dt) / k


def expo_rows(ks: np.ndarray, dt: np.ndarray) -> np.ndarray:
    """:func:`_expo` for every k of ``ks``, one row each (each row equals the single call)."""
    k = np.asarray(ks, dtype=float)[:, None]
    tiny = np.abs(k) < 1e-14
    return np.where(tiny, dt, -np.expm1(-k * dt) / np.where(tiny, 1.0, k))


@dataclass(frozen=True, eq=False)
class DriftFit:
    """A drift model fitted to a fore-period and an after-period.

    ``params`` = (T_f, T_a, s_f, s_a) for ``linear`` or (T_f, T_a, s_f, k) for ``newtonian``;
    T_f, T_a are the fitted temperatures at the period centre times ``t_f``, ``t_a``; s_f, s_a the
    drift rates there (K/s).
    """

    model: str
    params: np.ndarray
    t_f: float
    t_a: float
    fore_t: np.ndarray
    fore_y: np.ndarray
    after_t: np.ndarray
    after_y: np.ndarray
    gain: np.ndarray  # P: d(params)/d(readings), shape (4, n_fore + n_after)
    sigma: np.ndarray  # standard uncertainty of each reading (fore rows, then after rows)
    rss: float

    # ----- the model -----
    @property
    def k_per_s(self) -> float:
        tf, ta, sf, last = self.params
        if self.model == "newtonian":
            return float(last)
        return float((sf - last) / (ta - tf)) if ta != tf else math.nan

    @property
    def s_a(self) -> float:
        tf, ta, sf, last = self.params
        return float(last) if self.model == "linear" else float(sf - last * (ta - tf))

    @property
    def t_inf_C(self) -> float:
        k = self.k_per_s
        return float(self.params[0] + self.params[2] / k) if k and math.isfinite(k) else math.nan

    def rate(self, temp: np.ndarray | float) -> np.ndarray:
        """Drift rate g(T) = s_f − k(T − T_f) in K/s."""
        return self.params[2] - self.k_per_s * (np.asarray(temp, dtype=float) - self.params[0])

    def fore(self, t: np.ndarray | float) -> np.ndarray:
        tf, _, sf, _ = self.params
        dt = np.asarray(t, dtype=float) - self.t_f
        return tf + sf * (dt if self.model == "linear" else _expo(self.params[3], dt))

    def after(self, t: np.ndarray | float) -> np.ndarray:
        ta = self.params[1]
        dt = np.asarray(t, dtype=float) - self.t_a
        if self.model == "linear":
            return ta + self.s_a * dt
        return ta + self.s_a * _expo(self.params[3], dt)

    def with_params(self, params: np.ndarray) -> DriftFit:
        return DriftFit(
            self.model,
            np.asarray(params, dtype=float),
            self.t_f,
            self.t_a,
            self.fore_t,
            self.fore_y,
            self.after_t,
            self.after_y,
            self.gain,
            self.sigma,
            self.rss,
        )

    # ----- statistics -----
    @property
    def n(self) -> int:
        return int(self.fore_t.size + self.after_t.size)

    @property
    def aic(self) -> float:
        return self.n * math.log(max(self.rss, 1e-300) / self.n) + 2 * 4

    @property
    def sigma_fore(self) -> float:
        return float(median(self.sigma[: self.fore_t.size]))

    @property
    def sigma_after(self) -> float:
        return float(median(self.sigma[self.fore_t.size :]))

    def covariance(self) -> np.ndarray:
        g = self.gain * self.sigma
        return g @ g.T

    def split_u(self, grad: np.ndarray) -> tuple[float, float]:
        """Standard uncertainties of a result with gradient ``grad`` (w.r.t. params) from the
        fore-period readings and from the after-period readings."""
        w = (np.asarray(grad, dtype=float) @ self.gain) * self.sigma
        nf = self.fore_t.size
        return float(np.sqrt(np.sum(w[:nf] ** 2))), float(np.sqrt(np.sum(w[nf:] ** 2)))

    def u_of(self, func, step_scale: float = 1e-3) -> tuple[float, float, np.ndarray]:
        """Fore and after uncertainty of ``func(fit)`` by central differences on the params."""
        cov = self.covariance()
        grad = np.zeros(4)
        for i in range(4):
            h = (
                step_scale * math.sqrt(cov[i, i])
                if cov[i, i] > 0
                else 1e-9 * max(abs(self.params[i]), 1e-6)
            )
            p_hi = self.params.copy()
            p_lo = self.params.copy()
            p_hi[i] += h
            p_lo[i] -= h
            grad[i] = (func(self.with_params(p_hi)) - func(self.with_params(p_lo))) / (2 * h)
        uf, ua = self.split_u(grad)
        return uf, ua, grad

    def k_and_t_inf(self) -> tuple[float, float, float, float]:
        """k (1/s) and T∞ (°C) with their standard uncertainties (NaN where undefined)."""
        uf, ua, _ = self.u_of(lambda f: f.k_per_s)
        u_k = math.hypot(uf, ua)
        t_inf = self.t_inf_C
        u_t = math.nan
        if math.isfinite(t_inf):
            uf, ua, _ = self.u_of(lambda f: f.t_inf_C)
            u_t = math.hypot(uf, ua)
        return self.k_per_s, u_k, t_inf, u_t

    def to_dict(self) -> dict[str, object]:
        k, u_k, t_inf, u_t = self.k_and_t_inf()
        return {
            "model": self.model,
            "k_per_s": k,
            "u_k_per_s": u_k,
            "T_inf_C": t_inf,
            "u_T_inf_C": u_t,
            "fore": {
                "t_ref_s": self.t_f,
                "T_ref_C": self.params[0],
                "rate_K_per_s": self.params[2],
            },
            "after": {"t_ref_s": self.t_a, "T_ref_C": self.params[1], "rate_K_per_s": self.s_a},
            "aic": self.aic,
            "noise_fore_K": self.sigma_fore,
            "noise_after_K": self.sigma_after,
        }


def residual_sigma(res: np.ndarray, dof: float) -> float:
    """Residual standard deviation inflated for lag-1 autocorrelation (effective sample size)."""
    n = res.size
    s2 = float(np.sum(res**2)) / max(dof, 1.0)
    if n > 3 and s2 > 0:
        rho = float(np.sum(res[1:] * res[:-1]) / np.sum(res**2))
        rho = min(max(rho, 0.0), 0.9)
        s2 *= (1 + rho) / (1 - rho)
    return math.sqrt(s2)


def _design(model: str, k: float, tf_, ta_, t_f: float, t_a: float) -> np.ndarray:
    """Jacobian of the stacked (fore, after) model w.r.t. the linear params for fixed k."""
    nf, na = tf_.size, ta_.size
    if model == "linear":
        j = np.zeros((nf + na, 4))
        j[:nf, 0] = 1.0
        j[:nf, 2] = tf_ - t_f
        j[nf:, 1] = 1.0
        j[nf:, 3] = ta_ - t_a
        return j
    ef = _expo(k, tf_ - t_f)
    ea = _expo(k, ta_ - t_a)
    # fore: Tf + sf*ef ; after: Ta + (sf - k(Ta - Tf))*ea
    j = np.zeros((nf + na, 3))
    j[:nf, 0] = 1.0
    j[:nf, 2] = ef
    j[nf:, 0] = k * ea
    j[nf:, 1] = 1.0 - k * ea
    j[nf:, 2] = ea
    return j


def design_stack(
    ks: np.ndarray, tf_: np.ndarray, ta_: np.ndarray, t_f: float, t_a: float
) -> np.ndarray:
    """:func:`_design` of the Newtonian model for every k of ``ks``, stacked (k, row, column);
    each layer equals the single call element by element."""
    k = np.asarray(ks, dtype=float)[:, None]
    ef = expo_rows(ks, tf_ - t_f)
    ea = expo_rows(ks, ta_ - t_a)
    nf = tf_.size
    j = np.zeros((k.size, nf + ta_.size, 3))
    j[:, :nf, 0] = 1.0
    j[:, :nf, 2] = ef
    j[:, nf:, 0] = k * ea
    j[:, nf:, 1] = 1.0 - k * ea
    j[:, nf:, 2] = ea
    return j


def _solve(j: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, float]:
    p, *_ = np.linalg.lstsq(j, y, rcond=None)
    r = y - j @ p
    return p, float(r @ r)


def _fit(
    model: str, ft, fy, at, ay, k_fixed: float | None = None, lin: DriftFit | None = None
) -> DriftFit:
    """One drift model fitted; the Newtonian search starts from the linear fit's k (``lin``, the
    linear fit of the same periods when the caller has it)."""
    t_f = float(ft.mean())
    t_a = float(at.mean())
    y = np.concatenate([fy, ay])
    nf = ft.size
    if model == "linear":
        j = _design("linear", 0.0, ft, at, t_f, t_a)
        p, rss = _solve(j, y)
        params = p
        jac = j
    else:
        k0 = (lin if lin is not None else _fit("linear", ft, fy, at, ay)).k_per_s
        span = max(ft[-1] - ft[0], at[-1] - at[0], at[-1] - ft[0]) or 1.0
        kmax = 20.0 / span

        def rss_of(k: float) -> float:
            # normal equations: a 3x3 solve per trial k (the final fit uses lstsq)
            j = _design(model, k, ft, at, t_f, t_a)
            try:
                p = np.linalg.solve(j.T @ j, j.T @ y)
            except np.linalg.LinAlgError:
                return _solve(j, y)[1]
            r = y - j @ p
            return float(r @ r)

        def rss_grid(ks: np.ndarray) -> np.ndarray:
            # rss_of for a whole grid at once (stacked normal equations)
            j = design_stack(ks, ft, at, t_f, t_a)
            jt = np.swapaxes(j, 1, 2)
            try:
                p = np.linalg.solve(jt @ j, (jt @ y)[:, :, None])
            except np.linalg.LinAlgError:  # a singular layer: one by one, as rss_of handles it
                return np.array([rss_of(k) for k in ks])
            r = y - (j @ p)[:, :, 0]
            return np.einsum("mn,mn->m", r, r)

        grid = np.concatenate([[-0.5 / span, 0.0], np.geomspace(1e-3 / span, kmax, 25)])
        if math.isfinite(k0) and -0.5 / span < k0 < kmax:
            grid = np.sort(np.append(grid, k0))
        if k_fixed is not None:  # k found elsewhere (a surroundings model, ``surroundings``)
            grid = np.array([float(k_fixed)])
        vals = rss_grid(grid)
        i = int(np.argmin(vals))
        lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
        if hi > lo:
            k = minimize_bounded(rss_of, lo, hi, xatol=1e-12 + 1e-9 * abs(grid[i]))[0]
            if rss_of(k) > vals[i]:
                k = float(grid[i])
        else:
            k = float(grid[i])
        p3, rss = _solve(_design(model, k, ft, at, t_f, t_a), y)
        params = np.array([p3[0], p3[1], p3[2], k])
        # full Jacobian including the k column (numerical)
        base = _design(model, k, ft, at, t_f, t_a)
        h = 1e-6 * max(abs(k), 1.0 / span)
        dk = (
            _design(model, k + h, ft, at, t_f, t_a) @ p3
            - _design(model, k - h, ft, at, t_f, t_a) @ p3
        ) / (2 * h)
        jac = np.column_stack([base, dk])
    jtj = jac.T @ jac
    try:
        gain = np.linalg.solve(jtj, jac.T)
    except np.linalg.LinAlgError:
        raise ReductionError(
            "the fore- and after-period drifts cannot be fitted (too few distinct readings); "
            "log longer periods before and after the event"
        ) from None
    fit_y = jac[:, :3] @ params[:3] if model == "newtonian" else jac @ params
    res = y - fit_y
    sf = residual_sigma(res[:nf], nf - 2)
    sa = residual_sigma(res[nf:], y.size - nf - 2)
    sigma = np.concatenate([np.full(nf, sf), np.full(y.size - nf, sa)])
    return DriftFit(model, params, t_f, t_a, ft, fy, at, ay, gain, sigma, rss)


@dataclass(frozen=True)
class DriftChoice:
    chosen: DriftFit
    linear: DriftFit
    newtonian: DriftFit
    criterion: str


def fit_drift(
    fore_t: np.ndarray,
    fore_y: np.ndarray,
    after_t: np.ndarray,
    after_y: np.ndarray,
    model: str = "auto",
    k_fixed: float | None = None,
) -> DriftChoice:
    """Fit both drift models and pick one (``auto``: AIC, see the module docstring).

    ``k_fixed`` fixes the Newtonian k (found with a surroundings model) and takes that model.
    """
    if model not in (*MODELS, "auto"):
        raise ReductionError(f"unknown drift model {model!r}; use linear, newtonian or auto")
    lin = _fit("linear", fore_t, fore_y, after_t, after_y)
    newt = _fit("newtonian", fore_t, fore_y, after_t, after_y, k_fixed, lin)
    if k_fixed is not None:
        return DriftChoice(newt, lin, newt, "newtonian with k from the surroundings model")
    if model == "auto":
        pick_linear = lin.aic < newt.aic - AIC_MARGIN
        chosen = lin if pick_linear else newt
        why = f"AIC newtonian {newt.aic:.1f} vs linear {lin.aic:.1f}: " + (
            "straight lines fit clearly better, the drift is not Newtonian; linear"
            if pick_linear
            else "Newton's law is not contradicted by the data; newtonian"
        )
    else:
        chosen = lin if model == "linear" else newt
        why = f"{model} requested"
    return DriftChoice(chosen, lin, newt, why)
