"""A raw value the board logs, decoded by the host and put through the chain spec the log names,
gives the temperature the board's own conversion gives.

Board side (under CPython): the drivers with the register-level fakes produce the raw value, the
firmware's log writer packs header and record, and firmware/heatlog_fw/conversions.py converts it
to °C. Host side: heatlog.logformat.decode, Channel.chain_spec → heatlog.probes.chain_from_spec →
the host probe model. Both sides use the same relations (divider and Q15 ratio: the converter
datasheets' R = R_fixed·x/(1 − x); MAX31865: R = code·R_ref/32768, MAX31865 datasheet), written
independently, so they must agree to rounding (1e-6 K).
"""

import json

import machine
import numpy as np
import pytest
from conftest import FIRMWARE
from heatlog_fw import channels, config
from heatlog_fw import conversions as fw
from heatlog_fw import logformat as fwlf
from heatlog_fw.adc_divider import AdcDivider, AdcDividerUv
from heatlog_fw.ads1115 import Ads1115, Ads1115Ratio
from heatlog_fw.max31865 import Max31865

from heatlog import logformat as host
from heatlog.errors import RangeError
from heatlog.probes import Beta, CallendarVanDusen, SteinhartHart, chain_from_spec

N = 4  # oversampling of the invented run


def _log(table, raw):
    """One-record run log written by the firmware's writer (invented data)."""
    hdr = fwlf.pack_header("b", "0.1.0", 1000, N, 0, 1, table)
    packer = fwlf.RecordPacker(len(table))
    rec = bytearray(packer.size)
    packer.pack(rec, 0, 0, 0, 0, 0, raw)
    return host.decode(bytes(hdr) + bytes(rec))


def _host_model(m):
    if m["type"] == "steinhart_hart":
        return SteinhartHart(m["A"], m["B"], m["C"])
    if m["type"] == "beta":
        return Beta(m["R25"], m["beta"])
    return CallendarVanDusen(
        m["R0"], m.get("A", fw.CVD_A), m.get("B", fw.CVD_B), m.get("C", fw.CVD_C)
    )


def _chain(log, i):
    ch = log.header.channels[i]
    spec = ch.chain_spec(log.header.oversample)
    return spec, chain_from_spec(spec)


def _buses():
    """Fake MAX31865 and ADS1115 behind fake SPI and I2C buses."""
    rtd = machine.FakeMax31865(r_ref=430.0)
    ads = machine.FakeAds1115()
    i2c = machine.I2C(0)
    i2c.devices[0x48] = ads
    spi = machine.SPI(0)
    spi.device = rtd
    return rtd, ads, i2c, spi


@pytest.mark.parametrize("code", [300, 1024, 2047, 3000, 3900])
def test_rp2_divider_sum(code):
    cfg = json.loads((FIRMWARE / "config.example.json").read_text())
    ch = cfg["channels"][0]
    adc = machine.ADC(machine.Pin(ch["pin"]))
    adc.codes = [code - 1, code, code + 1, code]
    raw = AdcDivider(adc).read_raw(N)
    log = _log([channels.table(cfg)[0]], [raw])
    spec, chain = _chain(log, 0)
    assert spec == "divider:rs=10000,side=low,bits=12,oversample=4"
    model = ch["model"]
    board = fw.to_celsius(model, fw.divider_ohms(raw, 4096 * N, ch["r_fixed_ohm"]))
    got = _host_model(model).resistance_to_temperature(chain.to_resistance(int(log.raw[0, 0])))
    assert float(got) == pytest.approx(board, abs=1e-6)


@pytest.mark.parametrize("mid_uv", [400000, 1100000, 1900000, 2400000])
def test_ads1115_q15_ratio(mid_uv):
    cfg = json.loads((FIRMWARE / "config.example.json").read_text())
    ch = cfg["channels"][1]
    _, dev, i2c, _ = _buses()
    dev.volts_uv = {ch["signal"]: mid_uv, ch["excitation"]: 3300000}
    ads = Ads1115(i2c, 0x48, ch["gain"], ch["rate"])
    ads.wait_ms = 0
    raw = Ads1115Ratio(ads, ch["signal"], ch["excitation"]).read_raw(N)
    log = _log([channels.table(cfg)[1]], [raw])
    spec, chain = _chain(log, 0)
    assert spec == "ratio:rs=10000,side=low"
    assert chain == chain_from_spec("divider:rs=10000,side=low,bits=15,oversample=1")
    board = fw.to_celsius(ch["model"], fw.ratio_ohms(raw, ch["r_fixed_ohm"]))
    got = _host_model(ch["model"]).resistance_to_temperature(chain.to_resistance(raw))
    assert float(got) == pytest.approx(board, abs=1e-6)
    # the bench chain for single midpoint codes misreads the logged ratio (refused or far off)
    bench = chain_from_spec("ads1115:rs=10000,vexc=3.3,fsr=4.096")
    try:
        wrong = float(_host_model(ch["model"]).resistance_to_temperature(bench.to_resistance(raw)))
    except RangeError:
        wrong = None
    assert wrong is None or abs(wrong - board) > 1.0


