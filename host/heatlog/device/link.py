"""The serial link to a board: two primitives (send a request, read framed replies) and a
request/reply call with request ids, timeouts and bounded retries built on them.

Ports are opened only through ``serial.serial_for_url`` (a device path, a pty, ``loop://``), or
any object with pyserial's ``read``/``write``/``in_waiting`` can be passed in (tests wrap one to
inject faults). Request ids are one byte (1..255, 0 is the live stream's); ``next_rid`` never
hands out an id the caller still has outstanding, and cycles through all the free ones before
reusing any, so a late reply to an abandoned request cannot be taken for a newer one's.

Give-up rules (``request`` and the pull's read loop in :mod:`heatlog.device.pull` share them):
*silence* — ``retries`` + 1 tries in a row during which not one byte arrived — ends in
:class:`LinkTimeout`; *garbled answers* — bytes arrive, but no reply passes its checks for
``stall_s`` seconds (and at least ``retries`` + 1 tries) — end in :class:`LinkGarbled`; the
two messages say which. As long as some replies arrive intact, neither fires.

Bytes before the first frame start (boot text, another device's chatter) are
discarded by :class:`~heatlog.device.framing.FrameParser`; live records go to ``Link.live``.
Everything the board sends is parsed as fixed structs or JSON data, never executed.
"""

from __future__ import annotations

import time
from collections import deque
from collections.abc import Container
from dataclasses import dataclass
from typing import Any

import serial

from heatlog.device import framing as fr
from heatlog.errors import LinkError

IDLE_RESET_S = 0.3  # a partial frame older than this is dropped (PROTOCOL.md: ~500 ms)
MAX_LIVE = 4096  # live records kept for a reader; older ones are dropped
STALL_S = 30.0  # give up after this long without one intact reply while the board answers garbled


class LinkLost(LinkError):
    """The port went away (cable pulled, board reset the USB device)."""


class LinkTimeout(LinkError):
    """The board did not answer within the retries."""


class LinkGarbled(LinkError):
    """The board answers, but its replies keep arriving damaged (a noisy cable or port)."""


class NotABoard(LinkError):
    """Something answers on the port, but not the heatlog protocol."""


class BoardError(LinkError):
    """The board answered with an error frame."""

    def __init__(self, code: int, message: str):
        self.code = code
        self.board_message = message
        kind = fr.ERROR_CODES.get(code, f"error {code}")
        super().__init__(f"board refused: {kind}: {message}")


@dataclass
class LinkStats:
    sent: int = 0
    frames: int = 0
    bad_frames: int = 0
    junk_reports: int = 0
    timeouts: int = 0
    retries: int = 0
    stale: int = 0


def open_port(url: str, baudrate: int = 115200) -> Any:
    """Open a port by path or pyserial URL (``loop://``, ``/dev/ttyACM0``, a pty symlink)."""
    try:
        if url.lower().startswith("socket://"):  # the simulator's TCP server, any system
            from heatlog.device.sockport import SocketSerial

            return SocketSerial(url, baudrate=baudrate, timeout=0.02, write_timeout=2.0)
        return serial.serial_for_url(url, baudrate=baudrate, timeout=0.02, write_timeout=2.0)
    except (serial.SerialException, ValueError, OSError) as exc:
        raise LinkError(f"cannot open {url}: {exc}; list boards with `heatlog ports`") from None


