"""A surroundings temperature that changes during the run: measured (an ambient column) or fitted.

Newton's law of exchange (docs/REFERENCES.md: ISO1928) with a moving surroundings temperature
T_env(t) = T_e0 + e(t):
dT/dt = k(T_e0 + e(t) − T) + u + P(t)/C. Let w be e seen through the vessel's own exchange,
dw/dt = k(e − w) (any start value). Then X = T − w obeys dX/dt = k(T_e0 − X) + u + P(t)/C
exactly: a vessel in a steady room with the same release. So the readings minus w_k are reduced
by the steady-room machinery (``drift``, ``correction``) with the same k, and the corrected
change of X is the corrected change of T.

* measured: e(t) is the logged surroundings column (minus its mean). k is found by one search
  (variable projection) over the fore- and after-periods together: for each k the Newtonian
  drift of y − w_k is linear in (T_f, T_a, s_f) and is solved by least squares; the k with the
  smallest residual sum of squares wins.
* ramp (no ambient column): e(t) = β·(t − t_m), a room warming or cooling steadily; β enters
  linearly (one more column w1_k), k by the same search. Chosen over the steady-room model by
  the Akaike information criterion (docs/REFERENCES.md: AKAIKE1974), see ``ramp_preferred``
  for the margin. When it is not chosen but its β is significant (|β| > 2u(β)), the budget
  gets a row for the spread between the two (the fore- and after-period drifts disagree with
  a steady room).

w_k is computed exactly for e piecewise linear between readings:
w_{i+1} = a·w_i + e_{i+1} − a·e_i − m·(1 − a)/k, a = e^(−kΔ), m the slope of e over the step.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from heatlog.reduce.drift import _design, _expo, design_stack, expo_rows, residual_sigma
from heatlog.solvers import minimize_bounded

#: Bound on how far the logged surroundings reading may lag what the vessel exchanges with
#: (probe time constant in still air plus the vessel wall): common practice, no source.
ENV_LAG_BOUND_S = 120.0
#: Seeded draws for the surroundings-noise row (Monte Carlo, docs/REFERENCES.md: JCGM101).
ENV_NOISE_DRAWS = 16
#: The drifting-room model is taken over the steady room only on strong evidence: an AIC lower
#: by more than this (stricter than the linear/Newtonian margin, since a ramp also soaks up
#: small misfits such as probe lag) and a drift of at least ``RAMP_MIN_K_PER_H`` (a room
#: steadier than 0.1 K/h counts as steady); both common practice, no source.
RAMP_AIC_MARGIN = 10.0
RAMP_MIN_K_PER_H = 0.1


def env_response(t: np.ndarray, e: np.ndarray, k: float) -> np.ndarray:
    """w with dw/dt = k(e − w), w(t₀) = 0, e linear between samples (exact)."""
    t = np.asarray(t, dtype=float)
    e = np.asarray(e, dtype=float)
    w = np.zeros_like(e)
    if e.size < 2:
        return w
    d = np.diff(t)
    a = np.exp(-k * d)
    c = _expo(k, d)  # (1 − a)/k, → Δ for k → 0
    m = np.diff(e) / d
    inc = e[1:] - a * e[:-1] - m * c
    # w_{i+1} = a_i w_i + inc_i with a_i = E_{i+1}/E_i, E_i = exp(−k(t_i − t₀)): so
    # w_n = E_n·Σ_{i<n} inc_i/E_{i+1}, one cumulative sum (no per-sample loop, no scipy.signal)
    span = k * float(t[-1] - t[0])
    if span < 600.0:  # exp(span) stays far from overflow
        rel = k * (t - t[0])
        w[1:] = np.exp(-rel[1:]) * np.cumsum(inc * np.exp(rel[1:]))
        return w
    acc = 0.0
    for i in range(inc.size):
        acc = a[i] * acc + inc[i]
        w[i + 1] = acc
    return w


#: k values per stacked call of the grid search (keeps its temporaries small: common practice,
#: no source; 4 measured fastest in a fresh process, bench/bench_startup.py)
_GRID_CHUNK = 4


def env_responses(t: np.ndarray, e: np.ndarray, ks: np.ndarray) -> np.ndarray:
    """:func:`env_response` for every k of ``ks`` at once, one row each (the same arithmetic,
    element by element, so each row equals the single call)."""
    t = np.asarray(t, dtype=float)
    e = np.asarray(e, dtype=float)
    ks = np.asarray(ks, dtype=float)
    out = np.zeros((ks.size, e.size))
    if e.size < 2:
        return out
    fast = ks * float(t[-1] - t[0]) < 600.0
    for i in np.flatnonzero(~fast):  # the per-sample recursion, where exp(span) could overflow
        out[i] = env_response(t, e, float(ks[i]))
    if not fast.any():
        return out
    k = ks[fast][:, None]
    d = np.diff(t)
    a = np.exp(-k * d)
    c = expo_rows(ks[fast], d)
    m = np.diff(e) / d
    inc = e[1:] - a * e[:-1] - m * c
    rel = k * (t - t[0])
    out[fast, 1:] = np.exp(-rel[:, 1:]) * np.cumsum(inc * np.exp(rel[:, 1:]), axis=1)
    return out


def ramp_shape(t: np.ndarray) -> np.ndarray:
    """The room drift of the ramp model before its rate β: e = t − (t₀ + t_end)/2 (unit slope,
    zero in the middle of the log). The fit, its closed form and the budget rows share it."""
    t = np.asarray(t, dtype=float)
    return t - 0.5 * (t[0] + t[-1])


def ramp_responses(t: np.ndarray, ks: np.ndarray) -> np.ndarray:
    """:func:`env_responses` of :func:`ramp_shape` in closed form, one row per k:
    w = τ − E·(1 − k·e₀), τ = t − t₀, E = (1 − e^(−kτ))/k, e₀ the shape at t₀. Equal to the
    recursion to rounding (1e-10 of the largest |w| or better) with one exponential per reading
    instead of three: the ramp search (its grid and its refinement) uses it, the reported fit
    the recursion."""
    t = np.asarray(t, dtype=float)
    ks = np.asarray(ks, dtype=float)
    tau = t - t[0]
    lead = float(ramp_shape(t[[0, -1]])[0])  # e₀ (the shape needs only the two ends)
    return tau - expo_rows(ks, tau) * (1.0 - ks[:, None] * lead)


#: Largest condition number of a layer's normal equations (columns scaled to unit length) that
#: is solved as such: up to it the solution's relative rounding stays below about 1e-6, and the
#: residual sum of squares, computed from the residuals themselves, is exact to second order in
#: that; above it, or singular, the layer goes through the SVD (common practice, no source).
_NORMAL_COND_MAX = 1e10


def _rss_svd(j: np.ndarray, z: np.ndarray) -> np.ndarray:
    """:func:`_rss_stack` by SVD, as ``numpy.linalg.lstsq`` fits (singular values below
    ε·max(n, p) of the largest dropped)."""
    u, sv, _ = np.linalg.svd(j, full_matrices=False)
    keep = sv > np.finfo(float).eps * max(j.shape[-2:]) * sv[:, :1]
    coef = np.einsum("mnp,mn->mp", u, z) * keep
    r = z - np.einsum("mnp,mp->mn", u, coef)
    return np.einsum("mn,mn->m", r, r)


def _rss_stack(j: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Residual sum of squares of the least-squares fit of each ``z[i]`` by the columns of
    ``j[i]`` (what ``numpy.linalg.lstsq`` gives one by one) for a whole grid in one call: the
    normal equations, solved with the columns scaled to unit length (an all-zero column, as the
    ramp's at k = 0, takes no part), the residuals then computed from their solution; layers
    that are badly conditioned (``_NORMAL_COND_MAX``) by SVD. Under half the SVD's time."""
    jt = np.swapaxes(j, 1, 2)
    g = jt @ j
    b = jt @ z[:, :, None]
    d = np.sqrt(np.diagonal(g, axis1=1, axis2=2))
    d = np.where(d > 0.0, d, 1.0)  # a zero column: its row and column of g are zero
    gs = g / (d[:, :, None] * d[:, None, :])
    eye = np.eye(j.shape[2], dtype=bool)
    gs[(np.diagonal(g, axis1=1, axis2=2) == 0.0)[:, :, None] & eye] = 1.0  # p = 0 there
    lam = np.linalg.eigvalsh(gs)
    good = lam[:, 0] * _NORMAL_COND_MAX > lam[:, -1]
    if not good.all():  # those layers by SVD
        out = _rss_svd(j, z)
        if good.any():
            out[good] = _rss_stack(j[good], z[good])
        return out
    p = np.linalg.solve(gs, b / d[:, :, None]) / d[:, :, None]
    r = z - (j @ p)[:, :, 0]
    return np.einsum("mn,mn->m", r, r)


