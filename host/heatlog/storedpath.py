"""Paths written into files that travel between systems: run files and the run archive.

A path is stored relative to the file that names it (a run file's folder, the archive's
folder) with forward slashes, so a project folder moved or copied to another computer, on any
system, still finds its files. Reading accepts either separator: ``logs\\cup.csv`` written on
Windows reads on Linux and macOS, ``logs/cup.csv`` on Windows. Absolute paths (``/data/x``,
``C:\\data\\x``, ``C:/data/x``, ``\\\\server\\share\\x``) are kept as written.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

_WINDOWS_ABSOLUTE = re.compile(r"^(?:[A-Za-z]:[\\/]|\\\\|//)")


def is_absolute(value: str) -> bool:
    """Absolute on some system: POSIX ``/x``, Windows ``C:\\x``/``C:/x``, UNC ``\\\\host\\x``."""
    return value.startswith("/") or bool(_WINDOWS_ABSOLUTE.match(value))


def resolve_stored(value: str, base: Path) -> Path:
    """The path a stored ``value`` means, relative ones taken from ``base``."""
    if is_absolute(value):
        return Path(value)
    parts = [p for p in re.split(r"[\\/]+", value) if p not in ("", ".")]
    return Path(base).joinpath(*parts)


def to_stored(path: str | Path, base: Path) -> str:
    """``path`` as stored: relative to ``base`` with forward slashes when it lies inside
    ``base``'s folder tree, else absolute (forward slashes too)."""
    p = Path(os.path.abspath(path))
    b = Path(os.path.abspath(base))
    try:
        rel = p.relative_to(b)
    except ValueError:
        return p.as_posix()
    return rel.as_posix()
