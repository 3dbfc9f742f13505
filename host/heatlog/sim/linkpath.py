"""Where ``heatlog sim --link PATH`` puts its symlink: never over a user's file.

:func:`claim_link_path` checks PATH before anything is created: an existing file, folder or
foreign symlink is refused (the simulator must never replace what a user keeps there); only a
dangling symlink into ``/dev/`` (left by a simulator that was killed) is cleared. A missing or
unwritable folder is one clear line. :func:`make_link` makes the symlink with the same care.
"""

from __future__ import annotations

import os
from pathlib import Path

from heatlog.errors import InputError


def _stale_sim_link(p: Path) -> bool:
    """A symlink into /dev/ whose target is gone: what a killed simulator leaves behind."""
    try:
        target = os.readlink(p)
    except OSError:
        return False
    return target.startswith("/dev/") and not p.exists()


def claim_link_path(link_path: str | os.PathLike[str]) -> Path:
    """Check that the link can be made at ``link_path`` without replacing anything."""
    p = Path(link_path)
    if p.is_symlink():
        if not _stale_sim_link(p):
            raise InputError(f"{p} exists; choose another path for --link")
    elif p.exists():
        raise InputError(f"{p} exists; choose another path for --link")
    parent = p.parent
    if not parent.exists():
        raise InputError(
            f"{p}: the folder {parent} does not exist; create it or choose another path"
        )
    if not parent.is_dir():
        raise InputError(f"{p}: {parent} is not a folder; choose another path for --link")
    if not os.access(parent, os.W_OK):
        raise InputError(f"{p}: cannot write in {parent}; choose another path for --link")
    return p


def make_link(link_path: str | os.PathLike[str], port: str) -> Path:
    """Symlink ``link_path`` → ``port`` after :func:`claim_link_path`; one line on failure."""
    p = claim_link_path(link_path)
    if p.is_symlink():  # a stale simulator link, checked above
        p.unlink()
    try:
        p.symlink_to(port)
    except FileExistsError:
        raise InputError(f"{p} exists; choose another path for --link") from None
    except OSError as exc:
        raise InputError(
            f"{p}: cannot make the link ({exc.strerror or exc}); choose another path"
        ) from None
    return p
