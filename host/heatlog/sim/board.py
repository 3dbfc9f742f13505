"""The virtual board: the real firmware's ``Logger`` on a virtual clock, its ADC driven by the
thermal model of the running scenario, flash kept in a directory, serial on a pseudo-terminal.

:class:`VirtualBoard` is steppable and pure in time (no sleeping): ``advance_to(ms)`` runs the
firmware's main-loop turns up to a virtual time, ``feed(bytes)`` hands it host bytes, and
``take_output()`` returns what it wrote. It mirrors ``firmware/app.py``'s loop (boot line, abort
window, ``Logger.boot``, ``Logger.poll``); ``reset()`` restarts the firmware as a watchdog reset
would. :class:`PtyServer` runs a board behind ``os.openpty`` (Linux, macOS) at a chosen speed,
optionally pacing its output at a baud rate, with a symlink to the slave side that a host opens
like a port; :class:`TcpServer` runs it the same way on a local TCP socket that pyserial opens as
``socket://127.0.0.1:PORT`` on any system. Both share the pacing, latency and reset logic.
"""

from __future__ import annotations

import calendar
import json
import math
import os
import select
import socket
import struct
import threading
import time
from pathlib import Path
from typing import Any, Self

import numpy as np

from heatlog.sim.fakemachine import PWRON_RESET, WDT_RESET, FakeMachine
from heatlog.sim.firmware import load_firmware
from heatlog.sim.monitor import ADDRESS as MONITOR_ADDRESS
from heatlog.sim.monitor import SimIna226
from heatlog.sim.scenarios import PROBE_TRUTH, R_FIXED_OHM, SHUNT_OHM, Scenario
from heatlog.sim.thermal import SuppliedHeater, ThermalModel, Vessel

_TABLE_T0, _TABLE_STEP = -20.0, 0.001
_LN_R_TABLE: list[float] = np.log(
    PROBE_TRUTH.temperature_to_resistance(np.arange(-20.0, 100.0, _TABLE_STEP))
).tolist()
TICKS_PERIOD = 1 << 30
ABORT_MS = 2000  # firmware/app.py's boot abort window
MAX_PENDING_OUT = 1 << 20  # a board's output nobody reads is dropped beyond this


class _SimFlash:
    """The firmware's FlashFs on a host directory, with a fixed flash size."""

    def __init__(self, base: Any, capacity: int):
        self._fs = base()
        self.capacity = capacity

    def __getattr__(self, name: str) -> Any:
        return getattr(self._fs, name)

    def space(self, path: str) -> tuple[int, int]:
        used = sum(f.stat().st_size for f in Path(path).iterdir() if f.is_file())
        return max(self.capacity - used, 0), self.capacity


