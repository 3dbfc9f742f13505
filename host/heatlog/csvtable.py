"""Numeric CSV tables with a header row, read fast and rejected with one clear line.

Every CSV that heatlog reads (calibration points, thermograms) goes through
:func:`read_columns`, so the checks a user relies on (missing columns, text cells, NaN, too few
rows) behave the same everywhere. Parsing is ``numpy.loadtxt`` on the wanted columns only (exact:
it rounds decimal text to the nearest double like ``float()``); a long file is read by it straight
from disk, only its head decoded here to find the comments, the header and the delimiter.
"""

from __future__ import annotations

import csv
import io
import os
import re
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from heatlog.clocktext import looks_like_clock, parse_clock_column
from heatlog.errors import InputError
from heatlog.orderstats import all_finite

Source = str | os.PathLike[str] | io.TextIOBase

# Characters decoded up front to find comments and the header; longer files are parsed from disk.
_HEAD_CHARS = 1 << 16


#: A unit written in a header cell: ``temp (°C)``, ``T [K]``, ``time [ms]``, ``time/s``.
_UNIT = re.compile(r"^(.*?)\s*(?:[\(\[]\s*([^\)\]]*?)\s*[\)\]]|/\s*([^/\s]+))\s*$")
#: What a default column name also matches when the header names a unit instead
#: (``time_s`` ↔ ``time [ms]``, ``temp_C`` ↔ ``T [K]``).
_ALIASES = {
    "time_s": ("time", "elapsed", "timestamp", "date", "datetime", "date time", "zeit"),
    "temp_c": ("temp", "temperature", "t", "temp_c", "temperatur"),
}


def split_unit(name: str) -> tuple[str, str]:
    """``'temp (°C)'`` → ``('temp', '°C')``; a name without a unit → ``(name, '')``."""
    m = _UNIT.match(name)
    if m is None or not m.group(1):
        return name, ""
    return m.group(1).strip(), (m.group(2) or m.group(3) or "").strip()


@dataclass(frozen=True, eq=False)
class Table:
    """Columns read by :func:`read_table`, with what the header said about them.

    ``columns`` and ``units`` are keyed by the names asked for; ``headers`` holds the header
    cell each was read from. ``line_numbers()`` gives the file line of every data row (1-based,
    as a text editor counts, comments and blank lines included). ``notes`` are reinterpretations
    made while reading (decimal commas, date-time text), for the input gate to report.
    """

    where: str
    columns: dict[str, np.ndarray]
    units: dict[str, str]
    headers: dict[str, str]
    notes: tuple[str, ...] = ()
    _lines: list[np.ndarray] = field(default_factory=list, repr=False)
    _text: str | None = field(default=None, repr=False)
    _path: str | None = field(default=None, repr=False)
    _header_line: int = 1

    def line_numbers(self) -> np.ndarray:
        if not self._lines:
            text = self._text
            if text is None:
                assert self._path is not None
                text = _read_text(self._path, errors="replace")
            self._lines.append(_data_lines(text, self._header_line))
        return self._lines[0]


def _read_text(path: str, errors: str = "strict") -> str:
    """The whole file as text (UTF-8, a byte-order mark dropped, universal newlines)."""
    with open(path, encoding="utf-8-sig", errors=errors) as handle:
        return handle.read()


def _data_lines(text: str, header_line: int) -> np.ndarray:
    """File line numbers (1-based) of the data rows below the header at ``header_line``."""
    lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    out = [
        i + 1
        for i in range(header_line, len(lines))
        if lines[i].strip() and not lines[i].lstrip().startswith("#")
    ]
    return np.asarray(out, dtype=np.int64)


