"""Fixtures: a virtual board (the real firmware under the simulator) with runs on its flash."""

import pytest

from heatlog.sim.board import VirtualBoard
from heatlog.sim.scenarios import scenario


@pytest.fixture
def board(tmp_path):
    """A demo-scenario board with two finished runs (1 h and 20 min of 2 s records)."""
    b = VirtualBoard(scenario("demo"), tmp_path / "flash", seed=3)
    b.log_run(3600)
    b.log_run(1200)
    return b


def flash_runs(board):
    """{run number: bytes} as they are on the virtual board's flash."""
    return {int(p.name[1:5]): p.read_bytes() for p in sorted(board.root.glob("r*.hlg"))}
