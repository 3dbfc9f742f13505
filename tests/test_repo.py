"""Checks on the repository itself: the README contract and the contributor guide stay true."""

import re
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / ".ci"))
import quickstart  # noqa: E402


def test_quick_start_has_the_demo_then_the_test_suite():
    cmds = quickstart.commands()
    assert len(cmds) == 2
    assert "heatlog demo" in cmds[0]
    assert "pytest" in cmds[1] and ".[test]" in cmds[1]


def test_readme_opens_with_the_job():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    first_para = re.split(r"\n\s*\n", text.split("\n", 1)[1].strip(), maxsplit=1)[0]
    for word in ("thermistor", "RTD", "uncertaint", "enthalp"):
        assert word in first_para, f"README's first paragraph should say the job ({word!r} missing)"


def _tracked_files() -> list[Path]:
    try:
        out = subprocess.run(
            ["git", "ls-files"], cwd=ROOT, capture_output=True, text=True, check=True
        )
    except (OSError, subprocess.CalledProcessError):
        pytest.skip("not a git checkout")
    return [ROOT / line for line in out.stdout.splitlines() if line]


def test_no_file_cites_a_source_talk():
    # The words are stored reversed so that this file does not itself trip the check.
    words = [w[::-1] for w in ("tpircsnart", "erutcel", "edosipe", "klat ecruos")]
    pattern = re.compile(r"\b(" + "|".join(words) + r")\b", re.I)
    hits = []
    for path in _tracked_files():
        if path.suffix in {".bin", ".png"} or not path.is_file():
            continue
        try:
            text = path.read_text(encoding="utf-8")
        except UnicodeDecodeError:
            continue
        if pattern.search(text):
            hits.append(str(path.relative_to(ROOT)))
    assert not hits, hits


def test_contributor_guide_names_every_package_part():
    guide = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    pkg = ROOT / "host" / "heatlog"
    parts = [p.name for p in pkg.iterdir() if p.is_dir() and (p / "__init__.py").exists()]
    parts += [p.name for p in pkg.glob("*.py") if p.name not in {"__init__.py", "__main__.py"}]
    missing = [p for p in parts if p not in guide]
    assert not missing, f"DEVELOPERS.md does not describe {missing}"


def test_contributor_guide_carries_the_log_layout_tables():
    spec = (ROOT / "firmware" / "LOGFORMAT.md").read_text(encoding="utf-8")
    guide = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    rows = [
        line for line in spec.split("## What survives what")[0].splitlines() if line.startswith("|")
    ]
    assert len(rows) > 30
    missing = [row for row in rows if row not in guide]
    assert not missing, f"DEVELOPERS.md lacks log-format rows such as {missing[:3]}"
