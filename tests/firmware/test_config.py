"""Config validation: the shipped example is valid; each mistake is named; junk never raises."""

import copy
import json
from pathlib import Path

import pytest
from heatlog_fw import channels, config
from hypothesis import given
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
    ],
)
def test_each_mistake_is_named(path, value, message):
    cfg, errs = config.parse(json.dumps(_set(path, value)))
    assert cfg is None
    assert any(message in e for e in errs), errs


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
