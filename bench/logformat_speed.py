"""Benchmark: host decoding of a run log and board-side record packing, against baselines
measured in the same run (no assertions; prints figures and ratios).

    python bench/logformat_speed.py [n_records]

Decode baseline: numpy.frombuffer of the same records (no CRC check, no resync).
Pack baseline: struct.pack_into of the same fields without the CRC (CPython; on a board the
ratio, not the figure, is what carries over).
"""

import struct
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT / "host"), str(ROOT / "firmware")]

import numpy as np  # noqa: E402
from heatlog_fw import logformat as fw  # noqa: E402

from heatlog import logformat as host  # noqa: E402


def best(fn, repeat=3):
    t = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        t.append(time.perf_counter() - t0)
    return min(t)


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 50000
    chans = [(1, 0, 26, 0, 10000000, "NTC"), (3, 4, 17, 0, 430000, "PT100")]
    packer = fw.RecordPacker(2)
    body = bytearray(packer.size * n)
    raw = [0, 0]

    def pack_all():
        for i in range(n):
            raw[0] = i
            raw[1] = 30000 + i % 100
            packer.pack(body, i * packer.size, i, i * 1000, 0, 0, raw)

    def pack_baseline():
        for i in range(n):
            struct.pack_into(
                "<BBHIIii", body, i * packer.size, 0xA5, 0, 0, i, i * 1000, i, 30000 + i % 100
            )

    t_pack = best(pack_all)
    t_pack0 = best(pack_baseline)
    data = bytes(fw.pack_header("bench", "0.1.0", 1000, 16, 0, 1, chans)) + bytes(body)
    hsize = fw.header_size(2)
    t_dec = best(lambda: host.decode(data))
    dt = host.record_dtype(2)
    t_dec0 = best(lambda: np.frombuffer(data[hsize:], dtype=dt)["raw"].copy())
    log = host.decode(data)
    assert log.n_records == n and not log.damaged
    mb = len(data) / 1e6
    print(f"records: {n} ({mb:.2f} MB, {packer.size} bytes each)")
    print(
        f"pack (firmware code, CPython): {1e6 * t_pack / n:.2f} us/record; baseline {1e6 * t_pack0 / n:.2f}; ratio {t_pack / t_pack0:.1f}"
    )
    print(
        f"decode (host, CRC each record): {t_dec:.3f} s = {mb / t_dec:.1f} MB/s; baseline {t_dec0:.4f} s; ratio {t_dec / t_dec0:.0f}"
    )


if __name__ == "__main__":
    main()
