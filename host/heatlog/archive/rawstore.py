"""The archive's own copy of every raw file, content-addressed by SHA-256 beside the SQLite file.

``<archive>.raw/<first two hex digits>/<sha256>`` holds the exact bytes of each imported or
pulled log (and each run file's log CSV), written once, read-only. A run whose original file
was moved or deleted (a project folder moved to another disk) is then still read, from the copy,
and verified against the same recorded SHA-256 as always; the original path stays on record for
provenance. Writing is atomic (a temporary file renamed into place), so a killed import leaves
either no copy or a whole one.
"""

from __future__ import annotations

import os
import stat
import tempfile
from pathlib import Path

from heatlog.archive.rawfiles import sha256_bytes


def store_dir(db_path: str | Path) -> Path:
    """The folder of copies for the archive at ``db_path``."""
    p = Path(db_path)
    return p.with_name(p.name + ".raw")


def copy_path(db_path: str | Path, sha256: str) -> Path:
    return store_dir(db_path) / sha256[:2] / sha256


def keep(db_path: str | Path, data: bytes, sha256: str) -> Path:
    """Store ``data`` under its SHA-256 (checked here) unless a whole copy is already there."""
    if sha256_bytes(data) != sha256:
        raise ValueError("raw store: the bytes do not match the SHA-256 they are filed under")
    target = copy_path(db_path, sha256)
    if target.is_file() and target.stat().st_size == len(data):
        return target
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=".incoming-")
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(tmp, stat.S_IREAD | stat.S_IRGRP | stat.S_IROTH)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target


def stored(db_path: str | Path, sha256: str) -> Path | None:
    """The archive's copy of the file with this SHA-256, if it holds one."""
    target = copy_path(db_path, sha256)
    return target if target.is_file() else None
