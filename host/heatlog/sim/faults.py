"""Fault injection between a host and a board: wraps any pyserial-like port object.

:class:`FaultySerial` drops, duplicates and bit-flips bytes in both directions, holds back
some reads for a while (delay), inserts junk, and can cut the link for good after a number of
bytes have come from the board; it can also insert a false frame header, a boot line, or go
silent for a while (everything the board sends meanwhile is lost). All randomness comes from one seeded generator, so a failing
case replays exactly. :class:`WrongDevice` is a port on which something else answers (an NMEA
GPS, say) and never speaks the heatlog protocol.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import Any

import numpy as np
import serial


@dataclass(frozen=True)
class FaultPlan:
    drop: float = 0.0  # probability per byte
    dup: float = 0.0
    flip: float = 0.0
    junk: float = 0.0  # probability per read of inserting 1..16 random bytes
    delay: float = 0.0  # probability per read that its bytes are held back for delay_s
    delay_s: float = 0.05
    cut_after: int | None = None  # bytes read from the board before the link dies
    fake_header: float = 0.0  # probability per read of a start byte, version, type, id and a
    #   long declared length: a false frame start that swallows the next bytes
    boot: float = 0.0  # probability per read of a boot line (the board restarted its REPL)
    silence: float = 0.0  # probability per read that the board goes quiet for silence_s
    silence_s: float = 0.3
    seed: int = 0


class FaultySerial:
    def __init__(self, inner: Any, plan: FaultPlan):
        self.inner = inner
        self.plan = plan
        self.rng = np.random.default_rng(plan.seed)
        self.read_bytes = 0
        self.cut = False
        self._held: list[tuple[float, bytes]] = []
        self._ready = bytearray()
        self._quiet_until = 0.0
        self.timeout = getattr(inner, "timeout", 0.02)

    def _mangle(self, data: bytes) -> bytes:
        p = self.plan
        if not data or not (p.drop or p.dup or p.flip):
            return data
        a = np.frombuffer(data, dtype=np.uint8).copy()
        if p.flip:
            hit = self.rng.random(a.size) < p.flip
            a[hit] ^= (1 << self.rng.integers(0, 8, int(hit.sum()))).astype(np.uint8)
        reps = np.ones(a.size, dtype=int)
        if p.drop:
            reps[self.rng.random(a.size) < p.drop] = 0
        if p.dup:
            reps[self.rng.random(a.size) < p.dup] += 1
        return np.repeat(a, reps).tobytes()

    def _check_cut(self) -> None:
        if self.cut:
            raise serial.SerialException("device disconnected (fault injection: link cut)")

    @property
    def in_waiting(self) -> int:
        self._check_cut()
        return len(self._ready) + self.inner.in_waiting

    def read(self, n: int = 1) -> bytes:
        self._check_cut()
        p = self.plan
        data = self.inner.read(n)
        now = time.monotonic()
        if data:
            data = self._mangle(data)
            if p.junk and self.rng.random() < p.junk:
                data = (
                    self.rng.integers(
                        0, 256, int(self.rng.integers(1, 17)), dtype=np.uint8
                    ).tobytes()
                    + data
                )
            if p.fake_header and self.rng.random() < p.fake_header:
                rid, n = int(self.rng.integers(0, 256)), int(self.rng.integers(256, 1025))
                data = bytes([0xA7, 1, 0x84, rid, n & 0xFF, n >> 8]) + data
            if p.boot and self.rng.random() < p.boot:
                data = b"\r\nheatlog: boot, reset cause 1\r\n" + data
            if p.silence and self.rng.random() < p.silence:
                self._quiet_until = now + p.silence_s
            if now < self._quiet_until:
                data = b""
            if p.delay and self.rng.random() < p.delay:
                self._held.append((now + p.delay_s, data))
                data = b""
        while self._held and self._held[0][0] <= now:
            self._ready += self._held.pop(0)[1]
        if data:
            if self._held:  # keep order behind bytes still held back
                self._held.append((self._held[-1][0], data))
            else:
                self._ready += data
        out = bytes(self._ready)
        self._ready.clear()
        if p.cut_after is not None and self.read_bytes + len(out) >= p.cut_after:
            out = out[: max(p.cut_after - self.read_bytes, 0)]
            self.cut = True
        self.read_bytes += len(out)
        return out

    def write(self, data: bytes) -> int:
        self._check_cut()
        self.inner.write(self._mangle(bytes(data)))
        return len(data)

    def reset_input_buffer(self) -> None:
        self.inner.reset_input_buffer()

    def close(self) -> None:
        self.inner.close()


class WrongDevice:
    """A port where another device talks: NMEA sentences, whatever the host sends."""

    def __init__(self) -> None:
        self.timeout = 0.02
        self._n = 0

    @property
    def in_waiting(self) -> int:
        return 40

    def read(self, n: int = 1) -> bytes:
        time.sleep(0.002)
        self._n += 1
        return f"$GPGGA,12{self._n % 60:02d}00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,,*47\r\n".encode()[
            :n
        ]

    def write(self, data: bytes) -> int:
        return len(data)

    def reset_input_buffer(self) -> None:
        pass

    def close(self) -> None:
        pass