class VirtualBoard:
    def __init__(
        self,
        scenario: Scenario,
        flash_dir: Path,
        *,
        board_id: str = "sim-1",
        seed: int = 0,
        noise_lsb: float = 1.0,
        flash_bytes: int = 16 << 20,
    ):
        self.fw = load_firmware()
        self.scenario = scenario
        self.root = Path(flash_dir) / "heatlog"
        self.root.mkdir(parents=True, exist_ok=True)
        cfg = self.root / "config.json"
        if not cfg.exists():
            cfg.write_text(json.dumps(scenario.config(board_id)), encoding="utf-8")
        self.rng = np.random.default_rng(seed)
        self.noise_lsb = noise_lsb
        self.now_ms = 0
        self.machine = FakeMachine(self._adc_code, lambda: self.now_ms)
        self.fs = _SimFlash(self.fw["flashfs"].FlashFs, flash_bytes)
        self.out = bytearray()
        self.lock = threading.Lock()
        first = scenario.experiments[0]
        self.model = ThermalModel(
            Vessel(
                first.vessel.heat_capacity_J_per_K, 1.0, first.vessel.start_C, first.vessel.start_C
            )
        )
        self.model_start_ms = 0
        self.current_run: int | None = None
        self.runs: list[dict[str, Any]] = []
        self.resets = 0
        self._ratio_at = (-1, 0.5)
        if scenario.power_monitor:
            self.monitor = SimIna226(self._heater_state, SHUNT_OHM, self.rng)
            self.machine.i2c_devices[MONITOR_ADDRESS] = self.monitor
        self._start_firmware(PWRON_RESET)

    # -- firmware lifecycle ----------------------------------------------------------------
    def _write(self, data: Any) -> None:
        self.out += bytes(data)
        if len(self.out) > MAX_PENDING_OUT:
            del self.out[: len(self.out) - MAX_PENDING_OUT]

    def _start_firmware(self, cause: int) -> None:
        self.machine.cause = cause
        self._write(f"heatlog: boot, reset cause {cause} (virtual board)\r\n".encode())
        self.now_ms += ABORT_MS
        rtc = (self.machine.RTC(), time.gmtime, _mktime_utc, 1970)
        self.logger = self.fw["logger"].Logger(
            self.fs, str(self.root), self.machine, self._write, cause, lambda: 150_000, rtc
        )
        self.logger.boot(self.ticks)

    def reset(self, cause: int = WDT_RESET) -> None:
        """Restart the firmware as a watchdog reset would: RAM (the unflushed batch, the
        parser, the clock) is lost, flash and the RTC are kept; the active run resumes."""
        store = self.logger.store
        if store.file is not None:
            store.file.close()  # flushed bytes only: the store writes and flushes together
        self.resets += 1
        self._start_firmware(cause)

    @property
    def ticks(self) -> int:
        return self.now_ms & (TICKS_PERIOD - 1)

    # -- stepping --------------------------------------------------------------------------
    def advance_to(self, t_ms: int) -> None:
        """Run the firmware's loop turns (samples, flushes) up to virtual time t_ms."""
        lg = self.logger
        while True:
            wait = lg.poll(None, self.ticks)
            s = lg.sampler
            if s is None or not s.running:
                break
            nxt = self.now_ms + max(int(wait), 1)
            if nxt > t_ms:
                break
            self.now_ms = nxt
        self.now_ms = max(self.now_ms, int(t_ms))

    def feed(self, data: bytes) -> None:
        """Host bytes arrive now: the firmware parses them and answers."""
        if data:
            self.logger.poll(memoryview(bytearray(data)), self.ticks)

    def log_run(self, seconds: float, clock_ms: int | None = 1_780_000_000_000) -> int:
        """Log one run of ``seconds`` virtual time by sending the board real request frames
        (set clock, start, stop); the replies are discarded. Returns the run number."""
        from heatlog.device import framing as fr

        with self.lock:
            if clock_ms is not None:
                self.feed(fr.encode(fr.SET_CLOCK, 250, struct.pack("<q", clock_ms + self.now_ms)))
            self.feed(fr.encode(fr.START_RUN, 251))
            run = self.logger.store.run_no
            self.advance_to(self.now_ms + int(seconds * 1000))
            self.feed(fr.encode(fr.STOP_RUN, 252))
            self.take_output()
        return int(run)

    def take_output(self) -> bytes:
        out = bytes(self.out)
        self.out.clear()
        return out

    # -- the analogue side -------------------------------------------------------------------
    def _begin_experiment(self, run: int) -> None:
        k = len(self.runs) % len(self.scenario.experiments)
        exp = self.scenario.experiments[k]
        self.model = ThermalModel(exp.vessel, exp.sources)
        self.model_start_ms = self.now_ms
        self._ratio_at = (-1, 0.5)
        self.current_run = run
        self.runs.append({"run": run, "experiment": exp, "model": self.model})

    def _begin_if_new_run(self) -> None:
        store = self.logger.store
        if store.active and store.run_no != self.current_run:
            self._begin_experiment(store.run_no)

    def _heater_state(self) -> tuple[float, float]:
        """(volts across the heater, amps through it) now: what the monitor measures."""
        self._begin_if_new_run()
        self.model.advance((self.now_ms - self.model_start_ms) / 1000.0)
        t = self.model.t
        for s in self.model.sources:
            if isinstance(s, SuppliedHeater):
                return s.voltage_V(t), s.current_A(t)
        return 0.0, 0.0

    def _adc_code(self, pin: object) -> int:
        self._begin_if_new_run()
        if self._ratio_at[0] != self.now_ms:  # every read of one sample sees the same moment
            self.model.advance((self.now_ms - self.model_start_ms) / 1000.0)
            r = self._resistance(self.model.probe_C)
            self._ratio_at = (self.now_ms, r / (r + R_FIXED_OHM))  # NTC on the divider's low side
        x = self._ratio_at[1]
        code = round(4096.0 * x + self.rng.normal(0.0, self.noise_lsb))
        return min(max(code, 0), 4095)

    def _resistance(self, temp_C: float) -> float:
        """The probe's true resistance: a 1 mK table of the model, interpolated linearly
        (interpolation error below 1e-7 relative, far under the ADC's resolution)."""
        i = (temp_C - _TABLE_T0) / _TABLE_STEP
        if not 0 <= i < len(_LN_R_TABLE) - 1:
            return float(PROBE_TRUTH.temperature_to_resistance(temp_C))
        k = int(i)
        f = i - k
        return math.exp(_LN_R_TABLE[k] * (1 - f) + _LN_R_TABLE[k + 1] * f)

    def truth(self) -> dict[str, Any]:
        """What really happened in each run so far (invented data): heat put in, heat capacity."""
        out = []
        for r in self.runs:
            exp, model = r["experiment"], r["model"]
            out.append(
                {
                    "run": r["run"],
                    "experiment": exp.name,
                    "title": exp.title,
                    "heat_capacity_J_per_K": exp.vessel.heat_capacity_J_per_K,
                    "exchange_W_per_K": exp.vessel.exchange_W_per_K,
                    "total_heat_J": sum(s.total_J for s in exp.sources),
                    "released_so_far_J": model.released_J(),
                    "elapsed_s": model.t,
                    "facts": exp.facts,
                }
            )
        return {
            "scenario": self.scenario.name,
            "data": "invented data (heatlog simulator)",
            "virtual_time_s": self.now_ms / 1000.0,
            "resets": self.resets,
            "runs": out,
        }


