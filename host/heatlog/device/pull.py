"""Pull runs from a board into an :class:`~heatlog.device.archive.Archive`, and erase runs the
archive provably holds.

Reads are pipelined: up to ``window`` read requests are outstanding, each with its own request
id, and chunks are appended to the partial file strictly in order, so the partial's length is
always the last verified offset. A timeout resends the overdue requests; after ``link.retries``
timeouts in a row without progress the pull stops with a message and the partial is kept for
the next pull to resume. A finished file must match the board's whole-run CRC-32 and size.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from typing import Any

from heatlog.device import framing as fr
from heatlog.device.archive import Archive, ArchivedRun, crc32_file, safe_name, sha256_file
from heatlog.device.commands import READ_CHUNK, BadReply, Board
from heatlog.device.link import BoardError, LinkTimeout
from heatlog.errors import InputError, LinkError

MIN_RUN_BYTES = 64 + 24 + 4  # the smallest header (one channel)
Progress = Callable[[int, int, int], None]  # (run, bytes done, bytes total)


@dataclass
class PullReport:
    board_id: str
    pulled: list[ArchivedRun] = field(default_factory=list)
    already: list[ArchivedRun] = field(default_factory=list)
    skipped: list[dict[str, Any]] = field(default_factory=list)
    bytes: int = 0
    seconds: float = 0.0
    retries: int = 0

    def to_dict(self) -> dict[str, Any]:
        return {
            "board_id": self.board_id,
            "pulled": [e.to_dict() for e in self.pulled],
            "already_archived": [e.to_dict() for e in self.already],
            "skipped": self.skipped,
            "bytes": self.bytes,
            "seconds": self.seconds,
            "retries": self.retries,
        }


def fetch(
    board: Board, run: int, offset: int, size: int, sink: Callable[[bytes], None],
    *, window: int = 4, progress: Progress | None = None,
) -> int:  # fmt: skip
    """Read bytes [offset, size) of a run in order into ``sink``; returns bytes fetched."""
    link = board.link
    pending: dict[int, tuple[int, int, float]] = {}
    got: dict[int, bytes] = {}
    next_off = write_off = offset
    stalls = 0
    while write_off < size:
        while len(pending) < window and next_off < size:
            n = min(READ_CHUNK, size - next_off)
            pending[board.read_request(run, next_off, n)] = (next_off, n, time.monotonic())
            next_off += n
        oldest = min(p[2] for p in pending.values())
        f = link.receive(oldest + link.timeout, wake_on_bad=True)
        if f is None and link.bad_rids:  # a reply arrived damaged: ask for that chunk again now
            while link.bad_rids:
                p = pending.pop(link.bad_rids.popleft(), None)
                if p is not None:
                    pending[board.read_request(run, p[0], p[1])] = (p[0], p[1], time.monotonic())
                    link.stats.retries += 1
            continue
        if f is None:
            stalls += 1
            link.stats.timeouts += 1
            if stalls > link.retries:
                raise LinkTimeout(
                    f"run {run}: no progress after {stalls} timeouts at byte {write_off} of {size}; "
                    "the part already checked is kept: run the same pull again to resume"
                )
            link.resync()
            now = time.monotonic()
            for rid, (off, n, t) in list(pending.items()):
                if now - t >= link.timeout * 0.9:
                    del pending[rid]
                    pending[board.read_request(run, off, n)] = (off, n, now)
                    link.stats.retries += 1
            continue
        p = pending.pop(f.request_id, None)
        if p is None:
            link.stats.stale += 1
            continue
        off, n, _ = p
        if f.type == fr.READ_RUN | fr.REPLY:
            try:
                fsize, data = board.parse_read(f.payload, run, off, n)
            except BadReply:
                fsize, data = -1, b""
            if fsize < 0:  # a stale reply that reused this id: keep waiting for ours
                pending[f.request_id] = p
                link.stats.stale += 1
                continue
            if fsize != size:
                raise LinkError(
                    f"run {run} changed size on the board ({size} -> {fsize} bytes) during the pull; "
                    "stop the run first, then pull again"
                )
            if off >= write_off:
                got[off] = data
            stalls = 0
            while write_off in got:
                d = got.pop(write_off)
                sink(d)
                write_off += len(d)
            if progress is not None:
                progress(run, write_off, size)
            continue
        if f.type == fr.ERROR and f.payload[:1] != b"\x01":
            code = f.payload[0] if f.payload else 9
            raise BoardError(code, f.payload[1:201].decode("utf-8", "replace"))
        # a garbled request (error code 1) or an unexpected frame: ask again
        pending[board.read_request(run, off, n)] = (off, n, time.monotonic())
        link.stats.retries += 1
    return size - offset


def pull(
    board: Board, archive: Archive, *, runs: Iterable[int] | None = None, window: int = 4,
    progress: Progress | None = None,
) -> PullReport:  # fmt: skip
    """Pull every finished run (or the chosen ones) the archive does not already hold."""
    t0 = time.monotonic()
    retries0 = board.link.stats.retries
    info = board.identify()
    bid = info.board_id or "unknown"
    report = PullReport(safe_name(bid))
    entries, active = board.list_runs()
    wanted = None if runs is None else set(runs)
    if wanted is not None:
        missing = wanted - {e.run for e in entries}
        if missing:
            raise InputError(
                f"the board has no run {', '.join(map(str, sorted(missing)))}; see `heatlog status`"
            )
    for e in entries:
        if wanted is not None and e.run not in wanted:
            continue
        if e.run == active:
            report.skipped.append({"run": e.run, "reason": "active: stop the run, then pull it"})
            continue
        if e.size < MIN_RUN_BYTES:
            report.skipped.append(
                {"run": e.run, "reason": f"only {e.size} bytes: no complete header"}
            )
            continue
        have = archive.find(bid, e.run)
        if have is not None and have.size == e.size:
            size, crc = board.checksum(e.run)
            if (size, crc) == (have.size, have.crc32) and archive.verify(have):
                report.already.append(have)
                continue
        report.pulled.append(
            _pull_one(board, archive, bid, e.run, e.size, window, progress, report)
        )
    report.seconds = time.monotonic() - t0
    report.retries = board.link.stats.retries - retries0
    return report


def _pull_one(
    board: Board,
    archive: Archive,
    bid: str,
    run: int,
    size: int,
    window: int,
    progress: Progress | None,
    report: PullReport,
) -> ArchivedRun:
    for _attempt in (1, 2):
        part, have = archive.start_partial(bid, run, size)
        with open(part, "ab") as f:

            def sink(data: bytes) -> None:
                f.write(data)
                f.flush()

            report.bytes += fetch(board, run, have, size, sink, window=window, progress=progress)
        b_size, b_crc = board.checksum(run)
        if (b_size, b_crc) == (part.stat().st_size, crc32_file(part)):
            return archive.commit(bid, run)
        archive.drop_partial(bid, run)  # the bytes differ from the board's: fetch once more
    raise LinkError(
        f"run {run}: the copy does not match the board's checksum twice; the run may be "
        "changing or the link corrupting data undetected: try another cable or port"
    )


def erase(board: Board, archive: Archive, run: int) -> ArchivedRun:
    """Erase a run on the board, only if the archive holds a verified identical copy."""
    info = board.identify()
    bid = info.board_id or "unknown"
    entry = archive.find(bid, run)
    if entry is None:
        raise InputError(
            f"run {run} of board {safe_name(bid)} is not in {archive.root}; pull it first"
        )
    path = archive.root / entry.name
    if not path.is_file() or sha256_file(path) != entry.sha256:
        raise InputError(
            f"{path} does not match its SHA-256 in the manifest; pull run {run} again before erasing"
        )
    if (path.stat().st_size, crc32_file(path)) != (entry.size, entry.crc32):
        raise InputError(f"{path}: size or CRC-32 differ from the manifest; pull run {run} again")
    size, crc = board.checksum(run)
    if (size, crc) != (entry.size, entry.crc32):
        raise InputError(
            f"run {run} on the board ({size} bytes, CRC-32 {crc:08x}) differs from the archived copy "
            f"({entry.size} bytes, {entry.crc32:08x}); pull it again, nothing was erased"
        )
    board.erase_run(run, entry.size, entry.crc32)
    return entry
