"""Write host/heatlog/data/examples/ntc_10k_calibration.csv (invented data).

An invented 10 kΩ NTC whose true curve is a four-term Steinhart–Hart curve (so a three-term fit
cannot follow it exactly), read at nine invented bath temperatures with 3 mK of invented reference
scatter. Run from the repository root: ``python tests/probes/make_example_csv.py``; a test checks
that the committed file matches this script.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "host"))

from heatlog.probes.thermistor import SteinhartHart4  # noqa: E402

OUT = ROOT / "host" / "heatlog" / "data" / "examples" / "ntc_10k_calibration.csv"
# The widely quoted 10 kΩ set (from memory) with an invented D term, A re-solved so R(25 °C) = 10 kΩ.
B, C, D = 2.34125e-4, 8.76741e-8, -2.0e-7
_X25 = np.log(10_000.0)
A = 1.0 / 298.15 - B * _X25 - C * _X25**3 - D * _X25**2
TRUTH = SteinhartHart4(A, B, C, D, t_min_C=-20.0, t_max_C=100.0)


def rows() -> list[tuple[float, float]]:
    rng = np.random.default_rng(20261201)
    bath = np.array([0.0, 10.0, 20.0, 29.7646, 40.0, 50.0, 60.0, 70.0, 80.0])
    bath = np.round(bath + np.where(bath == 29.7646, 0.0, rng.uniform(-0.05, 0.05, bath.size)), 3)
    r_true = np.asarray(TRUTH.temperature_to_resistance(bath + rng.normal(0.0, 0.003, bath.size)))
    return [(float(t), float(f"{r:.6g}")) for t, r in zip(bath, r_true, strict=True)]


def text() -> str:
    lines = [
        "# invented data: a 10 kOhm NTC bead in a stirred water bath against a reference",
        "# thermometer (standard uncertainty 0.01 K); made by tests/probes/make_example_csv.py",
        "temp_C,resistance_ohm",
    ]
    lines += [f"{t:.4f},{r:g}" for t, r in rows()]
    return "\n".join(lines) + "\n"


if __name__ == "__main__":
    OUT.write_text(text(), encoding="utf-8")
    print(f"wrote {OUT}")
