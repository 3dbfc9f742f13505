"""Heat and reaction enthalpy from a corrected temperature change, with GUM budgets.

Sign convention (stated once, used everywhere): q is the heat taken up by the calorimeter and its
contents, q = (Σ m_i·c_p,i + C_cal)·ΔT. The reaction's (system's) enthalpy change is ΔH = −q:
an exothermic reaction warms the calorimeter (ΔT > 0, q > 0) and has ΔH < 0.

Every function takes numbers with standard uncertainties (:class:`heatlog.gum.Input`) and returns
a :class:`heatlog.gum.Budget` whose components are the primitive inputs (each mass, each c_p,
C_cal, ΔT, amount), propagated by the GUM law of propagation with the inputs uncorrelated.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np

from heatlog.errors import InputError
from heatlog.gum import Budget, Component, Input, MonteCarloResult, monte_carlo, propagate

SIGN_CONVENTION = (
    "q = heat taken up by calorimeter and contents; ΔH(reaction) = −q, so exothermic ΔH < 0"
)


@dataclass(frozen=True)
class Content:
    """Something inside the calorimeter that warms with it: a mass (g) and its c_p (J/(g·K))."""

    name: str
    mass_g: Input
    cp: Input


def as_input(x: Input | Budget, unit: str = "") -> Input:
    """A budget's result as one input (its value and combined standard uncertainty)."""
    if isinstance(x, Budget):
        return Input(x.value, x.u, x.unit, dof=x.dof, note=x.quantity)
    return x if not unit or x.unit else replace(x, unit=unit)


def substitute(outer: Budget, name: str, inner: Budget) -> Budget:
    """Replace the component ``name`` of ``outer`` by the components of ``inner`` (chain rule).

    Valid when ``inner``'s inputs do not appear elsewhere in ``outer`` (inputs uncorrelated).
    """
    out: list[Component] = []
    for c in outer.components:
        if c.name != name:
            out.append(c)
            continue
        out.extend(
            replace(ic, sensitivity=ic.sensitivity * c.sensitivity) for ic in inner.components
        )
    return replace(outer, components=tuple(out))


#: Budget rows that name one physical input wherever they appear: a heat capacity from a table and
#: the modes of a probe's calibration curve (``runfile.with_probe_curve``).
SHARED_PREFIXES = ("c_p(", "probe ")


def carry_calibration(outer: Budget, c_cal: Budget) -> Budget:
    """Expand the component ``C_cal`` of ``outer`` into the calibration's own inputs, keeping
    a heat capacity that calibration and measurement share as one input.

    A c_p used in both (the water's, from IAPWS-95) is one quantity, not two independent ones:
    its error moves C_cal and the measured heat in opposite directions and cancels exactly when
    the water masses are equal; so does a probe's calibration curve when both rises were read
    with it. Such rows (:data:`SHARED_PREFIXES`) are merged by adding their sensitivities
    (JCGM 100, 5.1: one input, one row). Every other calibration input (the parts of its ΔT, its
    energy, masses) is a separate measurement and appears as "calibration: …".
    """
    shared = {c.name for c in outer.components if c.name.startswith(SHARED_PREFIXES)}
    inner = replace(
        c_cal,
        components=tuple(
            c if c.name in shared else replace(c, name=f"calibration: {c.name}")
            for c in c_cal.components
        ),
    )
    merged: dict[str, Component] = {}
    for c in substitute(outer, "C_cal", inner).components:
        if c.name in merged:
            first = merged[c.name]
            merged[c.name] = replace(
                first,
                sensitivity=first.sensitivity + c.sensitivity,
                note="; ".join(filter(None, (first.note, "also in the calibration: one input"))),
            )
        else:
            merged[c.name] = c
    return replace(outer, components=tuple(merged.values()))


def _check_contents(contents: Sequence[Content]) -> None:
    names = [c.name for c in contents]
    if len(set(names)) != len(names):
        raise InputError(f"contents need distinct names, got {names}")
    for c in contents:
        if c.mass_g.value < 0:
            raise InputError(f"mass of {c.name} must not be negative, got {c.mass_g.value} g")


def content_inputs(contents: Sequence[Content]) -> dict[str, Input]:
    _check_contents(contents)
    inputs: dict[str, Input] = {}
    for c in contents:
        inputs[f"m({c.name})"] = as_input(c.mass_g, "g")
        inputs[f"c_p({c.name})"] = as_input(c.cp, "J/(g·K)")
    return inputs


def heat_capacity_sum(contents: Sequence[Content], x: Mapping[str, float]) -> float:
    return sum(x[f"m({c.name})"] * x[f"c_p({c.name})"] for c in contents)


def _heat_model(
    delta_t: Input, c_cal: Input, contents: Sequence[Content]
) -> tuple[dict[str, Input], Callable[..., float]]:
    inputs = {"ΔT": as_input(delta_t, "K"), "C_cal": as_input(c_cal, "J/K")}
    inputs.update(content_inputs(contents))

    def q(**x: float) -> float:
        return (heat_capacity_sum(contents, x) + x["C_cal"]) * x["ΔT"]

    return inputs, q


