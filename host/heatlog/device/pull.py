"""Pull runs from a board into an :class:`~heatlog.device.archive.Archive`, and erase runs the
archive provably holds.

Reads are pipelined: up to ``window`` read requests are outstanding, each under its own request
id (never one still outstanding; :class:`~heatlog.device.readwindow.ReadWindow` keeps the books
and checks its invariants every step), and chunks are appended to the partial file strictly in
order, so the partial's length is always the last verified offset. A damaged reply is asked for
again at once, and so is a request whose reply is missing when the reply to a later request
arrives (the board answers in order); a timeout resends the overdue requests, and a late reply
to a request already asked again is used. The pull stops after ``link.retries`` + 1 silent timeouts in a row, or
``link.stall_s`` seconds without one verified chunk while the board answers garbled, with a
message saying which; the partial is kept for the next pull to resume. A finished file must
match the board's whole-run CRC-32 and size.
"""

from __future__ import annotations

import struct
import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from heatlog.device import framing as fr
from heatlog.device.archive import Archive, ArchivedRun, crc32_file, safe_name, sha256_file
from heatlog.device.commands import MAX_RUN_BYTES, READ_CHUNK, Board
from heatlog.device.link import BoardError, LinkGarbled, LinkTimeout
from heatlog.device.readwindow import ReadWindow
from heatlog.errors import InputError, LinkError
from heatlog.logformat import Damage, LogCorrupt, read_log

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
    damage: dict[str, dict[str, Any]] = field(default_factory=dict)  # file name -> Damage

    @property
    def damaged(self) -> list[str]:
        """Archived files (pulled now or before) whose contents are damaged."""
        return [name for name, d in self.damage.items() if d["damaged"]]

    def to_dict(self) -> dict[str, Any]:
        return {
            "board_id": self.board_id,
            "pulled": [e.to_dict() | {"damage": self.damage.get(e.name)} for e in self.pulled],
            "already_archived": [
                e.to_dict() | {"damage": self.damage.get(e.name)} for e in self.already
            ],
            "skipped": self.skipped,
            "bytes": self.bytes,
            "seconds": self.seconds,
            "retries": self.retries,
        }


def _read_reply(payload: bytes, run: int) -> tuple[int, int, bytes] | None:
    """(offset, file size, data) of a read reply for ``run``, or None if it is not one."""
    if len(payload) < 12:
        return None
    r, off, fsize = struct.unpack_from("<III", payload, 0)
    data = payload[12:]
    if r != run or fsize > MAX_RUN_BYTES or off + len(data) > fsize or len(data) > READ_CHUNK:
        return None
    return off, fsize, data


def fetch(
    board: Board, run: int, offset: int, size: int, sink: Callable[[bytes], None],
    *, window: int = 4, progress: Progress | None = None,
    on_step: Callable[[ReadWindow], None] | None = None,
) -> int:  # fmt: skip
    """Read bytes [offset, size) of a run in order into ``sink``; returns bytes fetched.

    Give-up rules (the link's): ``link.retries`` + 1 timeouts in a row with not one byte from
    the board raise LinkTimeout (silence); ``link.stall_s`` seconds without one verified chunk
    while bytes do arrive raise LinkGarbled. Every verified chunk restarts both counts, so a
    pull on a noisy line goes on as long as chunks get through. ``on_step`` sees the window
    after every step (tests check its invariants there too)."""
    link = board.link
    w = ReadWindow(offset, size, window)
    t_progress = time.monotonic()
    rx_at_timeout = link.rx_bytes
    silent = damaged = 0

    def ask() -> None:
        while w.wants():
            off, n = w.take()
            rid = board.read_request(run, off, n, busy=w.pending)
            w.asked(rid, off, n, time.monotonic())

    def stop_if_stuck(now: float) -> None:
        where = f"at byte {w.write_off} of {size}"
        keep = "the part already checked is kept: run the same pull again to resume"
        if silent > link.retries:
            raise LinkTimeout(
                f"run {run}: no answer from the board: silent for {silent} timeouts of "
                f"{link.timeout:g} s in a row {where}; check the cable and the port; {keep}"
            )
        if now - t_progress > link.stall_s:
            raise LinkGarbled(
                f"run {run}: the board answers, but garbled: no chunk arrived intact for "
                f"{now - t_progress:.0f} s {where} ({damaged} damaged replies); check the "
                f"cable, the port and interference; {keep}"
            )

    while not w.done:
        ask()
        w.check()
        if on_step is not None:
            on_step(w)
        oldest = w.oldest()
        assert oldest is not None  # check() guarantees something is pending
        f = link.receive(oldest + link.timeout, wake_on_bad=True)
        if f is None and link.bad_rids:  # a reply arrived damaged: ask for that chunk again now
            while link.bad_rids:
                if w.again(link.bad_rids.popleft()) is not None:
                    damaged += 1
                    link.stats.retries += 1
            stop_if_stuck(time.monotonic())
            continue
        if f is None:
            now = time.monotonic()
            link.stats.timeouts += 1
            heard = link.rx_bytes > rx_at_timeout
            rx_at_timeout = link.rx_bytes
            silent = 0 if heard else silent + 1
            stop_if_stuck(now)
            link.resync()
            for rid in w.overdue(now, link.timeout * 0.9):
                w.again(rid)
                link.stats.retries += 1
            continue
        if f.type == fr.READ_RUN | fr.REPLY:
            rep = _read_reply(f.payload, run)
            hit = None if rep is None else w.match(f.request_id, rep[0])
            if rep is None or hit is None or len(rep[2]) < hit[1].n:
                link.stats.stale += 1  # a late reply to a request already answered
                continue
            if rep[1] != size:
                raise LinkError(
                    f"run {run} changed size on the board ({size} -> {rep[1]} bytes) during the "
                    "pull; stop the run first, then pull again"
                )
            if hit[0] == f.request_id:  # replies come in order: earlier ones missing are lost
                for lost in w.sent_before(hit[1].order):
                    w.again(lost)
                    link.stats.retries += 1
            for d in w.arrived(hit[0], rep[2]):
                sink(d)
            t_progress = time.monotonic()
            silent = damaged = 0
            if progress is not None:
                progress(run, w.write_off, size)
            continue
        if f.request_id not in w.pending:
            link.stats.stale += 1
            continue
        if f.type == fr.ERROR and f.payload[:1] != b"\x01":
            code = f.payload[0] if f.payload else 9
            raise BoardError(code, f.payload[1:201].decode("utf-8", "replace"))
        if f.type == fr.ERROR:  # our request arrived garbled (error code 1): ask again
            w.again(f.request_id, damaged=False)
            link.stats.retries += 1
            damaged += 1
            stop_if_stuck(time.monotonic())
            continue
        link.stats.stale += 1  # another command's reply under a reused id: keep waiting
    w.check()
    if on_step is not None:
        on_step(w)
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
    for got in report.pulled + report.already:
        report.damage[got.name] = file_damage(archive.root / got.name)
    report.seconds = time.monotonic() - t0
    report.retries = board.link.stats.retries - retries0
    return report


def file_damage(path: Path) -> dict[str, Any]:
    """The decoder's damage summary of an archived run file (``Damage.to_dict`` plus a one-line
    ``summary``); a header it cannot use is damage too. The file is a faithful copy of the
    board's: the damage was on the board (a power cut, failing flash), not made by the link."""
    try:
        d = read_log(path).damage()
    except LogCorrupt as exc:
        d = Damage(problems=(str(exc),))
    return d.to_dict() | {"summary": d.describe()}


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
