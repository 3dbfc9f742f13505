"""Board entry point: abort window, then the logger loop on the USB serial port.

Keep main.py as `import app; app.run()`. To reach the REPL, reset and press Ctrl-C within the
abort window; afterwards Ctrl-C is disabled because binary frames may contain 0x03.
"""

import gc
import os
import select
import sys
import time

import machine
import micropython
from heatlog_fw.flashfs import FlashFs
from heatlog_fw.logger import Logger

ROOT = "/heatlog"
ABORT_MS = 2000


def _writer(out):
    def write(data):
        mv = memoryview(data)
        while len(mv):
            n = out.write(mv)
            if n is None:
                n = 0
            mv = mv[n:]

    return write


def _led(pin):
    if pin is None:
        return None
    try:
        return machine.Pin(pin, machine.Pin.OUT)
    except (ValueError, TypeError):
        return None


def _mem_free():
    # collect first: without it gc.mem_free() is a point on the collector's saw-tooth (anywhere
    # from the true free heap down to almost nothing), not the memory the firmware has to spare
    gc.collect()
    return gc.mem_free()


def run():
    cause = machine.reset_cause()
    print("heatlog: boot, reset cause", cause, "- press Ctrl-C within", ABORT_MS, "ms for the REPL")
    time.sleep_ms(ABORT_MS)  # abort window: KeyboardInterrupt here leaves the board at the REPL
    try:
        os.mkdir(ROOT)
    except OSError:
        pass
    out = _writer(sys.stdout.buffer)
    wdt = None
    if cause != machine.PWRON_RESET:
        # a watchdog started before a soft reset keeps running: feed it through the boot scan
        wdt = machine.WDT(timeout=8000)
    rtc = (machine.RTC(), time.gmtime, time.mktime, time.gmtime(0)[0])
    lg = Logger(FlashFs(), ROOT, machine, out, cause, _mem_free, rtc)
    if wdt is not None:
        lg.store.progress = wdt.feed
    lg.boot(time.ticks_ms())
    led = _led(lg.cfg.get("led_pin") if lg.cfg else None)
    inp = sys.stdin.buffer
    poller = select.poll()
    poller.register(sys.stdin, select.POLLIN)
    buf = bytearray(256)
    micropython.kbd_intr(-1)
    try:
        while True:
            n = 0
            while n < len(buf) and poller.poll(0):
                b = inp.read(1)
                if not b:
                    break
                buf[n] = b[0]
                n += 1
            now = time.ticks_ms()
            wait = lg.poll(memoryview(buf)[:n] if n else None, now)
            if lg.watchdog_wanted and wdt is None:
                wdt = machine.WDT(timeout=lg.cfg["watchdog_ms"] if lg.cfg else 8000)
                lg.store.progress = wdt.feed
            if wdt is not None:
                wdt.feed()
            if led is not None:
                led.value(1 if lg.store.active else 0)
            if lg.leave:  # the host asked for the REPL (protocol 0x0C); the reply is out
                time.sleep_ms(100)
                if wdt is not None:
                    machine.reset()  # the watchdog cannot be stopped: the host Ctrl-Cs at boot
                break
            poller.poll(min(wait, 20))
    finally:
        micropython.kbd_intr(3)
