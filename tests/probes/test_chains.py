"""Reading chains: divider, ADS1115 and MAX31865 counts to resistance and back."""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from heatlog.errors import InputError, RangeError
from heatlog.probes.chains import (
    ADS1115_FSR_V,
    ADS1115Divider,
    MAX31865Chain,
    VoltageDivider,
    chain_from_spec,
)
from heatlog.probes.rtd import pt100, pt1000
from heatlog.probes.thermistor import SteinhartHart

SH10K = SteinhartHart(1.129148e-3, 2.34125e-4, 8.76741e-8)  # widely quoted set, from memory


@pytest.mark.parametrize("t, code", [(0.0, 7620), (100.0, 10555)])
def test_max31865_check_codes(t, code):
    # FIRMWARE.md test vectors (430 Ω reference), derived from IEC 60751 CVD and the MAX31865
    # datasheet transfer R = code·R_ref/32768.
    r = pt100().temperature_to_resistance(t)
    assert round(MAX31865Chain(430.0).to_counts(r)) == code


def test_max31865_code_step_and_pt1000_reference():
    # FIRMWARE.md: one LSB ≈ 0.034 °C with 430 Ω on a Pt100 (and 4300 Ω on a Pt1000).
    for model, rref in ((pt100(), 430.0), (pt1000(), 4300.0)):
        chain = MAX31865Chain(rref)
        reading = chain.reading(model, chain.to_counts(model.temperature_to_resistance(20.0)))
        assert reading.step_K == pytest.approx(0.034, abs=0.002)
        assert reading.temp_C == pytest.approx(20.0, abs=1e-9)


def test_two_wire_lead_resistance_is_subtracted():
    # FIRMWARE.md: 0.1 Ω of lead adds ≈ 0.26 °C on a Pt100 when ignored.
    r = pt100().temperature_to_resistance(25.0)
    code = MAX31865Chain(430.0, lead_ohm=0.1).to_counts(r)
    ignored = pt100().resistance_to_temperature(MAX31865Chain(430.0).to_resistance(code))
    assert ignored - 25.0 == pytest.approx(0.26, abs=0.005)
    corrected = pt100().resistance_to_temperature(MAX31865Chain(430.0, 0.1).to_resistance(code))
    assert corrected == pytest.approx(25.0, abs=1e-9)


def test_divider_low_side_matches_firmware_formula():
    # FIRMWARE.md: NTC low side, R = R_fixed·raw/(4096 − raw).
    chain = VoltageDivider(10_000.0, "low", bits=12)
    for raw in (1, 100, 2048, 3000, 4095):
        assert chain.to_resistance(raw) == pytest.approx(10_000.0 * raw / (4096 - raw), rel=1e-14)


def test_divider_high_side_and_oversampled_sum():
    chain = VoltageDivider(10_000.0, "high", bits=12, oversample=16)
    assert chain.full_scale == 16 * 4096
    # Equal resistors put the midpoint at half the reference whichever side the probe is on.
    assert chain.to_counts(10_000.0) == pytest.approx(8 * 4096)
    assert chain.to_resistance(16 * 1024) == pytest.approx(30_000.0)


def test_ads1115_lsb_and_counts():
    # ADS1115 datasheet: LSB = FSR/32768 (4.096 V → 125 µV).
    chain = ADS1115Divider(10_000.0, excitation_V=3.3, fsr_V=4.096)
    assert chain.lsb_V == pytest.approx(125e-6)
    # 10 k / 10 k across 3.3 V puts 1.65 V at the pin: 1.65/125e-6 = 13200 counts.
    assert chain.to_counts(10_000.0) == pytest.approx(13_200.0)


CHAINS = [
    VoltageDivider(10_000.0, "low", 12),
    VoltageDivider(4_700.0, "high", 16, oversample=64),
    ADS1115Divider(10_000.0, 3.3, 4.096, "low"),
    ADS1115Divider(10_000.0, 3.3, 6.144, "high"),
    MAX31865Chain(430.0, 0.0),
    MAX31865Chain(4300.0, 0.35),
]
IDS = ["div-low", "div-high-os", "ads-low", "ads-high", "max-pt100", "max-pt1000-lead"]


@pytest.mark.parametrize("chain", CHAINS, ids=IDS)
@given(frac=st.floats(0.05, 0.95))
def test_counts_resistance_round_trip(chain, frac):
    model = pt100() if isinstance(chain, MAX31865Chain) else SH10K
    if chain == CHAINS[-1]:
        model = pt1000()
    t = -30.0 + frac * 140.0
    r = model.temperature_to_resistance(t)
    try:
        c = chain.to_counts(r)
    except RangeError:
        return  # out of this converter's range is a clean error, also fine
    assert math.isclose(chain.to_resistance(c), r, rel_tol=1e-11)
    assert math.isclose(chain.reading(model, c).temp_C, t, abs_tol=1e-8)


