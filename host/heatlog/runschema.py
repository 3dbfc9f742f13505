"""A run file checked as a whole before any of it is used: names, kinds and physical bounds.

:func:`check_run_document` is the run-file side of the input gate (:mod:`heatlog.inputgate`):
every table and key must be one heatlog knows (a misspelt ``[sampel]`` or ``tempcol`` would
otherwise be ignored and a result silently lose its meaning), and the closest known name is
offered; every number must be finite and inside physical bounds (masses, heat capacities,
powers, times positive; uncertainties not negative; nothing so large that arithmetic on it
overflows). :func:`check_run_kind` checks that a run file named as a calibration is one, and
:func:`refuse_profile_for_reduce` sends a long-run file to ``heatlog profile``. Pure: the parsed
TOML in, one :class:`~heatlog.errors.InputError` line out.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import Any

from heatlog.errors import InputError

#: Top-level keys and tables of a run file, and the keys of each table. ``[profile]`` keys are
#: checked by :func:`heatlog.profile.analysis.settings_from_table` (read from there, so the two
#: cannot drift apart); ``[reduce]`` keys by :mod:`heatlog.runfile`.
TOP_LEVEL = {
    "title",
    "notes",
    "log",
    "reduce",
    "calorimeter",
    "contents",
    "electrical",
    "sample",
    "profile",
}
TABLE_KEYS: dict[str, set[str]] = {
    "log": {"file", "time_col", "temp_col", "raw_col", "chain", "probe", "env_col"},
    "calorimeter": {"heat_capacity_J_per_K", "u_heat_capacity_J_per_K", "calibrations"},
    "contents": {"name", "mass_g", "u_mass_g", "cp", "u_cp"},
    "electrical": {
        "power_W",
        "u_power_W",
        "voltage_V",
        "u_voltage_V",
        "current_A",
        "u_current_A",
        "seconds",
        "u_seconds",
        "monitor",
        "bus_col",
        "shunt_col",
        "shunt_ohm",
        "u_shunt_rel",
    },
    "sample": {
        "name",
        "mass_g",
        "u_mass_g",
        "molar_mass_g_per_mol",
        "reaction",
        "formation_table",
        "contents_state",
        "delta_cp_J_per_mol_K",
        "u_delta_cp_J_per_mol_K",
    },
}

#: Plausible magnitudes of a quantity by its unit: (low, high) on |x| (0 always allowed where a
#: quantity may be zero). Beyond them the number is a typing or unit mistake, never a measurement
#: (common practice, no source). A number typed on the command line is checked against them
#: (``inputgate.check_quantity``), and so is a run-file number of that unit (``BOUNDS``).
QUANTITY_BOUNDS: dict[str, tuple[float, float]] = {
    "g": (1e-6, 1e7),
    "W": (1e-9, 1e5),
    "s": (1e-3, 3.2e7),
    "V": (1e-6, 1e4),
    "A": (1e-9, 1e3),
    "K": (1e-6, 1e3),
    "°C": (0.0, 2000.0),
    "J/K": (1e-3, 1e8),
    "J/(g·K)": (1e-2, 100.0),
    "mol": (1e-12, 1e6),
    "J/g": (1e-6, 1e8),
    "J/mol": (1e-6, 1e9),
    "mol/kg": (0.0, 100.0),
}

#: Physical bounds on run-file numbers: (low, high), both included, the unit-typed ones from
#: ``QUANTITY_BOUNDS``: from 1 µg to 10 t of contents, 1 mJ/K to 1e8 J/K, 1 nW to 100 kW, 1 ms
#: to a year of heating, c_p of any liquid or solid between 0.01 and 100 J/(g·K), molar masses
#: from 1 g/mol (hydrogen atom: 1.008 g/mol).
BOUNDS: dict[str, tuple[float, float]] = {
    "mass_g": QUANTITY_BOUNDS["g"],
    "heat_capacity_J_per_K": QUANTITY_BOUNDS["J/K"],
    "cp": QUANTITY_BOUNDS["J/(g·K)"],
    "power_W": QUANTITY_BOUNDS["W"],
    "voltage_V": QUANTITY_BOUNDS["V"],
    "current_A": QUANTITY_BOUNDS["A"],
    "seconds": QUANTITY_BOUNDS["s"],
    "molar_mass_g_per_mol": (1.0, 1e7),
    "sample_mass_g": QUANTITY_BOUNDS["g"],
    "loss_W_per_K": (0.0, 1e5),
    "resolution_K": (0.0, 100.0),
    "event_start_s": (-1e10, 1e10),
    "after_start_s": (-1e10, 1e10),
    "cooling_fit_after_s": (-1e10, 1e10),
    "env_temp_C": (-273.15, 2000.0),
    "threshold_C": (-273.15, 2000.0),
    "band_low_C": (-273.15, 2000.0),
    "band_high_C": (-273.15, 2000.0),
    "datum_C": (-273.15, 2000.0),
    "reference_C": (-273.15, 2000.0),
    "activation_K": (1.0, 1e6),
    "rate_window_s": (1e-3, 1e8),
    "gap_factor": (1.0, 1e6),
}
#: Any other number in a run file must lie within ± this (no arithmetic on it can overflow).
MAX_ABS_NUMBER = 1e12


def closest(name: str, known: Iterable[str]) -> str:
    """' (did you mean 'x'?)' for the closest known name, or '' when nothing is close."""
    import difflib  # only on a misspelt name: the reduce path imports this module

    hits = difflib.get_close_matches(name, sorted(known), n=1, cutoff=0.6)
    if not hits:
        hits = sorted((k for k in known if name.lower() in k.lower()), key=len)[:1]
    return f" (did you mean {hits[0]!r}?)" if hits else ""


def unknown_keys(table: Mapping[str, Any], known: set[str], where: str) -> None:
    """Refuse the first key of ``table`` not in ``known``, naming the closest known one."""
    for key in table:
        if key not in known:
            raise InputError(
                f"{where}: does not know the key {key!r}{closest(key, known)}; "
                f"known keys: {', '.join(sorted(known))}"
            )


def _check_number(key: str, value: Any, where: str) -> None:
    if isinstance(value, bool) or not isinstance(value, int | float):
        return
    v = float(value)
    if not math.isfinite(v) or abs(v) > MAX_ABS_NUMBER and key not in BOUNDS:
        raise InputError(
            f"{where}: {key} = {value!r} is not a usable number; give a finite value in its "
            "unit (check for a typing or unit mistake)"
        )
    if key.startswith("u_"):
        base = key[2:]
        lo, hi = BOUNDS.get(base, (-MAX_ABS_NUMBER, MAX_ABS_NUMBER))
        if v < 0 or v > max(abs(lo), abs(hi)):
            raise InputError(
                f"{where}: {key} = {value!r} is not a standard uncertainty of {base}; it must be "
                "zero or positive and smaller than the largest plausible value"
            )
        return
    if key in BOUNDS:
        lo, hi = BOUNDS[key]
        if not lo <= v <= hi:
            raise InputError(
                f"{where}: {key} = {value!r} is outside what is physically possible here "
                f"({lo:g} … {hi:g}); check its sign and unit"
            )


def check_numbers(table: Mapping[str, Any], where: str) -> None:
    """Every number of a table finite and inside its bounds (see :data:`BOUNDS`)."""
    for key, value in table.items():
        _check_number(key, value, where)


def check_run_document(doc: Mapping[str, Any], where: str) -> None:
    """The whole parsed run file: known tables and keys, numbers finite and in bounds."""
    unknown_keys(doc, TOP_LEVEL, where)
    for name, known in TABLE_KEYS.items():
        value = doc.get(name)
        if value is None:
            continue
        items = value if isinstance(value, list) else [value]
        for i, item in enumerate(items):
            if not isinstance(item, Mapping):
                continue  # the parser says what shape it needs
            w = f"{where} [{name}]" + (f" #{i + 1}" if isinstance(value, list) else "")
            unknown_keys(item, known, w)
            check_numbers(item, w)
    for name in ("reduce", "profile"):
        value = doc.get(name)
        if isinstance(value, Mapping):
            check_numbers(value, f"{where} [{name}]")


def check_profile_keys(table: Mapping[str, Any], known: set[str], where: str) -> None:
    """Unknown ``[profile]`` keys refused with the closest known name."""
    unknown_keys(table, known, f"{where} [profile]")


def refuse_profile_for_reduce(has_profile: bool, where: str) -> None:
    """A run file with a ``[profile]`` table describes a long run: ``reduce`` would treat the
    still-releasing tail as an after-period."""
    if has_profile:
        raise InputError(
            f"{where}: this run file has a [profile] table (a long run); analyse it with "
            f"'heatlog profile {where}', not 'heatlog reduce'"
        )


def refuse_non_calibration(is_calibration: bool, path: str, user: str) -> None:
    """A file listed under ``[calorimeter] calibrations`` must itself calibrate."""
    if not is_calibration:
        raise InputError(
            f"{user}: {path} is listed under [calorimeter] calibrations but is not a "
            "calibration run (it has no [electrical] table); list only calibration run files "
            "there, or give heat_capacity_J_per_K"
        )


#: The calorimeter's own heat capacity against that of its contents: in a cup, flask or Dewar
#: it lies between about 1e-4 (a foam cup) and a few times the contents'; beyond
#: these the number is far more likely a typing or unit mistake (common practice, no source).
CONSTANT_TO_CONTENTS = (1e-4, 10.0)
#: A dissolved or reacted sample heavier than this many times the liquid it goes into.
SAMPLE_TO_CONTENTS = 2.0


def proportion_findings(
    c_cal_J_per_K: float | None, contents_J_per_K: float, contents_g: float, sample_g: float | None
) -> list[tuple[str, str, str]]:
    """(code, message, what to do) for proportions no cup run has: a calorimeter constant far
    above or below its contents' heat capacity, a sample heavier than its liquid. Flags, not
    refusals: unusual set-ups exist, so the result is given and the doubt printed beside it."""
    out = []
    lo, hi = CONSTANT_TO_CONTENTS
    if c_cal_J_per_K is not None and contents_J_per_K > 0:
        ratio = c_cal_J_per_K / contents_J_per_K
        if not lo <= ratio <= hi:
            out.append(
                (
                    "proportions",
                    f"the calorimeter constant ({c_cal_J_per_K:.4g} J/K) is {ratio:.3g} times the "
                    f"contents' heat capacity ({contents_J_per_K:.4g} J/K); cup, flask and Dewar "
                    f"calorimeters lie between {lo:g} and {hi:g}",
                    "check heat_capacity_J_per_K and the contents' masses and units",
                )
            )
    if sample_g is not None and contents_g > 0 and sample_g > SAMPLE_TO_CONTENTS * contents_g:
        out.append(
            (
                "proportions",
                f"the sample ({sample_g:.4g} g) is heavier than {SAMPLE_TO_CONTENTS:g} times the "
                f"contents it goes into ({contents_g:.4g} g)",
                "check the sample's and the contents' masses and units",
            )
        )
    return out