@pytest.mark.parametrize("ohms", [80.0, 100.0, 119.3971, 138.5055, 250.0])
def test_max31865_code_sum(ohms):
    cfg = json.loads((FIRMWARE / "config.example.json").read_text())
    ch = cfg["channels"][2]
    rtd, _, _, spi = _buses()
    rtd.resistance = ohms
    low, high = channels.rtd_thresholds(ch)
    m = Max31865(spi, machine.Pin(ch["cs"]), ch["wires"], 50, high, low)
    m.wait_ms = 0
    raw = m.read_raw(N)
    assert m.fault == 0
    log = _log([channels.table(cfg)[2]], [raw])
    spec, chain = _chain(log, 0)
    assert spec == "max31865:rref=430,lead=0,n=4"
    board = fw.to_celsius(ch["model"], fw.rtd_ohms(raw, N, ch["r_ref_ohm"]))
    got = _host_model(ch["model"]).resistance_to_temperature(chain.to_resistance(raw))
    assert float(got) == pytest.approx(board, abs=1e-6)
    # the single-code chain (no n) refuses a sum of 4 codes beyond its range, or is 4x off
    one = chain_from_spec("max31865:rref=430,lead=0")
    if raw < 32768:
        assert one.to_resistance(raw) == pytest.approx(N * fw.rtd_ohms(raw, N, 430.0))


@pytest.mark.parametrize("mid_uv", [200000, 700000, 1300000, 1950000])
def test_esp32_microvolt_ratio(mid_uv):
    cfg, errs = config.parse(
        (FIRMWARE / "config.esp32.example.json").read_text(encoding="utf-8"), port="esp32"
    )
    assert errs == [] and cfg is not None
    ch = cfg["channels"][0]
    mid, exc = machine.ADC(34, atten=3), machine.ADC(35, atten=3)
    mid.uv = [mid_uv]
    exc.uv = [1650000]
    raw = AdcDividerUv(mid, exc, ch["excitation_divider"]).read_raw(N)
    log = _log([channels.table(cfg)[0]], [raw])
    np.testing.assert_allclose(log.ratio()[0, 0], raw / 32768, rtol=0, atol=0)
    spec, chain = _chain(log, 0)
    assert spec == "ratio:rs=22000,side=low"
    board = fw.to_celsius(ch["model"], fw.ratio_ohms(raw, ch["r_fixed_ohm"]))
    got = _host_model(ch["model"]).resistance_to_temperature(chain.to_resistance(raw))
    assert float(got) == pytest.approx(board, abs=1e-6)


def test_export_and_live_decoding_use_the_chain_the_log_names():
    # An ESP32 board (invented values): Q15 ratios on the microvolt divider and the ADS1115, a
    # sum of N MAX31865 codes. The CSV export and the live decoder must read every channel
    # through Channel.chain_spec, as the archive and run files do.
    from heatlog.device.export import calibrate
    from heatlog.device.live import channels_from_config

    cfg = json.loads((FIRMWARE / "config.esp32.example.json").read_text())
    table = channels.table(cfg)
    raw = [13107, 16384, N * 7620]  # ratios 0.4 and 0.5; Pt100 at 0 °C (MAX31865 datasheet)
    log = _log(table, raw)
    _, cols, _ = calibrate(log, {})
    for i, col in enumerate(cols):
        _, chain = _chain(log, i)
        assert col.meta["chain"] == log.header.channels[i].chain_spec(N)
        assert col.resistance[0] == pytest.approx(chain.to_resistance(raw[i]), rel=1e-12)
    assert cols[0].resistance[0] == pytest.approx(22000 * 0.4 / 0.6, rel=1e-4)
    live, _ = channels_from_config(cfg)
    assert [c.chain_spec(N) for c in live] == [c.chain_spec(N) for c in log.header.channels]