def _resolve(names: list[str], wanted: Sequence[str]) -> dict[str, int]:
    """Header index of each wanted column: exact name, else the name before a unit, else an alias
    of a default name (``time_s``, ``temp_C``) with the unit in the header."""
    exact = {n.lower(): i for i, n in enumerate(names)}
    base: dict[str, int] = {}
    for i, n in enumerate(names):
        b, unit = split_unit(n)
        if unit:
            base.setdefault(b.lower(), i)
    out = {}
    for c in wanted:
        key = c.lower()
        if key in exact:
            out[c] = exact[key]
        elif key in base:
            out[c] = base[key]
        else:
            hits = [base[a] for a in _ALIASES.get(key, ()) if a in base]
            if key == "time_s":  # a time header often carries no unit (date-time text)
                hits += [exact[a] for a in _ALIASES[key] if a in exact]
            if hits:
                out[c] = hits[0]
    return out


def _bad_cell(
    data_text: str, first_line: int, delimiter: str, idx: list[int], wanted: list[str], where: str
) -> str:
    """The first cell that is not a number, named by its file line (for the error message)."""
    for k, line in enumerate(data_text.split("\n")):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        cells = line.split(delimiter)
        for j, name in zip(idx, wanted, strict=True):
            cell = cells[j].strip() if j < len(cells) else ""
            try:
                float(cell)
            except ValueError:
                shown = repr(cell) if cell else "empty"
                return (
                    f"{where}: line {first_line + k}, column {name!r}: {shown} is not a number "
                    "(non-numeric or empty cell); fix or delete that line"
                )
    return f"{where}: a row has too few or too many cells (non-numeric or empty cell)"


_DECIMAL_COMMA = re.compile(r"(?<![\d.])-?\d+,\d+(?![\d,])")


def _read_header(
    text_head: str, where: str, wanted: Sequence[str], optional: Sequence[str] = ()
) -> tuple[list[str], str]:
    first = text_head.splitlines()[0] if text_head.strip() else ""
    if not first.strip():
        raise InputError(
            f"{where}: the file is empty; expected a header row naming the columns "
            f"{','.join(wanted)}"
            + (f" (and, as needed, {', '.join(optional)})" if optional else "")
            + ", then one row of numbers per line"
        )
    try:
        dialect = csv.Sniffer().sniff(first, delimiters=",;\t")
        delimiter = dialect.delimiter
    except csv.Error:
        delimiter = ","
    names = [name.strip().strip('"').strip("'") for name in first.split(delimiter)]
    return names, delimiter


def read_columns(
    source: Source,
    columns: Sequence[str],
    *,
    optional: Sequence[str] = (),
    min_rows: int = 1,
    what: str = "table",
) -> dict[str, np.ndarray]:
    """Read the named numeric columns of a headed CSV file into float64 arrays.

    ``columns`` must all be present; ``optional`` ones are returned when present. Header names are
    matched case-insensitively after stripping blanks (a unit in the header, ``temp (°C)``, may
    be left out of the name). Lines starting with ``#`` are comments. See :func:`read_table` for
    the units and line numbers.

    Raises :class:`InputError` (one line, says what to fix) for a missing file, an empty file,
    missing columns, non-numeric or empty cells, NaN/inf values and fewer than ``min_rows`` rows.
    """
    return read_table(source, columns, optional=optional, min_rows=min_rows, what=what).columns


