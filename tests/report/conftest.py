"""Shared fixtures for the report tests: the demo's files, evaluated once per session."""

from pathlib import Path

import pytest

from heatlog.demo import run_demo


@pytest.fixture(scope="session")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    return run_demo(out)


@pytest.fixture(scope="session")
def demo_points() -> Path:
    from importlib import resources

    return Path(str(resources.files("heatlog") / "data" / "examples" / "ntc_10k_calibration.csv"))