def _mktime_utc(t: tuple[int, ...]) -> int:
    """MicroPython's time.mktime on a board with UTC time: (y, m, d, h, mi, s, wd, yd)."""
    return calendar.timegm((t[0], t[1], t[2], t[3], t[4], t[5], 0, 0, 0))


def pty_available() -> bool:
    """True where :class:`PtyServer` can run (pseudo-terminals and the ``tty`` module)."""
    if not hasattr(os, "openpty"):
        return False
    try:
        import tty  # noqa: F401  (POSIX only)
    except ImportError:
        return False
    return True


class _BoardServer:
    """Serve a VirtualBoard over a byte stream; ``speed`` virtual seconds per real second.

    ``baud`` paces the board's output at baud/10 bytes per second (a UART-like link; no
    credit is saved up while idle); None sends as fast as the other side takes it.
    ``latency_s`` delays host bytes before the firmware sees them (USB polling and interpreter
    time). Thread-safe controls: ``stop()``, ``request_reset()``. Subclasses move the bytes:
    :class:`PtyServer` (a pseudo-terminal, POSIX) and :class:`TcpServer` (a local socket, any
    system)."""

    def __init__(
        self,
        board: VirtualBoard,
        *,
        speed: float = 1.0,
        baud: int | None = None,
        latency_s: float = 0.0,
        truth_path: Path | None = None,
    ):
        self.board = board
        self.latency_s = latency_s
        self.speed = speed
        self.baud = baud
        self.truth_path = truth_path
        self._stop = threading.Event()
        self._reset = threading.Event()
        self._thread: threading.Thread | None = None
        self.bytes_out = 0

    # -- what a subclass provides ----------------------------------------------------------------
    @property
    def path(self) -> str:
        """What a host opens (a device path or a pyserial URL)."""
        raise NotImplementedError

    def _receive(self, wait: float) -> bytes:
        """Host bytes that arrived within ``wait`` seconds (b"" if none)."""
        raise NotImplementedError

    def _send(self, data: bytes) -> int:
        """Hand bytes to the host without blocking; returns how many were taken."""
        raise NotImplementedError

    def _listening(self) -> bool:
        """False while no host is there to read (the board's output is then dropped)."""
        return True

    def _close_io(self) -> None:
        raise NotImplementedError

    # -- controls -----------------------------------------------------------------------------
    def request_reset(self) -> None:
        self._reset.set()

    def request_stop(self) -> None:
        """Ask serve() to end (safe from a signal handler or another thread)."""
        self._stop.set()

    def stop(self) -> None:
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout=5)

    def start(self) -> Self:
        self._thread = threading.Thread(target=self.serve, name="heatlog-sim", daemon=True)
        self._thread.start()
        return self

    def close(self) -> None:
        self.stop()
        self._close_io()

    def _write_truth(self) -> None:
        if self.truth_path is not None:
            tmp = Path(str(self.truth_path) + ".tmp")
            tmp.write_text(json.dumps(self.board.truth(), indent=2), encoding="utf-8")
            os.replace(tmp, self.truth_path)

    def serve(self, seconds: float | None = None) -> None:
        """Run until stop() (or for ``seconds`` of real time)."""
        b = self.board
        r0, v0 = time.monotonic(), b.now_ms
        pending = bytearray()
        last_pace = r0
        allowance = 0.0
        runs_seen = 0
        last_truth = 0.0
        inbox: list[tuple[float, bytes]] = []
        busy = False
        while not self._stop.is_set():
            now = time.monotonic()
            if seconds is not None and now - r0 > seconds:
                break
            data = self._receive(0.001 if pending or inbox else 0.005)
            now = time.monotonic()
            if self.latency_s > 0:
                if data:
                    inbox.append((now + self.latency_s, data))
                data = b""
                while inbox and inbox[0][0] <= now:
                    data += inbox.pop(0)[1]
            with b.lock:
                if self._reset.is_set():
                    self._reset.clear()
                    b.reset()
                    r0, v0 = now, b.now_ms
                target = v0 + int((now - r0) * self.speed * 1000)
                step = int(max(50.0, self.speed * 50.0))  # at most ~50 ms of real time per turn
                if target - b.now_ms > step:  # the host machine cannot keep up: run flat out
                    target = b.now_ms + step
                    r0, v0 = now, target
                b.advance_to(target)
                b.feed(data)
                pending += b.take_output()
                if len(b.runs) != runs_seen or now - last_truth > 1.0:
                    runs_seen, last_truth = len(b.runs), now
                    self._write_truth()
            if not self._listening():
                pending.clear()
            if len(pending) > MAX_PENDING_OUT:
                del pending[: len(pending) - MAX_PENDING_OUT]
            if pending:
                n = len(pending)
                if self.baud:  # the line sends continuously while it has bytes: no lost credit
                    allowance += (now - last_pace) * self.baud / 10 if busy else 0.0
                    n = min(n, int(allowance))
                busy = True
                last_pace = now
                if n > 0:
                    k = self._send(bytes(pending[:n]))
                    del pending[:k]
                    allowance -= k
                    self.bytes_out += k
            if not pending:  # idle line: no credit is saved up
                busy = False
                last_pace = now
                allowance = 0.0
        self._write_truth()


