"""Date-time text in a time column (what other loggers and spreadsheets write) → seconds.

ISO 8601 forms (docs/REFERENCES.md: ISO-8601) are read by :meth:`datetime.fromisoformat`.

:func:`parse_clock_column` turns ISO 8601 stamps (``2026-03-01T10:15:00Z``, ``2026-03-01
10:15:00.5``), common day-first and year-first spreadsheet stamps (``01.03.2026 10:15:00``,
``01/03/2026 10:15``, ``2026/03/01 10:15:00``) and bare clock times (``10:15:00``, a day added
at each midnight) into seconds from the first row. Naive stamps are taken as one fixed clock
(no daylight-saving jumps are guessed). Pure: strings in, an array out; one clear line on failure.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from datetime import UTC, datetime

import numpy as np

from heatlog.errors import InputError

#: Formats tried, in order, after ISO 8601 (strptime codes). A slash date is read day-first unless
#: a first field above 12 shows it is month-first (common practice, no source).
_FORMATS = (
    "%d.%m.%Y %H:%M:%S.%f",
    "%d.%m.%Y %H:%M:%S",
    "%d.%m.%Y %H:%M",
    "%Y/%m/%d %H:%M:%S.%f",
    "%Y/%m/%d %H:%M:%S",
    "%Y/%m/%d %H:%M",
    "%d/%m/%Y %H:%M:%S.%f",
    "%d/%m/%Y %H:%M:%S",
    "%d/%m/%Y %H:%M",
    "%m/%d/%Y %H:%M:%S.%f",
    "%m/%d/%Y %H:%M:%S",
    "%m/%d/%Y %H:%M",
)
_CLOCK = re.compile(r"^(\d{1,2}):(\d{2})(?::(\d{2}(?:[.,]\d+)?))?$")


def looks_like_clock(cell: str) -> bool:
    """True when a cell is not a number but has the shape of a date or a clock time."""
    text = cell.strip().strip('"')
    try:
        float(text.replace(",", "."))
        return False
    except ValueError:
        pass
    return bool(text) and bool(re.match(r"^\d{1,4}[-./:]\d{1,2}", text))


def _iso(text: str) -> float | None:
    t = text[:-1] + "+00:00" if text.endswith(("Z", "z")) else text
    try:
        stamp = datetime.fromisoformat(t)
    except ValueError:
        return None
    if stamp.tzinfo is None:
        stamp = stamp.replace(tzinfo=UTC)
    return stamp.timestamp()


def _with_format(text: str, fmt: str) -> float | None:
    try:
        return datetime.strptime(text, fmt).replace(tzinfo=UTC).timestamp()
    except ValueError:
        return None


def _clock(text: str) -> float | None:
    m = _CLOCK.match(text)
    if m is None:
        return None
    h, mi = int(m.group(1)), int(m.group(2))
    s = float((m.group(3) or "0").replace(",", "."))
    if h > 23 or mi > 59 or s >= 61:
        return None
    return h * 3600.0 + mi * 60.0 + s


def parse_clock_column(
    cells: Sequence[str], lines: Sequence[int], where: str, column: str
) -> np.ndarray:
    """Seconds from the first row for a column of date-time text.

    ``lines`` are the file line numbers of the cells (for the messages). Every cell must be read
    by the same format; the first that is not ends in one line naming it.
    """
    texts = [c.strip().strip('"').strip() for c in cells]
    if not texts:
        raise InputError(f"{where}: the header has no data rows below it")
    parsers = [_iso] + [lambda t, f=f: _with_format(t, f) for f in _FORMATS] + [_clock]
    first = texts[0]
    chosen = None
    fail: tuple[int, object] | None = None
    for parse in parsers:
        if parse(first) is not None:
            values = [parse(t) for t in texts]
            if all(v is not None for v in values):
                chosen = values
                break
            if fail is None:
                bad = next(i for i, v in enumerate(values) if v is None)
                fail = (bad, parse)
    if chosen is None:
        if fail is None:
            raise InputError(
                f"{where}: line {lines[0]}, column {column!r}: {texts[0]!r} is neither a number "
                "nor a date-time such as 2026-03-01T10:15:00 or 01.03.2026 10:15:00"
            )
        bad, _ = fail
        raise InputError(
            f"{where}: line {lines[bad]}, column {column!r}: {texts[bad]!r} does not match the "
            f"date-time format of the first row ({texts[0]!r}); write every time the same way"
        )
    out = np.asarray(chosen, dtype=np.float64)
    if parsers[-1](first) is not None and _iso(first) is None:
        # bare clock times: a step back of more than 12 h is taken as midnight passing
        back = np.diff(out) < -12 * 3600.0
        out = out + 86400.0 * np.concatenate([[0.0], np.cumsum(back)])
    return out - out[0]
