"""Two small numerical solvers for the reduce path, in numpy alone.

Why not scipy.optimize: importing it costs about 0.4 s (it builds docstrings at import), more
than the whole reduction of a million-row log, and ``heatlog reduce`` is a command people run
over and over. The two routines below are the textbook algorithms scipy itself uses for these
jobs; ``tests/test_solvers.py`` checks them against ``scipy.optimize`` on seeded problems, the
same way ``heatlog.smoothing`` is checked against ``scipy.signal``. Paths that are not timed
(probe fitting, lag fits) keep calling scipy.

* :func:`minimize_bounded` — Brent's minimiser on an interval: golden-section steps with
  parabolic interpolation where it is safe (Brent 1973, ch. 5; the ``fmin`` routine of Forsythe,
  Malcolm & Moler 1977; docs/REFERENCES.md: BRENT1973). It follows the same steps as
  ``scipy.optimize.minimize_scalar(method="bounded")``.
* :func:`least_squares_box` — Levenberg–Marquardt for box-bounded nonlinear least squares, with
  Moré's scaling by the Jacobian's column norms (Moré 1978; docs/REFERENCES.md: MORE1978), a
  forward-difference Jacobian and the damping update of Nielsen (1999; docs/REFERENCES.md:
  NIELSEN1999). A step is cut short before a bound, so the iterates stay inside the box;
  parameters at a bound whose gradient points outwards are held there for that step.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

_SQRT_EPS = math.sqrt(np.finfo(float).eps)
_GOLDEN = 0.5 * (3.0 - math.sqrt(5.0))
_BRENT_RELTOL = math.sqrt(2.2e-16)  # √ε rounded as scipy's bounded minimiser has it


def minimize_bounded(
    func: Callable[[float], float],
    lo: float,
    hi: float,
    *,
    xatol: float = 1e-5,
    maxiter: int = 500,
) -> tuple[float, float, bool]:
    """Minimum of ``func`` on [lo, hi]: (x, func(x), converged).

    Converged means the bracket around x has shrunk to ``xatol`` (plus √ε relative) within
    ``maxiter`` evaluations. Like any local method it finds *a* minimum: callers bracket the
    global one on a grid first.
    """
    a, b = float(lo), float(hi)
    # v: the previous best point, w: the one before it (for the parabola), x: the best so far
    v = w = x = a + _GOLDEN * (b - a)
    fv = fw = fx = float(func(x))
    d = e = 0.0
    calls = 1
    mid = 0.5 * (a + b)
    tol1 = _BRENT_RELTOL * abs(x) + xatol / 3.0
    tol2 = 2.0 * tol1
    while abs(x - mid) > tol2 - 0.5 * (b - a):
        golden = True
        if abs(e) > tol1:
            # parabola through (v, fv), (w, fw), (x, fx): step p/q from x
            r = (x - w) * (fx - fv)
            q = (x - v) * (fx - fw)
            p = (x - v) * q - (x - w) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                p = -p
            q = abs(q)
            e_before, e = e, d
            # accept it only if it falls inside the bracket and moves less than half the
            # step before last (otherwise the parabola is not converging)
            if abs(p) < abs(0.5 * q * e_before) and q * (a - x) < p < q * (b - x):
                golden = False
                d = p / q
                u = x + d
                if (u - a) < tol2 or (b - u) < tol2:
                    d = tol1 if mid >= x else -tol1
        if golden:
            e = (a - x) if x >= mid else (b - x)
            d = _GOLDEN * e
        step = d if abs(d) >= tol1 else (tol1 if d >= 0 else -tol1)
        u = x + step
        fu = float(func(u))
        calls += 1
        if fu <= fx:
            if u >= x:
                a = x
            else:
                b = x
            v, fv, w, fw, x, fx = w, fw, x, fx, u, fu
        else:
            if u < x:
                a = u
            else:
                b = u
            if fu <= fw or w == x:
                v, fv, w, fw = w, fw, u, fu
            elif fu <= fv or v in (x, w):
                v, fv = u, fu
        mid = 0.5 * (a + b)
        tol1 = _BRENT_RELTOL * abs(x) + xatol / 3.0
        tol2 = 2.0 * tol1
        if calls >= maxiter:
            return x, fx, False
    return x, fx, True


@dataclass(frozen=True, eq=False)
class LeastSquaresResult:
    """What :func:`least_squares_box` found: parameters, residuals and Jacobian there."""

    x: np.ndarray
    fun: np.ndarray
    jac: np.ndarray
    success: bool
    nfev: int


def _jacobian(
    fun: Callable[[np.ndarray], np.ndarray],
    x: np.ndarray,
    f: np.ndarray,
    upper: np.ndarray,
) -> np.ndarray:
    """Forward differences, step √ε·max(1, |x|), taken backwards where the upper bound is near."""
    jac = np.empty((f.size, x.size))
    for i in range(x.size):
        h = _SQRT_EPS * max(1.0, abs(float(x[i])))
        if x[i] + h > upper[i]:
            h = -h
        xh = x.copy()
        xh[i] += h
        jac[:, i] = (fun(xh) - f) / (xh[i] - x[i])
    return jac


def _inside(step: np.ndarray, x: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    """The step with each component that would leave the box cut to 99.5 % of the way to its
    bound, so that no parameter lands on a bound by accident and sticks there (the iterates stay
    strictly inside, as in trust-region-reflective methods; a component of a steepest-descent
    step keeps its sign, so a cut step is still a descent direction)."""
    room = np.where(step > 0, upper - x, np.where(step < 0, lower - x, np.inf))
    cut = np.abs(step) > np.abs(room)
    return np.where(cut, 0.995 * room, step)


def least_squares_box(
    fun: Callable[[np.ndarray], np.ndarray],
    x0: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    *,
    max_nfev: int = 400,
    ftol: float = 1e-8,
    xtol: float = 1e-8,
    gtol: float = 1e-8,
) -> LeastSquaresResult:
    """Minimise half the sum of squares of ``fun(x)`` for lower ≤ x ≤ upper (``x0`` is clipped
    into the box).

    Stops when the cost falls by less than ``ftol`` relative, the step is below ``xtol``
    relative, the scaled projected gradient is below ``gtol``, or after ``max_nfev`` calls of
    ``fun`` (Jacobian columns included); ``success`` is False only in that last case. A trial
    point with non-finite residuals counts as a rejected step. Raises ``ValueError`` when the
    residuals are not finite at the start and ``np.linalg.LinAlgError`` if the damped normal
    equations cannot be solved.
    """
    lower = np.asarray(lower, dtype=float)
    upper = np.asarray(upper, dtype=float)
    x = np.clip(np.asarray(x0, dtype=float), lower, upper)
    f = np.asarray(fun(x), dtype=float)
    if not np.isfinite(f).all():
        raise ValueError("residuals are not finite at the starting point")
    cost = 0.5 * float(f @ f)
    jac = _jacobian(fun, x, f, upper)
    nfev = 1 + x.size
    scale = np.zeros(x.size)
    lam = -1.0
    nu = 2.0
    while nfev < max_nfev:
        g = jac.T @ f
        scale = np.maximum(scale, np.linalg.norm(jac, axis=0))  # Moré: never shrinks
        d = np.where(scale > 0, scale, 1.0)
        # held at a bound: the gradient (of the cost, g) would push the parameter outwards
        held = ((x <= lower) & (g > 0)) | ((x >= upper) & (g < 0))
        free = ~held
        # MINPACK's test: the cosine between the residuals and each scaled Jacobian column
        norm_f = math.sqrt(2.0 * cost)
        if not free.any() or float(np.max(np.abs(g[free] / d[free]))) <= gtol * norm_f:
            return LeastSquaresResult(x, f, jac, True, nfev)
        jf = jac[:, free] / d[free]  # scaled columns of unit norm
        jtj = jf.T @ jf
        gf = g[free] / d[free]
        if lam < 0:
            lam = 1e-3 * float(np.max(np.diag(jtj)))
        while nfev < max_nfev:
            step_scaled = np.linalg.solve(jtj + lam * np.eye(jtj.shape[0]), -gf)
            x_new = x.copy()
            x_new[free] = x[free] + _inside(
                step_scaled / d[free], x[free], lower[free], upper[free]
            )
            f_new = np.asarray(fun(x_new), dtype=float)
            nfev += 1
            s = x_new - x
            js = jac @ s
            predicted = -(float(g @ s) + 0.5 * float(js @ js))
            cost_new = 0.5 * float(f_new @ f_new) if np.isfinite(f_new).all() else math.inf
            actual = cost - cost_new
            if predicted > 0 and actual > 0:
                rho = actual / predicted
                lam *= max(1.0 / 3.0, 1.0 - (2.0 * rho - 1.0) ** 3)
                nu = 2.0
                small_step = float(np.linalg.norm(s * d)) <= xtol * (
                    xtol + float(np.linalg.norm(x * d))
                )
                x, f = x_new, f_new
                small_fall = actual <= ftol * cost
                cost = cost_new
                if small_fall or small_step:
                    return LeastSquaresResult(x, f, _jacobian(fun, x, f, upper), True, nfev)
                jac = _jacobian(fun, x, f, upper)
                nfev += x.size
                break
            if float(np.linalg.norm(s * d)) <= xtol * (xtol + float(np.linalg.norm(x * d))):
                # no step that lowers the cost is left: x is the minimum to within xtol
                return LeastSquaresResult(x, f, jac, True, nfev)
            lam *= nu
            nu *= 2.0
    return LeastSquaresResult(x, f, jac, False, nfev)
