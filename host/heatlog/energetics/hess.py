"""Hess's law: reaction enthalpies from a cited table of standard enthalpies of formation.

ΔrH° = Σ ν ΔfH°(products) − Σ ν ΔfH°(reactants), at 298.15 K and 0.1 MPa, aqueous species at
infinite dilution. Every prediction uses ONE compilation: the NBS tables (Wagman et al. 1982;
``heatlog/data/formation_enthalpies.csv``, docs/REFERENCES.md: NBS1982), which hold every salt,
hydrate and ion used here in one self-consistent network. The CODATA Key Values
(``formation_enthalpies_codata1989.csv``) are a labelled alternative (``compilation=
"codata1989"``); mixing the two biases dissolution enthalpies by up to 0.8 kJ/mol. Users may put
their own cited rows in front of either (:func:`load_formation_table`, the one loader for a
user's CSV). Each table gives every value with a standard uncertainty and its source. The budget treats the table values as uncorrelated, so
u(ΔrH°) is the root-sum-square of ν·u; values from one compilation are in truth partly
correlated (they share key values), which this ignores (the budget's method says so).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass, replace
from functools import cache
from importlib import resources
from pathlib import Path

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

#: The packaged compilations: the default and the labelled alternative.
COMPILATIONS = {
    "nbs1982": "formation_enthalpies.csv",
    "codata1989": "formation_enthalpies_codata1989.csv",
}
DEFAULT_COMPILATION = "nbs1982"
COLUMNS = ("species", "phase", "dHf_kJ_per_mol", "u_kJ_per_mol", "source")


class MissingSpecies(InputError):
    """A species no table in use holds: a prediction cannot be made (the measurement stands)."""


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
    name: str = ""

    def before(self, other: FormationTable) -> FormationTable:
        """This table's rows in front of ``other``'s: a species this table holds (in any phase)
        hides the other's rows for it, so one prediction never mixes two values of a species."""
        mine = {(e.species.formula, e.species.charge) for e in self.entries}
        rest = tuple(e for e in other.entries if (e.species.formula, e.species.charge) not in mine)
        return FormationTable(self.entries + rest, f"{self.name} + {other.name}")

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
            raise MissingSpecies(
                f"no formation enthalpy for {name}{hint} in {self.name or 'the table'}; check the "
                "formula, charge and phase, or give your own cited row (a CSV with species, "
                "phase, dHf_kJ_per_mol, u_kJ_per_mol, source)"
            )
        phases = ", ".join(format_species(e.species) for e in found)
        raise InputError(f"{name} is listed in more than one phase ({phases}); add the phase")

    def resolve(self, readings: list[Species]) -> Species | None:
        """Pick the one reading of an ambiguous species ('Ca2+', 'NH4+') that the table holds."""
        known = [r for r in readings if self._matches(r)]
        return known[0] if len(known) == 1 else None


def _row_error(where: str, i: int, what: str) -> InputError:
    return InputError(f"{where}: row {i}: {what}")


def _parse_table(text: str, where: str, *, user: bool = False) -> FormationTable:
    """Read a formation-enthalpy CSV (the packaged tables and a user's, one code path).

    A user's rows must each give a finite value, a positive finite standard uncertainty and a
    source; any bad row is refused with its number and what is wrong."""
    lines = [line for line in io.StringIO(text) if line.strip() and not line.startswith("#")]
    rows = csv.DictReader(lines)
    missing = [c for c in COLUMNS if c not in (rows.fieldnames or [])]
    if missing:
        raise InputError(
            f"{where}: missing column(s) {', '.join(missing)}; a formation-enthalpy table needs "
            f"the columns {', '.join(COLUMNS)}"
        )
    entries: list[FormationEntry] = []
    seen: dict[tuple[str, int, str | None], int] = {}
    for i, row in enumerate(rows, start=1):
        if None in row or any(row.get(c) is None for c in COLUMNS):
            raise _row_error(
                where, i, f"needs exactly the {len(COLUMNS)} columns {', '.join(COLUMNS)}"
            )
        phase = row["phase"].strip()
        if phase not in PHASES:
            raise _row_error(where, i, f"phase {phase!r} is not one of {', '.join(PHASES)}")
        try:
            # Canonical text: a bare sign is a charge of ±1 (NH4+), larger charges use ^ (Ca^2+).
            sp = parse_species(f"{row['species'].strip()}({PHASES[phase]})")[0]
        except InputError as exc:
            raise _row_error(where, i, f"species {row['species']!r}: {exc}") from None
        try:
            value, u = float(row["dHf_kJ_per_mol"]), float(row["u_kJ_per_mol"])
        except ValueError:
            raise _row_error(
                where, i, "dHf_kJ_per_mol and u_kJ_per_mol must be numbers (kJ/mol)"
            ) from None
        if not math.isfinite(value):
            raise _row_error(where, i, f"dHf_kJ_per_mol must be a finite number, got {value}")
        if not (math.isfinite(u) and u >= 0) or (user and u == 0):
            raise _row_error(
                where,
                i,
                f"u_kJ_per_mol must be a {'positive' if user else 'non-negative'} "
                f"standard uncertainty, got {row['u_kJ_per_mol']!r}",
            )
        source = row["source"].strip()
        if not source:
            raise _row_error(where, i, "source is empty; say where the value comes from")
        key = (sp.formula, sp.charge, sp.phase)
        if key in seen:
            raise _row_error(where, i, f"{format_species(sp)} repeats row {seen[key]}")
        seen[key] = i
        entries.append(FormationEntry(sp, value, u, source))
    if user and not entries:
        raise InputError(f"{where}: no rows; give at least one species")
    return FormationTable(tuple(entries), where)


@cache
def formation_table(compilation: str = DEFAULT_COMPILATION) -> FormationTable:
    """A packaged table of standard enthalpies of formation (read once): NBS 1982 by default,
    ``"codata1989"`` for the labelled alternative."""
    if compilation not in COMPILATIONS:
        raise InputError(
            f"unknown compilation {compilation!r}; use one of {', '.join(COMPILATIONS)}"
        )
    name = COMPILATIONS[compilation]
    text = resources.files("heatlog").joinpath("data", name).read_text("utf-8")
    return replace(_parse_table(text, name), name=f"{compilation} ({name})")


def read_formation_table(text: str, where: str) -> FormationTable:
    """A user's table from CSV text (pure): every row needs a positive u and a source."""
    return _parse_table(text, where, user=True)


def load_formation_table(
    path: str | Path | None, compilation: str = DEFAULT_COMPILATION
) -> FormationTable:
    """The one loader for a user's rows: ``path`` (a CSV with the columns of
    :data:`COLUMNS`) in front of the packaged compilation; without a path, the compilation."""
    base = formation_table(compilation)
    if path is None:
        return base
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"{p}: no such formation-enthalpy table") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{p}: cannot read the formation-enthalpy table ({exc})") from None
    return read_formation_table(text, str(p)).before(base)


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
            "U_difference": 2.0 * self.u_difference,
            "coverage_factor": 2.0,
            "z": self.z,
            "verdict": self.verdict,
            "uncertainty_convention": "u_* standard uncertainties (k = 1); U_* expanded, k = 2",
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
