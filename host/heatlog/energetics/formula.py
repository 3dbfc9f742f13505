"""Chemical formulas, species and reaction equations as text, parsed into exact compositions.

Grammar (what :func:`parse_reaction` accepts)::

    reaction := side ARROW side            ARROW: ->  →  =>  =
    side     := term ( " + " term )*       terms are separated by a plus with blanks around it
    term     := [coefficient] species      coefficient: 2, 0.5, 3/2 (a blank after it is optional)
    species  := formula [charge] [phase]
    formula  := part ( HYDRATE_DOT [n] part )*    dots: ·  •  *  .   e.g. CH3COONa·3H2O
    part     := ( Element [count] | "(" part ")" [count] | "[" part "]" [count] )+
    charge   := "+" | "-" | "++" | "--" | "^" [n] sign | " " n sign | "(" n sign ")"
    phase    := "(s)" | "(cr)" | "(l)" | "(g)" | "(aq)"

A bare digit before a sign ("Ca2+", "SO42-", "NH4+") is ambiguous: it could be a count or the
charge. :func:`parse_species` returns the readings and the caller (the formation table) keeps
the one it knows; write "Ca^2+" or "SO4 2-" to say it outright. Compositions are exact
(:class:`fractions.Fraction` coefficients), so balance checks have no rounding slack.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field
from fractions import Fraction

from chemicals.elements import periodic_table

from heatlog.errors import InputError

PHASES = {"s": "s", "cr": "s", "l": "l", "g": "g", "aq": "aq"}
_HYDRATE_DOTS = "·•*."
_ARROWS = ("->", "→", "=>", "=")
_PHASE_RE = re.compile(r"\((s|cr|l|g|aq)\)\s*$")
_SUBSCRIPTS = str.maketrans("₀₁₂₃₄₅₆₇₈₉", "0123456789")
_SUPERSCRIPTS = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁺⁻", "0123456789+-")
_SUPERSCRIPT_RUN = re.compile("[⁰¹²³⁴⁵⁶⁷⁸⁹⁺⁻]+")
_COEFF_RE = re.compile(r"^\s*([0-9]+/[0-9]+|[0-9]+(?:\.[0-9]+)?)\s*(?=[A-Z(\[])")


@dataclass(frozen=True)
class Species:
    """A chemical species: formula text (normalised), charge and phase (None when not given)."""

    formula: str
    charge: int = 0
    phase: str | None = None
    composition: tuple[tuple[str, int], ...] = field(default=(), compare=False)

    @property
    def atoms(self) -> dict[str, int]:
        return dict(self.composition)

    @property
    def molar_mass(self) -> float:
        """Molar mass in g/mol from the standard atomic weights (``chemicals`` package)."""
        return sum(periodic_table[el].MW * n for el, n in self.composition)

    def __str__(self) -> str:
        return format_species(self)


@dataclass(frozen=True)
class Term:
    coefficient: Fraction
    species: Species


@dataclass(frozen=True)
class Reaction:
    reactants: tuple[Term, ...]
    products: tuple[Term, ...]

    def signed_terms(self) -> list[tuple[Fraction, Species]]:
        """Stoichiometric numbers ν: negative for reactants, positive for products."""
        return [(-t.coefficient, t.species) for t in self.reactants] + [
            (t.coefficient, t.species) for t in self.products
        ]

    def reactant_coefficients(self) -> dict[str, float]:
        """Reactants' stoichiometric coefficients keyed by species text, for
        :func:`heatlog.energetics.heat.limiting_reagent`."""
        out: dict[str, float] = {}
        for t in self.reactants:
            key = format_species(t.species)
            out[key] = out.get(key, 0.0) + float(t.coefficient)
        return out

    def __str__(self) -> str:
        return format_reaction(self)


def _charge_text(z: int) -> str:
    if z == 0:
        return ""
    sign = "+" if z > 0 else "-"
    return sign if abs(z) == 1 else f"^{abs(z)}{sign}"


def format_species(s: Species) -> str:
    """The canonical text of a species: ``Ca^2+(aq)``, ``Na+(aq)``, ``CH3COONa·3H2O(s)``."""
    return f"{s.formula}{_charge_text(s.charge)}" + (f"({s.phase})" if s.phase else "")


def _format_coefficient(c: Fraction) -> str:
    return str(c.numerator) if c.denominator == 1 else f"{c.numerator}/{c.denominator}"


def format_reaction(r: Reaction) -> str:
    def side(terms: tuple[Term, ...]) -> str:
        return " + ".join(
            (f"{_format_coefficient(t.coefficient)} " if t.coefficient != 1 else "")
            + format_species(t.species)
            for t in terms
        )

    return f"{side(r.reactants)} -> {side(r.products)}"


class _FormulaParser:
    """Recursive descent over one hydrate part, e.g. ``Ca(OH)2`` or ``CO(NH2)2``."""

    def __init__(self, text: str, whole: str) -> None:
        self.text = text
        self.whole = whole
        self.pos = 0

    def fail(self, what: str) -> InputError:
        return InputError(
            f"cannot read formula {self.whole!r}: {what} at position {self.pos + 1}; "
            "write formulas like NaCl, Ca(OH)2 or CuSO4·5H2O"
        )

    def count(self) -> int:
        m = re.match(r"[0-9]+", self.text[self.pos :])
        if not m:
            return 1
        self.pos += m.end()
        n = int(m.group())
        if n == 0:
            raise self.fail("a zero count")
        return n

    def group(self, closing: str | None) -> Counter[str]:
        atoms: Counter[str] = Counter()
        while self.pos < len(self.text):
            ch = self.text[self.pos]
            if ch in "([":
                self.pos += 1
                inner = self.group(")" if ch == "(" else "]")
                n = self.count()
                for el, k in inner.items():
                    atoms[el] += k * n
            elif ch in ")]":
                if ch != closing:
                    raise self.fail(f"an unmatched {ch!r}")
                self.pos += 1
                if not atoms:
                    raise self.fail("empty brackets")
                return atoms
            elif "A" <= ch <= "Z":
                m = re.match(r"[A-Z][a-z]?", self.text[self.pos :])
                assert m is not None
                symbol = m.group()
                if symbol not in periodic_table:
                    raise self.fail(f"unknown element {symbol!r}")
                self.pos += m.end()
                atoms[symbol] += self.count()
            else:
                raise self.fail(f"unexpected {ch!r}")
        if closing is not None:
            raise self.fail(f"a missing {closing!r}")
        return atoms


def parse_formula(text: str) -> tuple[str, tuple[tuple[str, int], ...]]:
    """Normalised formula text and its composition (element, count) sorted by symbol.

    Hydrate dots (·, •, *, .) become ``·``; a number right after a dot multiplies that part.
    """
    raw = text.strip()
    if not raw:
        raise InputError("empty formula; write a species such as NaCl(s) or Na+(aq)")
    parts = re.split(r"\s*[" + re.escape(_HYDRATE_DOTS) + r"]\s*", raw)
    total: Counter[str] = Counter()
    norm_parts = []
    for i, part in enumerate(parts):
        m = re.match(r"([0-9]+)\s*", part) if i > 0 else None
        mult = int(m.group(1)) if m else 1
        body = part[m.end() :] if m else part
        if not body or mult == 0:
            raise InputError(f"cannot read formula {raw!r}: an empty or zero hydrate part")
        atoms = _FormulaParser(body, raw).group(None)
        for el, k in atoms.items():
            total[el] += k * mult
        norm_parts.append((f"{mult}" if m else "") + body)
    return "·".join(norm_parts), tuple(sorted(total.items()))


def _species(formula_text: str, charge: int, phase: str | None) -> Species:
    formula, comp = parse_formula(formula_text)
    return Species(formula, charge, phase, comp)


def normalise(text: str) -> str:
    """Typeset input to plain text: subscript digits, superscript charges (SO₄²⁻ → SO4^2-), and
    the minus sign U+2212."""
    out = text.translate(_SUBSCRIPTS).replace("\u2212", "-")
    return _SUPERSCRIPT_RUN.sub(lambda m: "^" + m.group().translate(_SUPERSCRIPTS), out)


def parse_species(text: str) -> list[Species]:
    """Every reading of a species text; more than one only for a bare digit before a sign.

    Raises :class:`InputError` when no reading is a valid formula.
    """
    s = normalise(text).strip()
    phase = None
    m = _PHASE_RE.search(s)
    if m:
        phase = PHASES[m.group(1)]
        s = s[: m.start()].rstrip()
    if not s:
        raise InputError(f"cannot read species {text!r}: no formula before the phase")

    explicit = (
        re.fullmatch(r"(?P<f>.+?)\s*\^\s*(?P<n>[0-9]*)(?P<s>[+-])", s)
        or re.fullmatch(r"(?P<f>.+?)\s*\^\s*(?P<s>[+-])(?P<n>[0-9]+)", s)
        or re.fullmatch(r"(?P<f>.+?)\s*\((?P<n>[0-9]*)(?P<s>[+-])\)", s)
        or re.fullmatch(r"(?P<f>.+?)\s+(?P<n>[0-9]+)(?P<s>[+-])", s)
    )
    if explicit:
        n = int(explicit.group("n") or 1)
        if n == 0:
            raise InputError(f"cannot read species {text!r}: a zero charge written with a sign")
        z = n if explicit.group("s") == "+" else -n
        return [_species(explicit.group("f"), z, phase)]

    signs = re.search(r"(\++|-+)$", s)
    if not signs:
        return [_species(s, 0, phase)]
    core = s[: signs.start()]
    z = len(signs.group()) * (1 if signs.group()[0] == "+" else -1)
    readings = []
    errors = []
    # "NH4+" (count 4, charge +1) and "Ca2+" (charge 2+) look alike: offer both readings.
    digits = re.search(r"[0-9]+$", core)
    splits = [0]
    if digits and len(signs.group()) == 1:
        splits += [k for k in range(1, len(digits.group()) + 1)]
    for k in splits:
        formula_text = core[: len(core) - k] if k else core
        charge = int(core[len(core) - k :]) * z if k else z
        try:
            readings.append(_species(formula_text, charge, phase))
        except InputError as exc:
            errors.append(exc)
    if not readings:
        raise errors[0]
    return readings


def _parse_side(text: str, where: str) -> list[tuple[Fraction, list[Species]]]:
    if not text.strip():
        raise InputError(f"the {where} side of the reaction is empty; write 'A + B -> C'")
    terms = []
    for chunk in re.split(r"\s+\+\s+", text.strip()):
        m = _COEFF_RE.match(chunk)
        coeff = Fraction(m.group(1)) if m else Fraction(1)
        if coeff <= 0:
            raise InputError(f"coefficient in {chunk.strip()!r} must be positive")
        terms.append((coeff, parse_species(chunk[m.end() :] if m else chunk)))
    return terms


def split_reaction(text: str) -> tuple[str, str]:
    """Split a reaction at its arrow; raises :class:`InputError` without exactly one arrow."""
    for arrow in _ARROWS:
        if arrow in text:
            left, _, right = text.partition(arrow)
            if arrow in right:
                raise InputError(f"reaction {text!r} has more than one {arrow!r}")
            return left, right
    raise InputError(
        f"reaction {text!r} has no arrow; write it like 'NH4NO3(s) -> NH4+(aq) + NO3-(aq)'"
    )


Resolver = Callable[[list[Species]], Species | None]


def parse_reaction(text: str, resolve: Resolver | None = None) -> Reaction:
    """Parse a reaction equation; ``resolve(readings)`` picks one reading of an ambiguous species.

    Without ``resolve`` an ambiguous species ("Ca2+") raises :class:`InputError` asking for the
    explicit form. The result is not yet checked for balance: see :func:`check_balance`.
    """
    left, right = split_reaction(normalise(text))
    sides = []
    for part, where in ((left, "left"), (right, "right")):
        terms = []
        for coeff, readings in _parse_side(part, where):
            pick = readings[0] if len(readings) == 1 else (resolve(readings) if resolve else None)
            if pick is None:
                options = " or ".join(format_species(r) for r in readings)
                raise InputError(
                    f"species could be read as {options}; write the charge with ^ (e.g. Ca^2+)"
                )
            terms.append(Term(coeff, pick))
        sides.append(tuple(terms))
    return Reaction(sides[0], sides[1])


def imbalance(reaction: Reaction) -> tuple[dict[str, Fraction], Fraction]:
    """Net element counts and net charge (products minus reactants); all zero when balanced."""
    net: dict[str, Fraction] = {}
    charge = Fraction(0)
    for nu, sp in reaction.signed_terms():
        for el, k in sp.composition:
            net[el] = net.get(el, Fraction(0)) + nu * k
        charge += nu * sp.charge
    return {el: v for el, v in net.items() if v != 0}, charge


def check_balance(reaction: Reaction) -> None:
    """Raise :class:`InputError` naming each element and the charge that do not balance."""
    elements, charge = imbalance(reaction)
    if not elements and charge == 0:
        return
    problems = [
        f"{el} {'+' if v > 0 else '-'}{_format_coefficient(abs(v))}"
        for el, v in sorted(elements.items())
    ]
    if charge != 0:
        problems.append(f"charge {'+' if charge > 0 else '-'}{_format_coefficient(abs(charge))}")
    raise InputError(
        f"reaction {format_reaction(reaction)!r} does not balance (products minus reactants: "
        f"{', '.join(problems)}); fix the coefficients or formulas"
    )
