"""Uncertainty budgets by the GUM law of propagation (JCGM 100:2008) and a JCGM 101 cross-check.

A :class:`Budget` is a measurand, its value and a tuple of :class:`Component` rows (input value,
standard uncertainty, sensitivity coefficient, degrees of freedom). The inputs are taken as
uncorrelated (JCGM 100:2008, 5.1.2); where two inputs share a cause, fold them into one component
before building the budget. :func:`propagate` finds the sensitivities of any function numerically;
:func:`monte_carlo` propagates distributions (JCGM 101:2008) as an independent check.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

import numpy as np

SQRT3 = math.sqrt(3.0)
SQRT12 = math.sqrt(12.0)


def rectangular(half_width: float) -> float:
    """Standard uncertainty of a rectangular distribution of half-width ``a``: a/√3 (JCGM 100, 4.3.7)."""
    return abs(half_width) / SQRT3


def quantisation(step: float) -> float:
    """Standard uncertainty of rounding to a step ``q``: q/√12 (JCGM 100, F.2.2.1)."""
    return abs(step) / SQRT12


@dataclass(frozen=True)
class Component:
    """One input quantity of a budget.

    ``u`` is the input's standard uncertainty in its own unit; ``sensitivity`` is ∂y/∂x, so the
    component's contribution to the result is |sensitivity|·u in the result's unit.
    """

    name: str
    value: float
    u: float
    sensitivity: float = 1.0
    unit: str = ""
    dof: float = math.inf
    evaluation: str = "B"  # "A": statistics of repeated readings; "B": any other means
    note: str = ""

    @property
    def contribution(self) -> float:
        return abs(self.sensitivity) * self.u


@dataclass(frozen=True)
class Budget:
    """A measurand with its uncertainty budget; derived figures are computed, never stored."""

    quantity: str
    value: float
    unit: str
    components: tuple[Component, ...] = field(default_factory=tuple)
    k: float = 2.0

    @property
    def u(self) -> float:
        # hypot: no overflow for huge contributions (the sum of squares would raise)
        return math.hypot(*(c.contribution for c in self.components))

    @property
    def expanded(self) -> float:
        return self.k * self.u

    @property
    def dof(self) -> float:
        """Effective degrees of freedom by Welch–Satterthwaite (JCGM 100, G.4.1)."""
        u = self.u
        if u == 0.0 or not math.isfinite(u):
            return math.inf
        # u⁴/Σ(cᵢ⁴/νᵢ) written with cᵢ/u, so that no fourth power overflows
        denom = sum(
            (c.contribution / u) ** 4 / c.dof
            for c in self.components
            if math.isfinite(c.dof) and c.dof > 0
        )
        return math.inf if denom == 0.0 else 1.0 / denom

    def coverage_factor(self, p: float = 0.9545) -> float:
        """Student-t coverage factor for ν_eff at coverage probability ``p`` (JCGM 100, G.3)."""
        # scipy.special's quantiles (what scipy.stats.norm/t.ppf call), imported here: importing
        # scipy.stats costs about a second at start-up.
        from scipy.special import ndtri, stdtrit

        nu = self.dof
        return float(ndtri(0.5 + p / 2)) if math.isinf(nu) else float(stdtrit(nu, 0.5 + p / 2))

    def shares(self) -> list[float]:
        """Each component's share of the combined variance, in percent."""
        u = self.u
        ok = 0 < u < math.inf
        return [100.0 * (c.contribution / u) ** 2 if ok else 0.0 for c in self.components]

    def to_dict(self) -> dict[str, object]:
        return {
            "quantity": self.quantity,
            "value": self.value,
            "unit": self.unit,
            "standard_uncertainty": self.u,
            "k": self.k,
            "expanded_uncertainty": self.expanded,
            "effective_dof": None if math.isinf(self.dof) else self.dof,
            "method": "GUM law of propagation, uncorrelated inputs (JCGM 100:2008)",
            "components": [
                {
                    "name": c.name,
                    "value": c.value,
                    "unit": c.unit,
                    "standard_uncertainty": c.u,
                    "sensitivity": c.sensitivity,
                    "contribution": c.contribution,
                    "share_percent": share,
                    "dof": None if math.isinf(c.dof) else c.dof,
                    "evaluation": c.evaluation,
                    "note": c.note,
                }
                for c, share in zip(self.components, self.shares(), strict=True)
            ],
        }

    def table(self) -> str:
        """The budget as a plain-text table for the terminal."""
        rows = [("component", "value", "u(x)", "|c|", "u_i(y)", "share %")]
        for c, share in zip(self.components, self.shares(), strict=True):
            rows.append(
                (
                    c.name,
                    f"{c.value:.6g} {c.unit}".strip(),
                    f"{c.u:.3g}",
                    f"{abs(c.sensitivity):.3g}",
                    f"{c.contribution:.3g}",
                    f"{share:.1f}",
                )
            )
        widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
        lines = ["  ".join(cell.ljust(w) for cell, w in zip(r, widths, strict=True)) for r in rows]
        lines.append(
            f"{self.quantity} = {self.value:.6g} {self.unit}, u = {self.u:.3g}, "
            f"U(k={self.k:g}) = {self.expanded:.3g} {self.unit}"
        )
        return "\n".join(lines)


@dataclass(frozen=True)
class Input:
    """An input to :func:`propagate`: best estimate and standard uncertainty."""

    value: float
    u: float
    unit: str = ""
    dof: float = math.inf
    evaluation: str = "B"
    note: str = ""


def propagate(
    func: Callable[..., float],
    inputs: Mapping[str, Input],
    *,
    quantity: str,
    unit: str,
    k: float = 2.0,
) -> Budget:
    """Budget for ``y = func(**inputs)`` with sensitivities by central differences.

    The step for each input is a small fraction of its uncertainty (or of its value when the
    uncertainty is zero), which keeps the derivative local for the nonlinear models used here.
    """
    x0 = {name: inp.value for name, inp in inputs.items()}
    y0 = float(func(**x0))
    comps = []
    for name, inp in inputs.items():
        h = inp.u * 1e-3 if inp.u > 0 else max(abs(inp.value), 1.0) * 1e-7
        hi = dict(x0, **{name: inp.value + h})
        lo = dict(x0, **{name: inp.value - h})
        c = (float(func(**hi)) - float(func(**lo))) / (2 * h)
        comps.append(
            Component(name, inp.value, inp.u, c, inp.unit, inp.dof, inp.evaluation, inp.note)
        )
    return Budget(quantity, y0, unit, tuple(comps), k)


@dataclass(frozen=True)
class MonteCarloResult:
    mean: float
    u: float
    low: float
    high: float
    trials: int


def monte_carlo(
    func: Callable[..., np.ndarray],
    inputs: Mapping[str, Input],
    *,
    trials: int = 200_000,
    p: float = 0.9545,
    seed: int | None = 0,
) -> MonteCarloResult:
    """Propagate Gaussian inputs through a vectorised ``func`` (JCGM 101:2008, 7).

    Returns the mean, standard deviation and the probabilistically symmetric coverage interval.
    ``func`` receives one array of ``trials`` draws per input.
    """
    rng = np.random.default_rng(seed)
    draws = {
        name: rng.normal(inp.value, inp.u, trials) if inp.u > 0 else np.full(trials, inp.value)
        for name, inp in inputs.items()
    }
    y = np.asarray(func(**draws), dtype=float)
    lo, hi = np.quantile(y, [0.5 - p / 2, 0.5 + p / 2])
    return MonteCarloResult(float(y.mean()), float(y.std(ddof=1)), float(lo), float(hi), trials)
