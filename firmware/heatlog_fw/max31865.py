"""MAX31865 RTD-to-digital converter on SPI (mode 1 or 3, <= 5 MHz, manual chip select).

One-shot conversions, with the bias kept on (default) or, with `bias_settle_ms`, switched on only
for each conversion and fault cycle (less self-heating of the RTD and the reference): the bias
is turned on, left to settle for bias_settle_ms (MAX31865 datasheet, from memory: VBIAS on for
at least 10.5 time constants of the input RC filter, plus about 1 ms, before a one-shot), then
the conversion starts and the bias goes off again; the fault register is decoded into probe-fault
codes and the RTD high/low thresholds are programmed so D7/D6 can fire (channels.build derives
them from the probe's valid range, conversions.rtd_fault_codes).

Fault-detection policy: the automatic fault-detection cycle (D5..D3: open element or leads) runs
when a run or live stream starts (`run_start`), every `cycle_every` samples (channels.build:
config `fault_check_s`, default 300 s), and at once whenever a conversion flags a fault or its code
sits at a rail (0 or full scale). Its result holds until the next cycle.
"""

from .ticks import sleep_ms

try:
    from micropython import const  # pyright: ignore[reportAssignmentType]
except ImportError:

    def const(x):
        return x


_REG_CONFIG = const(0x00)
_REG_RTD = const(0x01)
_REG_HIGH = const(0x03)
_REG_LOW = const(0x05)
_REG_FAULT = const(0x07)
_WRITE = const(0x80)
_VBIAS = const(0x80)
_ONE_SHOT = const(0x20)
_THREE_WIRE = const(0x10)
_FAULT_CLEAR = const(0x02)
_FAULT_AUTO = const(0x04)  # D3:D2 = 01: automatic fault-detection cycle (write 100X010Xb)
_FAULT_CYCLE = const(0x0C)  # D3:D2 read back 00 when the cycle is done
_OPEN_CODE = const(0x7FF0)  # code at full scale: open element (common practice, no source)
_CYCLE_BITS = const(0x3C)  # D5..D2: results of a fault-detection cycle
_FILTER_50HZ = const(0x01)

FAULT_NONE = const(0)
FAULT_OPEN = const(1)
FAULT_SHORT = const(2)
FAULT_RANGE = const(3)


def fault_kind(reg, code=-1, low_code=0):
    """Fault register bits -> one probe-fault code (open, short, out of range).

    code: the RTD code read with the fault (-1 unknown); low_code: the programmed low threshold.
    Above the high threshold at full scale is an open element; below the low threshold and under
    half of it (well below the probe's coldest valid resistance) is a short; otherwise a reading
    past a threshold is out of range."""
    if reg & 0x38:  # D5..D3: REFIN-/RTDIN- against VBIAS: open element or leads
        return FAULT_OPEN
    if reg & 0x80:  # D7: above the high threshold
        return FAULT_OPEN if code >= _OPEN_CODE else FAULT_RANGE
    if reg & 0x40:  # D6: below the low threshold
        return FAULT_SHORT if code < 0 or code < low_code >> 1 else FAULT_RANGE
    if reg & 0x04:  # D2: over/under voltage
        return FAULT_RANGE
    return FAULT_NONE