class PtyServer(_BoardServer):
    """A VirtualBoard behind ``os.openpty`` (Linux, macOS), with an optional symlink to the
    slave side that a host opens like a serial port. The only user of POSIX-only modules."""

    def __init__(self, board: VirtualBoard, link_path: Path | None = None, **kw: Any):
        super().__init__(board, **kw)
        if not pty_available():
            from heatlog.errors import InputError

            raise InputError(
                "this system has no pseudo-terminals; serve the virtual board over TCP instead "
                "(heatlog sim --tcp PORT, then --port socket://127.0.0.1:PORT)"
            )
        import tty  # POSIX only: the pty path is the one place that needs it

        self.master, self.slave = os.openpty()
        tty.setraw(self.slave)
        os.set_blocking(self.master, False)
        self.port = os.ttyname(self.slave)
        self.link_path = link_path
        if link_path is not None:
            from heatlog.sim.linkpath import make_link

            try:
                make_link(link_path, self.port)  # never over an existing file
            except Exception:
                for fd in (self.master, self.slave):
                    os.close(fd)
                raise

    @property
    def path(self) -> str:
        return str(self.link_path) if self.link_path is not None else self.port

    def _receive(self, wait: float) -> bytes:
        ready, _, _ = select.select([self.master], [], [], wait)
        if not ready:
            return b""
        try:
            return os.read(self.master, 65536)
        except (BlockingIOError, OSError):
            return b""

    def _send(self, data: bytes) -> int:
        try:
            return os.write(self.master, data)
        except (BlockingIOError, OSError):
            return 0

    def _close_io(self) -> None:
        for fd in (self.master, self.slave):
            try:
                os.close(fd)
            except OSError:
                pass
        if self.link_path is not None and Path(self.link_path).is_symlink():
            Path(self.link_path).unlink()


LEAVING_GRACE_S = 0.5  # how long a new connection waits for the previous host's close to show


