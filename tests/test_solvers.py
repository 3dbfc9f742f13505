"""heatlog.solvers against scipy.optimize (docs/REFERENCES.md: SCIPY) on seeded problems."""

import math

import numpy as np
import pytest
from scipy.optimize import least_squares, minimize_scalar

from heatlog.solvers import least_squares_box, minimize_bounded


def _scalar_cases(seed):
    rng = np.random.default_rng(seed)
    for _ in range(40):
        c = rng.uniform(-3, 3)
        w = rng.uniform(0.1, 5)
        a = rng.uniform(-0.5, 0.5)
        lo, hi = sorted(rng.uniform(-6, 6, 2))
        kind = int(rng.integers(3))
        if kind == 0:
            yield (lambda x, c=c, w=w: (x - c) ** 2 / w), lo, hi
        elif kind == 1:
            yield (lambda x, c=c, w=w, a=a: math.cosh((x - c) / w) + a * x), lo, hi
        else:  # a residual sum of squares in an exchange coefficient, as the drift fit has
            t = np.linspace(0, 100, 50)
            y = np.exp(-0.03 * t) + rng.normal(0, 0.01, t.size)

            def rss(k, t=t, y=y):
                r = y - np.exp(-k * t)
                return float(r @ r)

            yield rss, 0.0, 0.2


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_bounded_minimum_follows_scipy_step_for_step(seed):
    for f, lo, hi in _scalar_cases(seed):
        ref = minimize_scalar(f, bounds=(lo, hi), method="bounded", options={"xatol": 1e-9})
        x, fx, ok = minimize_bounded(f, lo, hi, xatol=1e-9)
        assert ok
        # the same algorithm, step for step: the same point, not merely as good a one
        assert x == pytest.approx(ref.x, abs=1e-12, rel=1e-12)
        assert fx == pytest.approx(ref.fun, abs=1e-15, rel=1e-12)
        assert lo <= x <= hi


def test_bounded_minimum_at_an_end_and_out_of_evaluations():
    x, _, ok = minimize_bounded(lambda x: x, 2.0, 5.0, xatol=1e-8)
    assert ok and x == pytest.approx(2.0, abs=1e-7)
    x, _, ok = minimize_bounded(lambda x: (x - 1.0) ** 2, -10.0, 10.0, xatol=1e-14, maxiter=5)
    assert not ok


def _model(p, t):
    # two exponentials convolved with a lag, the shape of the Newton-model fit's response
    a, k, tau, t0 = p
    s = np.maximum(t - t0, 0.0)
    return a * (np.exp(-k * s) - np.exp(-s / max(tau, 1e-9)))


@pytest.mark.parametrize("seed", range(8))
def test_box_least_squares_reaches_scipys_minimum(seed):
    rng = np.random.default_rng(seed)
    truth = np.array([rng.uniform(1, 5), rng.uniform(1e-3, 1e-2), rng.uniform(5, 40), 10.0])
    t = np.linspace(0, 600, 400)
    y = _model(truth, t) + rng.normal(0, 0.01, t.size)
    lower = np.array([0.0, 0.0, 0.5, 0.0])
    upper = np.array([20.0, 1.0, 200.0, 50.0])
    start = truth * rng.uniform(0.7, 1.3, 4)

    def fun(p):
        return _model(p, t) - y

    ref = least_squares(fun, start, bounds=(lower, upper), x_scale="jac")
    got = least_squares_box(fun, start, lower, upper)
    assert got.success
    cost_ref = 0.5 * float(ref.fun @ ref.fun)
    cost = 0.5 * float(got.fun @ got.fun)
    assert cost <= cost_ref * (1 + 1e-7)
    np.testing.assert_allclose(got.x, ref.x, rtol=1e-4)
    # the Jacobian returned is the one at the answer (the caller's covariance depends on it)
    np.testing.assert_allclose(got.jac, ref.jac, rtol=1e-3, atol=1e-6 * np.abs(ref.jac).max())


def test_box_least_squares_stops_on_a_bound_that_binds():
    t = np.linspace(0, 10, 50)
    y = 2.0 * t  # best unconstrained slope 2, capped at 1.5

    got = least_squares_box(
        lambda p: p[0] * t - y, np.array([0.1]), np.array([0.0]), np.array([1.5])
    )
    ref = least_squares(lambda p: p[0] * t - y, [0.1], bounds=([0.0], [1.5]))
    assert got.success
    assert got.x[0] == pytest.approx(1.5, rel=1e-6)
    assert got.x[0] == pytest.approx(ref.x[0], rel=1e-6)


def test_box_least_squares_reports_running_out_of_evaluations():
    t = np.linspace(0, 600, 400)
    y = _model(np.array([3.0, 5e-3, 20.0, 10.0]), t)
    got = least_squares_box(
        lambda p: _model(p, t) - y,
        np.array([1.0, 1e-2, 60.0, 30.0]),
        np.array([0.0, 0.0, 0.5, 0.0]),
        np.array([20.0, 1.0, 200.0, 50.0]),
        max_nfev=8,
    )
    assert not got.success and got.nfev >= 8


def test_box_least_squares_refuses_a_non_finite_start():
    with pytest.raises(ValueError):
        least_squares_box(
            lambda p: np.array([np.nan]), np.array([1.0]), np.array([0.0]), np.array([2.0])
        )