def read_table(
    source: Source,
    columns: Sequence[str],
    *,
    optional: Sequence[str] = (),
    min_rows: int = 1,
    what: str = "table",
    clock_col: str | None = None,
    force_clock: bool = False,
) -> Table:
    """:func:`read_columns` with the header's units, the file line of every row and the notes.

    Semicolon- or tab-separated files with decimal commas (``21,5``) are read with the comma as
    the decimal mark. ``clock_col`` may hold date-time text instead of numbers (ISO 8601 or a
    common spreadsheet form, :mod:`heatlog.clocktext`): it is returned as seconds from the first
    row (``force_clock``: it must, even when its first cell looks like a number).
    """
    path: str | None = None
    rest_on_disk = False
    if isinstance(source, io.TextIOBase):
        text = source.read()
        where = getattr(source, "name", what)
    else:
        path = where = os.fspath(source)  # (no pathlib: a few ms of every reduce's start-up)
        try:
            with open(path, encoding="utf-8-sig") as handle:
                text = handle.read(_HEAD_CHARS)
                # Long files: only the head is decoded here; numpy.loadtxt reads the rows from
                # the file itself below (twice as fast as from an in-memory string).
                rest_on_disk = len(text) == _HEAD_CHARS
        except FileNotFoundError:
            raise InputError(f"{where}: no such file") from None
        except IsADirectoryError:
            raise InputError(f"{where}: is a folder, expected a CSV file") from None
        except UnicodeDecodeError:
            raise InputError(
                f"{where}: not a UTF-8 text file; save it as UTF-8 (CSV UTF-8) and try again"
            ) from None
        except OSError as exc:
            raise InputError(f"{where}: cannot read ({exc.strerror})") from None

    # Skip leading comment lines so the header is the first data-bearing line.
    # (scanned line by line from the top, so a long file is not split and joined again)
    pos = 0
    while pos < len(text):
        end = text.find("\n", pos)
        end = len(text) if end < 0 else end
        line = text[pos:end]
        if line.strip() and not line.lstrip().startswith("#"):
            break
        pos = end + 1
    if rest_on_disk and (pos >= len(text) or "\n" not in text[pos:] or "\r" in text):
        # header not within the head, or old Mac line ends: decode the whole file as before
        rest_on_disk = False
        assert path is not None
        try:
            text = _read_text(path)
        except UnicodeDecodeError:
            raise InputError(
                f"{where}: not a UTF-8 text file; save it as UTF-8 (CSV UTF-8) and try again"
            ) from None
        return read_table(
            io.StringIO(text),
            columns,
            optional=optional,
            min_rows=min_rows,
            what=where,
            clock_col=clock_col,
            force_clock=force_clock,
        )
    header_line = text.count("\n", 0, pos) + 1
    body = text[pos:]
    if "\r" in body[:4096]:
        body = body.replace("\r\n", "\n").replace("\r", "\n")
    names, delimiter = _read_header(body[:65536], where, columns, optional)
    found = _resolve(names, [*columns, *optional])

    missing = [c for c in columns if c not in found]
    if missing:
        raise InputError(
            f"{where}: missing column(s) {', '.join(repr(m) for m in missing)}; "
            f"the header has {', '.join(repr(n) for n in names)}"
        )
    wanted = list(columns) + [c for c in optional if c in found]
    idx = [found[c] for c in wanted]
    units = {c: split_unit(names[found[c]])[1] for c in wanted}
    headers = {c: names[found[c]] for c in wanted}
    notes: list[str] = []

    data_text = body.split("\n", 1)[1] if "\n" in body else ""
    if not rest_on_disk and not data_text.strip():
        raise InputError(f"{where}: the header has no data rows below it")
    first_row = data_text[: data_text.find("\n")] if "\n" in data_text else data_text
    decimal_comma = delimiter != "," and bool(_DECIMAL_COMMA.search(data_text[:65536]))
    clock_j = wanted.index(clock_col) if clock_col is not None and clock_col in wanted else None
    clock_cell = ""
    if clock_j is not None:
        cells = first_row.split(delimiter)
        clock_cell = cells[idx[clock_j]] if idx[clock_j] < len(cells) else ""
    clock = clock_j is not None and (force_clock or looks_like_clock(clock_cell))
    if (decimal_comma or clock) and rest_on_disk:
        assert path is not None
        return read_table(
            io.StringIO(_read_text(path)),
            columns,
            optional=optional,
            min_rows=min_rows,
            what=where,
            clock_col=clock_col,
            force_clock=force_clock,
        )
    if decimal_comma:
        data_text = data_text.replace(",", ".")
        notes.append(f"decimal commas read as decimal points ({delimiter!r}-separated file)")

    def table(cols: dict[str, np.ndarray]) -> Table:
        return Table(
            where,
            cols,
            units,
            headers,
            tuple(notes),
            _text=None if rest_on_disk else text,
            _path=path,
            _header_line=header_line,
        )

    if clock:
        assert clock_j is not None
        units[wanted[clock_j]] = "s"  # date-time text: seconds by construction
        return table(
            _read_with_clock(
                data_text, header_line + 1, delimiter, idx, wanted, clock_j, where, min_rows, notes
            )
        )

    rows: io.StringIO | str = io.StringIO(data_text)
    skip = 0
    if rest_on_disk:
        assert path is not None
        rows = path
        skip = header_line
    try:
        arr = np.loadtxt(
            rows,
            skiprows=skip,
            encoding="utf-8-sig",
            delimiter=delimiter,
            usecols=idx,
            comments="#",
            dtype=np.float64,
            ndmin=2,
        )
    except UnicodeDecodeError:
        raise InputError(
            f"{where}: not a UTF-8 text file; save it as UTF-8 (CSV UTF-8) and try again"
        ) from None
    except ValueError:
        if rest_on_disk:
            assert path is not None
            full = _read_text(path, errors="replace")
            full = full.replace("\r\n", "\n")
            data_text = full.split("\n", header_line)[-1]
        raise InputError(
            _bad_cell(data_text, header_line + 1, delimiter, idx, wanted, where)
        ) from None

    n = arr.shape[0]
    if n < min_rows:
        raise InputError(f"{where}: need at least {min_rows} data row(s), got {n}")
    # the columns stay views into the parsed block: a copy of each would touch as much fresh
    # memory as the parse itself, and everything downstream reads strided arrays as well
    out = table({name: arr[:, j] for j, name in enumerate(wanted)})
    if not all_finite(arr):
        bad = ~np.isfinite(arr)
        row, col = np.argwhere(bad)[0]
        where_row = out.line_numbers()
        line_no = int(where_row[row]) if row < where_row.size else int(row) + 1
        raise InputError(
            f"{where}: column {wanted[col]!r} holds a non-finite value (NaN or inf) on line "
            f"{line_no}; fix or delete that line"
        )
    return out