@pytest.mark.parametrize("chain", CHAINS, ids=IDS)
def test_step_is_the_derivative_of_temperature_per_count(chain):
    model = (
        pt1000() if chain == CHAINS[-1] else pt100() if isinstance(chain, MAX31865Chain) else SH10K
    )
    c = chain.to_counts(model.temperature_to_resistance(30.0))
    h = 0.01
    fd = abs(
        model.resistance_to_temperature(chain.to_resistance(c + h))
        - model.resistance_to_temperature(chain.to_resistance(c - h))
    ) / (2 * h)
    assert chain.reading(model, c).step_K == pytest.approx(fd, rel=1e-6)


def test_reading_is_vectorised():
    chain = VoltageDivider(10_000.0)
    reading = chain.reading(SH10K, np.array([1000.0, 2000.0, 3000.0]))
    assert reading.temp_C.shape == (3,) and np.all(np.diff(reading.temp_C) < 0)


@pytest.mark.parametrize(
    "call",
    [
        lambda: VoltageDivider(10_000.0).to_resistance(0),
        lambda: VoltageDivider(10_000.0).to_resistance(4096),
        lambda: VoltageDivider(10_000.0).to_resistance(-5),
        lambda: VoltageDivider(10_000.0).to_counts(0.0),
        lambda: VoltageDivider(10_000.0, "middle"),
        lambda: VoltageDivider(-1.0),
        lambda: VoltageDivider(10_000.0, bits=13),
        lambda: VoltageDivider(10_000.0, oversample=0),
        lambda: ADS1115Divider(10_000.0, 3.3, fsr_V=3.0),
        lambda: ADS1115Divider(10_000.0, 3.3, fsr_V=0.256).to_counts(10_000.0),
        lambda: ADS1115Divider(10_000.0, 3.3).to_resistance(40_000),
        lambda: MAX31865Chain(430.0).to_resistance(32768),
        lambda: MAX31865Chain(430.0).to_counts(500.0),
        lambda: MAX31865Chain(430.0, lead_ohm=5.0).to_resistance(10),
        lambda: MAX31865Chain(430.0, lead_ohm=-1.0),
    ],
)
def test_bad_chain_inputs_raise_range_error(call):
    with pytest.raises(RangeError):
        call()


def test_all_pga_settings_are_accepted():
    for fsr in ADS1115_FSR_V:
        assert ADS1115Divider(1000.0, 0.2, fsr).lsb_V == pytest.approx(fsr / 32768)


def test_chain_spec_parser():
    assert chain_from_spec("divider:rs=10000,bits=16,oversample=4") == VoltageDivider(
        1e4, "low", 16, 4
    )
    assert chain_from_spec("MAX31865: rref=4300, lead=0.2") == MAX31865Chain(4300.0, 0.2)
    assert chain_from_spec("ads1115:rs=1e4,vexc=3.3,fsr=2.048,side=high") == ADS1115Divider(
        1e4, 3.3, 2.048, "high"
    )
    for bad in ("bridge:rs=1", "divider", "divider:rs=abc", "divider:rs=1e4,x=2", "divider:rs"):
        with pytest.raises(InputError):
            chain_from_spec(bad)


def test_ratio_spec_is_the_q15_divider():
    """ratio: reads the Q15 ratio the board logs (ADS1115 and ESP32 divider channels):
    R = R_s·x/(32768 − x) on the low side (divider relation, converter datasheets)."""
    chain = chain_from_spec("ratio:rs=10000,side=high")
    assert chain == VoltageDivider(1e4, "high", bits=15, oversample=1)
    assert chain == chain_from_spec("divider:rs=10000,side=high,bits=15")
    low = chain_from_spec("ratio:rs=10000")
    assert low.to_resistance(16384) == pytest.approx(10_000.0, rel=1e-12)
    assert low.to_resistance(8192) == pytest.approx(10_000.0 / 3, rel=1e-12)
    with pytest.raises(InputError):
        chain_from_spec("ratio:rs=10000,bits=12")  # the ratio is always Q15


def test_max31865_sum_of_n_codes():
    """n summed codes: R = sum·R_ref/(32768 n) (MAX31865 datasheet relation, per code)."""
    one = MAX31865Chain(430.0)
    four = chain_from_spec("max31865:rref=430,lead=0,n=4")
    assert four == MAX31865Chain(430.0, 0.0, 4)
    assert four.to_resistance(4 * 7620) == pytest.approx(one.to_resistance(7620), rel=1e-12)
    assert four.to_counts(100.0) == pytest.approx(4 * one.to_counts(100.0), rel=1e-12)
    assert four.dresistance_dcounts(30_000) == pytest.approx(430.0 / (4 * 32768), rel=1e-12)
    step4 = four.reading(pt100(), 4 * 10555).step_K
    assert step4 == pytest.approx(one.reading(pt100(), 10555).step_K / 4, rel=1e-9)
    with pytest.raises(RangeError):
        four.to_resistance(4 * 32768)
    with pytest.raises(RangeError):
        MAX31865Chain(430.0, oversample=0)
