"""Thermistor in a ratiometric divider on an on-chip ADC pin (RP2040/RP2350, ESP32 ADC1).

Excite the divider from the ADC reference node so supply drift cancels. The raw value is the
integer sum of `n` 12-bit codes (full scale 4096*n). Optional per-code correction (RP2040
erratum E11: DNL spikes at 512, 1536, 2560, 3584) from a calibration: {code: corrected code}.
"""

try:
    from micropython import const  # pyright: ignore[reportAssignmentType]
except ImportError:

    def const(x):
        return x


_SHIFT = const(4)  # read_u16() is the 12-bit code stretched to 16 bits
_LOW = const(2)  # codes at the rails mean a shorted or open divider
_HIGH = const(4093)

FAULT_NONE = const(0)
FAULT_OPEN = const(1)
FAULT_SHORT = const(2)


class AdcDivider:
    full_scale = 4096

    def __init__(self, adc, dnl=None, ntc_low=True):
        self.adc = adc
        self.dnl = dnl
        self.ntc_low = ntc_low
        self.fault = FAULT_NONE

    def read_raw(self, n):
        """Sum of n codes; sets self.fault (open/short) from codes pinned at a rail."""
        adc = self.adc
        dnl = self.dnl
        adc.read_u16()  # discard the first read after switching channel
        total = 0
        lo = 0
        hi = 0
        for _ in range(n):
            code = adc.read_u16() >> _SHIFT
            if dnl is not None:
                code = dnl.get(code, code)
            if code < _LOW:
                lo += 1
            elif code > _HIGH:
                hi += 1
            total += code
        if lo == n:
            self.fault = FAULT_SHORT if self.ntc_low else FAULT_OPEN
        elif hi == n:
            self.fault = FAULT_OPEN if self.ntc_low else FAULT_SHORT
        else:
            self.fault = FAULT_NONE
        return total
