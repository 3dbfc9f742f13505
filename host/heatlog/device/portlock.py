"""One heatlog process per port, on Windows, macOS and Linux.

Two programs reading one serial port each get part of the board's replies: a ``heatlog watch``
left running elsewhere swallows another command's answer. Every command that talks to a board
first takes the port's lock: a small file per port in a per-user folder (``$HEATLOG_LOCK_DIR``,
else ``<temp>/heatlog-ports-<user>``) created exclusively and holding the holder's pid and
command. A lock whose holder is gone (crash, power cut, kill -9) is stale and taken over. No
POSIX-only module is needed: creation is ``os.open(O_CREAT | O_EXCL)`` everywhere, liveness is
``os.kill(pid, 0)`` on POSIX and ``OpenProcess``/``GetExitCodeProcess`` on Windows.

Ports are named by what they reach: a pty symlink and its target are one port, ``COM3`` and
``com3`` are one port on Windows; ``loop://`` (private to its opener) takes no lock.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import sys
import tempfile
import time
import uuid
from pathlib import Path
from typing import Any

from heatlog.errors import LinkError

LOCK_DIR_ENV = "HEATLOG_LOCK_DIR"
_UNLOCKED_SCHEMES = ("loop://", "spy://loop")  # private to the process that opens them
_YOUNG_S = 2.0  # an unreadable lock younger than this is being written: treat it as held


class PortBusy(LinkError):
    """Another live heatlog process holds the port."""


def lock_dir() -> Path:
    env = os.environ.get(LOCK_DIR_ENV)
    if env:
        return Path(env)
    user = str(os.getuid()) if hasattr(os, "getuid") else os.environ.get("USERNAME", "user")
    return Path(tempfile.gettempdir()) / f"heatlog-ports-{re.sub(r'[^A-Za-z0-9_.-]', '_', user)}"


def port_key(port: str) -> str | None:
    """What identifies the port across processes; None for a port no other process can share."""
    p = port.strip()
    low = p.lower()
    if low.startswith(_UNLOCKED_SCHEMES):
        return None
    if "://" in p:
        return low
    if os.name == "nt":
        name = p.removeprefix("\\\\.\\").removeprefix("//./")
        return name.upper() if re.fullmatch(r"(?i)com\d+", name) else os.path.normcase(p)
    try:
        return os.path.realpath(p)  # a pty symlink and its /dev/pts/N are one port
    except OSError:
        return p


def lock_path(key: str) -> Path:
    slug = re.sub(r"[^A-Za-z0-9]+", "_", key).strip("_")[-40:] or "port"
    return lock_dir() / f"{slug}-{hashlib.sha256(key.encode()).hexdigest()[:12]}.lock"


def pid_alive(pid: int) -> bool:
    """True while a process with this id exists (it may belong to another user)."""
    if pid <= 0:
        return False
    if os.name == "nt":
        import ctypes

        kernel32 = getattr(ctypes, "windll").kernel32  # noqa: B009  (Windows only)
        handle = kernel32.OpenProcess(0x1000, False, pid)  # PROCESS_QUERY_LIMITED_INFORMATION
        if not handle:
            return bool(kernel32.GetLastError() == 5)  # access denied: it exists
        code = ctypes.c_ulong()
        ok = kernel32.GetExitCodeProcess(handle, ctypes.byref(code))
        kernel32.CloseHandle(handle)
        return bool(ok) and code.value == 259  # STILL_ACTIVE
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    except (OSError, OverflowError):
        return False
    return True


def _read(path: Path) -> dict[str, Any] | None:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(data, dict):
        return None
    pid = data.get("pid")
    return data if type(pid) is int and 0 < pid < 2**31 else None  # a damaged pid: unreadable


class PortLock:
    """``PortLock(port).acquire()`` ... ``release()`` (or ``with PortLock(port):``)."""

    def __init__(self, port: str, command: str | None = None):
        self.port = port
        self.key = port_key(port)
        self.path = lock_path(self.key) if self.key is not None else None
        self.command = command or " ".join(["heatlog", *sys.argv[1:3]])
        self.token = uuid.uuid4().hex
        self.held = False

    def acquire(self) -> PortLock:
        if self.path is None or self.held:
            return self
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise LinkError(
                f"cannot create the port-lock folder {self.path.parent} ({exc.strerror}); "
                f"set {LOCK_DIR_ENV} to a writable folder"
            ) from None
        record = {"pid": os.getpid(), "port": self.port, "command": self.command,
                  "since": time.time(), "token": self.token}  # fmt: skip
        for _ in range(5):
            try:
                fd = os.open(self.path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                self._clear_stale_or_refuse()
                continue
            except OSError as exc:
                raise LinkError(
                    f"cannot write the port lock {self.path} ({exc.strerror}); "
                    f"set {LOCK_DIR_ENV} to a writable folder"
                ) from None
            with os.fdopen(fd, "w", encoding="utf-8") as f:
                json.dump(record, f)
            self.held = True
            return self
        raise PortBusy(f"{self.port} is being locked by another process; run the command again")

    def _clear_stale_or_refuse(self) -> None:
        assert self.path is not None
        holder = _read(self.path)
        if holder is None:
            try:
                young = time.time() - self.path.stat().st_mtime < _YOUNG_S
            except OSError:
                return  # gone already: try again
            if young:
                time.sleep(0.05)
                return
        elif pid_alive(holder["pid"]):
            raise PortBusy(
                f"{self.port} is in use by another heatlog process (pid {holder['pid']}: "
                f"{holder.get('command', 'heatlog')}); stop it (Ctrl-C where it runs) or wait "
                f"for it, then run the command again (lock file {self.path})"
            )
        try:  # the holder is gone: the lock is stale
            self.path.unlink()
        except FileNotFoundError:
            pass
        except OSError as exc:
            raise LinkError(
                f"cannot remove the stale port lock {self.path} ({exc.strerror}); delete it by hand"
            ) from None

    def release(self) -> None:
        if not self.held or self.path is None:
            return
        self.held = False
        holder = _read(self.path)
        if holder is not None and holder.get("token") == self.token:
            try:
                self.path.unlink()
            except OSError:
                pass

    def __enter__(self) -> PortLock:
        return self.acquire()

    def __exit__(self, *exc: object) -> None:
        self.release()
