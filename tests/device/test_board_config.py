"""`heatlog board config new|check` and the install's config gate, through click's CliRunner.

The check is the firmware's own validation (firmware/heatlog_fw/config.py) run on the host; a
careless or damaged config must end in the list of its problems and exit 2, never a traceback.
"""

import json
import random

import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.device.boardconfig import VARIANTS, check_config, new_config


def _run(*args):
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


@pytest.mark.parametrize("board", ["rp2040", "rp2350", "esp32"])
@pytest.mark.parametrize("variant", VARIANTS)
def test_every_variant_gives_a_config_the_firmware_accepts(board, variant, tmp_path):
    out = tmp_path / "c.json"
    r = _run("board", "config", "new", "--variant", variant, "--board", board, "--out", str(out))
    assert r.exit_code == 0, r.output
    cfg = json.loads(out.read_text())
    assert cfg["board"] == board and len(cfg["channels"]) == 1
    r = _run("board", "config", "check", str(out), "--board", board, "--json")
    assert r.exit_code == 0 and json.loads(r.output)["problems"] == []


def test_user_pins_and_parts_are_used(tmp_path):
    out = tmp_path / "c.json"
    r = _run("board", "config", "new", "--variant", "divider", "--variant", "max31865",
             "--board", "rp2350", "--pin", "27", "--r-fixed", "47000", "--cs", "13",
             "--r-ref", "4300", "--r0", "1000", "--wires", "4", "--out", str(out))  # fmt: skip
    assert r.exit_code == 0, r.output
    div, rtd = json.loads(out.read_text())["channels"]
    assert (div["pin"], div["r_fixed_ohm"]) == (27, 47000)
    assert (rtd["cs"], rtd["r_ref_ohm"], rtd["wires"], rtd["model"]["R0"]) == (13, 4300, 4, 1000)


def test_a_wrong_pin_is_refused_and_nothing_written(tmp_path):
    out = tmp_path / "c.json"
    r = _run("board", "config", "new", "--variant", "divider", "--board", "rp2040", "--pin", "5",
             "--out", str(out))  # fmt: skip
    assert r.exit_code == 2 and "GPIO 5 is not an ADC input on rp2040" in r.output
    assert not out.exists()


def test_check_prints_every_problem_at_once(tmp_path):
    p = tmp_path / "bad.json"
    p.write_text(json.dumps({"board_id": "", "interval_ms": 10, "channels": [
        {"kind": "adc_divider", "probe_id": "x", "pin": 5, "r_fixed_ohm": 0,
         "model": {"type": "beta", "R25": 1e4, "beta": 3950}}]}))  # fmt: skip
    r = _run("board", "config", "check", str(p), "--board", "rp2350")
    assert r.exit_code == 2
    problems = [ln for ln in r.output.splitlines() if ln.startswith("problem: ")]
    assert len(problems) >= 4, r.output  # board missing, board_id, interval, r_fixed, pin
    assert any("GPIO 5" in x for x in problems) and any("interval_ms" in x for x in problems)
    assert r.output.strip().splitlines()[-1].startswith("Error: ")


def test_check_names_a_board_mismatch():
    text = json.dumps(new_config(["divider"], "rp2040", "b1"))
    assert check_config(text, "rp2040") == []
    assert any("--board is esp32" in p for p in check_config(text, "esp32"))


def _mutate(rng, obj):
    """One seeded careless edit somewhere in a config tree."""
    if isinstance(obj, dict) and obj:
        k = rng.choice(sorted(obj))
        roll = rng.random()
        if roll < 0.25:
            del obj[k]
        elif roll < 0.5 or not isinstance(obj[k], (dict, list)):
            obj[k] = rng.choice([None, -1, 10**9, "x" * 40, [], {}, True, 1.5, "26", "é"])
        else:
            _mutate(rng, obj[k])
    elif isinstance(obj, list) and obj:
        i = rng.randrange(len(obj))
        if rng.random() < 0.3:
            obj.append(obj[i]) if rng.random() < 0.5 else obj.pop(i)
        else:
            _mutate(rng, obj[i])
    return obj


@pytest.mark.parametrize("seed", range(60))
def test_mutated_configs_end_in_problems_or_pass(seed, tmp_path):
    rng = random.Random(seed)
    board = rng.choice(["rp2040", "rp2350", "esp32"])
    cfg = new_config(rng.sample(VARIANTS, rng.randint(1, 3)), board, "mut-1")
    for _ in range(rng.randint(1, 4)):
        _mutate(rng, cfg)
    p = tmp_path / "m.json"
    text = json.dumps(cfg)
    if seed % 10 == 0:
        text = text[: rng.randrange(len(text))]  # a truncated file
    p.write_text(text)
    r = _run("board", "config", "check", str(p), "--board", board)
    assert r.exit_code in (0, 2), r.output
    if r.exit_code == 2:
        assert "problem: " in r.output and "Traceback" not in r.output


def test_damaged_file_is_refused(tmp_path):
    p = tmp_path / "bin.json"
    p.write_bytes(b"\xff\xfe\x00garbage")
    r = _run("board", "config", "check", str(p), "--board", "rp2040")
    assert r.exit_code == 2 and "not UTF-8" in r.output


def test_install_refuses_a_broken_config_before_opening_the_port(tmp_path):
    p = tmp_path / "bad.json"
    p.write_text(json.dumps(new_config(["divider"], "rp2040", "b1") | {"interval_ms": 5}))
    # the port does not exist: the refusal must come before any attempt to reach a board
    r = _run("board", "install", "--port", str(tmp_path / "no-such-port"), "--config", str(p))
    assert r.exit_code == 2 and "config refused, nothing written" in r.output
    assert "interval_ms" in r.output
