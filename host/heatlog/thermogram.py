"""A thermogram: one temperature time series (plus optional extra channels) and its metadata.

:class:`Thermogram` is what the reduction works on. :func:`read_thermogram_csv` is the import
from a headed CSV file: numeric columns go through :func:`heatlog.csvtable.read_columns`; an
ISO-8601 time column (``--iso-time``) is parsed here with the standard library and turned into
seconds from the first row.
"""

from __future__ import annotations

import csv
import io
import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np

from heatlog.csvtable import read_table
from heatlog.errors import InputError
from heatlog.inputgate import gate_series

#: Columns read, when present, as probe-fault flags (non-zero = fault) for a thermogram CSV.
FLAG_COLUMNS = ("flags", "flag", "status", "fault")

#: Fewest rows a thermogram may have: fore-period, main period and after-period need a few each.
MIN_ROWS = 8


@dataclass(frozen=True)
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
        t = np.ascontiguousarray(self.time_s, dtype=np.float64)
        y = np.ascontiguousarray(self.temp_C, dtype=np.float64)
        object.__setattr__(self, "time_s", t)
        object.__setattr__(self, "temp_C", y)
        object.__setattr__(
            self,
            "channels",
            {k: np.ascontiguousarray(v, dtype=np.float64) for k, v in self.channels.items()},
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
    for name, arr in (("time", time_s), ("temperature", temp_C)):
        bad = ~np.isfinite(arr)
        if bad.any():
            raise InputError(
                f"{where}: {name} holds a non-finite value (NaN or inf) in data row "
                f"{int(np.argmax(bad)) + 1}"
            )
    step = np.diff(time_s)
    if (step <= 0).any():
        i = int(np.argmax(step <= 0))
        raise InputError(
            f"{where}: time must increase strictly from row to row; data row {i + 2} "
            f"({time_s[i + 1]:g} s) does not come after row {i + 1} ({time_s[i]:g} s); "
            "sort the file or remove repeated rows"
        )


def _parse_iso(cell: str, row: int, where: str) -> float:
    text = cell.strip()
    if text.endswith(("Z", "z")):
        text = text[:-1] + "+00:00"
    try:
        stamp = datetime.fromisoformat(text)
    except ValueError:
        raise InputError(
            f"{where}: data row {row}: {cell.strip()!r} is not an ISO-8601 time "
            "such as 2026-03-01T10:15:00"
        ) from None
    if stamp.tzinfo is None:
        stamp = stamp.replace(tzinfo=UTC)
    return stamp.timestamp()


def _read_iso_time(
    path: Path, time_col: str, temp_col: str, channels: Sequence[str]
) -> dict[str, np.ndarray]:
    where = str(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError(f"{where}: no such file") from None
    except (IsADirectoryError, UnicodeDecodeError, OSError):
        raise InputError(f"{where}: cannot read it as a UTF-8 text file") from None
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise InputError(f"{where}: the file is empty; expected a header row such as 'time,temp_C'")
    try:
        delimiter = csv.Sniffer().sniff(lines[0], delimiters=",;\t").delimiter
    except csv.Error:
        delimiter = ","
    rows = list(csv.reader(io.StringIO("\n".join(lines)), delimiter=delimiter))
    header = [h.strip().lower() for h in rows[0]]
    wanted = [time_col, temp_col, *channels]
    missing = [c for c in wanted if c.lower() not in header]
    if missing:
        raise InputError(
            f"{where}: missing column(s) {', '.join(repr(m) for m in missing)}; "
            f"the header has {', '.join(repr(h) for h in rows[0])}"
        )
    idx = [header.index(c.lower()) for c in wanted]
    out: dict[str, list[float]] = {c: [] for c in wanted}
    for r, row in enumerate(rows[1:], start=1):
        if len(row) <= max(idx):
            raise InputError(f"{where}: data row {r} has too few cells")
        out[time_col].append(_parse_iso(row[idx[0]], r, where))
        for c, j in zip(wanted[1:], idx[1:], strict=True):
            try:
                value = float(row[j])
            except ValueError:
                raise InputError(
                    f"{where}: data row {r}, column {c!r}: {row[j]!r} is not a number"
                ) from None
            if not np.isfinite(value):
                raise InputError(
                    f"{where}: column {c!r} holds a non-finite value (NaN or inf) in data row {r}"
                )
            out[c].append(value)
    if not out[time_col]:
        raise InputError(f"{where}: the header has no data rows below it")
    arrays = {c: np.asarray(v, dtype=np.float64) for c, v in out.items()}
    arrays[time_col] = arrays[time_col] - arrays[time_col][0]
    return arrays


def read_thermogram_csv(
    path: str | os.PathLike[str],
    time_col: str = "time_s",
    temp_col: str = "temp_C",
    channels: Sequence[str] = (),
    iso_time: bool = False,
) -> Thermogram:
    """Read a headed CSV file into a :class:`Thermogram`.

    ``time_col`` holds seconds (any origin), or ISO-8601 timestamps when ``iso_time`` is true
    (naive stamps are taken as UTC; the result counts seconds from the first row). Extra
    ``channels`` are read on the same rows. Bad files raise :class:`InputError` with one line.
    """
    p = Path(path)
    if iso_time:
        cols = _read_iso_time(p, time_col, temp_col, channels)
        table = None
    else:
        table = read_table(
            p,
            [time_col, temp_col, *channels],
            optional=[c for c in FLAG_COLUMNS if c not in (time_col, temp_col, *channels)],
            what="thermogram",
            clock_col=time_col,
        )
        cols = table.columns
    lookup = {k.lower(): v for k, v in cols.items()}
    units = {} if table is None else {k.lower(): v for k, v in table.units.items()}
    flag_col = next((c for c in FLAG_COLUMNS if c in lookup), None) if table else None
    gated = gate_series(
        lookup[time_col.lower()],
        lookup[temp_col.lower()],
        where=str(p),
        kind="thermogram",
        time_name=time_col,
        temp_name=temp_col,
        time_unit=units.get(time_col.lower(), ""),
        temp_unit=units.get(temp_col.lower(), ""),
        lines=None if table is None else table.line_numbers,
        channels={c: lookup[c.lower()] for c in channels},
        channel_units={c: units.get(c.lower(), "") for c in channels},
        temperature_channels=[c for c in channels if c.lower().endswith(("_c", "temp"))],
        flags=None if flag_col is None else lookup[flag_col],
        notes=() if table is None else table.notes,
    )
    return Thermogram(
        time_s=gated.time_s,
        temp_C=gated.temp_C,
        channels=gated.channels,
        metadata={
            "source": str(p),
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
    p = Path(path)
    optional = [c for c in (env_col, flags_col) if c]
    table = read_table(p, [time_col, temp_col, *optional], what="log", clock_col=time_col)
    lookup = {k.lower(): v for k, v in table.columns.items()}
    units = {k.lower(): v for k, v in table.units.items()}
    gated = gate_series(
        lookup[time_col.lower()],
        lookup[temp_col.lower()],
        where=str(p),
        kind="profile",
        time_name=time_col,
        temp_name=temp_col,
        time_unit=units.get(time_col.lower(), ""),
        temp_unit=units.get(temp_col.lower(), ""),
        lines=table.line_numbers,
        channels={c: lookup[c.lower()] for c in optional},
        channel_units={c: units.get(c.lower(), "") for c in optional},
        temperature_channels=[env_col] if env_col else [],
        notes=table.notes,
        run_kind=run_kind,
    )
    env = gated.channels[env_col] if env_col else None
    flags = gated.channels[flags_col] if flags_col else None
    return gated.time_s, gated.temp_C, env, flags, gated.findings
