"""Fixtures: a virtual board (the real firmware under the simulator) with runs on its flash."""

import shutil

import pytest

from heatlog.sim.board import VirtualBoard
from heatlog.sim.scenarios import scenario


@pytest.fixture(scope="session")
def flash_template(tmp_path_factory):
    """Flash holding two finished runs (1 h and 20 min of 2 s records), logged once."""
    path = tmp_path_factory.mktemp("flash")
    b = VirtualBoard(scenario("demo"), path, seed=3)
    b.log_run(3600)
    b.log_run(1200)
    return path


@pytest.fixture
def board(tmp_path, flash_template):
    """A demo-scenario board booted on a fresh copy of the template flash."""
    shutil.copytree(flash_template, tmp_path / "flash")
    return VirtualBoard(scenario("demo"), tmp_path / "flash", seed=3)


def flash_runs(board):
    """{run number: bytes} as they are on the virtual board's flash."""
    return {int(p.name[1:5]): p.read_bytes() for p in sorted(board.root.glob("r*.hlg"))}
