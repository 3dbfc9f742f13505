"""ADS1115 16-bit ADC on I2C (0x48-0x4B): single-shot conversions, PGA gain, data rate.

Not ratiometric: a channel measures the divider midpoint and the excitation at the same PGA
and stores the ratio signal/excitation as Q15 (ratio * 32768).
"""

from .ticks import sleep_ms

try:
    from micropython import const  # pyright: ignore[reportAssignmentType]
except ImportError:

    def const(x):
        return x


_REG_CONV = const(0x00)
_REG_CONFIG = const(0x01)
_OS_START = const(0x8000)
_MODE_SINGLE = const(0x0100)
_COMP_OFF = const(0x0003)

FSR_MV = (6144, 4096, 2048, 1024, 512, 256)  # PGA setting 0..5
RATES_SPS = (8, 16, 32, 64, 128, 250, 475, 860)  # DR setting 0..7

FAULT_NONE = const(0)
FAULT_OPEN = const(1)
FAULT_RANGE = const(3)


class Ads1115Error(Exception):
    """The converter did not finish a conversion."""


class Ads1115:
    def __init__(self, i2c, address=0x48, gain=1, rate=4):
        if gain not in range(6) or rate not in range(8):
            raise ValueError("gain 0..5, rate 0..7")
        self.i2c = i2c
        self.address = address
        self.gain = gain
        self.rate = rate
        self.wait_ms = 1000 * 11 // (10 * RATES_SPS[rate]) + 1  # 1/DR + 10 %
        self._buf = bytearray(2)

    def _write(self, reg, value):
        b = self._buf
        b[0] = (value >> 8) & 0xFF
        b[1] = value & 0xFF
        self.i2c.writeto_mem(self.address, reg, b)

    def _read(self, reg):
        b = self._buf
        self.i2c.readfrom_mem_into(self.address, reg, b)
        return (b[0] << 8) | b[1]

    def read_code(self, mux):
        """One single-shot conversion of input mux (0-3 differential, 4-7 AINx vs GND): int16."""
        cfg = (
            _OS_START | (mux << 12) | (self.gain << 9) | _MODE_SINGLE | (self.rate << 5) | _COMP_OFF
        )
        self._write(_REG_CONFIG, cfg)
        sleep_ms(self.wait_ms)
        for _ in range(20):
            if self._read(_REG_CONFIG) & _OS_START:
                break
            sleep_ms(1)
        else:
            raise Ads1115Error("ADS1115 conversion did not complete")
        v = self._read(_REG_CONV)
        return v - 65536 if v & 0x8000 else v


class Ads1115Ratio:
    """One thermistor channel: signal input over excitation input, as Q15."""

    def __init__(self, ads, signal_mux, excitation_mux):
        self.ads = ads
        self.signal = signal_mux
        self.excitation = excitation_mux
        self.fault = FAULT_NONE

    def read_raw(self, n):
        ads = self.ads
        sig = 0
        exc = 0
        for _ in range(n):
            sig += ads.read_code(self.signal)
            exc += ads.read_code(self.excitation)
        sig = (sig + n // 2) // n
        exc = (exc + n // 2) // n
        if exc <= 0:
            self.fault = FAULT_OPEN
            return 0
        self.fault = FAULT_RANGE if sig >= 32767 or sig <= -32768 or sig > exc else FAULT_NONE
        if sig < 0:
            sig = 0
        if sig > exc:
            sig = exc
        return (sig * 32768) // exc  # sig, exc <= 32767: stays a small int on 32-bit boards
