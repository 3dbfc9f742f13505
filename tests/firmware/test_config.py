"""Config validation: the shipped example is valid; each mistake is named; junk never raises."""

import copy
import json
from pathlib import Path

import pytest
from heatlog_fw import channels, config
from hypothesis import example, given
from hypothesis import strategies as st

EXAMPLE = Path(__file__).resolve().parents[2] / "firmware" / "config.example.json"


def _example():
    return json.loads(EXAMPLE.read_text())


def test_example_config_is_valid_and_fits_its_interval():
    cfg, errs = config.parse(EXAMPLE.read_text())
    assert errs == [] and cfg is not None
    assert channels.sample_time_ms(cfg) <= min(cfg["interval_ms"], 4000)
    kinds = [c["kind"] for c in cfg["channels"]]
    assert kinds == ["adc_divider", "ads1115", "max31865"]
    table = channels.table(cfg)
    assert table[2] == (3, 3, 17, 0, 430000, "PT100-C3")
    assert table[1][2] == (4 << 4) | 7


def _set(path, value):
    cfg = _example()
    node = cfg
    for k in path[:-1]:
        node = node[k]
    if value is KeyError:
        del node[path[-1]]
    else:
        node[path[-1]] = value
    return cfg


@pytest.mark.parametrize(
    ("path", "value", "message"),
    [
        (("interval_ms",), 99, "interval_ms must be an integer in 100..3600000"),
        (("interval_ms",), 3600001, "interval_ms must be an integer in 100..3600000"),
        (("interval_ms",), True, "interval_ms must be an integer"),
        (("oversample",), 0, "oversample must be an integer in 1..256"),
        (("board_id",), "", "board_id must be 1..16 printable ASCII"),
        (("board_id",), "x" * 17, "board_id must be 1..16"),
        (("channels",), [], "channels must be a list of 1..8"),
        (("channels", 0, "kind"), "thermocouple", "channels[0].kind must be one of"),
        (("channels", 0, "model", "type"), "poly", "channels[0].model.type must be one of"),
        (("channels", 0, "model", "B"), "big", "channels[0].model.B must be a number"),
        (("channels", 1, "address"), 0x50, "channels[1].address must be an integer in 72..75"),
        (("channels", 1, "i2c"), KeyError, "channels[1].i2c must be an object"),
        (("channels", 2, "wires"), 5, "channels[2].wires must be an integer in 2..4"),
        (("channels", 2, "r_ref_ohm"), 0, "channels[2].r_ref_ohm must be a number in 10..10000"),
        (("channels", 2, "mains_hz"), 55, "channels[2].mains_hz must be 50 or 60"),
        (("channels", 2, "fault_low_C"), 900, "channels[2].fault_low_C < fault_high_C"),
        (("channels", 2, "fault_high_C"), "hot", "channels[2].fault_low_C < fault_high_C"),
        (
            ("channels", 2, "model"),
            {"type": "beta", "R25": 1e4, "beta": 3950},
            "callendar_van_dusen for a max31865",
        ),
        (("fault_check_s",), 5, "fault_check_s must be an integer in 10..86400"),
        (("led_pin",), [1], "led_pin must be"),
        (("channels", 0, "dnl"), {"x": 1}, "channels[0].dnl must map"),
        (("channels", 0, "dnl"), {"512": 5000}, "channels[0].dnl must map"),
        (("channels", 1, "role"), "room", "channels[1].role must be one of vessel, env"),
        (("channels", 1, "role"), 1, "channels[1].role must be one of"),
    ],
)
def test_each_mistake_is_named(path, value, message):
    cfg, errs = config.parse(json.dumps(_set(path, value)))
    assert cfg is None
    assert any(message in e for e in errs), errs


def test_channel_role_for_the_surroundings():
    cfg = _example()
    cfg["channels"][1]["role"] = "env"
    parsed, errs = config.parse(json.dumps(cfg))
    assert errs == [] and parsed["channels"][1]["role"] == "env"
    cfg["channels"][2]["role"] = "env"
    assert any("at most one channel" in e for e in config.validate(cfg))
    for ch in cfg["channels"]:
        ch["role"] = "env"
    assert any("at least one channel" in e for e in config.validate(cfg))


