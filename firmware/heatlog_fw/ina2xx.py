"""INA226 and INA219 current/voltage monitors on I2C: the heater's bus and shunt voltages.

The device converts continuously and averages by itself; each sample reads the two result
registers once and logs their codes unchanged, so the host applies the shunt resistance and
the device's gain and offset errors with their uncertainties. One config channel of kind
"ina226" or "ina219" is two logged channels: bus voltage (mode 0) and shunt voltage (mode 1).

Register facts (TI INA226 datasheet SBOS547, TI INA219 datasheet SBOS448; from memory, see
docs/REFERENCES.md: INA226, INA219):
- both: register 0x00 configuration, 0x01 shunt voltage (two's complement), 0x02 bus voltage;
  mode bits 2..0 = 0b111 converts shunt and bus continuously; bit 15 = reset.
- INA226: shunt LSB 2.5 uV (full scale +-81.92 mV), bus LSB 1.25 mV (bits 14..0);
  averaging count in bits 11..9 (1, 4, 16, 64, 128, 256, 512, 1024), bus conversion time in
  bits 8..6 and shunt conversion time in bits 5..3 (140, 204, 332, 588, 1100, 2116, 4156,
  8244 us); a complete result takes count x (bus + shunt conversion time).
- INA219: shunt LSB 10 uV at every PGA setting, PGA in bits 12..11 (+-40, 80, 160, 320 mV);
  bus range bit 13 (16 V or 32 V); bus result in bits 15..3 with LSB 4 mV, bit 0 (OVF) set on
  a math overflow; ADC setting in bits 10..7 (bus) and 6..3 (shunt): 0b1000 + log2(count)
  averages 1..128 12-bit conversions of 532, 1060, 2130, 4260, 8510, 17020, 34050, 68100 us.
"""

try:
    from micropython import const  # pyright: ignore[reportAssignmentType]
except ImportError:

    def const(x):
        return x


_REG_CONFIG = const(0x00)
_REG_SHUNT = const(0x01)
_REG_BUS = const(0x02)
_MODE_CONTINUOUS = const(0x0007)

INA226_AVERAGES = (1, 4, 16, 64, 128, 256, 512, 1024)
INA226_CT_US = (140, 204, 332, 588, 1100, 2116, 4156, 8244)
INA226_SHUNT_FULL = const(32767)  # +-81.92 mV at 2.5 uV: the code saturates at +-32767/-32768
INA219_AVERAGES = (1, 2, 4, 8, 16, 32, 64, 128)
INA219_CT_US = (532, 1060, 2130, 4260, 8510, 17020, 34050, 68100)
INA219_PGA_MV = (40, 80, 160, 320)

FAULT_NONE = const(0)
FAULT_OPEN = const(1)  # the device did not answer on the bus
FAULT_RANGE = const(3)  # a result at full scale (shunt saturated, bus overflow)


def _index(values, v):
    for i in range(len(values)):
        if values[i] == v:
            return i
    return -1


def config_word(kind, averages, ct_index, pga_index=3, bus_32v=True):
    """The configuration register for continuous shunt and bus conversion."""
    if kind == "ina226":
        a = _index(INA226_AVERAGES, averages)
        if a < 0 or not 0 <= ct_index < 8:
            raise ValueError("ina226: averages 1..1024 (powers of 4), conversion index 0..7")
        return (a << 9) | (ct_index << 6) | (ct_index << 3) | _MODE_CONTINUOUS
    a = _index(INA219_AVERAGES, averages)
    if a < 0 or not 0 <= pga_index < 4:
        raise ValueError("ina219: averages 1..128 (powers of 2), pga index 0..3")
    adc = 0x8 | a
    return (
        (0x2000 if bus_32v else 0) | (pga_index << 11) | (adc << 7) | (adc << 3) | _MODE_CONTINUOUS
    )


def result_ms(kind, averages, ct_index):
    """ms until one complete averaged result (bus and shunt): readings closer than this repeat."""
    if kind == "ina226":
        return (averages * 2 * INA226_CT_US[ct_index] + 999) // 1000
    return (2 * INA219_CT_US[_index(INA219_AVERAGES, averages)] + 999) // 1000


class Ina2xx:
    """One INA226 or INA219 at `address`, configured once; codes read on demand."""

    def __init__(self, i2c, address, kind, averages=16, ct_index=4, pga_index=3, bus_32v=True):
        if kind not in ("ina226", "ina219"):
            raise ValueError("kind must be ina226 or ina219")
        self.i2c = i2c
        self.address = address
        self.kind = kind
        self.config = config_word(kind, averages, ct_index, pga_index, bus_32v)
        self.pga_index = pga_index
        self._buf = bytearray(2)
        self.fault = FAULT_NONE
        self.configure()

    def configure(self):
        b = self._buf
        b[0] = (self.config >> 8) & 0xFF
        b[1] = self.config & 0xFF
        try:
            self.i2c.writeto_mem(self.address, _REG_CONFIG, b)
        except OSError:
            self.fault = FAULT_OPEN

    def _read(self, reg):
        b = self._buf
        self.i2c.readfrom_mem_into(self.address, reg, b)
        return (b[0] << 8) | b[1]

    def bus_code(self):
        """Bus voltage code (INA226: 1.25 mV; INA219: 4 mV), and sets self.fault."""
        try:
            v = self._read(_REG_BUS)
        except OSError:
            self.fault = FAULT_OPEN
            return 0
        if self.kind == "ina226":
            self.fault = FAULT_RANGE if v & 0x8000 else FAULT_NONE
            return v & 0x7FFF
        self.fault = FAULT_RANGE if v & 0x0001 else FAULT_NONE
        return v >> 3

    def shunt_code(self):
        """Signed shunt voltage code (INA226: 2.5 uV; INA219: 10 uV), and sets self.fault."""
        try:
            v = self._read(_REG_SHUNT)
        except OSError:
            self.fault = FAULT_OPEN
            return 0
        if v & 0x8000:
            v -= 0x10000
        # INA219: 10 uV codes, so the PGA range in mV x 100
        full = INA226_SHUNT_FULL if self.kind == "ina226" else INA219_PGA_MV[self.pga_index] * 100
        self.fault = FAULT_RANGE if v >= full or v <= -full else FAULT_NONE
        return v


class InaBus:
    """Logged channel: the bus voltage code (the device averages; n is not used)."""

    def __init__(self, dev):
        self.dev = dev
        self.fault = FAULT_NONE

    def run_start(self):
        """Write the configuration again: the monitor may have lost power since boot."""
        self.dev.configure()

    def read_raw(self, n):
        v = self.dev.bus_code()
        self.fault = self.dev.fault
        return v


class InaShunt:
    """Logged channel: the signed shunt voltage code (current = code x LSB / R_shunt)."""

    def __init__(self, dev):
        self.dev = dev
        self.fault = FAULT_NONE

    def read_raw(self, n):
        v = self.dev.shunt_code()
        self.fault = self.dev.fault
        return v
