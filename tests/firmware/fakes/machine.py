"""A fake `machine` module for the firmware tests (CPython and the MicroPython WebAssembly port).

Peripherals simulate the parts the drivers talk to: ADC codes from a list, an ADS1115 register
map behind I2C, a MAX31865 register map behind SPI (its RTD code follows `resistance`).
"""

PWRON_RESET = 1
WDT_RESET = 3
SOFT_RESET = 5
_reset_cause = PWRON_RESET


def reset_cause():
    return _reset_cause


def reset():
    raise SystemExit("machine.reset()")


class Pin:
    IN = 0
    OUT = 1
    PULL_UP = 2

    def __init__(self, id, mode=-1, pull=-1, value=None):
        self.id = id
        self.mode = mode
        self.v = 0 if value is None else value
        self.history = []

    def __call__(self, v=None):
        if v is None:
            return self.v
        self.v = v
        self.history.append(v)
        return None

    def value(self, v=None):
        return self(v)

    def on(self):
        self(1)

    def off(self):
        self(0)

    def toggle(self):
        self(1 - self.v)


class ADC:
    ATTN_11DB = 3

    def __init__(self, pin, atten=None):
        self.pin = pin
        self.atten = atten
        self.codes = [2048]  # 12-bit codes returned in turn (read_u16 stretches them)
        self.i = 0
        self.uv = [1650000]  # calibrated microvolts returned in turn by read_uv (ESP32)
        self.j = 0

    def read_uv(self):
        v = self.uv[self.j % len(self.uv)]
        self.j += 1
        return v

    def read_u16(self):
        c = self.codes[self.i % len(self.codes)]
        self.i += 1
        return (c << 4) | (c >> 8)


class I2C:
    def __init__(self, id=0, scl=None, sda=None, freq=400000):
        self.devices = {}

    def writeto_mem(self, addr, reg, buf):
        self.devices[addr].write(reg, bytes(buf))

    def readfrom_mem_into(self, addr, reg, buf):
        data = self.devices[addr].read(reg, len(buf))
        for i in range(len(buf)):
            buf[i] = data[i]


class FakeAds1115:
    """Register model: a config write with OS=1 converts volts[mux] at the configured PGA."""

    FSR_UV = (6144000, 4096000, 2048000, 1024000, 512000, 256000)

    def __init__(self):
        self.volts_uv = {4: 1650000, 7: 3300000}
        self.config = 0x8583
        self.conv = 0
        self.writes = []

    def write(self, reg, data):
        v = (data[0] << 8) | data[1]
        self.writes.append((reg, v))
        if reg == 1:
            self.config = v
            if v & 0x8000:
                mux = (v >> 12) & 7
                fsr = self.FSR_UV[(v >> 9) & 7]
                code = self.volts_uv.get(mux, 0) * 32768 // fsr
                self.conv = max(-32768, min(32767, code)) & 0xFFFF

    def read(self, reg, n):
        v = self.config | 0x8000 if reg == 1 else self.conv
        return bytes([(v >> 8) & 0xFF, v & 0xFF])


