"""Thermistor in a divider on an on-chip ADC pin.

`AdcDivider` (rp2: RP2040/RP2350): ratiometric. Excite the divider from the ADC reference node
so supply drift cancels. The raw value is the integer sum of `n` 12-bit codes (full scale
4096*n). Optional per-code correction (RP2040 erratum E11: DNL spikes at 512, 1536, 2560, 3584)
from a calibration: {code: corrected code}.

`AdcDividerUv` (ESP32 ADC1): the ESP32 ADC is not ratiometric against the divider supply, and
read_u16 at 11 dB is uncalibrated. The midpoint and the excitation (the divider's top, read on a
second ADC1 pin, through a 1:k resistor divider if the top is above the ~2.45 V linear range)
are both read with read_uv() (calibrated microvolts) and the raw value is the Q15 ratio
V_mid / (k V_exc_pin) = V_mid / V_top, as for the ADS1115 (full scale 32768, not times n).
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
FAULT_RANGE = const(3)

_UV_SHIFT = const(3)  # read_uv() in 8 uV steps: sums of 256 reads x k=4 stay small ints
# ESP32 ADC at 11 dB: linear from about 150 to 2450 mV (approx., ESP-IDF ADC documentation as
# summarised in /work/shared/FIRMWARE.md); readings outside are flagged out of range.
_LIN_LO = const(150000 >> 3)
_LIN_HI = const(2450000 >> 3)
_Q_LOW = const(328)  # ratio below 1 %: midpoint at the low rail
_Q_HIGH = const(32440)  # ratio above 99 %: midpoint at the top rail


def q15(num, den):
    """floor(num * 32768 / den) for 0 <= num, 0 < den, by shift-and-subtract (num * 32768 would
    be a heap-allocated long int on a 32-bit board); 32768 when num >= den."""
    if num >= den:
        return 32768
    q = 0
    r = num
    for _ in range(15):
        r <<= 1
        q <<= 1
        if r >= den:
            r -= den
            q |= 1
    return q


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


class AdcDividerUv:
    """ESP32: midpoint and excitation read with read_uv(); raw = Q15 of V_mid / (k V_exc_pin)."""

    full_scale = 32768

    def __init__(self, adc, exc_adc, k=1, ntc_low=True):
        self.adc = adc
        self.exc = exc_adc
        self.k = k
        self.ntc_low = ntc_low
        self.fault = FAULT_NONE

    def read_raw(self, n):
        """Q15 ratio of the summed midpoint to the summed excitation (times k); sets self.fault:
        open/short from a ratio at a rail, out of range outside the ADC's linear range or with
        no excitation."""
        adc = self.adc
        exc = self.exc
        adc.read_uv()  # discard the first reads after switching channel; the 100 nF at each
        exc.read_uv()  # pin (hardware/wiring.md) holds the inputs while the two alternate
        sig = 0
        top = 0
        for _ in range(n):
            sig += adc.read_uv() >> _UV_SHIFT
            top += exc.read_uv() >> _UV_SHIFT
        lin_lo = _LIN_LO * n
        lin_hi = _LIN_HI * n
        if top < lin_lo or top > lin_hi:
            self.fault = FAULT_RANGE  # excitation missing or outside the linear range
            return q15(sig, top * self.k) if top > 0 else 0
        q = q15(sig, top * self.k)
        if q < _Q_LOW:
            self.fault = FAULT_SHORT if self.ntc_low else FAULT_OPEN
        elif q > _Q_HIGH:
            self.fault = FAULT_OPEN if self.ntc_low else FAULT_SHORT
        elif sig < lin_lo or sig > lin_hi:
            self.fault = FAULT_RANGE
        else:
            self.fault = FAULT_NONE
        return q
