"""The report in a real browser: headless Chromium renders it; the screenshot is not blank and the
figures have a size on the page; the dumped DOM holds the key numbers.

Chromium is Debian's ``chromium`` package (``apt-get install -y chromium``). Outside CI the test
skips when it is missing; with ``HEATLOG_CI=1`` it fails instead.
"""

import os
import shutil
import subprocess

import numpy as np
import pytest

from heatlog.report.sources import write_report

FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--hide-scrollbars",
]


def _chromium() -> str:
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None:
        if os.environ.get("HEATLOG_CI") == "1":
            pytest.fail("chromium is not installed; CI needs: apt-get install -y chromium")
        pytest.skip("chromium is not installed (apt-get install -y chromium)")
    return exe


def _run(exe: str, args: list[str], profile) -> subprocess.CompletedProcess:
    return subprocess.run(
        [exe, *FLAGS, f"--user-data-dir={profile}", *args],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )


@pytest.mark.slow
def test_report_renders_in_chromium(demo, demo_points, tmp_path):
    exe = _chromium()
    html = write_report(demo.run, tmp_path / "report.html", probe_points=demo_points)
    url = html.resolve().as_uri()
    shot = tmp_path / "shot.png"
    r = _run(exe, [f"--screenshot={shot}", "--window-size=1200,3000", url], tmp_path / "p1")
    assert shot.is_file(), r.stderr[-2000:]
    import matplotlib.image as mpimg

    img = mpimg.imread(shot)[..., :3]
    assert img.shape[:2] == (3000, 1200)
    assert img.std() > 0.05  # not a blank page
    # a plot shows colour (fits in blue and red), unlike text and tables (grey)
    chroma = img.max(axis=2) - img.min(axis=2)
    assert np.count_nonzero(chroma > 0.3) > 2000

    script = tmp_path / "measure.html"
    # the DOM after load, with each figure's rendered size written into it
    script.write_text(
        html.read_text(encoding="utf-8").replace(
            "</body>",
            "<script>for (const i of document.images) i.setAttribute('data-shown', "
            "i.complete && i.naturalWidth > 0 && i.getBoundingClientRect().height > 100)"
            "</script></body>",
        ),
        encoding="utf-8",
    )
    r = _run(
        exe, ["--dump-dom", "--window-size=1200,3000", script.resolve().as_uri()], tmp_path / "p2"
    )
    dom = r.stdout
    assert f"{demo.run.reduction.delta_t_K:+.5f} K" in dom
    assert f"{demo.run.molar.value:+.3f} kJ/mol" in dom
    assert dom.count('data-shown="true"') == 4, dom.count("data-shown")


def test_missing_chromium_fails_in_ci_and_skips_elsewhere(monkeypatch):
    monkeypatch.setattr(shutil, "which", lambda _name: None)
    monkeypatch.setenv("HEATLOG_CI", "1")
    with pytest.raises(pytest.fail.Exception, match="apt-get install -y chromium"):
        _chromium()
    monkeypatch.delenv("HEATLOG_CI")
    with pytest.raises(pytest.skip.Exception):
        _chromium()
