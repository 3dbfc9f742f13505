"""The logger: config, channels, sampler, log store, clock and the command link in one object.

Hardware and files are passed in, so the whole loop runs under CPython and the MicroPython
WebAssembly port with fakes. `poll(data, now)` is one turn of the main loop.
"""

from . import FIRMWARE_VERSION, channels, config, framing, protocol
from . import logformat as lf
from .clock import Clock, rtc_read, rtc_write
from .logstore import LogStore, StoreError
from .sampler import Sampler
from .ticks import ticks_diff

CONFIG_FILE = "config.json"
# A frame cut short on the way in is dropped after this much silence, so the next request is
# parsed from its own start byte (firmware/PROTOCOL.md: the host resends after a timeout).
IDLE_RESET_MS = 500


class Logger:
    def __init__(self, fs, root, machine, write, reset_cause=0, mem_free=None, rtc=None):
        self.fs = fs
        self.root = root
        self.machine = machine
        self.write = write
        self.reset_cause = reset_cause
        self.mem_free = mem_free
        self.rtc = rtc  # None, or (machine.RTC(), time.gmtime, time.mktime, epoch year)
        self.clock = Clock()
        self.parser = framing.Parser()
        self.read_buf = bytearray(protocol.READ_CHUNK)
        self.streaming = False
        self.live = bytearray(0)
        self.packer = None
        self.sampler = None
        self.cfg = None
        self.config_errors = []
        self.config_text = ""
        self.store = None
        self.run_clock_unset = True
        self.watchdog_wanted = False
        self.leave = False  # the host asked for the REPL (app.run returns, or resets first)
        self._turns = 0
        self._last_rx = 0
        self._load_config()

    # -- configuration -----------------------------------------------------------------
    def _config_path(self):
        return self.root + "/" + CONFIG_FILE

    def _load_config(self):
        try:
            with self.fs.open(self._config_path(), "r") as f:
                text = f.read(config.MAX_CONFIG_BYTES + 1)
        except OSError:
            text = ""
        self._apply_config(text)

    def _apply_config(self, text):
        self.config_text = text
        self.sampler = None
        if not text:
            self.cfg, self.config_errors = None, ["no " + CONFIG_FILE + " on the board"]
        else:
            self.cfg, self.config_errors = config.parse(text)
        cfg = self.cfg  # config.parse checked pins and conversion time too (config.validate)
        if cfg is not None:
            try:
                drivers = channels.build(cfg, self.machine)
            except Exception as e:  # wrong pins or a missing device: report, idle safely
                self.config_errors = ["hardware: " + type(e).__name__ + " " + str(e)]
                self.cfg = None
                return
            self.sampler = Sampler(drivers, cfg["interval_ms"], cfg["oversample"])
            self.packer = lf.RecordPacker(len(drivers))
            self.live = bytearray(self.packer.size)
        if self.store is None:
            flush_ms = cfg["flush_ms"] if cfg else 5000
            self.store = LogStore(self.root, self.fs, batch_records=16, flush_ms=flush_ms)

    def put_config(self, payload, now):
        """Validate and store a new config (temp file + rename); refused while a run is active."""
        if self.store.active:
            raise StoreError("a run is active; stop it before changing the config")
        try:
            text = bytes(payload).decode()
        except UnicodeError:
            return ["config is not UTF-8 text"]
        cfg, errs = config.parse(text)
        if errs:
            return errs
        tmp = self._config_path() + ".tmp"
        with self.fs.open(tmp, "w") as f:
            f.write(text)
            f.flush()
        try:
            self.fs.rename(tmp, self._config_path())
        except OSError:
            self.fs.remove(self._config_path())
            self.fs.rename(tmp, self._config_path())
        self.streaming = False
        self._apply_config(text)
        return self.config_errors

    # -- boot and runs -------------------------------------------------------------------
    def boot(self, now):
        """Report the boot over serial and resume an interrupted run if the config allows.
        A host-set time kept by the RTC through a soft or watchdog reset restores the clock."""
        if self.rtc is not None:
            try:
                ms = rtc_read(self.rtc[0], self.rtc[2], self.rtc[3])
            except (OSError, ValueError, OverflowError):
                ms = 0
            if ms:
                self.clock.set(ms, now)
        if self.config_errors:
            self.report("config invalid, logging disabled: " + "; ".join(self.config_errors))
            return None
        res = self.store.resume(
            self.reset_cause, self.clock.now_ms(now), self.cfg["interval_ms"], now
        )
        if res is None:
            return None
        run, next_seq, base, hdr = res
        if hdr["n_channels"] != self.sampler.n or hdr["interval_ms"] != self.cfg["interval_ms"]:
            self.store.stop(now)  # config changed under the run: keep the file, stop cleanly
            self.report("run " + str(run) + " not resumed: config no longer matches it")
            return None
        self.run_clock_unset = self.store.anchor_ms == 0
        self.sampler.start(now, next_seq, base, lf.REC_SEGMENT_START)
        self.watchdog_wanted = True
        self.report("resumed run " + str(run) + " at record " + str(next_seq))
        return run

    def report(self, msg):
        """A human-readable line on the serial port (the host discards non-frame bytes)."""
        self.write(("heatlog: " + msg + "\r\n").encode())

    def _need_config(self):
        if self.cfg is None:
            raise StoreError("config invalid: " + "; ".join(self.config_errors))

    def start_run(self, now):
        self._need_config()
        cfg = self.cfg
        anchor = self.clock.now_ms(now)
        run = self.store.start(
            cfg["board_id"], FIRMWARE_VERSION, cfg["interval_ms"], cfg["oversample"],
            channels.table(cfg), anchor, now,
        )  # fmt: skip
        self.run_clock_unset = anchor == 0
        self.sampler.start(now, 0, 0, 0)
        self.watchdog_wanted = True
        return run

    def stop_run(self, now):
        if not self.store.active:
            raise StoreError("no run is active")
        run = self.store.run_no
        self.store.stop(now)
        if not self.streaming:
            self.sampler.running = False
        return run

    def set_clock(self, ms, now):
        prev = self.clock.set(ms, now)
        if self.rtc is not None:
            try:
                rtc_write(self.rtc[0], ms, self.rtc[1], self.rtc[3])
            except (OSError, ValueError, OverflowError):
                pass
        if self.store.active and self.sampler is not None:
            s = self.sampler
            # anchor = wall time at offset 0: now minus the offset of the current moment
            offset_now = s.due_offset + ticks_diff(now, s.next_due)
            self.store.clock_set(ms - offset_now, s.seq, offset_now, now)
            self.run_clock_unset = False
        return prev

    def leave_to_repl(self):
        """The host asks for the REPL (to install firmware). Refused while a run is active.
        Returns 1 if the board must reset first (a started watchdog cannot be stopped: the host
        catches the abort window after the reset), else 0 (the loop returns to the REPL)."""
        if self.store.active:
            raise StoreError("a run is active; stop it before leaving to the REPL")
        self.leave = True
        self.streaming = False
        return 1 if self.watchdog_wanted else 0

    def stream(self, on, now):
        self._need_config()
        self.streaming = on
        if on and not self.sampler.running:
            self.sampler.start(now, 0, 0, 0)
        if not on and not self.store.active:
            self.sampler.running = False
        return self.packer.size

    def identify(self, now):
        free, total = self.store.space()
        return {
            "board_id": self.cfg["board_id"] if self.cfg else None,
            "firmware": FIRMWARE_VERSION,
            "format": lf.FORMAT_VERSION,
            "protocol": protocol.PROTOCOL_VERSION,
            "free_bytes": free,
            "total_bytes": total,
            "clock_ms": self.clock.now_ms(now) if self.clock.is_set else None,
            "mem_free": self.mem_free() if self.mem_free else None,
            "run": self.store.run_no if self.store.active else None,
            "stop_reason": self.store.stop_reason,
            "reset_cause": self.reset_cause,
            "config_errors": self.config_errors,
            "record_size": self.packer.size if self.packer else None,
            "skipped_slots": self.sampler.skipped if self.sampler else 0,
        }

    # -- main loop turn ---------------------------------------------------------------
    def poll(self, data, now):
        """Handle incoming bytes, then take a sample if one is due. Returns ms until next due."""
        self._turns += 1
        if self._turns >= 10000:  # every few minutes: keep the clock's ticks base fresh
            self._turns = 0
            self.clock.now_ms(now)
        if data:
            self._last_rx = now
            for ftype, rid, payload in self.parser.feed(data):
                for reply in protocol.handle(self, ftype, rid, payload, now):
                    self.write(reply)
        elif self.parser.n and ticks_diff(now, self._last_rx) >= IDLE_RESET_MS:
            dropped = self.parser.reset()
            if dropped is not None:
                for reply in protocol.handle(self, dropped[0], dropped[1], dropped[2], now):
                    self.write(reply)
        s = self.sampler
        if s is None or not s.running:
            return 50
        logging = self.store.active
        if s.step(now, self.store if logging else None, self.run_clock_unset):
            if logging and not self.store.active:
                self.report("run stopped: " + self.store.stop_reason)
                if not self.streaming:
                    s.running = False
            if self.streaming:
                self.packer.pack(
                    self.live, 0, s.seq - 1, s.last_offset, s.last_flags, s.fault_mask, s.raw
                )
                self.write(framing.encode(protocol.LIVE, 0, self.live))
        return max(0, s.ms_until_due(now))
