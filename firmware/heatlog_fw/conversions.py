"""Counts -> ohms -> degC for the board's live display. Plain functions: identical under CPython
and MicroPython (floats are 32-bit on most boards: about 7 significant digits, fine for a
display; the host re-applies the calibration to the raw counts in double precision).

Models: Steinhart & Hart (Deep-Sea Research 15, 1968), beta model, Callendar-Van Dusen
(IEC 60751). Divider and MAX31865 relations from the converter datasheets.
"""

import math

KELVIN = 273.15


def divider_ohms(raw, full_scale, r_fixed, ntc_low=True):
    """Thermistor resistance from a ratiometric divider reading raw of full_scale.
    ntc_low: thermistor between ADC pin and ground, r_fixed to the reference (R = Rf*raw/(FS-raw))."""
    if raw <= 0 or raw >= full_scale:
        return None
    if ntc_low:
        return r_fixed * raw / (full_scale - raw)
    return r_fixed * (full_scale - raw) / raw


def ratio_ohms(ratio_q15, r_fixed, ntc_low=True):
    """As divider_ohms for a ratio stored as Q15 (ADS1115 channel: signal/excitation*32768)."""
    return divider_ohms(ratio_q15, 32768, r_fixed, ntc_low)


def rtd_ohms(code_sum, n, r_ref):
    """MAX31865: R = code * R_ref / 32768 (15-bit code), code_sum over n conversions."""
    return code_sum * r_ref / (32768.0 * n)


def rtd_fault_codes(r0, r_ref, low_c=-200.0, high_c=850.0):
    """MAX31865 (low, high) threshold codes for a platinum RTD of R0 ohms valid from low_c to
    high_c degC (default: the IEC 60751 range -200..850 degC), code = R*32768/R_ref, clipped to
    1..0x7FFE so a reading at full scale (open element) always passes the high threshold."""
    lo = int(cvd_ohms(low_c, r0) * 32768 / r_ref)
    hi = int(cvd_ohms(high_c, r0) * 32768 / r_ref) + 1
    return max(1, min(lo, 0x7FFE)), max(1, min(hi, 0x7FFE))


def steinhart_hart_c(r, a, b, c, d=0.0):
    """1/T = A + B ln R + D (ln R)^2 + C (ln R)^3, T in kelvin; returns degC."""
    x = math.log(r)
    return 1.0 / (a + b * x + d * x * x + c * x * x * x) - KELVIN


def beta_c(r, r25, beta, t25_c=25.0):
    """R = R25 exp[beta (1/T - 1/T25)]; returns degC."""
    t25 = t25_c + KELVIN
    return 1.0 / (1.0 / t25 + math.log(r / r25) / beta) - KELVIN


CVD_A = 3.9083e-3
CVD_B = -5.775e-7
CVD_C = -4.183e-12


def cvd_ohms(t, r0, a=CVD_A, b=CVD_B, c=CVD_C):
    """IEC 60751: R(t) = R0 [1 + A t + B t^2 + C (t - 100) t^3], the C term only below 0 degC."""
    r = 1.0 + a * t + b * t * t
    if t < 0:
        r += c * (t - 100.0) * t * t * t
    return r0 * r


def cvd_c(r, r0, a=CVD_A, b=CVD_B, c=CVD_C):
    """Inverse of cvd_ohms: closed form at or above 0 degC, Newton steps below."""
    q = 1.0 - r / r0
    t = (-a + math.sqrt(a * a - 4.0 * b * q)) / (2.0 * b)
    if r >= r0:
        return t
    for _ in range(10):
        f = cvd_ohms(t, r0, a, b, c) - r
        dfdt = r0 * (a + 2.0 * b * t + c * (4.0 * t * t * t - 300.0 * t * t))
        step = f / dfdt
        t -= step
        if abs(step) < 1e-6:
            break
    return t


def to_celsius(model, r):
    """degC from ohms with a model dict from the config ({"type": ..., coefficients})."""
    if r is None or r <= 0:
        return None
    kind = model["type"]
    if kind == "steinhart_hart":
        return steinhart_hart_c(r, model["A"], model["B"], model["C"], model.get("D", 0.0))
    if kind == "beta":
        return beta_c(r, model["R25"], model["beta"], model.get("T25", 25.0))
    if kind == "callendar_van_dusen":
        return cvd_c(
            r, model["R0"], model.get("A", CVD_A), model.get("B", CVD_B), model.get("C", CVD_C)
        )
    return None
