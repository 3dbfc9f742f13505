"""Cost of the run archive against the work it wraps, measured in the same run.

Run from the repository root: ``python bench/bench_archive.py``. Prints, for invented board logs:
imports per second into a fresh archive against the baseline of only reading, hashing (SHA-256)
and decoding the same files; the time to list every run; and a recorded reduction (raw file
verified, calibration looked up, result stored) against reducing the same thermogram directly.
No assertions: figures only.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT / "host"), str(ROOT / "tests" / "archive")]

from archive_data import A_1, R0_1, invented_run, log_bytes, probe_toml  # noqa: E402

from heatlog.archive import add_calibration_file, import_path, list_runs, open_archive  # noqa: E402
from heatlog.archive.rawfiles import sha256_bytes  # noqa: E402
from heatlog.archive.reductions import reduce_run, thermogram_from_log  # noqa: E402
from heatlog.logformat import decode  # noqa: E402
from heatlog.probes import parse_probe  # noqa: E402
from heatlog.runfile import reduce_with_settings  # noqa: E402

N_LOGS = 200
N_REDUCE = 5


def timed(fn) -> float:
    start = time.perf_counter()
    fn()
    return time.perf_counter() - start


def main() -> None:
    t, sums = invented_run(5)
    offsets = (t * 1000).astype(int)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        paths = []
        for i in range(N_LOGS):
            p = folder / f"log-{i}.bin"
            p.write_bytes(
                log_bytes("b-1", i, ["pt-1", "pt-2"], np.column_stack([sums, sums + i]), offsets)
            )
            paths.append(p)
        size = paths[0].stat().st_size

        def baseline() -> None:
            for p in paths:
                data = p.read_bytes()
                sha256_bytes(data)
                decode(data)

        base = timed(baseline)
        archive = open_archive(folder / "a.sqlite")
        (folder / "p.toml").write_text(probe_toml("pt-1", "2026-01-01", R0_1, A_1))
        add_calibration_file(archive, folder / "p.toml")
        imp = timed(lambda: [import_path(archive, p) for p in paths])
        print(f"{N_LOGS} board logs of {t.size} records × 2 channels ({size} bytes each)")
        print(f"  read + SHA-256 + decode only: {N_LOGS / base:8.1f} files/s (baseline)")
        print(f"  import into the archive:      {N_LOGS / imp:8.1f} files/s "
              f"(×{base / imp:.2f} of baseline; one fsync'd transaction each)")  # fmt: skip
        listing = timed(lambda: list_runs(archive))
        print(f"  list {N_LOGS} runs: {listing * 1e3:.1f} ms")

        probe = parse_probe(probe_toml("pt-1", "2026-01-01", R0_1, A_1))
        direct = timed(
            lambda: [
                reduce_with_settings(
                    thermogram_from_log(decode(paths[i].read_bytes()), 0, probe, "x"), {}
                )
                for i in range(N_REDUCE)
            ]
        )
        recorded = timed(lambda: [reduce_run(archive, N_LOGS - i) for i in range(N_REDUCE)])
        print(f"  reduce directly:        {direct / N_REDUCE * 1e3:7.1f} ms/run (baseline)")
        print(f"  reduce and record:      {recorded / N_REDUCE * 1e3:7.1f} ms/run "
              f"(×{recorded / direct:.2f} of baseline)")  # fmt: skip
        archive.close()


if __name__ == "__main__":
    main()
