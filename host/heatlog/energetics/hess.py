"""Hess's law: reaction enthalpies from a cited table of standard enthalpies of formation.

ΔrH° = Σ ν ΔfH°(products) − Σ ν ΔfH°(reactants), at 298.15 K and 0.1 MPa, aqueous species at
infinite dilution. The table (``heatlog/data/formation_enthalpies.csv``) gives every value with a
standard uncertainty and its source. The budget treats the table values as uncorrelated, so
u(ΔrH°) is the root-sum-square of ν·u; values from one compilation are in truth partly
correlated (they share key values), which this ignores (the budget's method says so).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from functools import cache
from importlib import resources

from heatlog.energetics.formula import (
    PHASES,
    Reaction,
    Species,
    check_balance,
    format_species,
    parse_reaction,
    parse_species,
)
from heatlog.errors import InputError
from heatlog.gum import Budget, Component, Input

# Names a user may type instead of a formula.
ALIASES = {
    "urea": "CO(NH2)2",
    "sodium acetate trihydrate": "CH3COONa·3H2O",
}


#: Species whose presence in a reaction calls for the acids-and-bases caution (common practice,
#: no source): matched as text in reaction and species names.
CORROSIVE_SPECIES = ("H+", "OH-", "HCl", "NaOH", "KOH", "HNO3", "H2SO4", "CH3COOH", "CaO")


@dataclass(frozen=True)
class FormationEntry:
    species: Species
    dhf_kj_per_mol: float
    u_kj_per_mol: float
    source: str


@dataclass(frozen=True)
class FormationTable:
    entries: tuple[FormationEntry, ...]

    def _matches(self, sp: Species) -> list[FormationEntry]:
        return [
            e
            for e in self.entries
            if e.species.formula == sp.formula
            and e.species.charge == sp.charge
            and (sp.phase is None or e.species.phase == sp.phase)
        ]

    def lookup(self, sp: Species) -> FormationEntry:
        """The entry for ``sp``; a species without a phase matches when only one phase is listed."""
        found = self._matches(sp)
        if len(found) == 1:
            return found[0]
        name = format_species(sp)
        if not found:
            others = [
                format_species(e.species) for e in self.entries if e.species.formula == sp.formula
            ]
            hint = f" (listed: {', '.join(others)})" if others else ""
            raise InputError(
                f"no formation enthalpy for {name}{hint}; check the formula, charge and phase "
                "or add a cited row to formation_enthalpies.csv"
            )
        phases = ", ".join(format_species(e.species) for e in found)
        raise InputError(f"{name} is listed in more than one phase ({phases}); add the phase")

    def resolve(self, readings: list[Species]) -> Species | None:
        """Pick the one reading of an ambiguous species ('Ca2+', 'NH4+') that the table holds."""
        known = [r for r in readings if self._matches(r)]
        return known[0] if len(known) == 1 else None


def _parse_table(text: str, where: str) -> FormationTable:
    rows = csv.DictReader(line for line in io.StringIO(text) if not line.startswith("#"))
    entries = []
    for i, row in enumerate(rows, start=1):
        try:
            # Canonical text: a bare sign is a charge of ±1 (NH4+), larger charges use ^ (Ca^2+).
            sp = parse_species(f"{row['species']}({PHASES[row['phase']]})")[0]
            entries.append(
                FormationEntry(
                    sp, float(row["dHf_kJ_per_mol"]), float(row["u_kJ_per_mol"]), row["source"]
                )
            )
        except (KeyError, ValueError, TypeError) as exc:
            raise InputError(f"{where}: row {i} cannot be read ({exc})") from None
    return FormationTable(tuple(entries))


@cache
def formation_table() -> FormationTable:
    """The packaged table of standard enthalpies of formation (read once)."""
    text = (
        resources.files("heatlog").joinpath("data", "formation_enthalpies.csv").read_text("utf-8")
    )
    return _parse_table(text, "formation_enthalpies.csv")


def _unalias(text: str) -> str:
    out = text
    for name, formula in ALIASES.items():
        out = out.replace(name, formula)
    return out


def reaction(text: str, table: FormationTable | None = None) -> Reaction:
    """Parse a reaction, resolve ambiguous charges against the table and check its balance."""
    tab = table or formation_table()
    r = parse_reaction(_unalias(text), tab.resolve)
    check_balance(r)
    return r


def reaction_enthalpy(
    text_or_reaction: str | Reaction, table: FormationTable | None = None
) -> Budget:
    """Standard reaction enthalpy by Hess's law, kJ/mol of reaction as written, with its budget.

    Each component is one species' ΔfH° with sensitivity ν (negative for reactants).
    """
    tab = table or formation_table()
    r = reaction(text_or_reaction, tab) if isinstance(text_or_reaction, str) else text_or_reaction
    if not isinstance(text_or_reaction, str):
        check_balance(r)
    # Net ν per table entry: a species on both sides is one input, not two independent ones.
    net: dict[FormationEntry, float] = {}
    for nu, sp in r.signed_terms():
        e = tab.lookup(sp)
        net[e] = net.get(e, 0.0) + float(nu)
    comps = tuple(
        Component(
            f"ΔfH°({format_species(e.species)})",
            e.dhf_kj_per_mol,
            e.u_kj_per_mol,
            nu,
            "kJ/mol",
            note=e.source,
        )
        for e, nu in net.items()
        if nu != 0
    )
    total = sum(c.sensitivity * c.value for c in comps)
    return Budget(f"ΔrH°(298.15 K) of {r}", total, "kJ/mol", comps)


@dataclass(frozen=True)
class Comparison:
    """A measured value against a predicted one: difference, its uncertainty and the z score."""

    measured: float
    u_measured: float
    predicted: float
    u_predicted: float
    unit: str

    @property
    def difference(self) -> float:
        return self.measured - self.predicted

    @property
    def u_difference(self) -> float:
        return math.hypot(self.u_measured, self.u_predicted)

    @property
    def z(self) -> float:
        u = self.u_difference
        return math.inf if u == 0 else abs(self.difference) / u

    @property
    def verdict(self) -> str:
        z = self.z
        if z <= 2:
            return "agrees: the difference is within twice its combined standard uncertainty"
        if z <= 3:
            return (
                "marginal: the difference is 2–3 combined standard uncertainties; "
                "repeat the run or look for an unaccounted heat loss"
            )
        return (
            "disagrees: the difference exceeds 3 combined standard uncertainties; look for heat "
            "losses, incomplete reaction, a wrong amount, a different final concentration or a "
            "wrong ΔT"
        )

    def to_dict(self) -> dict[str, object]:
        return {
            "measured": self.measured,
            "u_measured": self.u_measured,
            "predicted": self.predicted,
            "u_predicted": self.u_predicted,
            "unit": self.unit,
            "difference": self.difference,
            "u_difference": self.u_difference,
            "z": self.z,
            "verdict": self.verdict,
            "note": "z = |measured − predicted| / √(u_measured² + u_predicted²), inputs uncorrelated",
        }


def _value_u(x: Budget | Input) -> tuple[float, float]:
    return (x.value, x.u)


def compare(
    measured: Budget | Input, predicted: Budget | Input, unit: str = "kJ/mol"
) -> Comparison:
    """Compare a measured enthalpy with a predicted one (both in the same unit)."""
    m, um = _value_u(measured)
    p, up = _value_u(predicted)
    return Comparison(m, um, p, up, unit)