def test_not_json_and_too_long():
    assert config.parse("{")[1] == ["config is not valid JSON"]
    assert "longer than" in config.parse(" " * 5000)[1][0]
    assert config.parse("[1, 2]")[1] == ["config must be a JSON object"]


json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False) | st.text(max_size=8),
    lambda inner: (
        st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=8), inner, max_size=4)
    ),
    max_leaves=20,
)


@given(json_values)
@example({"flush_ms": None})  # once raised TypeError (a leftover flush_ms < interval_ms compare)
def test_validate_never_raises_on_any_json(value):
    errs = config.validate(value)
    assert isinstance(errs, list)


@given(st.sampled_from(["channels", "model", "spi", "i2c", "dnl"]), json_values)
def test_replacing_a_nested_part_never_raises(key, value):
    cfg = copy.deepcopy(_example())
    for ch in cfg["channels"]:
        if key in ch:
            ch[key] = value
    if key == "channels":
        cfg["channels"] = value
    config.validate(cfg)


# --- checks that used to wait for boot, and pin capability per port -----------------------------

ESP32_EXAMPLE = EXAMPLE.parent / "config.esp32.example.json"


def test_conversion_time_is_refused_by_validation_not_only_at_boot():
    """Before: a config passed validate() and was then refused by the logger at boot."""
    cfg = _example()
    cfg["oversample"] = 64  # 64 x 66 ms for the MAX31865 alone: 4.2 s > 1 s interval
    errs = config.validate(cfg)
    assert any("exceeds min(interval_ms, 4000 ms)" in e for e in errs), errs
    assert config.timing_problems(cfg) == [e for e in errs if "exceeds" in e]
    cfg["interval_ms"] = 60000  # still over the 4 s cap on one sample
    assert any("exceeds" in e for e in config.validate(cfg))
    cfg["oversample"] = 4
    assert config.validate(cfg) == []


def test_logger_refuses_the_same_config_with_the_same_words(tmp_path):
    import machine
    from fakefs import FakeFs
    from heatlog_fw.logger import Logger

    cfg = _example()
    cfg["oversample"] = 64
    fs = FakeFs()
    fs.mkdir("/logs")
    with fs.open("/logs/config.json", "w") as f:
        f.write(json.dumps(cfg))
    lg = Logger(fs, "/logs", machine, lambda d: None)
    assert lg.cfg is None and lg.config_errors == config.validate(cfg)


@pytest.mark.parametrize(
    ("board", "path", "value", "message"),
    [
        ("rp2040", ("channels", 0, "pin"), 22, "channels[0].pin: GPIO 22 is not an ADC input on rp2040 (GPIO 26-29)"),
        ("rp2350b", ("channels", 0, "pin"), 26, "is not an ADC input on rp2350b (GPIO 40-47)"),
        ("rp2040", ("channels", 1, "i2c", "sda"), 6, "channels[1].i2c.sda: GPIO 6 is not I2C0 SDA"),
        ("rp2040", ("channels", 1, "i2c", "scl"), 4, "channels[1].i2c.scl: GPIO 4 is not I2C0 SCL"),
        ("rp2040", ("channels", 2, "spi", "sck"), 19, "channels[2].spi.sck: GPIO 19 is not SPI0 SCK"),
        ("rp2040", ("channels", 2, "spi", "miso"), 30, "GPIO 30 is not a free GPIO on rp2040"),
        ("rp2040", ("channels", 2, "spi", "id"), 2, "channels[2].spi.id: rp2040 SPI ids are 0 and 1"),
        ("rp2040", ("channels", 2, "cs"), 26, "channels[2].cs: GPIO 26 is already used as channels[0].pin"),
        ("rp2040", ("led_pin",), 4, "led_pin: GPIO 4 is already used as i2c0.sda"),
    ],
)  # fmt: skip
def test_rp2_pins_are_checked(board, path, value, message):
    cfg = _set(path, value)
    cfg["board"] = board
    errs = config.validate(cfg, port="rp2")
    assert any(message in e for e in errs), errs


