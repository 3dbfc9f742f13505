"""The bookkeeping of a pipelined read of one run: which byte ranges are asked for under which
request id, which have arrived out of order, which must be asked again. No I/O: the pull loop
in :mod:`heatlog.device.pull` sends and receives, this class decides and checks.

Invariants (:meth:`ReadWindow.check`, called by the pull loop after every step):

* ``write_off <= next_off <= size``; bytes below ``write_off`` have gone to the sink in order.
* The ranges of ``pending`` (asked for, by request id), ``held`` (arrived ahead of
  ``write_off``) and ``todo`` (to ask again) are disjoint and tile ``[write_off, next_off)``
  exactly: no byte is lost from the bookkeeping, none is asked for twice at once.
* At most ``window`` requests are pending, each under its own id (a dict key), all in 1..255.
* While bytes are missing, something is pending or can be asked for (the loop cannot stall
  with nothing outstanding).

Chunk length adapts to the line: from recent intact and damaged (or lost) replies, decayed by
``DECAY`` per reply, the window estimates the chance p that a byte on the line is damaged and
asks for the length c in ``SIZES`` that maximises the share of useful bytes,
c / (c + ``REPLY_OVERHEAD``) · (1 − p)^(c + ``REPLY_OVERHEAD``) (a reply arrives whole only if
none of its bytes is hit). On a clean line that is the protocol's 512; on a line that garbles
most long frames it drops to 32..128 and the pull keeps making progress (common practice, no
source).
"""

from __future__ import annotations

from dataclasses import dataclass

from heatlog.device.commands import READ_CHUNK  # the protocol's largest read
from heatlog.errors import LinkError

SIZES = (32, 64, 128, 256, READ_CHUNK)
MIN_CHUNK = SIZES[0]
REPLY_OVERHEAD = 8 + 12  # frame bytes + the read reply's run, offset and size
DECAY = 0.97


class PipelineError(LinkError):
    """The read bookkeeping broke an invariant (a bug); the verified part is kept."""


@dataclass
class Asked:
    off: int
    n: int
    sent_at: float
    order: int = 0  # the how-manieth request of this read


