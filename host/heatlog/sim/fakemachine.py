"""A stand-in for MicroPython's ``machine`` module, for the simulator (and reusable by tests).

One :class:`FakeMachine` is one board: its ADC pins read 12-bit codes from a callable the
simulator supplies (the thermal model plus the divider and ADC), its RTC keeps the host-set date
across firmware restarts, and ``reset_cause()`` reports how the firmware was last started. The
firmware only ever receives the object (``Logger(..., machine, ...)`` and ``channels.build``),
so several boards can live in one process.
"""

from __future__ import annotations

import calendar
import time
from collections.abc import Callable
from typing import Any

PWRON_RESET = 1
WDT_RESET = 3
SOFT_RESET = 5


class Pin:
    IN = 0
    OUT = 1
    PULL_UP = 2

    def __init__(self, id: object, mode: int = -1, pull: int = -1, value: int | None = None):
        self.id = id
        self.mode = mode
        self.v = 0 if value is None else value

    def __call__(self, v: int | None = None) -> int | None:
        if v is None:
            return self.v
        self.v = v
        return None

    def value(self, v: int | None = None) -> int | None:
        return self(v)

    def on(self) -> None:
        self.v = 1

    def off(self) -> None:
        self.v = 0


class _Adc:
    def __init__(self, machine: FakeMachine, pin: Pin):
        self.machine = machine
        self.pin = pin.id

    def read_u16(self) -> int:
        code = self.machine.adc_code(self.pin) & 0xFFF
        return (code << 4) | (code >> 8)  # rp2: the 12-bit code stretched to 16 bits


class _I2c:
    """An I2C bus whose devices the simulator supplies (address → object with read/write)."""

    def __init__(self, machine: FakeMachine, *args: object, **kwargs: object):
        self.machine = machine

    def _device(self, addr: int) -> Any:
        dev = self.machine.i2c_devices.get(addr)
        if dev is None:
            raise OSError(19, "no device at this address")  # ENODEV, as a bus without an ACK
        return dev

    def writeto_mem(self, addr: int, reg: int, buf: Any) -> None:
        self._device(addr).write(reg, bytes(buf))

    def readfrom_mem_into(self, addr: int, reg: int, buf: Any) -> None:
        data = self._device(addr).read(reg, len(buf))
        for i in range(len(buf)):
            buf[i] = data[i]


class _Rtc:
    """Keeps (y, m, d, weekday, h, mi, s, subsec) and runs on the board's clock."""

    def __init__(self, machine: FakeMachine):
        self.machine = machine

    def datetime(self, dt: tuple[int, ...] | None = None) -> tuple[int, ...] | None:
        m = self.machine
        if dt is None:
            secs = m.rtc_epoch_s + (m.now_ms() - m.rtc_set_ms) // 1000
            t = time.gmtime(secs)
            return (t[0], t[1], t[2], t[6], t[3], t[4], t[5], 0)
        y, mo, d, _wd, h, mi, s = tuple(dt)[:7]
        m.rtc_epoch_s = calendar.timegm((y, mo, d, h, mi, s, 0, 0, 0))
        m.rtc_set_ms = m.now_ms()
        return None


class _Wdt:
    def __init__(self, machine: FakeMachine, id: int = 0, timeout: int = 5000):
        self.machine = machine
        self.timeout = timeout

    def feed(self) -> None:
        self.machine.wdt_feeds += 1


class FakeMachine:
    """The ``machine`` API the firmware uses, for one virtual board."""

    PWRON_RESET = PWRON_RESET
    WDT_RESET = WDT_RESET
    SOFT_RESET = SOFT_RESET
    Pin = Pin

    class ADC:  # only the attribute the esp32 branch names
        ATTN_11DB = 3

    def __init__(
        self,
        adc_code: Callable[[object], int] | None = None,
        now_ms: Callable[[], int] | None = None,
    ):
        self.adc_code: Callable[[object], int] = adc_code or (lambda pin: 2048)
        self.now_ms: Callable[[], int] = now_ms or (lambda: 0)
        self.rtc_epoch_s = calendar.timegm((2021, 1, 1, 0, 0, 0, 0, 0, 0))  # rp2 power-up date
        self.rtc_set_ms = 0
        self.cause = PWRON_RESET
        self.wdt_feeds = 0
        self.i2c_devices: dict[int, Any] = {}
        # instance attributes shadow the class names the firmware calls
        self.ADC = self._adc  # type: ignore[misc,assignment]

    def _adc(self, pin: Pin, atten: int | None = None) -> _Adc:  # type: ignore[valid-type]
        return _Adc(self, pin)

    def I2C(self, *args: object, **kwargs: object) -> _I2c:  # noqa: N802
        return _I2c(self, *args, **kwargs)

    def RTC(self) -> _Rtc:  # noqa: N802 - the machine API's name
        return _Rtc(self)

    def WDT(self, id: int = 0, timeout: int = 5000) -> _Wdt:  # noqa: N802
        return _Wdt(self, id, timeout)

    def reset_cause(self) -> int:
        return self.cause
