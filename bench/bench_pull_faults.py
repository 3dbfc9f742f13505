"""Benchmark: pull a run from the simulated board over a paced pty through the fault injector
(``heatlog.sim.faults.FaultySerial``, both directions) at stated fault rates, and print the
payload rate as a share of the link's nominal byte rate (baud/10) and of a clean pull measured
in the same run (the baseline). No assertions; prints figures and ratios.

    python bench/bench_pull_faults.py [megabytes] [baud] [window]

Rates are per byte (drop, dup, flip) or per read (junk: 1..16 random bytes inserted), in
both directions. Each pull is seeded; a pull that stops (the retry
rules gave up) is reported as such with its message, and resumed on a clean link to show the
archive completes. The simulator runs in its own process (``heatlog sim --baud B``).
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
from heatlog.device.link import Link, open_port  # noqa: E402
from heatlog.device.pull import pull  # noqa: E402
from heatlog.errors import LinkError  # noqa: E402
from heatlog.sim import scenarios as sc  # noqa: E402
from heatlog.sim.board import VirtualBoard  # noqa: E402
from heatlog.sim.faults import FaultPlan, FaultySerial  # noqa: E402

MB = float(sys.argv[1]) if len(sys.argv) > 1 else 0.3
BAUD = int(sys.argv[2]) if len(sys.argv) > 2 else 921600
WINDOW = int(sys.argv[3]) if len(sys.argv) > 3 else 8

PLANS = [
    ("clean (baseline)", FaultPlan()),
    ("drop 1e-4", FaultPlan(drop=1e-4)),
    ("dup 1e-4 + flip 1e-4", FaultPlan(dup=1e-4, flip=1e-4)),
    ("drop/dup/flip 3e-4, junk 1 %", FaultPlan(drop=3e-4, dup=3e-4, flip=3e-4, junk=0.01)),
    ("drop/dup/flip 1e-3", FaultPlan(drop=1e-3, dup=1e-3, flip=1e-3)),
    ("drop/dup/flip 1e-3, junk 5 %", FaultPlan(drop=1e-3, dup=1e-3, flip=1e-3, junk=0.05)),
]


def main() -> None:
    fast = sc.Scenario(
        "bench", "fast records for the pull benchmark", 100, 1, (sc.electrical_calibration(),)
    )
    with tempfile.TemporaryDirectory() as tmp:
        board = VirtualBoard(fast, Path(tmp) / "flash")
        board.log_run(MB * 1e6 / 18 * 0.1)  # 18-byte records every 100 ms
        size = (board.root / "r0001.hlg").stat().st_size
        nominal = BAUD / 10
        print(f"run of {size / 1e6:.2f} MB; link {BAUD} baud, nominal {nominal / 1e3:.1f} kB/s; "
              f"window {WINDOW}; timeout 0.5 s, give up after 30 s without an intact chunk")  # fmt: skip
        link_path = Path(tmp) / "link"
        env = dict(os.environ, PYTHONPATH=str(ROOT / "host"))
        cmd = [sys.executable, "-m", "heatlog", "sim", "--link", str(link_path), "--flash",
               str(Path(tmp) / "flash"), "--baud", str(BAUD), "--latency-ms", "2"]  # fmt: skip
        sim = subprocess.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        base = None
        try:
            while not link_path.exists():
                time.sleep(0.05)
            for k, (name, plan) in enumerate(PLANS):
                plan = FaultPlan(**{**plan.__dict__, "seed": k})
                out = Archive(Path(tmp) / f"out{k}")
                port = FaultySerial(open_port(str(link_path)), plan)
                link = Link(port, timeout=0.5, name="sim")
                t = time.perf_counter()
                stopped = ""
                try:
                    rep = pull(Board(link), out, window=WINDOW)
                    got = rep.bytes
                except LinkError as exc:
                    stopped = f"  STOPPED: {exc}"
                    got = sum(p.stat().st_size for p in (out.root / ".partial").glob("*.part"))
                finally:
                    link.close()
                dt = time.perf_counter() - t
                rate = got / dt
                base = base or rate
                print(f"{name:48s} {got / 1e3:7.0f} kB in {dt:5.1f} s = {rate / 1e3:6.1f} kB/s = "
                      f"{rate / nominal:6.1%} of nominal, {rate / base:6.1%} of clean; "
                      f"retries {link.stats.retries}, timeouts {link.stats.timeouts}, bad frames {link.stats.bad_frames}{stopped}")  # fmt: skip
                if stopped:
                    with Link.open(str(link_path), timeout=0.5) as clean:
                        pull(Board(clean), out, window=WINDOW)
                    print(f"{'':48s} resumed on a clean link: archive complete")
        finally:
            sim.terminate()
            sim.wait(timeout=10)


if __name__ == "__main__":
    main()