def test_rp2350b_moves_the_adc_and_extends_the_gpios():
    cfg = _example()
    cfg["board"] = "rp2350b"
    cfg["channels"][0]["pin"] = 40
    cfg["channels"][2]["spi"].update({"id": 1, "sck": 42, "mosi": 43, "miso": 44})  # SPI1
    cfg["channels"][2]["cs"] = 45
    assert config.validate(cfg, port="rp2") == []


def _esp32():
    return json.loads(ESP32_EXAMPLE.read_text())


def test_esp32_pins_are_checked_and_every_problem_is_listed_at_once():
    cfg = _esp32()
    assert config.validate(cfg, port="esp32") == []
    cfg["channels"][0]["pin"] = 25  # ADC2
    cfg["channels"][1]["i2c"]["sda"] = 7  # flash pin
    cfg["channels"][2]["cs"] = 36  # input only
    cfg["channels"][2]["spi"]["id"] = 0
    cfg["channels"][2]["spi"]["mosi"] = 39  # input only
    cfg["interval_ms"] = 50  # a structural error too
    errs = config.validate(cfg, port="esp32")
    for want in (
        "channels[0].pin: GPIO 25 is not an ADC input on esp32 (ADC1, GPIO 32-39)",
        "channels[1].i2c.sda: GPIO 7 is not a free GPIO on esp32",
        "channels[2].cs: GPIO 36 cannot be an output on esp32",
        "channels[2].spi.id: esp32 SPI ids are 1 and 2",
        "channels[2].spi.mosi: GPIO 39 is input-only on esp32",
        "interval_ms must be an integer in 100..3600000",
    ):
        assert want in errs, (want, errs)
    assert config.parse(json.dumps(cfg), port="esp32") == (None, errs)


def test_board_must_match_the_port_and_is_optional_off_a_board():
    cfg = _example()  # board rp2040
    assert "board rp2040 does not match this esp32 firmware" in config.validate(cfg, port="esp32")
    cfg["board"] = "pico9"
    assert any("board must be one of" in e for e in config.validate(cfg, port="rp2"))
    del cfg["board"]
    cfg["channels"][0]["pin"] = 22
    assert config.validate(cfg) == []  # off a board, no board named: pins are not checked
    assert any("not an ADC input on rp2040" in e for e in config.validate(cfg, port="rp2"))


def test_the_shipped_examples_pass_on_their_own_port():
    assert config.validate(_example(), port="rp2") == []
    assert config.validate(_esp32(), port="esp32") == []


def test_esp32_divider_needs_an_adc1_excitation_pin_and_rp2_refuses_one():
    cfg = _esp32()
    del cfg["channels"][0]["excitation_pin"]
    errs = config.validate(cfg, port="esp32")
    assert any("channels[0].excitation_pin is needed on esp32" in e for e in errs), errs
    cfg["channels"][0]["excitation_pin"] = 25  # ADC2
    assert (
        "channels[0].excitation_pin: GPIO 25 is not an ADC input on esp32 (ADC1, GPIO 32-39)"
        in (config.validate(cfg, port="esp32"))
    )
    cfg["channels"][0]["excitation_pin"] = 34  # the midpoint's own pin
    assert any("already used as channels[0].pin" in e for e in config.validate(cfg, port="esp32"))
    cfg["channels"][0]["excitation_divider"] = 5
    assert any("excitation_divider must be an integer in 1..4" in e for e in config.validate(cfg))
    rp = _example()
    rp["channels"][0]["excitation_pin"] = 27
    assert any("excitation_pin is for esp32" in e for e in config.validate(rp, port="rp2"))


def test_channel_table_records_the_esp32_microvolt_ratio_mode():
    from heatlog_fw import logformat as lf

    cfg = config.parse(ESP32_EXAMPLE.read_text(), port="esp32")[0]
    kind, mode, source, gain, ref, pid = channels.table(cfg)[0]
    assert (kind, source, gain, ref, pid) == (lf.KIND_ADC_DIVIDER, 34, 35, 22000000, "NTC-E1")
    assert mode == lf.MODE_UV_RATIO | (2 - 1) << 2  # low side, Q15 of read_uv, k = 2
    assert channels.table(_example())[0][1] == 0  # rp2: a sum of codes, low side


