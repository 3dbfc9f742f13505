"""Specific heat capacity of dilute aqueous salt solutions (Laliberté 2009) or a value you give.

Model (M. Laliberté, J. Chem. Eng. Data 54 (2009) 1725–1760, eqs. for the apparent specific
heat capacity of a solute): with w the solute mass fraction and t in °C,

    c_p = (1 − w)·c_p,water(t) + w·c_p,i,    c_p,i = a1·exp(α) + a5·w^a6,
    α = a2·t + a3·exp(0.01·t) + a4·w          (c_p,i in J/(g·K)).

c_p,water comes from IAPWS-95 (:mod:`heatlog.energetics.water`). The coefficients a1–a6 and each
fit's range (t_min, t_max, w_max) are those of Laliberté's Table, as transcribed in the
``Laliberte2009.tsv`` data file of the ``thermo`` package; the tests check this module against
``thermo``'s own implementation and against the independent Melinder correlations in CoolProp's
INCOMP library.

Uncertainty (common practice, no source): u = u(c_p,water)·(1 − w) + 0.001 J/(g·K)·w/w_max +
f·|c_p,water − c_p|: the water's own IAPWS-95 uncertainty (so at zero concentration the solution
carries exactly pure water's), a model floor growing with concentration, and a share f of the
solute's effect on c_p, with f = 0.03 for NaCl (356 fitted points) and 0.10 for the others. They are set to cover, at k = 2, the spread between the solute effects of Laliberté's
model and Melinder's correlations (CoolProp INCOMP) found in the tests (NaCl 5–40 °C, KCl
25–40 °C, 0.1–1 mol/kg); they are not a published figure.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from heatlog.energetics.formula import parse_formula
from heatlog.energetics.water import water_cp, water_cp_input
from heatlog.errors import InputError, RangeError
from heatlog.gum import Input

SOURCE = (
    "Laliberté, J. Chem. Eng. Data 54 (2009) 1725 (coefficients as in thermo's Laliberte2009.tsv)"
)
_BASE_U = 0.001  # J/(g·K)


@dataclass(frozen=True)
class LaliberteSolute:
    formula: str
    a: tuple[float, float, float, float, float, float]
    t_min_c: float
    t_max_c: float
    w_max: float
    share_u: float = 0.10

    @property
    def molar_mass(self) -> float:
        from chemicals.elements import periodic_table

        return sum(periodic_table[el].MW * n for el, n in parse_formula(self.formula)[1])

    def cp_solute(self, t_c: float, w: float) -> float:
        a1, a2, a3, a4, a5, a6 = self.a
        alpha = a2 * t_c + a3 * math.exp(0.01 * t_c) + a4 * w
        return a1 * math.exp(alpha) + a5 * w**a6


SOLUTES: dict[str, LaliberteSolute] = {
    s.formula: s
    for s in (
        LaliberteSolute(
            "NaCl",
            (
                -0.0693559668993322,
                -0.0782134167486952,
                3.84798479408635,
                -11.2762109247072,
                8.73187698542672,
                1.81245930472755,
            ),
            1.5,
            120.0,
            0.261058295490885,
            share_u=0.03,
        ),  # fmt: skip
        LaliberteSolute(
            "KCl",
            (
                -1.63952917771592,
                -0.00779461704655488,
                0.328422657249137,
                -3.76872441235535,
                0.34049805034805,
                -0.147984783420473,
            ),
            5.0,
            140.0,
            0.257918289574322,
        ),  # fmt: skip
        LaliberteSolute(
            "NH4Cl",
            (
                -0.0001335122407473,
                -0.155637962012773,
                9.8832713843405,
                -12.1193859023825,
                68.3808840262902,
                3.10989254346951,
            ),
            10.0,
            40.0,
            0.141280353271798,
        ),  # fmt: skip
        LaliberteSolute(
            "CaCl2",
            (
                -1.3892271378464,
                -0.0142491341618564,
                0.578247429749066,
                -0.785339471977917,
                4.39895341629224,
                1.12685593623411,
            ),
            25.0,
            100.0,
            0.417752862868998,
        ),  # fmt: skip
        LaliberteSolute(
            "MgCl2",
            (
                -1.34606864033233,
                -0.0185542566558278,
                0.846522211009386,
                -3.54621764242775,
                6.64217196115805,
                3.38082843051388,
            ),
            5.0,
            120.0,
            0.344648430719072,
        ),  # fmt: skip
        LaliberteSolute(
            "LiCl",
            (
                -0.113836281704716,
                -0.0584080777319412,
                2.70787330383205,
                -6.80384597219364,
                -0.153027430922755,
                -0.234095092371243,
            ),
            5.0,
            130.0,
            0.160209376598227,
        ),  # fmt: skip
        LaliberteSolute(
            "NaOH",
            (
                -0.922780764834469,
                -0.0412353462450485,
                1.8722524604359,
                -5.94223565147303,
                3.13007617842649,
                0.141040805508813,
            ),
            4.0,
            120.0,
            0.303470562208185,
        ),  # fmt: skip
        LaliberteSolute(
            "HCl",
            (
                -1.44373411119912,
                -0.0162261453471477,
                0.760145624626369,
                -0.251793704529807,
                -0.0853885966315174,
                -0.37397241015546,
            ),
            5.0,
            130.0,
            0.065074593785499,
        ),  # fmt: skip
        LaliberteSolute(
            "KNO3",
            (
                -0.0231553426998827,
                -0.0942883948914098,
                4.38938623486404,
                -15.696387624444,
                2.25138090262839,
                0.939359066403717,
            ),
            5.0,
            120.0,
            0.199519531745423,
        ),  # fmt: skip
        LaliberteSolute(
            "NaNO3",
            (
                -0.0420888209361667,
                -0.0862083520705012,
                4.04836454348122,
                -8.1584512900783,
                1.57362106214301,
                0.23955967308698,
            ),
            2.0,
            120.0,
            0.459940227674964,
        ),  # fmt: skip
    )
}


def _solute(name: str) -> LaliberteSolute:
    try:
        return SOLUTES[name]
    except KeyError:
        raise InputError(
            f"no heat-capacity model for solute {name!r}; known: {', '.join(SOLUTES)}; "
            "otherwise give a measured c_p with its uncertainty"
        ) from None


def mass_fraction(solute: str, molality_mol_per_kg: float) -> float:
    """Solute mass fraction of a solution of the given molality (mol per kg of water)."""
    if not molality_mol_per_kg >= 0:
        raise InputError(f"molality must be zero or positive, got {molality_mol_per_kg}")
    g = molality_mol_per_kg * _solute(solute).molar_mass  # grams of solute per kg of water
    return g / (1000.0 + g)


def solution_cp_mass_fraction(solute: str, w: float, t_c: float) -> Input:
    """Specific heat capacity (J/(g·K)) of an aqueous solution of solute mass fraction ``w``."""
    s = _solute(solute)
    if not 0.0 <= w <= s.w_max:
        raise RangeError(
            f"{solute} mass fraction {w:.4g} is outside 0–{s.w_max:.3g}, the range of the "
            "Laliberté fit; give a measured c_p instead"
        )
    if not s.t_min_c <= t_c <= s.t_max_c:
        raise RangeError(
            f"{t_c:g} °C is outside {s.t_min_c:g}–{s.t_max_c:g} °C, the range of the Laliberté fit "
            f"for {solute}; give a measured c_p instead"
        )
    cpw = float(water_cp(t_c))
    cp = cpw if w == 0.0 else (1.0 - w) * cpw + w * s.cp_solute(t_c, w)
    u = water_cp_input(t_c).u * (1.0 - w) + _BASE_U * w / s.w_max + s.share_u * abs(cpw - cp)
    return Input(
        cp, u, "J/(g·K)", note=f"{solute}(aq), w = {w:.4g}, {t_c:g} °C; {SOURCE}; u: no source"
    )


def solution_cp(solute: str, molality_mol_per_kg: float, t_c: float) -> Input:
    """Specific heat capacity (J/(g·K)) of ``solute`` at a molality (mol/kg water) and ``t_c``."""
    return solution_cp_mass_fraction(solute, mass_fraction(solute, molality_mol_per_kg), t_c)


def given_cp(value: float, u: float, note: str = "value given by the user") -> Input:
    """A c_p you measured or looked up yourself (J/(g·K)), checked for sense."""
    if not (0.5 <= value <= 5.0):
        raise RangeError(
            f"c_p {value} J/(g·K) is not plausible for an aqueous solution (0.5–5); "
            "check the unit (J/(g·K) expected)"
        )
    if not u >= 0:
        raise InputError(f"uncertainty of c_p must be zero or positive, got {u}")
    return Input(value, u, "J/(g·K)", note=note)
