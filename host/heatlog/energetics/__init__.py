"""Energetics: heat capacities, the calorimeter constant, heat, enthalpy and Hess's law.

Pure functions on numbers with standard uncertainties (:class:`heatlog.gum.Input`); each result
is a :class:`heatlog.gum.Budget`. No file or thermogram I/O happens here.

Sign convention: q is the heat taken up by the calorimeter and its contents; the reaction's
ΔH = −q, so an exothermic process has ΔH < 0.
"""

from heatlog.energetics.calorimeter import (
    REFERENCE_PROCESSES,
    ReferenceProcess,
    combine_calibrations,
    electrical_calibration,
    electrical_energy,
    logged_energy,
    mixing_calibration,
    power_energy,
    reaction_calibration,
)
from heatlog.energetics.formula import (
    Reaction,
    Species,
    check_balance,
    format_reaction,
    format_species,
    parse_formula,
    parse_reaction,
    parse_species,
)
from heatlog.energetics.heat import (
    SIGN_CONVENTION,
    Content,
    Limiting,
    heat,
    kirchhoff,
    limiting_reagent,
    molar_enthalpy,
    molar_enthalpy_monte_carlo,
    specific_enthalpy,
)
from heatlog.energetics.hess import (
    Comparison,
    FormationTable,
    compare,
    formation_table,
    reaction,
    reaction_enthalpy,
)
from heatlog.energetics.solution import SOLUTES, given_cp, solution_cp, solution_cp_mass_fraction
from heatlog.energetics.water import water_cp, water_cp_input, water_density

__all__ = [
    "REFERENCE_PROCESSES",
    "SIGN_CONVENTION",
    "SOLUTES",
    "Comparison",
    "Content",
    "FormationTable",
    "Limiting",
    "Reaction",
    "ReferenceProcess",
    "Species",
    "check_balance",
    "combine_calibrations",
    "compare",
    "electrical_calibration",
    "electrical_energy",
    "format_reaction",
    "format_species",
    "formation_table",
    "given_cp",
    "heat",
    "kirchhoff",
    "limiting_reagent",
    "logged_energy",
    "mixing_calibration",
    "molar_enthalpy",
    "molar_enthalpy_monte_carlo",
    "parse_formula",
    "parse_reaction",
    "parse_species",
    "power_energy",
    "reaction",
    "reaction_calibration",
    "reaction_enthalpy",
    "solution_cp",
    "solution_cp_mass_fraction",
    "specific_enthalpy",
    "water_cp",
    "water_cp_input",
    "water_density",
]