class TcpServer(_BoardServer):
    """A VirtualBoard on a local TCP socket (any system): a host opens
    ``socket://127.0.0.1:PORT`` with pyserial. One host at a time, as on a serial port: a
    second connection is closed at once; the board's output while no host is connected is
    dropped, as a USB serial board's is. ``port=0`` picks a free port (see ``url``)."""

    def __init__(self, board: VirtualBoard, port: int = 0, *, host: str = "127.0.0.1", **kw: Any):
        super().__init__(board, **kw)
        self.listener = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
        try:
            if os.name != "nt":  # Windows' SO_REUSEADDR would let two servers share a port
                self.listener.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
            self.listener.bind((host, port))
        except OSError as exc:
            self.listener.close()
            from heatlog.errors import InputError

            raise InputError(
                f"cannot serve the virtual board on {host}:{port} ({exc.strerror or exc}); "
                "choose another port, or 0 for any free one"
            ) from None
        self.listener.listen(1)
        self.listener.setblocking(False)
        self.host = host
        self.port = int(self.listener.getsockname()[1])
        self.client: socket.socket | None = None
        self.connections = 0

    @property
    def url(self) -> str:
        return f"socket://{self.host}:{self.port}"

    @property
    def path(self) -> str:
        return self.url

    def _drop_client(self) -> None:
        if self.client is not None:
            try:
                self.client.close()
            except OSError:
                pass
            self.client = None

    def _listening(self) -> bool:
        return self.client is not None

    def _receive(self, wait: float) -> bytes:
        watch = [self.listener] + ([self.client] if self.client is not None else [])
        try:
            ready, _, _ = select.select(watch, [], [], wait)
        except (OSError, ValueError):
            return b""
        data = b""
        if self.client is not None and self.client in ready:  # first: a host that just left
            try:
                data = self.client.recv(65536)
                if not data:  # the host closed the port
                    self._drop_client()
            except (BlockingIOError, InterruptedError):
                pass
            except OSError:
                self._drop_client()
        if self.listener in ready:
            try:
                conn, _ = self.listener.accept()
            except OSError:
                conn = None
            if conn is not None:
                if self.client is not None:  # a host that closed just before may not show yet
                    data += self._drain_leaving(LEAVING_GRACE_S)
                if self.client is None:
                    conn.setblocking(False)
                    conn.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
                    self.client = conn
                    self.connections += 1
                else:  # busy, as a serial port opened by another program
                    conn.close()
        return data

    def _drain_leaving(self, grace_s: float) -> bytes:
        """Read what the connected host still sends for up to ``grace_s``; drop it if it has
        closed (end of stream), so a host that reopens the port right after is not refused."""
        got = b""
        deadline = time.monotonic() + grace_s
        while self.client is not None:
            left = deadline - time.monotonic()
            try:
                ready, _, _ = select.select([self.client], [], [], max(left, 0.0))
            except (OSError, ValueError):
                self._drop_client()
                break
            if not ready:
                break
            try:
                chunk = self.client.recv(65536)
            except (BlockingIOError, InterruptedError):
                continue
            except OSError:
                chunk = b""
            if not chunk:
                self._drop_client()
                break
            got += chunk
        return got

    def _send(self, data: bytes) -> int:
        if self.client is None:
            return len(data)
        try:
            return self.client.send(data)
        except (BlockingIOError, InterruptedError):
            return 0
        except OSError:
            self._drop_client()
            return len(data)

    def _close_io(self) -> None:
        self._drop_client()
        try:
            self.listener.close()
        except OSError:
            pass


class DirectPort:
    """An in-memory port wired straight to a VirtualBoard (no pty, no thread): host writes are
    fed to the firmware at once; each read first advances the virtual clock by ``step_ms``.
    Same ``read``/``write``/``in_waiting`` surface as a pyserial port."""

    def __init__(self, board: VirtualBoard, step_ms: int = 1):
        self.board = board
        self.step_ms = step_ms
        self.timeout = 0.0
        self._buf = bytearray()

    def _pump(self) -> None:
        b = self.board
        with b.lock:
            b.advance_to(b.now_ms + self.step_ms)
            self._buf += b.take_output()

    @property
    def in_waiting(self) -> int:
        self._pump()
        return len(self._buf)

    def read(self, n: int = 1) -> bytes:
        if not self._buf:
            self._pump()
        out = bytes(self._buf[:n])
        del self._buf[:n]
        return out

    def write(self, data: bytes) -> int:
        with self.board.lock:
            self.board.feed(bytes(data))
        return len(data)

    def reset_input_buffer(self) -> None:
        self._pump()
        self._buf.clear()

    def close(self) -> None:
        pass
