"""The local archive of pulled runs: immutable files, a SHA-256 manifest, resumable partials.

A run is fetched into ``.partial/<board>_r<run>.part`` (bytes in order, each chunk checked by
its frame CRC) with a small JSON state beside it; once the whole file's CRC-32 matches the
board's run checksum it is renamed, without ever replacing a file, to
``<board>_r<run>_<start UTC>.hlg``, made read-only, and listed in ``manifest.json`` with its
SHA-256, size and CRC-32. Names built from board data are sanitised first.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import os
import re
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from heatlog.errors import InputError, LinkError
from heatlog.logformat import ANCHOR_MS, LogCorrupt, parse_header

MANIFEST = "manifest.json"
PARTIAL = ".partial"
_UNSAFE = re.compile(r"[^A-Za-z0-9_-]")


def safe_name(text: object, fallback: str = "unknown", limit: int = 32) -> str:
    """A file-name piece from untrusted text: only letters, digits, '_' and '-' survive
    (so no '/', '..', drive letters or leading dots), at most ``limit`` characters."""
    s = _UNSAFE.sub("_", str(text) if text is not None else "")[:limit].strip("_-")
    return s or fallback


def archive_name(board_id: object, run: int, anchor_ms: int | None) -> str:
    """``<board>_r<run>_<start UTC>.hlg``; ``noclock`` for an unset or out-of-range anchor."""
    if anchor_ms and ANCHOR_MS[0] <= anchor_ms < ANCHOR_MS[1]:
        start = dt.datetime.fromtimestamp(anchor_ms / 1000, dt.UTC).strftime("%Y%m%dT%H%M%SZ")
    else:
        start = "noclock"
    return f"{safe_name(board_id)}_r{int(run):04d}_{start}.hlg"


def sha256_file(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def crc32_file(path: Path) -> int:
    c = 0
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            c = zlib.crc32(block, c)
    return c


@dataclass(frozen=True)
class ArchivedRun:
    name: str
    board_id: str
    run: int
    size: int
    crc32: int
    sha256: str
    start_ms: int | None

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "board_id": self.board_id,
            "run": self.run,
            "size": self.size,
            "crc32": self.crc32,
            "sha256": self.sha256,
            "start_ms": self.start_ms,
        }


class Archive:
    def __init__(self, root: Path):
        self.root = Path(root)
        try:
            self.root.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise InputError(f"cannot create the archive folder {self.root}: {exc}") from None

    # -- manifest ------------------------------------------------------------------------------
    def manifest(self) -> dict[str, ArchivedRun]:
        p = self.root / MANIFEST
        if not p.exists():
            return {}
        try:
            d = json.loads(p.read_text(encoding="utf-8"))
            return {
                name: ArchivedRun(
                    name,
                    str(e["board_id"]),
                    int(e["run"]),
                    int(e["size"]),
                    int(e["crc32"]),
                    str(e["sha256"]),
                    e.get("start_ms"),
                )  # fmt: skip
                for name, e in d["files"].items()
            }
        except (ValueError, KeyError, TypeError, AttributeError):
            raise InputError(f"{p} is damaged; restore it or start a new archive folder") from None

    def _save_manifest(self, entries: dict[str, ArchivedRun]) -> None:
        doc = {
            "format": 1,
            "note": "heatlog archive: SHA-256 of every pulled run file (files are read-only)",
            "files": {
                n: {k: v for k, v in e.to_dict().items() if k != "name"}
                for n, e in sorted(entries.items())
            },
        }
        tmp = self.root / (MANIFEST + ".tmp")
        tmp.write_text(json.dumps(doc, indent=1), encoding="utf-8")
        os.replace(tmp, self.root / MANIFEST)

    def find(self, board_id: str, run: int) -> ArchivedRun | None:
        """The newest archived copy of (board, run), matched on the sanitised board id."""
        hits = [
            e
            for e in self.manifest().values()
            if e.board_id == safe_name(board_id) and e.run == run
        ]
        return hits[-1] if hits else None

    def verify(self, entry: ArchivedRun) -> bool:
        """True if the archived file is present and still matches its manifest entry."""
        p = self.root / entry.name
        return p.is_file() and p.stat().st_size == entry.size and sha256_file(p) == entry.sha256

    # -- partial downloads ------------------------------------------------------------------------
    def partial(self, board_id: str, run: int) -> tuple[Path, Path]:
        d = self.root / PARTIAL
        d.mkdir(exist_ok=True)
        stem = f"{safe_name(board_id)}_r{int(run):04d}"
        return d / (stem + ".part"), d / (stem + ".json")

    def start_partial(self, board_id: str, run: int, size: int) -> tuple[Path, int]:
        """The partial file to append to and its verified length (0 for a fresh start)."""
        part, state = self.partial(board_id, run)
        ok = False
        if part.exists() and state.exists():
            try:
                st = json.loads(state.read_text(encoding="utf-8"))
                ok = st.get("board_id") == safe_name(board_id) and st.get("run") == run
            except ValueError:
                ok = False
        have = part.stat().st_size if ok and part.exists() else 0
        if not ok or have > size:
            part.write_bytes(b"")
            have = 0
        state.write_text(
            json.dumps({"board_id": safe_name(board_id), "run": run, "size": size}),
            encoding="utf-8",
        )
        return part, have

    def drop_partial(self, board_id: str, run: int) -> None:
        for p in self.partial(board_id, run):
            p.unlink(missing_ok=True)

    def commit(self, board_id: str, run: int) -> ArchivedRun:
        """Move a complete, verified partial into the archive (never replacing a file)."""
        part, _ = self.partial(board_id, run)
        with open(part, "rb") as f:
            head = f.read(64 + 24 * 8 + 4)
        try:  # the bytes are the board's (CRC-32 checked): keep them even if the header is bad
            anchor = parse_header(head).anchor_ms
        except LogCorrupt:
            anchor = None
        name = archive_name(board_id, run, anchor)
        sha = sha256_file(part)
        entries = self.manifest()
        final = self.root / name
        k = 1
        while final.exists():
            if sha256_file(final) == sha:  # the same bytes are already archived
                self.drop_partial(board_id, run)
                return entries.get(final.name) or self._record(
                    entries, final, board_id, run, anchor, sha
                )
            k += 1
            final = self.root / name.replace(".hlg", f"_{k}.hlg")
        try:
            os.link(part, final)  # fails rather than replace an existing file
        except FileExistsError:
            raise LinkError(f"{final} appeared while pulling; run the pull again") from None
        except OSError:
            os.rename(part, final)
        final.chmod(0o444)
        entry = self._record(entries, final, board_id, run, anchor, sha)
        self.drop_partial(board_id, run)
        return entry

    def _record(
        self,
        entries: dict[str, ArchivedRun],
        final: Path,
        board_id: str,
        run: int,
        anchor: int | None,
        sha: str,
    ) -> ArchivedRun:
        entry = ArchivedRun(
            final.name,
            safe_name(board_id),
            run,
            final.stat().st_size,
            crc32_file(final),
            sha,
            anchor,
        )
        entries[final.name] = entry
        self._save_manifest(entries)
        return entry