def heat(delta_t: Input | Budget, c_cal: Input | Budget, contents: Sequence[Content]) -> Budget:
    """q = (Σ m_i·c_p,i + C_cal)·ΔT in J: heat taken up by the calorimeter and its contents."""
    inputs, q = _heat_model(as_input(delta_t), as_input(c_cal), contents)
    return propagate(q, inputs, quantity="q (heat taken up by calorimeter + contents)", unit="J")


def _enthalpy_model(
    delta_t: Input | Budget,
    c_cal: Input | Budget,
    contents: Sequence[Content],
    amount: Input,
    scale: float,
) -> tuple[dict[str, Input], Callable[..., float]]:
    inputs, q = _heat_model(as_input(delta_t), as_input(c_cal), contents)
    if amount.value <= 0:
        raise InputError(f"amount of reagent must be positive, got {amount.value}")
    inputs["n"] = amount

    def dh(**x: float) -> float:
        return -q(**x) / x["n"] * scale

    return inputs, dh


def molar_enthalpy(
    delta_t: Input | Budget,
    c_cal: Input | Budget,
    contents: Sequence[Content],
    amount_mol: Input,
) -> Budget:
    """ΔH = −q/n in kJ/mol, n = moles of limiting reagent (or extent of reaction)."""
    inputs, f = _enthalpy_model(delta_t, c_cal, contents, as_input(amount_mol, "mol"), 1e-3)
    return propagate(f, inputs, quantity="ΔH = −q/n (system; exothermic < 0)", unit="kJ/mol")


def specific_enthalpy(
    delta_t: Input | Budget,
    c_cal: Input | Budget,
    contents: Sequence[Content],
    sample_g: Input,
) -> Budget:
    """ΔH = −q/m in J/g, m = mass of the sample that reacted or dissolved."""
    inputs, f = _enthalpy_model(delta_t, c_cal, contents, as_input(sample_g, "g"), 1.0)
    inputs["m_sample"] = inputs.pop("n")

    def g(**x: float) -> float:
        return f(**{**x, "n": x["m_sample"]})

    return propagate(g, inputs, quantity="ΔH = −q/m (system; exothermic < 0)", unit="J/g")


def molar_enthalpy_monte_carlo(
    delta_t: Input | Budget,
    c_cal: Input | Budget,
    contents: Sequence[Content],
    amount_mol: Input,
    *,
    trials: int = 200_000,
    seed: int | None = 0,
) -> MonteCarloResult:
    """JCGM 101 Monte Carlo cross-check of :func:`molar_enthalpy` (Gaussian inputs)."""
    inputs, f = _enthalpy_model(delta_t, c_cal, contents, as_input(amount_mol, "mol"), 1e-3)

    def vec(**x: np.ndarray) -> np.ndarray:
        return np.asarray(f(**x))

    return monte_carlo(vec, inputs, trials=trials, seed=seed)


@dataclass(frozen=True)
class Limiting:
    """The limiting reagent and the extent of reaction ξ = n/ν it allows (mol)."""

    reagent: str
    extent: Input
    extents: dict[str, float]


def limiting_reagent(amounts: Mapping[str, Input], coefficients: Mapping[str, float]) -> Limiting:
    """Find the reagent that runs out first: the smallest n_i/ν_i.

    ``coefficients`` are the stoichiometric coefficients of the reactants (positive numbers).
    """
    missing = sorted(set(coefficients) ^ set(amounts))
    if missing:
        raise InputError(
            f"amounts and coefficients must name the same reagents; unmatched: {', '.join(missing)}"
        )
    if not amounts:
        raise InputError("give at least one reagent amount")
    extents = {}
    for name, n in amounts.items():
        nu = coefficients[name]
        if not nu > 0:
            raise InputError(f"coefficient of {name} must be positive, got {nu}")
        if n.value < 0:
            raise InputError(f"amount of {name} must not be negative, got {n.value}")
        extents[name] = n.value / nu
    name = min(extents, key=extents.__getitem__)
    n = amounts[name]
    nu = coefficients[name]
    note = f"limiting reagent {name} (ν = {nu:g})"
    return Limiting(name, Input(n.value / nu, n.u / nu, "mol", n.dof, n.evaluation, note), extents)


def kirchhoff(
    dh: Input | Budget,
    t_c: Input,
    delta_cp: Input,
    t_ref_c: float = 25.0,
) -> Budget:
    """ΔH at ``t_ref_c`` from ΔH measured at ``t_c`` (kJ/mol): ΔH(T_ref) = ΔH(T) + ΔCp·(T_ref − T).

    ``delta_cp`` in J/(K·mol), taken constant over the interval (Kirchhoff's law).
    """
    inputs = {
        "ΔH(T)": as_input(dh, "kJ/mol"),
        "T": as_input(t_c, "°C"),
        "ΔCp": as_input(delta_cp, "J/(K·mol)"),
    }

    def f(**x: float) -> float:
        return x["ΔH(T)"] + x["ΔCp"] * (t_ref_c - x["T"]) * 1e-3

    return propagate(f, inputs, quantity=f"ΔH at {t_ref_c:g} °C (Kirchhoff)", unit="kJ/mol")