@dataclass(frozen=True, eq=False)
class SurroundingsFit:
    """The exchange constant and the surroundings term found with it."""

    kind: str  # "measured" or "ramp"
    k_per_s: float
    w: np.ndarray  # w_k on the reduction's time base (subtract from the readings)
    beta_K_per_s: float = math.nan  # ramp only
    u_beta_K_per_s: float = math.nan
    rss: float = math.nan
    n: int = 0

    @property
    def aic(self) -> float:
        p = 5 if self.kind == "ramp" else 4
        return self.n * math.log(max(self.rss, 1e-300) / max(self.n, 1)) + 2 * p


def _k_grid(span: float) -> np.ndarray:
    """The k searched first: 0 and 30 values from 1e-3/span to 20/span, evenly in log k."""
    return np.concatenate([[0.0], np.geomspace(1e-3 / span, 20.0 / span, 30)])


def _k_search(rss_of, grid: np.ndarray, vals: np.ndarray) -> float:
    """k with the least RSS: the best point of the ``grid`` (RSS ``vals``), then Brent's
    minimiser between its grid neighbours."""
    i = int(np.argmin(vals))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
    if hi <= lo:
        return float(grid[i])
    k = minimize_bounded(rss_of, lo, hi, xatol=1e-12 + 1e-9 * grid[i])[0]
    return k if rss_of(k) <= vals[i] else float(grid[i])


