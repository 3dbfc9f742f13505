"""A thermogram: one temperature time series (plus optional extra channels) and its metadata.

:class:`Thermogram` is what the reduction works on. :func:`read_thermogram_csv` is the import
from a headed CSV file through :func:`heatlog.csvtable.read_table` (a date-time time column,
ISO 8601 or a spreadsheet form, becomes seconds from the first row) and the input gate
(:func:`heatlog.inputgate.gate_table`), whose findings travel in the metadata.
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from heatlog.csvtable import read_table
from heatlog.errors import InputError
from heatlog.inputgate import gate_table
from heatlog.orderstats import all_finite

#: Columns read, when present, as probe-fault flags (non-zero = fault) for a thermogram CSV.
FLAG_COLUMNS = ("flags", "flag", "status", "fault")

#: Fewest rows a thermogram may have: fore-period, main period and after-period need a few each.
MIN_ROWS = 8


@dataclass(frozen=True, eq=False)
class Thermogram:
    """Times (s, strictly increasing) and temperatures (°C) of one run, plus named extra channels.

    ``channels`` holds further series on the same time base (e.g. ``jacket_C``, ``ambient_C``);
    ``metadata`` holds anything descriptive (source file, board id, probe id, notes).
    """

    time_s: np.ndarray
    temp_C: np.ndarray
    channels: Mapping[str, np.ndarray] = field(default_factory=dict)
    metadata: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        t = np.asarray(self.time_s, dtype=np.float64)
        y = np.asarray(self.temp_C, dtype=np.float64)
        object.__setattr__(self, "time_s", t)
        object.__setattr__(self, "temp_C", y)
        object.__setattr__(
            self,
            "channels",
            {k: np.asarray(v, dtype=np.float64) for k, v in self.channels.items()},
        )
        where = str(self.metadata.get("source", "thermogram"))
        if t.ndim != 1 or y.shape != t.shape:
            raise InputError(f"{where}: time and temperature must be 1-D arrays of equal length")
        for name, ch in self.channels.items():
            if ch.shape != t.shape:
                raise InputError(
                    f"{where}: channel {name!r} has {ch.size} values, time has {t.size}"
                )
        check_thermogram_arrays(t, y, where)

    def __len__(self) -> int:
        return int(self.time_s.size)

    @property
    def duration_s(self) -> float:
        return float(self.time_s[-1] - self.time_s[0])


def check_thermogram_arrays(time_s: np.ndarray, temp_C: np.ndarray, where: str) -> None:
    """Raise :class:`InputError` unless there are enough finite rows with strictly rising time."""
    n = time_s.size
    if n < MIN_ROWS:
        raise InputError(
            f"{where}: need at least {MIN_ROWS} rows for a thermogram "
            f"(fore-period, event, after-period), got {n}"
        )
    later = time_s[1:] > time_s[:-1]  # (no full-size difference array for a clean log)
    rising = bool(later.all())  # a NaN fails every comparison, so it is not rising
    for name, arr in (("time", time_s), ("temperature", temp_C)):
        # rising times are finite when their ends are (a NaN was ruled out just above)
        if name == "time" and rising and math.isfinite(arr[0]) and math.isfinite(arr[-1]):
            continue
        if all_finite(arr):
            continue
        bad = ~np.isfinite(arr)
        if bad.any():
            raise InputError(
                f"{where}: {name} holds a non-finite value (NaN or inf) in data row "
                f"{int(np.argmax(bad)) + 1}"
            )
    if not rising:
        i = int(np.argmin(later))
        raise InputError(
            f"{where}: time must increase strictly from row to row; data row {i + 2} "
            f"({time_s[i + 1]:g} s) does not come after row {i + 1} ({time_s[i]:g} s); "
            "sort the file or remove repeated rows"
        )


def read_thermogram_csv(
    path: str | os.PathLike[str],
    time_col: str = "time_s",
    temp_col: str = "temp_C",
    channels: Sequence[str] = (),
    iso_time: bool = False,
) -> Thermogram:
    """Read a headed CSV file into a :class:`Thermogram`.

    ``time_col`` holds seconds (any origin, or a unit named in the header), or date-time text
    (ISO 8601 or a spreadsheet form; required when ``iso_time`` is true; naive stamps are one
    fixed clock; the result counts seconds from the first row). Extra ``channels`` are read on
    the same rows; a ``flags``/``status``/``fault`` column, when present, marks probe faults.
    Every row passes the input gate; its findings are in ``metadata["findings"]``. Bad files
    raise :class:`InputError` with one line.
    """
    p = os.fspath(path)
    table = read_table(
        p,
        [time_col, temp_col, *channels],
        optional=[c for c in FLAG_COLUMNS if c not in (time_col, temp_col, *channels)],
        what="thermogram",
        clock_col=time_col,
        force_clock=iso_time,  # date-time text is recognised anyway; the flag requires it
    )
    present = {k.lower() for k in table.columns}
    flag_col = next((c for c in FLAG_COLUMNS if c in present), None)
    gated = gate_table(
        table,
        time_col,
        temp_col,
        channels,
        flags_col=flag_col,
        where=p,
        kind="thermogram",
        temperature_channels=[c for c in channels if c.lower().endswith(("_c", "temp"))],
    )
    return Thermogram(
        time_s=gated.time_s,
        temp_C=gated.temp_C,
        channels=gated.channels,
        metadata={
            "source": p,
            "time_col": time_col,
            "temp_col": temp_col,
            "findings": gated.findings,
        },
    )


def read_profile_csv(
    path: str | os.PathLike[str],
    time_col: str = "time_s",
    temp_col: str = "temp_C",
    env_col: str | None = None,
    flags_col: str | None = None,
    run_kind: str = "generic",
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, np.ndarray | None, tuple[Any, ...]]:
    """A long-run log (``heatlog profile FILE``): time, temperature, environment and flags
    columns in file order (clock resets are the profile's to split), past the input gate.
    Returns ``(time_s, temp_C, env_C, flags, findings)``."""
    p = os.fspath(path)
    optional = [c for c in (env_col, flags_col) if c]
    table = read_table(p, [time_col, temp_col, *optional], what="log", clock_col=time_col)
    gated = gate_table(
        table,
        time_col,
        temp_col,
        optional,
        where=p,
        kind="profile",
        temperature_channels=[env_col] if env_col else [],
        run_kind=run_kind,
    )
    env = gated.channels[env_col] if env_col else None
    flags = gated.channels[flags_col] if flags_col else None
    return gated.time_s, gated.temp_C, env, flags, gated.findings