class FakeIna2xx:
    """Register model of an INA226 (kind "ina226") or INA219: bus and shunt volts in, codes out
    (TI datasheets SBOS547 / SBOS448, from memory: INA226 2.5 uV and 1.25 mV per code;
    INA219 10 uV per code, bus in bits 15..3 at 4 mV, bit 0 = overflow)."""

    def __init__(self, kind="ina226", bus_uv=12000000, shunt_nv=50000000):
        self.kind = kind
        self.bus_uv = bus_uv
        self.shunt_nv = shunt_nv  # nanovolts across the shunt (signed)
        self.config = 0x4127 if kind == "ina226" else 0x399F
        self.writes = []
        self.present = True

    def write(self, reg, data):
        if not self.present:
            raise OSError(5)
        v = (data[0] << 8) | data[1]
        self.writes.append((reg, v))
        if reg == 0:
            self.config = v

    def read(self, reg, n):
        if not self.present:
            raise OSError(5)
        if reg == 0:
            v = self.config
        elif reg == 1:
            lsb_nv = 2500 if self.kind == "ina226" else 10000
            mag = (abs(self.shunt_nv) + lsb_nv // 2) // lsb_nv  # rounded half away from zero
            code = mag if self.shunt_nv >= 0 else -mag
            if self.kind == "ina226":
                full = 32767
            else:
                full = (40, 80, 160, 320)[(self.config >> 11) & 3] * 100
            v = max(-full - (1 if self.kind == "ina226" else 0), min(full, int(code))) & 0xFFFF
        else:
            if self.kind == "ina226":
                v = min(0x7FFF, (self.bus_uv + 625) // 1250)
            else:
                v = (min(8000, (self.bus_uv + 2000) // 4000) << 3) | 0x2  # CNVR set
        return bytes([(v >> 8) & 0xFF, v & 0xFF])


class SPI:
    def __init__(self, id=0, baudrate=1000000, polarity=0, phase=0, sck=None, mosi=None, miso=None):
        self.device = None

    def write(self, buf):
        self.device.transfer(bytes(buf))

    def readinto(self, buf):
        data = self.device.read(self.device.pending, len(buf))
        for i in range(len(buf)):
            buf[i] = data[i]


class FakeMax31865:
    """Register model: a one-shot write converts `resistance` against `r_ref` (code clipped at
    full scale; `resistance=None` is an open element: full scale) and compares the code with the
    programmed thresholds (D7: code >= high, D6: code < low); `fault` adds fault-register bits.
    A fault-detection cycle (config D3:D2 = 01) sets D5 for an open element (plus
    `cycle_fault`) and completes at once."""

    def __init__(self, resistance=100.0, r_ref=430.0):
        self.regs = bytearray(8)
        self.resistance = resistance
        self.r_ref = r_ref
        self.fault = 0
        self.cycle_fault = 0
        self.pending = 0
        self.conversions = 0
        self.cycles = 0
        self.config_writes = []
        self.unsettled = 0

    def _threshold(self, reg):
        return ((self.regs[reg] << 8) | self.regs[reg + 1]) >> 1

    def transfer(self, b):
        if len(b) == 1:  # address for a read
            self.pending = b[0] & 0x7F
            return
        reg = b[0] & 0x7F
        if reg == 0:
            self.config_writes.append(b[1])
            if b[1] & 0x20 and not (self.regs[0] & 0x80 and b[1] & 0x80):
                self.unsettled += 1  # one-shot without the bias already on
            if b[1] & 0x02:
                self.regs[7] = 0
                b = bytes([b[0], b[1] & ~0x02])
            if b[1] & 0x20:
                self.conversions += 1
                if self.resistance is None:
                    code = 0x7FFF
                else:
                    code = min(0x7FFF, max(0, int(self.resistance * 32768 / self.r_ref)))
                fault = self.fault
                if code >= self._threshold(3):
                    fault |= 0x80
                if code < self._threshold(5):
                    fault |= 0x40
                self.regs[7] |= fault
                word = (code << 1) | (1 if fault else 0)
                self.regs[1] = word >> 8
                self.regs[2] = word & 0xFF
                b = bytes([b[0], b[1] & ~0x20])
            if b[1] & 0x0C == 0x04:
                self.cycles += 1
                self.regs[7] |= (0x20 if self.resistance is None else 0) | self.cycle_fault
                b = bytes([b[0], b[1] & ~0x0C])
        self.regs[reg] = b[1]

    def read(self, reg, n):
        return bytes(self.regs[reg : reg + n])


class RTC:
    _dt = (2021, 1, 1, 4, 0, 0, 0, 0)

    def datetime(self, dt=None):
        if dt is None:
            return RTC._dt
        RTC._dt = tuple(dt)
        return None


class WDT:
    instances = []

    def __init__(self, id=0, timeout=5000):
        self.timeout = timeout
        self.feeds = 0
        WDT.instances.append(self)

    def feed(self):
        self.feeds += 1