def _read_with_clock(
    data_text: str,
    first_line: int,
    delimiter: str,
    idx: list[int],
    wanted: list[str],
    clock_j: int,
    where: str,
    min_rows: int,
    notes: list[str],
) -> dict[str, np.ndarray]:
    """Rows read with the csv module when the time column holds date-time text."""
    cells: list[list[str]] = [[] for _ in wanted]
    lines: list[int] = []
    reader = csv.reader(io.StringIO(data_text), delimiter=delimiter)
    for k, row in enumerate(reader):
        line_no = first_line + k
        if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
            continue
        if len(row) <= max(idx):
            raise InputError(f"{where}: line {line_no} has too few cells; fix or delete it")
        lines.append(line_no)
        for j, i in enumerate(idx):
            cells[j].append(row[i])
    if len(lines) < min_rows:
        raise InputError(f"{where}: need at least {min_rows} data row(s), got {len(lines)}")
    out: dict[str, np.ndarray] = {}
    for j, name in enumerate(wanted):
        if j == clock_j:
            out[name] = parse_clock_column(cells[j], lines, where, name)
            continue
        values = np.empty(len(lines))
        for k, cell in enumerate(cells[j]):
            try:
                values[k] = float(cell)
            except ValueError:
                shown = repr(cell.strip()) if cell.strip() else "empty"
                raise InputError(
                    f"{where}: line {lines[k]}, column {name!r}: {shown} is not a number "
                    "(non-numeric or empty cell); fix or delete that line"
                ) from None
            if not np.isfinite(values[k]):
                raise InputError(
                    f"{where}: column {name!r} holds a non-finite value (NaN or inf) on line "
                    f"{lines[k]}; fix or delete that line"
                )
        out[name] = values
    notes.append(
        f"time column {wanted[clock_j]!r}: date-time text read as seconds from the first row"
    )
    return out