def test_esp32_build_reads_microvolts_and_stores_q15():
    import machine
    from heatlog_fw.adc_divider import AdcDividerUv

    cfg = config.parse(ESP32_EXAMPLE.read_text(), port="esp32")[0]
    cfg["channels"] = cfg["channels"][:1]
    (drv,) = channels.build(cfg, machine)
    assert isinstance(drv, AdcDividerUv) and drv.k == 2
    assert drv.adc.atten == machine.ADC.ATTN_11DB and drv.exc.atten == machine.ADC.ATTN_11DB
    drv.adc.uv = [1100000]
    drv.exc.uv = [1650000]
    assert drv.read_raw(16) == 32768 // 3 and drv.fault == 0  # 1.1 V of a 3.3 V top


@pytest.mark.parametrize(
    ("board", "port", "ms", "ok"),
    [
        ("rp2040", "rp2", 8388, True),
        ("rp2040", "rp2", 8389, False),  # RP2040 maximum 8388 ms (MicroPython machine.WDT docs)
        ("rp2350", "rp2", 16777, True),  # RP2350 maximum 16777 ms (project firmware notes)
        ("rp2350", "rp2", 16778, False),
        ("esp32", "esp32", 30000, True),  # task watchdog: no small cap; our ceiling 60 s
        ("esp32", "esp32", 60001, False),
        (None, None, 8389, False),  # unknown board: the smallest cap
    ],
)
def test_watchdog_cap_per_board(board, port, ms, ok):
    cfg = _example() if board != "esp32" else _esp32()
    if board is None:
        del cfg["board"]
    else:
        cfg["board"] = board
    cfg["watchdog_ms"] = ms
    errs = config.validate(cfg, port=port)
    assert (errs == []) == ok, errs
    if not ok:
        assert any(e.startswith("watchdog_ms must be an integer in 1000..") for e in errs), errs


def test_watchdog_must_outlast_one_sample():
    cfg = _example()
    cfg["interval_ms"] = 5000
    cfg["oversample"] = 12  # 12 x 66 ms (MAX31865) + ADS1115 + divider: about 1 s per sample
    cfg["watchdog_ms"] = 1500
    t = config.sample_time_ms(cfg)
    assert 500 < t < 3600
    errs = config.validate(cfg)
    assert errs == ["watchdog_ms 1500 is shorter than one sample (" + str(t) + " ms) + 1000 ms;"
                    " raise watchdog_ms or lower oversample"]  # fmt: skip
    cfg["watchdog_ms"] = t + 1000
    assert config.validate(cfg) == []


def test_bias_during_conversion_adds_its_settle_time():
    cfg = _example()
    before = config.sample_time_ms(cfg)
    cfg["channels"][2]["bias"] = "conversion"
    assert config.sample_time_ms(cfg) == before + cfg["oversample"] * 10  # default 10 ms settle
    cfg["channels"][2]["bias_settle_ms"] = 25
    assert config.sample_time_ms(cfg) == before + cfg["oversample"] * 25
    assert config.validate(cfg) == []
    cfg["channels"][2]["bias"] = "sometimes"
    cfg["channels"][2]["bias_settle_ms"] = 0
    errs = config.validate(cfg)
    assert "channels[2].bias must be always or conversion" in errs
    assert "channels[2].bias_settle_ms must be an integer in 1..100" in errs


@given(
    st.sampled_from(["pin", "excitation_pin", "excitation_divider", "spi", "i2c", "cs", "board"]),
    json_values,
)
def test_pin_checks_never_raise_on_junk(key, value):
    for cfg, port in ((_esp32(), "esp32"), (_example(), "rp2")):
        for ch in cfg["channels"]:
            ch[key] = value
        cfg["board"] = value if key == "board" else cfg["board"]
        assert isinstance(config.validate(cfg, port=port), list)
