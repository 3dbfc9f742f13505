"""Raw files under checksum: SHA-256 when a file is recorded, and again on every read."""

from __future__ import annotations

import hashlib
from pathlib import Path

from heatlog.errors import InputError


class ChecksumMismatch(InputError):
    """A raw file's bytes no longer match the SHA-256 the archive recorded for it."""


def sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def read_bytes(
    path: str | Path, what: str = "raw file", missing: str = "check the path and the file name"
) -> bytes:
    """The file's bytes; ``missing`` says what to do when it is not there (a file being added
    needs its path checked, a recorded one restoring)."""
    try:
        return Path(path).read_bytes()
    except FileNotFoundError:
        raise InputError(f"{path}: {what} not found; {missing}") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot read the {what} ({exc.strerror})") from None


def read_verified(path: str | Path, sha256: str, what: str = "raw file") -> bytes:
    """The file's bytes, after checking them against the recorded SHA-256."""
    data = read_bytes(path, what, "the archive recorded it there: restore it, or re-import the run")
    found = sha256_bytes(data)
    if found != sha256:
        raise ChecksumMismatch(
            f"{path}: {what} SHA-256 is {found[:16]}…, the archive recorded {sha256[:16]}…; "
            "the file changed after import — restore the original (e.g. from the pull folder)"
        )
    return data
