"""Opening the archive: where it lives, how connections are set up, and transactions.

Location: the ``--db`` option, else the ``HEATLOG_DB`` environment variable, else
``heatlog.sqlite`` in the current directory — beside the lab's data, where a colleague looking
at the folder finds it (a per-user data directory would hide it).

Every connection runs in WAL mode (readers never block the one writer and see only committed
transactions), ``synchronous = FULL`` (a commit is on disk before it returns), foreign keys on,
and a busy timeout so a reader or a second writer waits for a lock instead of failing. Every
write goes through :meth:`Archive.transaction` (``BEGIN IMMEDIATE`` … ``COMMIT``): a process
killed inside one leaves nothing of it behind.
"""

from __future__ import annotations

import datetime as dt
import os
import sqlite3
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from heatlog.archive.schema import SCHEMA_VERSION, migrate
from heatlog.errors import HeatlogError, InputError

DB_ENV = "HEATLOG_DB"
DEFAULT_DB_NAME = "heatlog.sqlite"
BUSY_TIMEOUT_MS = 10_000


class ArchiveError(HeatlogError, RuntimeError):
    """The archive cannot be opened or used (missing, locked, damaged, newer schema)."""


def default_db_path() -> Path:
    """``$HEATLOG_DB`` if set, else ``./heatlog.sqlite``."""
    env = os.environ.get(DB_ENV)
    return Path(env) if env else Path(DEFAULT_DB_NAME)


def utc_now() -> str:
    return dt.datetime.now(dt.UTC).isoformat(timespec="seconds")


class Archive:
    """One connection to an archive file; use as a context manager or call :meth:`close`."""

    def __init__(self, path: Path, conn: sqlite3.Connection) -> None:
        self.path = path
        self.conn = conn

    def __enter__(self) -> Archive:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        self.conn.close()

    @contextmanager
    def transaction(self) -> Iterator[sqlite3.Connection]:
        """``BEGIN IMMEDIATE`` … ``COMMIT``; any exception rolls the whole block back."""
        try:
            self.conn.execute("BEGIN IMMEDIATE")
        except sqlite3.OperationalError as exc:
            raise ArchiveError(f"{self.path}: cannot start a write ({exc}); retry later") from None
        try:
            yield self.conn
        except BaseException:
            self.conn.execute("ROLLBACK")
            raise
        self.conn.execute("COMMIT")

    def query(self, sql: str, params: tuple | dict = ()) -> list[sqlite3.Row]:
        return self.conn.execute(sql, params).fetchall()

    def one(self, sql: str, params: tuple | dict = ()) -> sqlite3.Row | None:
        return self.conn.execute(sql, params).fetchone()

    def integrity_problems(self) -> list[str]:
        """``PRAGMA integrity_check`` and ``foreign_key_check`` findings (empty: consistent)."""
        found = [r[0] for r in self.conn.execute("PRAGMA integrity_check") if r[0] != "ok"]
        found += [
            f"{r[0]} row {r[1]} points to a missing {r[2]} row"
            for r in self.conn.execute("PRAGMA foreign_key_check")
        ]
        return found


def open_archive(path: str | Path | None = None, *, create: bool = True) -> Archive:
    """Open (and with ``create``, make or upgrade) the archive at ``path`` or the default place."""
    p = Path(path) if path is not None else default_db_path()
    if not create and not p.exists():
        raise ArchiveError(
            f"{p}: no archive here; import a run or add a probe first, or give --db / ${DB_ENV}"
        )
    if p.parent and not p.parent.exists():
        raise ArchiveError(
            f"{p}: folder {p.parent} does not exist; create it or choose another --db"
        )
    conn = sqlite3.connect(p, isolation_level=None, timeout=BUSY_TIMEOUT_MS / 1000)
    try:
        conn.row_factory = sqlite3.Row
        conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
        conn.execute("PRAGMA journal_mode = WAL")
        conn.execute("PRAGMA synchronous = FULL")
        conn.execute("PRAGMA foreign_keys = ON")
        migrate(conn, SCHEMA_VERSION)
    except sqlite3.DatabaseError as exc:
        conn.close()
        raise ArchiveError(f"{p}: not a usable heatlog archive ({exc})") from None
    except InputError as exc:
        conn.close()
        raise ArchiveError(str(exc)) from None
    return Archive(p, conn)
