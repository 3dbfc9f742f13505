"""Read the shared vector files into the dict the portable checks take."""

import json
from pathlib import Path

VECTORS = Path(__file__).resolve().parents[1] / "vectors"


def load_vectors() -> dict:
    out = {}
    for name in ("frames", "conversions", "run_log"):
        path = VECTORS / (name + ".json")
        if path.exists():
            out[name] = json.loads(path.read_text())
    out["run_log_bin"] = (VECTORS / "run_log.bin").read_bytes()
    return out
