"""Firmware tests under CPython: firmware/ and the fakes (machine, file system) go on sys.path."""

import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
FIRMWARE = REPO / "firmware"
FAKES = Path(__file__).resolve().parent / "fakes"
VECTORS = REPO / "tests" / "vectors"

for p in (str(FAKES), str(FIRMWARE), str(Path(__file__).resolve().parent)):
    if p not in sys.path:
        sys.path.insert(0, p)
