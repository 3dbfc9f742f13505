"""Benchmark: pull a multi-megabyte run from the simulated board over a pty whose board-to-host
direction is paced at a set baud rate, and print the payload rate as a fraction of the link's
nominal byte rate (baud/10). No assertions; prints figures and ratios. The simulator runs in its
own process (``heatlog sim --flash DIR --baud B --latency-ms 2``), as a board would.

    python bench/bench_pull.py [megabytes] [baud]

Baseline measured in the same run: one outstanding read (window 1, stop-and-wait). The target
is >= 90 % of nominal with pipelined reads. The run is logged by the real firmware (100 ms
records, one channel) on the virtual board before the clock starts. Only the board's output is
paced; the host's requests are small and travel on the other direction of a full-duplex link.
"""

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "host"))

from heatlog.device.archive import Archive  # noqa: E402
from heatlog.device.commands import Board  # noqa: E402
from heatlog.device.link import Link  # noqa: E402
from heatlog.device.pull import pull  # noqa: E402
from heatlog.sim import scenarios as sc  # noqa: E402
from heatlog.sim.board import VirtualBoard  # noqa: E402

MB = float(sys.argv[1]) if len(sys.argv) > 1 else 2.0
BAUD = int(sys.argv[2]) if len(sys.argv) > 2 else 921600
LATENCY_S = 0.002  # request to reply on the board: USB polling + interpreter (approx.)


def main() -> None:
    fast = sc.Scenario(
        "bench", "fast records for the pull benchmark", 100, 1, (sc.electrical_calibration(),)
    )
    with tempfile.TemporaryDirectory() as tmp:
        board = VirtualBoard(fast, Path(tmp) / "flash")
        t0 = time.perf_counter()
        seconds = MB * 1e6 / 18 * 0.1  # 18-byte records every 100 ms
        board.log_run(seconds)
        size = (board.root / "r0001.hlg").stat().st_size
        print(
            f"run of {size / 1e6:.2f} MB logged by the firmware in {time.perf_counter() - t0:.1f} s"
        )
        nominal = BAUD / 10
        print(f"link: {BAUD} baud, nominal {nominal / 1e3:.1f} kB/s; 512-byte chunks; "
              f"{LATENCY_S * 1e3:.0f} ms board latency")  # fmt: skip
        rows = []
        for window in (1, 2, 4, 8):
            link_path = Path(tmp) / "link"
            env = dict(os.environ, PYTHONPATH=str(ROOT / "host"))
            cmd = [sys.executable, "-m", "heatlog", "sim", "--link", str(link_path), "--flash",
                   str(Path(tmp) / "flash"), "--baud", str(BAUD), "--latency-ms", str(LATENCY_S * 1e3)]  # fmt: skip
            sim = subprocess.Popen(
                cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL
            )
            try:
                while not link_path.exists():
                    time.sleep(0.05)
                with Link.open(str(link_path), timeout=2.0) as link:
                    t = time.perf_counter()
                    rep = pull(Board(link), Archive(Path(tmp) / f"out{window}"), window=window)
                    dt = time.perf_counter() - t
            finally:
                sim.terminate()
                sim.wait(timeout=10)
            rate = rep.bytes / dt
            rows.append((window, rate))
            print(f"window {window}: {rep.bytes / 1e6:.2f} MB in {dt:.1f} s = {rate / 1e3:.1f} kB/s "
                  f"= {rate / nominal:.1%} of nominal; retries {rep.retries}")  # fmt: skip
        base = rows[0][1]
        for window, rate in rows[1:]:
            print(f"window {window} vs stop-and-wait baseline: x{rate / base:.2f}")
        frame = 512 / (512 + 8 + 12)
        print(f"ceiling from framing alone (512 payload / 532 bytes per reply): {frame:.1%}")


if __name__ == "__main__":
    main()
