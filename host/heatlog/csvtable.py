"""Numeric CSV tables with a header row, read fast and rejected with one clear line.

Every CSV that heatlog reads (calibration points, thermograms) goes through
:func:`read_columns`, so the checks a user relies on (missing columns, text cells, NaN, too few
rows) behave the same everywhere. Parsing is ``numpy.loadtxt`` on the wanted columns only; long
files that are plainly numeric go through pandas' C parser instead (exact, about twice as fast),
and anything it would read differently falls back to ``loadtxt`` and its error messages.
"""

from __future__ import annotations

import csv
import io
import os
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from heatlog.errors import InputError

Source = str | os.PathLike[str] | io.TextIOBase

# Characters decoded up front to find comments and the header; longer files are parsed from disk.
_HEAD_CHARS = 1 << 16


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


def _read_large(path: Path, skip: int, delimiter: str, idx: list[int]) -> np.ndarray | None:
    """Parse a long file with pandas' C parser (about twice as fast as ``numpy.loadtxt``, and
    exact: it rounds decimal text to the nearest double like ``float()``).

    Returns None whenever the file is not plainly numeric (text cells, empty cells, NaN or inf,
    ragged rows), so that the ``numpy.loadtxt`` path below reports the problem in its usual words.
    """
    import pandas as pd

    try:
        frame = pd.read_csv(
            path,
            sep=delimiter,
            header=None,
            skiprows=skip,
            usecols=idx,
            comment="#",
            dtype=np.float64,
            engine="c",
            encoding="utf-8-sig",
            skip_blank_lines=True,
        )
    except (ValueError, pd.errors.ParserError, UnicodeDecodeError):
        return None
    arr = frame[idx].to_numpy(dtype=np.float64)  # columns in the order asked for
    if arr.ndim != 2 or not np.isfinite(arr).all():
        return None
    return arr


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
    matched case-insensitively after stripping blanks. Lines starting with ``#`` are comments.

    Raises :class:`InputError` (one line, says what to fix) for a missing file, an empty file,
    missing columns, non-numeric or empty cells, NaN/inf values and fewer than ``min_rows`` rows.
    """
    path: Path | None = None
    rest_on_disk = False
    if isinstance(source, io.TextIOBase):
        text = source.read()
        where = getattr(source, "name", what)
    else:
        path = Path(source)
        where = str(path)
        try:
            with path.open(encoding="utf-8-sig") as handle:
                text = handle.read(_HEAD_CHARS)
                # Long files: only the head is decoded here; numpy.loadtxt reads the rows from
                # the file itself below (twice as fast as from an in-memory string).
                rest_on_disk = len(text) == _HEAD_CHARS
        except FileNotFoundError:
            raise InputError(f"{where}: no such file") from None
        except IsADirectoryError:
            raise InputError(f"{where}: is a folder, expected a CSV file") from None
        except UnicodeDecodeError:
            raise InputError(f"{where}: not a UTF-8 text file") from None
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
            text = path.read_text(encoding="utf-8-sig")
        except UnicodeDecodeError:
            raise InputError(f"{where}: not a UTF-8 text file") from None
        return read_columns(
            io.StringIO(text), columns, optional=optional, min_rows=min_rows, what=where
        )
    body = text[pos:]
    if "\r" in body[:4096]:
        body = body.replace("\r\n", "\n").replace("\r", "\n")
    names, delimiter = _read_header(body[:65536], where, columns, optional)
    lookup = {name.lower(): i for i, name in enumerate(names)}

    missing = [c for c in columns if c.lower() not in lookup]
    if missing:
        raise InputError(
            f"{where}: missing column(s) {', '.join(repr(m) for m in missing)}; "
            f"the header has {', '.join(repr(n) for n in names)}"
        )
    wanted = list(columns) + [c for c in optional if c.lower() in lookup]
    idx = [lookup[c.lower()] for c in wanted]

    data_text = body.split("\n", 1)[1] if "\n" in body else ""
    if not rest_on_disk and not data_text.strip():
        raise InputError(f"{where}: the header has no data rows below it")
    rows: io.StringIO | Path = io.StringIO(data_text)
    skip = 0
    if rest_on_disk:
        assert path is not None
        rows = path
        skip = text.count("\n", 0, pos) + 1  # comment lines and the header
        fast = _read_large(path, skip, delimiter, idx)
        if fast is not None and fast.shape[0] >= min_rows:
            return {name: np.ascontiguousarray(fast[:, j]) for j, name in enumerate(wanted)}
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
        raise InputError(f"{where}: not a UTF-8 text file") from None
    except ValueError as exc:
        msg = str(exc).splitlines()[0]
        # loadtxt counts rows from the start of the data; add the header and skipped lines.
        raise InputError(
            f"{where}: non-numeric or empty cell ({msg}; row 1 is the first below the header)"
        ) from None

    n = arr.shape[0]
    if n < min_rows:
        raise InputError(f"{where}: need at least {min_rows} data row(s), got {n}")
    bad = ~np.isfinite(arr)
    if bad.any():
        row, col = np.argwhere(bad)[0]
        raise InputError(
            f"{where}: column {wanted[col]!r} holds a non-finite value (NaN or inf) in data row {row + 1}"
        )
    return {name: np.ascontiguousarray(arr[:, j]) for j, name in enumerate(wanted)}
