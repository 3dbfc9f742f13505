"""Build the channel drivers a validated config describes (the only module that imports machine)."""

import sys

from . import config
from . import logformat as lf
from .adc_divider import AdcDivider, AdcDividerUv
from .ads1115 import Ads1115, Ads1115Ratio
from .conversions import rtd_fault_codes
from .max31865 import Max31865

ADS_RATES_SPS = config.ADS_RATES_SPS
sample_time_ms = config.sample_time_ms  # kept here for callers of the earlier name


def table(cfg):
    """Header channel table: (kind, mode, source, gain, ref in milliohm, probe id)."""
    out = []
    for ch in cfg["channels"]:
        kind = ch["kind"]
        high = 1 if ch.get("ntc_side", "low") == "high" else 0
        if kind == "adc_divider":
            mode, exc = high, 0
            if "excitation_pin" in ch:  # ESP32: Q15 ratio of read_uv() readings
                mode |= lf.MODE_UV_RATIO | ((ch.get("excitation_divider", 1) - 1) << 2)
                exc = ch["excitation_pin"]
            out.append(
                (
                    lf.KIND_ADC_DIVIDER,
                    mode,
                    ch["pin"],
                    exc,
                    int(ch["r_fixed_ohm"] * 1000),
                    ch["probe_id"],
                )
            )
        elif kind in config.POWER_KINDS:
            code = lf.KIND_INA226 if kind == "ina226" else lf.KIND_INA219
            pga = config.power_settings(ch)[2]
            uohm = int(round(ch["shunt_ohm"] * 1000000))
            for mode in (lf.MODE_BUS, lf.MODE_SHUNT):
                out.append((code, mode, ch["address"], pga, uohm, ch["probe_id"]))
        elif kind == "ads1115":
            src = (ch["signal"] << 4) | ch["excitation"]
            out.append(
                (
                    lf.KIND_ADS1115,
                    high,
                    src,
                    ch["gain"],
                    int(ch["r_fixed_ohm"] * 1000),
                    ch["probe_id"],
                )
            )
        else:
            out.append(
                (
                    lf.KIND_MAX31865,
                    ch["wires"],
                    ch["cs"],
                    0,
                    int(ch["r_ref_ohm"] * 1000),
                    ch["probe_id"],
                )
            )
    return out


def rtd_thresholds(ch):
    """(low, high) MAX31865 threshold codes for a max31865 channel: the probe's valid range
    (fault_low_C / fault_high_C, default -200..850 degC, IEC 60751) clipped to R_ref's codes."""
    m = ch["model"]
    r0 = m["R0"] if m["type"] == "callendar_van_dusen" else 100.0
    return rtd_fault_codes(
        r0, ch["r_ref_ohm"], ch.get("fault_low_C", -200.0), ch.get("fault_high_C", 850.0)
    )


def build(cfg, machine):
    """Driver objects for cfg's channels; buses are shared between channels on the same id."""
    buses = {}
    out = []
    for ch in cfg["channels"]:
        kind = ch["kind"]
        if kind == "adc_divider":
            dnl = None
            if ch.get("dnl"):
                dnl = {int(k): int(v) for k, v in ch["dnl"].items()}
            low = ch.get("ntc_side", "low") == "low"
            if "excitation_pin" in ch:  # ESP32 (config.validate): ADC1 pins, 11 dB, read_uv()
                adc = machine.ADC(machine.Pin(ch["pin"]), atten=machine.ADC.ATTN_11DB)
                exc = machine.ADC(machine.Pin(ch["excitation_pin"]), atten=machine.ADC.ATTN_11DB)
                out.append(AdcDividerUv(adc, exc, ch.get("excitation_divider", 1), low))
            elif sys.platform == "esp32":  # not reached with a validated config
                raise ValueError("an ESP32 adc_divider needs an excitation_pin")
            else:  # rp2: ratiometric; building from a Pin also turns the pad analog
                adc = machine.ADC(machine.Pin(ch["pin"]))
                out.append(AdcDivider(adc, dnl, low))
        elif kind == "ads1115" or kind in config.POWER_KINDS:
            b = ch["i2c"]
            key = ("i2c", b["id"])
            if key not in buses:
                buses[key] = machine.I2C(
                    b["id"], scl=machine.Pin(b["scl"]), sda=machine.Pin(b["sda"]), freq=400000
                )
            if kind != "ads1115":  # the monitor's driver: loaded only when a config has one
                from .ina2xx import Ina2xx, InaBus, InaShunt

                avg, ct, pga, bus32 = config.power_settings(ch)
                dev = Ina2xx(buses[key], ch["address"], kind, avg, ct, pga, bus32)
                out.append(InaBus(dev))
                out.append(InaShunt(dev))
                continue
            ads = Ads1115(buses[key], ch["address"], ch["gain"], ch["rate"])
            out.append(Ads1115Ratio(ads, ch["signal"], ch["excitation"]))
        else:
            b = ch["spi"]
            key = ("spi", b["id"])
            if key not in buses:
                buses[key] = machine.SPI(
                    b["id"], baudrate=1000000, polarity=0, phase=1,
                    sck=machine.Pin(b["sck"]), mosi=machine.Pin(b["mosi"]), miso=machine.Pin(b["miso"]),
                )  # fmt: skip
            cs = machine.Pin(ch["cs"], machine.Pin.OUT, value=1)
            low, high = rtd_thresholds(ch)
            every = max(1, cfg.get("fault_check_s", 300) * 1000 // cfg["interval_ms"])
            settle = config.bias_settle_ms(ch)
            out.append(
                Max31865(
                    buses[key], cs, ch["wires"], ch.get("mains_hz", 50), high, low, every, settle
                )
            )
    return out