class ReadWindow:
    def __init__(self, offset: int, size: int, window: int, chunk: int = READ_CHUNK):
        if not 0 <= offset <= size or window < 1:
            raise ValueError(f"bad read window: offset {offset}, size {size}, window {window}")
        self.size = size
        self.window = window
        self.write_off = self.next_off = offset
        self.pending: dict[int, Asked] = {}
        self.held: dict[int, bytes] = {}
        self.todo: list[tuple[int, int]] = []  # (offset, length), sorted
        self.chunk = min(max(chunk, MIN_CHUNK), READ_CHUNK)
        self._ok_bytes = 0.0  # frame bytes of recent intact replies (decayed)
        self._bad = 0.0  # recent damaged or lost replies (decayed)
        self._sent = 0

    # -- what to ask for ------------------------------------------------------------------
    @property
    def done(self) -> bool:
        return self.write_off >= self.size

    def wants(self) -> bool:
        return len(self.pending) < self.window and (bool(self.todo) or self.next_off < self.size)

    def take(self) -> tuple[int, int]:
        """The next range to ask for: the lowest one to ask again, else fresh bytes."""
        if self.todo:
            off, n = self.todo.pop(0)
            if n > self.chunk:  # ask for less on a noisy line; the rest waits its turn
                self.todo.insert(0, (off + self.chunk, n - self.chunk))
                n = self.chunk
            return off, n
        off, n = self.next_off, min(self.chunk, self.size - self.next_off)
        self.next_off += n
        return off, n

    def asked(self, rid: int, off: int, n: int, now: float) -> None:
        if rid in self.pending or not 1 <= rid <= 255:
            raise PipelineError(f"request id {rid} handed out while still outstanding")
        self._sent += 1
        self.pending[rid] = Asked(off, n, now, self._sent)

    def oldest(self) -> float | None:
        return min((a.sent_at for a in self.pending.values()), default=None)

    # -- what came back ------------------------------------------------------------------
    def match(self, rid: int, off: int) -> tuple[int, Asked] | None:
        """The pending request a reply at ``off`` answers: by id, else (a late reply to a
        request already asked again) by offset."""
        a = self.pending.get(rid)
        if a is not None and a.off == off:
            return rid, a
        for k, a in self.pending.items():
            if a.off == off:
                return k, a
        return None

    def arrived(self, rid: int, data: bytes) -> list[bytes]:
        """A verified reply for pending ``rid`` (at least its length, or the file's end):
        returns the bytes now in order for the sink."""
        a = self.pending.pop(rid)
        if len(data) < a.n:
            raise PipelineError(f"{len(data)} bytes accepted for a {a.n}-byte request")
        self.held[a.off] = bytes(data[: a.n])
        self._tune(ok_bytes=a.n + REPLY_OVERHEAD, bad=0)
        out = []
        while self.write_off in self.held:
            d = self.held.pop(self.write_off)
            out.append(d)
            self.write_off += len(d)
        return out

    def again(self, rid: int, *, damaged: bool = True) -> Asked | None:
        """Forget request ``rid`` and queue its range to be asked again (smaller chunks after a
        damaged or lost reply). None if ``rid`` is not pending."""
        a = self.pending.pop(rid, None)
        if a is None:
            return None
        if damaged:
            self._tune(ok_bytes=0, bad=1)
        self.todo.append((a.off, a.n))
        self.todo.sort()
        return a

    def _tune(self, ok_bytes: int, bad: int) -> None:
        self._ok_bytes = self._ok_bytes * DECAY + ok_bytes
        self._bad = self._bad * DECAY + bad
        sent = self._ok_bytes + self._bad * (self.chunk + REPLY_OVERHEAD)
        p = self._bad / sent if sent > 0 else 0.0
        self.chunk = max(
            SIZES,
            key=lambda c: c / (c + REPLY_OVERHEAD) * (1.0 - p) ** (c + REPLY_OVERHEAD),
        )

    def sent_before(self, order: int) -> list[int]:
        """Pending requests sent before request number ``order``. The board answers requests
        one at a time in the order they arrive (firmware/PROTOCOL.md: one reply per request),
        so once the reply to a later request is in, an earlier one still pending was lost."""
        return [rid for rid, a in self.pending.items() if a.order < order]

    def overdue(self, now: float, timeout: float) -> list[int]:
        return [rid for rid, a in self.pending.items() if now - a.sent_at >= timeout]

    # -- invariants ------------------------------------------------------------------------
    def check(self) -> None:
        """Raise PipelineError naming the first broken invariant."""
        problems = []
        if not 0 <= self.write_off <= self.next_off <= self.size:
            problems.append(f"offsets {self.write_off} <= {self.next_off} <= {self.size} fail")
        if len(self.pending) > self.window:
            problems.append(f"{len(self.pending)} requests pending in a window of {self.window}")
        if any(not 1 <= rid <= 255 for rid in self.pending):
            problems.append("a pending request id outside 1..255")
        ranges = sorted(
            [(a.off, a.n) for a in self.pending.values()]
            + [(o, len(d)) for o, d in self.held.items()]
            + list(self.todo)
        )
        pos = self.write_off
        for off, n in ranges:
            if n <= 0 or off != pos:
                problems.append(f"range ({off}, {n}) where byte {pos} was expected")
                break
            pos = off + n
        if not problems and pos != self.next_off:
            problems.append(f"ranges end at {pos}, bytes were asked up to {self.next_off}")
        if not self.done and not self.pending and not self.wants():
            problems.append(f"bytes from {self.write_off} missing with nothing to ask for")
        if problems:
            raise PipelineError(
                "pull bookkeeping error (a bug; the checked part is kept, run the pull again "
                "to resume): " + "; ".join(problems)
            )
