"""The built package carries the firmware: `setup.py`'s build hook copies firmware/ into
heatlog/_firmware, and the simulator imports it from there when run outside the source tree."""

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.slow
def test_built_package_runs_the_simulator_from_its_own_firmware_copy(tmp_path):
    src = tmp_path / "src"
    shutil.copytree(
        ROOT,
        src,
        ignore=shutil.ignore_patterns(".git", "node_modules", "__pycache__", "build", "*.egg-info"),
    )
    lib = tmp_path / "lib"
    subprocess.run(
        [sys.executable, "setup.py", "-q", "build_py", "--build-lib", str(lib)],
        cwd=src, check=True, capture_output=True,
    )  # fmt: skip
    assert (lib / "heatlog" / "_firmware" / "heatlog_fw" / "logger.py").is_file()
    shutil.rmtree(src)  # no source tree left: only the built package can serve the firmware
    code = (
        "import json, struct, tempfile, pathlib\n"
        "from heatlog.sim.firmware import firmware_dir\n"
        "from heatlog.sim.board import VirtualBoard\n"
        "from heatlog.sim.scenarios import scenario\n"
        "from heatlog.device import framing as fr\n"
        "b = VirtualBoard(scenario('calibration'), pathlib.Path(tempfile.mkdtemp()))\n"
        "b.take_output(); b.feed(fr.encode(fr.IDENTIFY, 1))\n"
        "f = [x for x in fr.FrameParser().feed(b.take_output()) if isinstance(x, fr.Frame)][0]\n"
        "print(firmware_dir(), json.loads(f.payload)['firmware'])\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=tmp_path, env={"PYTHONPATH": str(lib), "PATH": ""},
        check=True, capture_output=True, text=True,
    ).stdout  # fmt: skip
    assert out.split()[0] == str(lib / "heatlog" / "_firmware") and out.split()[1] == "0.1.0"
