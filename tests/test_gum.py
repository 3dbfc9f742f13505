"""GUM budgets checked against hand-worked cases and against Monte Carlo (JCGM 101)."""

import math

import numpy as np
import pytest

from heatlog.gum import Budget, Component, Input, monte_carlo, propagate, quantisation, rectangular


def test_rectangular_and_quantisation_match_jcgm_100():
    # JCGM 100:2008 4.3.7 (a/sqrt 3) and F.2.2.1 (q/sqrt 12).
    assert rectangular(0.3) == pytest.approx(0.3 / math.sqrt(3))
    assert quantisation(0.01) == pytest.approx(0.01 / math.sqrt(12))


def test_product_budget_by_hand():
    # q = C * dT: relative uncertainties add in quadrature for a product.
    b = propagate(
        lambda C, dT: C * dT,
        {"C": Input(500.0, 5.0, "J/K"), "dT": Input(2.0, 0.01, "K")},
        quantity="q",
        unit="J",
    )
    assert b.value == pytest.approx(1000.0)
    assert b.u == pytest.approx(1000.0 * math.hypot(5 / 500, 0.01 / 2), rel=1e-6)
    assert b.expanded == pytest.approx(2 * b.u)
    assert sum(b.shares()) == pytest.approx(100.0)


def test_welch_satterthwaite_single_type_a_component():
    # With one component the effective dof is that component's dof (JCGM 100 G.4.1).
    b = Budget("x", 1.0, "", (Component("a", 1.0, 0.1, 1.0, dof=4),))
    assert b.dof == pytest.approx(4)
    assert b.coverage_factor() == pytest.approx(2.87, abs=0.01)  # t(0.9545, 4), JCGM 100 table G.2


def test_monte_carlo_agrees_with_law_of_propagation_for_near_linear_model():
    inputs = {"C": Input(500.0, 5.0), "dT": Input(2.0, 0.01)}
    b = propagate(lambda C, dT: C * dT, inputs, quantity="q", unit="J")
    mc = monte_carlo(lambda C, dT: np.asarray(C) * dT, inputs, trials=100_000, seed=1)
    assert mc.mean == pytest.approx(b.value, rel=1e-3)
    assert mc.u == pytest.approx(b.u, rel=0.02)


def test_budget_serialises_with_components():
    b = propagate(lambda a: 3 * a, {"a": Input(1.0, 0.1, "K")}, quantity="y", unit="K")
    d = b.to_dict()
    assert d["components"][0]["sensitivity"] == pytest.approx(3.0)
    assert d["standard_uncertainty"] == pytest.approx(0.3)
    assert "y = 3" in b.table()