class Link:
    def __init__(
        self,
        port: Any,
        *,
        timeout: float = 1.0,
        retries: int = 5,
        stall_s: float = STALL_S,
        name: str = "port",
    ):
        self.port = port
        self.timeout = timeout
        self.retries = retries
        self.stall_s = stall_s
        self.name = name
        self.parser = fr.FrameParser()
        self.frames: deque[fr.Frame] = deque()
        self.live: deque[bytes] = deque(maxlen=MAX_LIVE)
        self.bad_rids: deque[int] = deque(maxlen=64)  # request ids seen on damaged frames
        self.stats = LinkStats()
        self.last_attempts = 0
        self.rx_bytes = 0  # every byte read from the port, good or not
        self._rid = 0
        self._last_rx = time.monotonic()
        self._good_frames = 0
        self._junk_seen = 0
        self._framed = 0  # frames with a start byte, version and length that failed their CRC
        try:
            port.reset_input_buffer()
        except (AttributeError, OSError, serial.SerialException):
            pass

    @classmethod
    def open(cls, url: str, *, baudrate: int = 115200, **kw: Any) -> Link:
        return cls(open_port(url, baudrate), name=url, **kw)

    def close(self) -> None:
        try:
            self.port.close()
        except (OSError, serial.SerialException):
            pass

    def __enter__(self) -> Link:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- primitive 1: send -------------------------------------------------------------------
    def next_rid(self, busy: Container[int] = ()) -> int:
        """The next request id in 1..255 (0 is the live stream's) that is not in ``busy``
        (the caller's outstanding ids); ids are taken in turn, so a freed id comes back only
        after every other free id has been used."""
        for _ in range(255):
            self._rid = self._rid % 255 + 1
            if self._rid not in busy:
                return self._rid
        raise ValueError("all 255 request ids are outstanding")

    def send(
        self, ftype: int, payload: bytes = b"", rid: int | None = None, busy: Container[int] = ()
    ) -> int:
        rid = self.next_rid(busy) if rid is None else rid
        self.send_raw(fr.encode(ftype, rid, payload))
        self.stats.sent += 1
        return rid

    def resync(self) -> None:
        """After a silence: send one maximal frame's worth of filler (no start byte), so a
        board parser left holding a partial request (bytes lost on the way) completes it,
        fails its CRC and is ready again; drop our own partial frame too."""
        self.send_raw(b"\x00" * (fr.OVERHEAD + fr.MAX_PAYLOAD))
        self.parser.reset()

    def send_raw(self, data: bytes) -> None:
        try:
            self.port.write(data)
        except (serial.SerialException, OSError) as exc:
            raise LinkLost(
                f"lost the link on {self.name} ({exc}); reconnect and run the command again"
            ) from None

    # -- primitive 2: read one framed reply -------------------------------------------------------
    def receive(self, deadline: float, wake_on_bad: bool = False) -> fr.Frame | None:
        """The next good frame (any request id) before ``deadline`` (time.monotonic), or None.
        Live records are queued on ``self.live`` instead of returned. With ``wake_on_bad``,
        also return None as soon as a damaged frame naming a request id arrives (its id is
        on ``bad_rids``), so the caller can ask again at once instead of waiting."""
        while True:
            if wake_on_bad and self.bad_rids and not self.frames:
                return None
            while self.frames:
                f = self.frames.popleft()
                if f.type == fr.LIVE:
                    self.live.append(f.payload)
                    continue
                return f
            now = time.monotonic()
            if now >= deadline:
                return None
            try:
                waiting = self.port.in_waiting
                data = self.port.read(max(1, min(waiting, 65536)))
            except (serial.SerialException, OSError) as exc:
                raise LinkLost(
                    f"lost the link on {self.name} ({exc}); reconnect and run the command again"
                ) from None
            if data:
                self.rx_bytes += len(data)
                self._last_rx = now
                self._feed(data)
            elif now - self._last_rx > IDLE_RESET_S and self.parser.reset() is not None:
                self.stats.bad_frames += 1

    def _feed(self, data: bytes) -> None:
        for item in self.parser.feed(data):
            if isinstance(item, fr.Frame):
                self.stats.frames += 1
                self._good_frames += 1
                self.frames.append(item)
            elif item.reason == "junk":
                self.stats.junk_reports += 1
                self._junk_seen += 1
            else:
                self.stats.bad_frames += 1
                if item.reason == "crc":
                    self._framed += 1
                if item.request_id:
                    self.bad_rids.append(item.request_id)

    # -- request / reply ------------------------------------------------------------------------
    def request(self, ftype: int, payload: bytes = b"", *, retries: int | None = None) -> bytes:
        """Send and wait for the matching reply; resend on timeout or a garbled exchange.
        Returns the reply payload; raises BoardError for an error reply, LinkTimeout after
        ``retries`` + 1 silent tries in a row, LinkGarbled when the board answers but no reply
        arrives intact within ``stall_s`` (and ``retries`` + 1 tries), NotABoard when only
        non-protocol bytes ever arrive (no frame, not even one failing its CRC)."""
        tries = (self.retries if retries is None else retries) + 1
        t0 = time.monotonic()
        attempt = silent_run = garbled = 0
        while True:
            attempt += 1
            self.last_attempts = attempt
            rx0 = self.rx_bytes
            rid = self.send(ftype, payload)
            self.bad_rids.clear()
            deadline = time.monotonic() + self.timeout
            timed_out = False
            while (f := self.receive(deadline, wake_on_bad=True)) is not None or self.bad_rids:
                if f is None:  # a damaged frame: ours if its id matches, else keep waiting
                    if rid in self.bad_rids:
                        break
                    self.bad_rids.clear()
                    continue
                if f.request_id != rid:
                    self.stats.stale += 1
                    continue
                if f.type == ftype | fr.REPLY:
                    return f.payload
                if f.type == fr.ERROR:
                    code, msg = _error(f.payload)
                    if code == 1:  # our request arrived garbled: send it again
                        break
                    raise BoardError(code, msg)
                self.stats.stale += 1
            else:
                timed_out = True
                self.stats.timeouts += 1
            if self.rx_bytes > rx0:
                garbled += 1
                silent_run = 0
            else:
                silent_run += 1
            if attempt >= tries and self._good_frames == 0 and self._junk_seen and not self._framed:
                raise NotABoard(
                    f"something answers on {self.name}, but not a heatlog board (no valid frame "
                    f"in {attempt} tries); check the port with `heatlog ports`"
                )
            if silent_run >= tries:
                also = f" ({garbled} earlier answers arrived garbled)" if garbled else ""
                raise LinkTimeout(
                    f"no answer from the board on {self.name}: silent for {silent_run} tries in "
                    f"a row of {self.timeout:g} s each{also}; check the cable and the port, then "
                    "run the command again (a pull resumes where it stopped)"
                )
            waited = time.monotonic() - t0
            if attempt >= tries and waited >= self.stall_s:
                raise LinkGarbled(
                    f"the board on {self.name} answers, but garbled: no intact reply in "
                    f"{attempt} tries over {waited:.0f} s ({garbled} answered damaged, "
                    f"{self.stats.bad_frames} bad frames so far); check the cable, the port and "
                    "interference, then run the command again (a pull resumes where it stopped)"
                )
            self.stats.retries += 1
            if timed_out:
                self.resync()


def _error(payload: bytes) -> tuple[int, str]:
    if not payload:
        return 9, "empty error frame"
    return payload[0], payload[1:201].decode("utf-8", "replace")
