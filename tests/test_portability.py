"""Windows, macOS and Linux: narrow output encodings, no POSIX-only modules, paths.

* Every command in the click tree (and every --help) runs in a subprocess whose stdout/stderr
  are cp1252 (a Windows pipe) or ascii (``PYTHONIOENCODING``): no traceback, every byte in the
  stream's encoding, the symbols spelled in ASCII where the stream cannot carry them
  (``tests/cli_tour.py`` drives the commands; JSON is ASCII by construction).
* With termios, tty, fcntl and pty hidden (as on Windows; ``tests/posix_hidden``), the same
  tour runs, its demo picks the TCP link by itself, and the CLI test modules pass.
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from heatlog.cli.asciitext import ascii_spelled, spell

ROOT = Path(__file__).resolve().parents[1]
HIDE = ROOT / "tests" / "posix_hidden"

# The CLI test modules, one or more per command module (probe, reduce, energetics, demo,
# profile, device, archive, report) and the base group; run with the POSIX modules hidden.
CLI_TESTS = (
    "tests/test_cli_base.py",
    "tests/test_cli_energetics.py",
    "tests/probes/test_cli_probe.py",
    "tests/profile/test_cli_profile.py",
    "tests/archive/test_archive_cli.py",
    "tests/report/test_report_cli.py",
    "tests/sim/test_cli_device.py",
    "tests/runs/test_demo.py",
)


def _env(encoding: str | None, hide: bool) -> dict[str, str]:
    env = dict(os.environ)
    paths = [str(ROOT / "host")] + ([str(HIDE)] if hide else [])
    env["PYTHONPATH"] = os.pathsep.join(paths + [env.get("PYTHONPATH", "")]).rstrip(os.pathsep)
    env.pop("PYTHONUTF8", None)
    env["PYTHONIOENCODING"] = encoding or "utf-8"
    env["HEATLOG_HIDE_POSIX"] = "1" if hide else "0"
    return env


def _tour(tmp_path: Path, encoding: str, hide: bool, demo_link: str) -> tuple[str, str, dict]:
    env = _env(encoding, hide) | {"TOUR_DEMO_LINK": demo_link}
    p = subprocess.run(
        [sys.executable, str(ROOT / "tests" / "cli_tour.py"), str(tmp_path / "tour")],
        env=env,
        capture_output=True,
        timeout=900,
        cwd=tmp_path,
    )
    # every byte is in the stream's encoding (strict decoding fails otherwise)
    out, err = p.stdout.decode(encoding), p.stderr.decode(encoding)
    assert p.returncode == 0, err[-3000:]
    assert "Traceback" not in out + err, (out + err)[-3000:]
    tour = json.loads((tmp_path / "tour" / "tour.json").read_text(encoding="utf-8"))
    assert tour["failures"] == [], tour["failures"]
    leaves = {tuple(c) for c in tour["commands"]}
    leaves = {c for c in leaves if not any(o[: len(c)] == c and o != c for o in leaves)}
    run = {tuple(t) for t in tour["toured"]}
    # every command ran for real, not only its --help
    for leaf in leaves:
        assert any(t[: len(leaf)] == leaf and "--help" not in t for t in run), leaf
    return out, err, tour


def _section(out: str, marker: str) -> str:
    """The stdout of the toured command whose marker line starts with ``marker``."""
    lines = out.splitlines()
    end = next(i for i, s in enumerate(lines) if s.startswith(f"=== exit 0: {marker}"))
    start = max((i for i, s in enumerate(lines[:end]) if s.startswith("=== ")), default=-1)
    return "\n".join(lines[start + 1 : end])


@pytest.mark.slow
def test_every_command_on_a_cp1252_stream(tmp_path):
    out, err, _ = _tour(tmp_path, "cp1252", hide=False, demo_link="tcp")
    demo = _section(out, "demo --out")
    # cp1252 carries the em dash and °, not Δ: the same words, Δ spelled "d"
    assert "heatlog demo \u2014 invented data" in demo
    assert "dT = " in demo and "U(k=2) = " in demo and "dH(NH4NO3, dissolution)" in demo
    assert "\u00b0C" in demo
    assert "Convert resistance <-> temperature" in _section(out, "probe --help")


@pytest.mark.slow
def test_every_command_on_an_ascii_stream_with_posix_modules_hidden(tmp_path):
    """The Windows case in full: no termios/tty/fcntl/pty, an ASCII pipe; the demo picks the
    TCP link by itself (no pty), every board command talks to ``heatlog sim --tcp``."""
    out, err, _ = _tour(tmp_path, "ascii", hide=True, demo_link="auto")
    assert "socket://127.0.0.1:" in err  # the demo's virtual board
    demo = _section(out, "demo --out")
    assert "heatlog demo -- invented data" in demo
    assert "dT = " in demo and "U(k=2) = " in demo and "dH(NH4NO3, dissolution)" in demo
    assert "degC" in demo
    assert "degC" in _section(out, "reduce --help")
    reduce_json = _section(
        out, "reduce " + str(tmp_path / "tour" / "demo" / "dissolution.toml") + " --json"
    )
    assert json.loads(reduce_json)["delta_t_K"] < 0  # JSON stays JSON (ASCII-escaped)


@pytest.mark.slow
def test_cli_test_modules_pass_with_posix_modules_hidden():
    """The CLI test modules (every command module has one) in a fresh pytest with termios,
    tty, fcntl and pty hidden from the start; pty-only cases skip, their TCP twins run."""
    p = subprocess.run(
        [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", *CLI_TESTS],
        env=_env("ascii", hide=True),
        capture_output=True,
        timeout=1800,
        cwd=ROOT,
    )
    tail = p.stdout.decode("ascii", "replace")[-3000:]
    assert p.returncode == 0, tail
    assert " passed" in tail and "error" not in tail.splitlines()[-1]


def test_the_hiding_really_hides():
    code = "import importlib,sys\nfor m in ('termios','tty','fcntl','pty'):\n  try:\n    importlib.import_module(m); print('visible', m)\n  except ImportError: pass\nimport heatlog.cli, heatlog.demo, heatlog.sim.board, heatlog.device.link\nprint('pty', heatlog.sim.board.pty_available())"
    p = subprocess.run([sys.executable, "-c", code], env=_env(None, hide=True),
                       capture_output=True, text=True, timeout=300)  # fmt: skip
    assert p.returncode == 0, p.stderr
    assert p.stdout.split() == ["pty", "False"]


@pytest.mark.parametrize(
    "text, encoding, expected",
    [
        ("\u0394T = 0.5 K \u00b1 0.1 K", "ascii", "dT = 0.5 K +/- 0.1 K"),
        ("\u0394T = 0.5 K \u00b1 0.1 K", "cp1252", "dT = 0.5 K \u00b1 0.1 K"),
        ("a \u2192 b \u2014 c \u2013 d", "ascii", "a -> b -- c - d"),
        ("25 \u00b0C, 3 \u00b5A, 2 m\u00b2, 1 m\u00b3", "ascii", "25 degC, 3 uA, 2 m^2, 1 m^3"),
        ("J\u00b7K\u207b\u00b9, 10\u2075, T\u2080", "ascii", "J*K^-1, 10^5, T0"),
        (
            "x \u2248 y \u2264 z \u2265 w, \u03b2, \u03c3, \u2026",
            "ascii",
            "x ~ y <= z >= w, beta, sigma, ...",
        ),
        ("Steinhart\u2013Hart, r\u00e9sum\u00e9, \u4e2d", "ascii", "Steinhart-Hart, resume, ?"),
        ("plain text stays", "ascii", "plain text stays"),
    ],
)
def test_ascii_spellings(text, encoding, expected):
    assert ascii_spelled(text, encoding) == expected


def test_every_symbol_the_package_prints_has_a_readable_spelling():
    """No character in the host package's source ends as '?' on an ASCII stream."""
    chars = set()
    for path in (ROOT / "host" / "heatlog").rglob("*.py"):
        chars |= {c for c in path.read_text(encoding="utf-8") if ord(c) > 127}
    unreadable = sorted(c for c in chars if spell(c) == "?")
    assert unreadable == [], [f"U+{ord(c):04X}" for c in unreadable]
