"""Find the board firmware and import its modules under CPython.

The installed package carries a copy of ``firmware/heatlog_fw`` (plus ``app.py``, ``main.py`` and
``config.example.json``) under ``heatlog/_firmware`` (``setup.py`` copies it at build time); a
source checkout uses ``firmware/`` beside ``host/``. The firmware imports as the top-level
package ``heatlog_fw``, exactly as on the board; its MicroPython-only imports have CPython
fallbacks (``const``, ticks), and hardware arrives as objects (the fake ``machine``).
"""

from __future__ import annotations

import importlib
import sys
from pathlib import Path
from types import ModuleType

from heatlog.errors import InputError

_PACKAGED = Path(__file__).resolve().parent.parent / "_firmware"
_CHECKOUT = Path(__file__).resolve().parents[3] / "firmware"


def firmware_dir() -> Path:
    """The directory holding ``heatlog_fw/`` (packaged copy first, then the source checkout)."""
    for d in (_PACKAGED, _CHECKOUT):
        if (d / "heatlog_fw" / "__init__.py").is_file():
            return d
    raise InputError(
        "the board firmware is not installed with heatlog (no heatlog/_firmware); "
        "reinstall heatlog from a source tree that has firmware/"
    )


def load_firmware() -> dict[str, ModuleType]:
    """Import the firmware modules the simulator drives; returns them by short name."""
    d = str(firmware_dir())
    if d not in sys.path:
        sys.path.insert(0, d)
    names = ("logger", "flashfs", "protocol", "framing", "logstore", "logformat")
    return {n: importlib.import_module(f"heatlog_fw.{n}") for n in names}
