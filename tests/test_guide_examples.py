"""docs/GUIDE.md: every example file in it loads through the real readers, one of each kind,
and the tables name every key the readers accept."""

import re
from pathlib import Path

import pytest

from heatlog.boxfile import OPTIONAL, REQUIRED, load_box
from heatlog.probes.probefile import load_probe
from heatlog.runfile import load_run

GUIDE = Path(__file__).resolve().parents[1] / "docs" / "GUIDE.md"
_EXAMPLE = re.compile(r"<!-- example: (\w+) \(([a-z ]+)\) -->\n```toml\n(.*?)```", re.S)


def examples() -> dict[str, tuple[str, str]]:
    text = GUIDE.read_text(encoding="utf-8")
    return {name: (kind, body) for name, kind, body in _EXAMPLE.findall(text)}


def test_the_guide_has_a_complete_example_of_each_kind():
    assert set(examples()) == {"calibration", "cup", "profile", "box", "probe"}


@pytest.mark.parametrize("name", ["calibration", "cup", "profile", "box", "probe"])
def test_each_example_loads(name, tmp_path):
    kind, body = examples()[name]
    path = tmp_path / f"{name}.toml"
    path.write_text(body, encoding="utf-8")
    if kind == "run file":
        # the profile example names a box file: give it the guide's own box example
        (tmp_path / "box.toml").write_text(examples()["box"][1], encoding="utf-8")
        spec = load_run(path)
        assert spec.title and spec.log.file.name.endswith(".csv")
        assert (spec.electrical is not None) == (name == "calibration")
        assert (spec.sample is not None) == (name == "cup")
        if name == "profile":
            assert spec.profile is not None and spec.profile.heat_capacity.value == 60.4
    elif kind == "box file":
        box = load_box(path)
        assert box.heat_capacity.u > 0 and box.loss.u > 0
    else:
        probe = load_probe(path)
        assert probe.id == "demo-ntc-1" and probe.uncertainty_K > 0


def test_the_box_table_names_every_key():
    text = GUIDE.read_text(encoding="utf-8")
    for key in REQUIRED + OPTIONAL:
        assert f"`{key}`" in text, key


def test_the_profile_table_names_every_key():
    from heatlog.profile.analysis import _TABLE_KEYS

    text = GUIDE.read_text(encoding="utf-8")
    missing = [k for k in sorted(_TABLE_KEYS) if k not in text]
    assert not missing, missing
