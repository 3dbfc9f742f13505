"""Pulls through a fault injector (dropped, duplicated, bit-flipped, delayed bytes, junk, a cut
link) between the host and the virtual board. Each pull either ends with files byte-identical
to the board's, or stops with a LinkError after a bounded number of retries, keeping a partial
that a clean pull completes. Nothing on the board is ever erased."""

import pytest
from conftest import flash_runs

from heatlog.device.archive import Archive
from heatlog.device.commands import Board
from heatlog.device.link import Link, LinkLost
from heatlog.device.pull import pull
from heatlog.errors import LinkError
from heatlog.logformat import read_log
from heatlog.sim.board import DirectPort
from heatlog.sim.faults import FaultPlan, FaultySerial, WrongDevice


def archived(out):
    return {read_log(p).header.run: p.read_bytes() for p in sorted(out.glob("*.hlg"))}


RATES = [
    FaultPlan(drop=1e-4),
    FaultPlan(dup=1e-4, flip=1e-4),
    FaultPlan(drop=5e-4, dup=5e-4, flip=5e-4, junk=0.02),
    FaultPlan(delay=0.05, delay_s=0.03, junk=0.05),
    FaultPlan(drop=2e-3, dup=2e-3, flip=2e-3, delay=0.02),
]


@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("plan", RATES, ids=["drop", "dup+flip", "mixed", "delay+junk", "heavy"])
def test_faulty_link_pull_is_identical_or_resumable(board, tmp_path, plan, seed):
    before = flash_runs(board)
    port = FaultySerial(DirectPort(board), FaultPlan(**{**plan.__dict__, "seed": seed}))
    out = tmp_path / "a"
    try:
        pull(Board(Link(port, timeout=0.15, retries=6)), Archive(out))
    except LinkError as exc:
        assert "again" in str(exc)  # says what to do next; partial kept for the resume
        pull(Board(Link(DirectPort(board), timeout=0.5)), Archive(out))
    assert archived(out) == before
    assert flash_runs(board) == before  # nothing erased or changed on the board


@pytest.mark.parametrize("cut_after", [100, 3000, 20000, 40000])
def test_a_cut_link_stops_cleanly_and_the_next_pull_resumes(board, tmp_path, cut_after):
    before = flash_runs(board)
    out = tmp_path / "a"
    port = FaultySerial(DirectPort(board), FaultPlan(cut_after=cut_after))
    with pytest.raises(LinkLost, match="reconnect"):
        pull(Board(Link(port, timeout=0.3)), Archive(out))
    parts = list((out / ".partial").glob("*.part")) if (out / ".partial").exists() else []
    kept = sum(p.stat().st_size for p in parts)
    rep = pull(Board(Link(DirectPort(board), timeout=0.5)), Archive(out))
    assert archived(out) == before and flash_runs(board) == before
    assert rep.bytes + kept + sum(e.size for e in rep.already) <= sum(map(len, before.values()))


def test_a_wrong_device_on_the_port_stops_the_pull_with_a_clear_message(tmp_path):
    with pytest.raises(LinkError, match="not a heatlog board"):
        pull(Board(Link(WrongDevice(), timeout=0.05, retries=2)), Archive(tmp_path / "a"))
    assert not list((tmp_path / "a").glob("*.hlg"))