class Max31865:
    def __init__(
        self,
        spi,
        cs,
        wires=4,
        mains_hz=50,
        high_code=0x7FFF,
        low_code=0,
        cycle_every=0,
        bias_settle_ms=None,
    ):
        if wires not in (2, 3, 4):
            raise ValueError("wires must be 2, 3 or 4")
        self.spi = spi
        self.cs = cs
        self.settle_ms = bias_settle_ms  # None: bias always on
        self.base = (_THREE_WIRE if wires == 3 else 0) | (_FILTER_50HZ if mains_hz == 50 else 0)
        if bias_settle_ms is None:
            self.base |= _VBIAS
        self.wait_ms = 66 if mains_hz == 50 else 55  # one-shot: 62.5 ms (50 Hz) / 52 ms (60 Hz)
        self._w = bytearray(2)
        self._r = bytearray(3)
        mv = memoryview(self._r)
        self._addr = mv[0:1]
        self._data = (None, mv[1:2], mv[1:3])  # preallocated views: no allocation per read
        self.fault = FAULT_NONE
        self.fault_reg = 0
        self.fault_code = -1  # code of the conversion that raised the fault flag
        self.low_code = low_code
        self.cycle_every = cycle_every  # samples between fault-detection cycles (0: never)
        self.cycle_reg = 0  # D5..D2 of the last fault-detection cycle
        self.cycles = 0
        self._since = 0
        cs(1)
        self._write(_REG_CONFIG, self.base)
        self._write(_REG_HIGH, (high_code << 1) >> 8)
        self._write(_REG_HIGH + 1, (high_code << 1) & 0xFF)
        self._write(_REG_LOW, (low_code << 1) >> 8)
        self._write(_REG_LOW + 1, (low_code << 1) & 0xFF)
        self.clear_fault()

    def _write(self, reg, value):
        w = self._w
        w[0] = _WRITE | reg
        w[1] = value
        self.cs(0)
        self.spi.write(w)
        self.cs(1)

    def _read(self, reg, n):
        r = self._r
        r[0] = reg
        self.cs(0)
        self.spi.write(self._addr)
        self.spi.readinto(self._data[n])
        self.cs(1)
        return r

    def clear_fault(self):
        self._write(_REG_CONFIG, self.base | _FAULT_CLEAR)

    def fault_cycle(self):
        """Automatic fault-detection cycle (MAX31865 datasheet, from memory: write 100X010Xb to
        the config register, the cycle takes about 0.6 ms, done when D3:D2 read 00); keeps and
        returns the fault register's D5..D2."""
        self.clear_fault()
        self._bias_on()
        self._write(_REG_CONFIG, self.base | _VBIAS | _FAULT_AUTO)
        for _ in range(10):
            sleep_ms(1)
            if not self._read(_REG_CONFIG, 1)[1] & _FAULT_CYCLE:
                break
        reg = self._read(_REG_FAULT, 1)[1] & _CYCLE_BITS
        self.clear_fault()  # writes the base config: the bias goes off again if switched
        self.cycle_reg = reg
        self.cycles += 1
        self._since = 0
        return reg

    def _bias_on(self):
        if self.settle_ms is not None:
            self._write(_REG_CONFIG, self.base | _VBIAS)
            sleep_ms(self.settle_ms)

    def run_start(self):
        """At the start of a run or live stream: one fault-detection cycle."""
        self.fault_cycle()

    def read_code(self):
        """One one-shot conversion: 15-bit code; bit 0 of the LSB flags a fault."""
        self._bias_on()
        self._write(_REG_CONFIG, self.base | _VBIAS | _ONE_SHOT)
        sleep_ms(self.wait_ms)
        if self.settle_ms is not None:
            self._write(_REG_CONFIG, self.base)  # conversion done: bias off
        r = self._read(_REG_RTD, 2)
        code = ((r[1] << 8) | r[2]) >> 1
        if r[2] & 1:
            self.fault_reg |= self._read(_REG_FAULT, 1)[1]
            self.fault_code = code
            self.clear_fault()
        elif code == 0 or code >= _OPEN_CODE:
            self.fault_code = code
        return code

    def read_raw(self, n):
        """Sum of n codes (R = raw * R_ref / (32768 n)); sets self.fault from the fault register
        and the fault-detection cycle (run now if a code faulted or sat at a rail, or if due)."""
        self.fault_reg = 0
        self.fault_code = -1
        total = 0
        for _ in range(n):
            total += self.read_code()
        self._since += 1
        if self.fault_code >= 0 or (self.cycle_every and self._since >= self.cycle_every):
            self.fault_cycle()
        self.fault = fault_kind(self.fault_reg | self.cycle_reg, self.fault_code, self.low_code)
        return total
