"""Build hook: ship the board firmware inside the wheel as ``heatlog/_firmware``.

Everything else is declared in pyproject.toml. The simulator (``heatlog sim``, ``heatlog demo``)
imports the real firmware modules; an installed heatlog finds them here
(``heatlog.sim.firmware.firmware_dir``), a source checkout uses ``firmware/`` directly.
"""

import shutil
from pathlib import Path

from setuptools import setup
from setuptools.command.build_py import build_py

FIRMWARE = Path(__file__).resolve().parent / "firmware"
SHIPPED = ("heatlog_fw/*.py", "app.py", "main.py", "config.example.json", "*.md")


class BuildWithFirmware(build_py):
    def run(self):
        super().run()
        dest = Path(self.build_lib) / "heatlog" / "_firmware"
        for pattern in SHIPPED:
            for src in FIRMWARE.glob(pattern):
                target = dest / src.relative_to(FIRMWARE)
                target.parent.mkdir(parents=True, exist_ok=True)
                shutil.copyfile(src, target)


setup(cmdclass={"build_py": BuildWithFirmware})
