"""Citations point into the repository: every "REFERENCES.md" mention in code, tests and docs is
docs/REFERENCES.md, which exists, and every key cited as (docs/REFERENCES.md: KEY) has a row."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
REFS = ROOT / "docs" / "REFERENCES.md"
SKIP = {".git", ".venv", "node_modules", "__pycache__", ".pytest_cache", "build", "dist"}


def _files():
    suffixes = {".py", ".md", ".toml", ".json", ".csv", ".txt", ".html"}
    for p in ROOT.rglob("*"):
        if p.is_file() and p.suffix in suffixes and not SKIP & set(p.relative_to(ROOT).parts):
            yield p


def test_every_references_citation_points_to_the_file_in_the_repository():
    assert REFS.is_file()
    rows = set(re.findall(r"^\| ([A-Z0-9-]+) \|", REFS.read_text(encoding="utf-8"), re.M))
    assert len(rows) >= 20
    stray, unknown = [], []
    for p in _files():
        text = p.read_text(encoding="utf-8", errors="replace")
        for m in re.finditer(r"(\S*)REFERENCES\.md", text):
            if p not in (REFS, Path(__file__).resolve()) and not m.group(1).endswith("docs/"):
                stray.append(f"{p.relative_to(ROOT)}: {m.group(0)}")
        for keys in re.findall(r"docs/REFERENCES\.md: ([A-Z0-9][A-Z0-9, -]*[A-Z0-9])", text):
            for key in re.split(r",\s*", keys):
                if key not in rows and key != "KEY":
                    unknown.append(f"{p.relative_to(ROOT)}: {key}")
    assert stray == [] and unknown == []


def test_values_from_memory_stay_marked_in_the_list():
    text = REFS.read_text(encoding="utf-8")
    for key in ("KILDAY1980", "PITZER-KCL", "NBS1982", "CODATA1989", "IEC60751"):
        row = next(line for line in text.splitlines() if line.startswith(f"| {key} |"))
        assert "from memory" in row, key