def _fits(
    t: np.ndarray,
    y: np.ndarray,
    fore: np.ndarray,
    after: np.ndarray,
    env: np.ndarray | None,
    kinds: tuple[str, ...],
) -> list[SurroundingsFit]:
    """One fit per kind ("measured" with ``env``, "ramp", "steady") of the same periods: the
    k grid is worked through once for all of them (one design per k), then each kind's k is
    refined by its own search."""
    rows = np.concatenate([np.flatnonzero(fore), np.flatnonzero(after)])  # fore rows, then after
    ft, at = t[fore], t[after]
    t_f, t_a = float(ft.mean()), float(at.mean())
    yy = y[rows]
    span = max(at[-1] - ft[0], 1.0)
    e = ramp_shape(t) if env is None else np.asarray(env, dtype=float) - float(np.mean(env))

    def system(kind: str, k: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        j = _design("newtonian", k, ft, at, t_f, t_a)
        if kind == "steady":  # no surroundings term to compute
            return j, yy, np.zeros(t.size)
        w = env_response(t, e, k)
        if kind == "ramp":
            return np.column_stack([j, w[rows]]), yy, w
        return j, yy - w[rows], w

    def rss_chunk(ks: np.ndarray, kinds: tuple[str, ...] = kinds) -> dict[str, np.ndarray]:
        j = design_stack(ks, ft, at, t_f, t_a)
        z = np.broadcast_to(yy, (ks.size, yy.size))
        out = {}
        if "steady" in kinds:
            out["steady"] = _rss_stack(j, z)
        if "ramp" in kinds:
            ww = ramp_responses(t, ks)[:, rows]
            out["ramp"] = _rss_stack(np.concatenate([j, ww[:, :, None]], axis=2), z)
        if "measured" in kinds:
            out["measured"] = _rss_stack(j, z - env_responses(t, e, ks)[:, rows])
        return out

    def rss_of(kind: str, k: float) -> float:
        # the search refines the grid's own objective, so its values and the grid's compare
        return float(rss_chunk(np.array([k]), (kind,))[kind][0])

    grid = _k_grid(span)
    # a few k at a time: the stacked temporaries stay small enough to be reused, where a whole
    # grid's would be fresh memory (page faults) on every run
    chunks = [rss_chunk(grid[i : i + _GRID_CHUNK]) for i in range(0, grid.size, _GRID_CHUNK)]
    fits = []
    for kind in kinds:
        vals = np.concatenate([c[kind] for c in chunks])
        k = _k_search(lambda k, kind=kind: rss_of(kind, k), grid, vals)
        j, z, w = system(kind, k)
        p, *_ = np.linalg.lstsq(j, z, rcond=None)
        r = z - j @ p
        rss = float(r @ r)
        n = int(z.size)
        if kind == "measured":
            fits.append(SurroundingsFit("measured", k, w, rss=rss, n=n))
            continue
        if kind == "steady":
            fits.append(SurroundingsFit("steady", k, w, 0.0, 0.0, rss, n))
            continue
        s2 = residual_sigma(r, n - 5) ** 2
        try:
            cov = np.linalg.inv(j.T @ j) * s2
            u_beta = float(math.sqrt(max(cov[3, 3], 0.0)))
        except np.linalg.LinAlgError:
            u_beta = math.inf
        beta = float(p[3])
        fits.append(SurroundingsFit("ramp", k, beta * w, beta, u_beta, rss, n))
    return fits


def fit_surroundings(
    t: np.ndarray,
    y: np.ndarray,
    fore: np.ndarray,
    after: np.ndarray,
    env: np.ndarray | None,
    ramp: bool = True,
) -> SurroundingsFit:
    """k (and β for a ramp) from the fore- and after-periods (boolean masks on ``t``).

    ``env`` is the logged surroundings temperature on ``t`` (measured kind); ``None`` fits the
    ramp model, or with ``ramp=False`` the steady room (for the AIC comparison on the same data).
    """
    kind = "measured" if env is not None else "ramp" if ramp else "steady"
    return _fits(t, y, fore, after, env, (kind,))[0]


def fit_rooms(
    t: np.ndarray, y: np.ndarray, fore: np.ndarray, after: np.ndarray
) -> tuple[SurroundingsFit, SurroundingsFit]:
    """The drifting-room (ramp) and the steady-room fit of the same periods, as
    :func:`fit_surroundings` gives each, sharing the k grid's designs."""
    ramp, steady = _fits(t, y, fore, after, None, ("ramp", "steady"))
    return ramp, steady


def ramp_preferred(ramp: SurroundingsFit, steady_aic: float) -> bool:
    """The stated criterion: the ramp model's AIC is lower by more than ``RAMP_AIC_MARGIN`` and
    the room drifts by at least ``RAMP_MIN_K_PER_H``."""
    return (
        ramp.aic < steady_aic - RAMP_AIC_MARGIN
        and abs(ramp.beta_K_per_s) * 3600.0 >= RAMP_MIN_K_PER_H
    )
