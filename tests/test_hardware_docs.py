"""hardware/*.md: every hazardous section carries a caution, diagrams are well-formed SVG, links
resolve, and the boiling-point table agrees with IAPWS-IF97 (via the `iapws` package)."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from iapws import IAPWS97

REPO = Path(__file__).resolve().parents[1]
HARDWARE = REPO / "hardware"
PAGES = sorted(HARDWARE.glob("*.md"))
SVGS = sorted(HARDWARE.glob("*.svg"))
SVG_NS = "{http://www.w3.org/2000/svg}"

# Words that mark a step where work can hurt someone (RULES: acids/bases, hot liquids, hand warmers
# near skin, cold packs, heaters, batteries; plus cement, oxidisers, solder and epoxy).
HAZARD = re.compile(
    r"\b(heaters?|acids?|alkal(?:i|ine)|sodium hydroxide|boil(?:s|ing)?|steam|scalds?|"
    r"batter(?:y|ies)|lithium|hand warmers?|warmers?|cold packs?|ammonium nitrate|cement|"
    r"dry ice|solder(?:ing)?|epoxy)\b",
    re.IGNORECASE,
)
CALLOUT = re.compile(r"^>\s*\*\*(Caution|Safety)\b", re.MULTILINE)
HEADING = re.compile(r"^#{1,6} ", re.MULTILINE)


def sections(text: str) -> list[tuple[str, str]]:
    """(heading, body) for every heading-delimited section; text before the first heading is ''."""
    starts = [m.start() for m in HEADING.finditer(text)]
    bounds = [0, *starts] if not starts or starts[0] != 0 else starts
    out = []
    for a, b in zip(bounds, [*bounds[1:], len(text)], strict=True):
        chunk = text[a:b]
        head = chunk.splitlines()[0] if chunk.startswith("#") else ""
        out.append((head.lstrip("# ").strip(), chunk))
    return out


def _prose(chunk: str) -> str:
    """The text a reader sees as instructions: without code blocks and link targets."""
    chunk = re.sub(r"```.*?```", "", chunk, flags=re.DOTALL)
    return re.sub(r"\]\([^)]*\)", "]", chunk)


def uncautioned_sections(text: str, source: str) -> list[str]:
    """Sections that mention a hazard but carry no '> **Caution' / '> **Safety' callout."""
    out = []
    for head, chunk in sections(text):
        hits = sorted({m.group(0).lower() for m in HAZARD.finditer(_prose(chunk))})
        if hits and not CALLOUT.search(chunk):
            out.append(f"{source}: section '{head or '(top)'}' mentions {', '.join(hits)} "
                       "without a Caution or Safety callout")  # fmt: skip
    return out


def test_every_hazardous_section_carries_a_caution():
    problems = []
    for page in PAGES:
        problems += uncautioned_sections(page.read_text(encoding="utf-8"), page.name)
    assert problems == []


def test_caution_check_can_fail():
    text = (
        "# Top\n\nIntro.\n\n## Heater\n\nSwitch on the heater.\n\n"
        "## Cement\n\n> **Caution**: alkaline.\n\nMix the cement.\n\n"
        "## Notes\n\n```\nboiling in a code block only\n```\n"
    )
    problems = uncautioned_sections(text, "t.md")
    assert len(problems) == 1, problems
    assert "section 'Heater' mentions heater" in problems[0]
    # a callout in another section does not cover this one
    assert uncautioned_sections("## A\n\n> **Safety**: x\n\n## B\n\nacid\n", "t.md")
    # a plain quote is not a callout
    assert uncautioned_sections("## A\n\n> be careful with acid\n", "t.md")


def test_safety_page_covers_each_hazard_and_defers_to_local_rules():
    text = (HARDWARE / "safety.md").read_text(encoding="utf-8")
    heads = " | ".join(h for h, _ in sections(text)).lower()
    flat = re.sub(r"\s*\n>?\s*", " ", text).lower()  # prose and callouts as one line
    for topic in (
        "acids and bases", "hot water and steam", "heaters", "lithium batteries",
        "hand warmers", "cold packs", "ammonium nitrate", "cement",
    ):  # fmt: skip
        assert topic in heads, topic
    for phrase in (
        "add acid to water",
        "never dry-fire",
        "24 V DC",
        "Moritz & Henriques 1947, from memory",
        "ISO 13732-1",
        "below 0 °C",
        "oxidiser",
        "alkaline",
        "protected",
        "local codes",
        "safety data sheet",
        "licensed practice",
    ):
        assert phrase.lower() in flat, phrase


@pytest.mark.parametrize("svg", SVGS, ids=lambda p: p.name)
def test_svg_is_well_formed_and_titled(svg):
    root = ET.parse(svg).getroot()
    assert root.tag == SVG_NS + "svg"
    assert len(root.get("viewBox", "").split()) == 4
    assert root.find(SVG_NS + "title") is not None


def test_svgs_exist_and_every_svg_is_used():
    assert len(SVGS) >= 3
    text = "\n".join(p.read_text(encoding="utf-8") for p in PAGES)
    for svg in SVGS:
        assert f"({svg.name})" in text, f"{svg.name} is not shown or linked from any page"


def _links(text: str) -> list[str]:
    return re.findall(r"\]\(([^)\s]+)\)", text)


def test_relative_links_resolve():
    broken = []
    for page in PAGES:
        for target in _links(page.read_text(encoding="utf-8")):
            if re.match(r"[a-z]+:", target):
                continue
            path = target.split("#", 1)[0]
            if path and not (page.parent / path).exists():
                broken.append(f"{page.name}: {target}")
    assert broken == []
    assert "missing.md" in _links("see [x](missing.md)")


def boiling_table(text: str) -> list[tuple[float, float]]:
    m = re.search(r"<!--\s*boiling-table\s*-->\s*\n((?:\|.*\n)+)", text)
    assert m, "calibration.md needs a <!-- boiling-table --> marker before its table"
    rows = m.group(1).strip().splitlines()[2:]
    return [tuple(float(c) for c in r.strip("| ").split("|")) for r in rows]  # type: ignore[misc]


def test_boiling_table_matches_iapws_if97():
    """Saturation temperature of water at each pressure: IAPWS-IF97 via `iapws`, tol 2 mK
    (check values 99.974 °C at 101.325 kPa, 96.687 °C at 90 kPa; docs/REFERENCES.md: IAPWS-IF97)."""
    table = boiling_table((HARDWARE / "calibration.md").read_text(encoding="utf-8"))
    assert len(table) >= 5
    for p_kpa, t_c in table:
        t_if97 = IAPWS97(P=p_kpa / 1000.0, x=0).T - 273.15
        assert abs(t_if97 - t_c) <= 2e-3, (p_kpa, t_if97, t_c)
    assert dict(table)[101.325] == pytest.approx(99.974, abs=2e-3)
    assert dict(table)[90.0] == pytest.approx(96.687, abs=2e-3)


def test_boiling_slope_stated_in_the_text():
    """'about 0.28 K per kPa' near 101 kPa, from IAPWS-IF97 by central difference."""
    slope = (IAPWS97(P=0.1023, x=0).T - IAPWS97(P=0.1003, x=0).T) / 2.0
    assert round(slope, 2) == 0.28
    assert "0.28 K per kPa" in (HARDWARE / "calibration.md").read_text(encoding="utf-8")
