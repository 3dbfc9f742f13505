"""Killing the importer at random points never loses a committed run nor leaves half of one.

A forked child process imports board logs and run files (each import one transaction: run,
channels, board, probe calibration) in a loop and reports each run's identity after its commit;
the parent kills it with SIGKILL after a seeded random delay, 25 times on the same archive, and
checks the archive each time: integrity_check ok, no dangling references, every run complete
(all its channels; its probe calibration present), every run reported as committed present.
"""

import multiprocessing
import os
import random
import signal
import time

import numpy as np
import pytest
from archive_data import A_1, R0_1, invented_run, log_bytes, probe_toml, write_run_file

from heatlog.archive import import_path, open_archive
from heatlog.archive import runs as runs_module

KILLS = 25


def _importer(db, folder, start, fd):
    """Child: import runs until killed; write 'run_id identity' after each commit.

    Fault injection (this child only): after inserting a run's row, before its channels, board
    and calibration rows, it writes "inside" and pauses, so many kills land mid-transaction."""
    out = os.fdopen(fd, "w", buffering=1)
    insert_run = runs_module._insert_run

    def slow_insert(conn, fields):
        run_id = insert_run(conn, fields)
        out.write("inside\n")
        time.sleep(0.01)
        return run_id

    runs_module._insert_run = slow_insert
    t, sums = invented_run(5)
    offsets = (t * 1000).astype(int)
    with open_archive(db) as archive:
        out.write("ready\n")
        i = start
        while True:
            if i % 3 == 0:
                probe = folder / f"probe-{i}.toml"
                probe.write_text(probe_toml(f"pt-{i % 4}", f"2026-{1 + i % 12:02d}-01", R0_1, A_1))
                path = write_run_file(folder, f"run-{i}", 7, probe.name, shift=i)
            else:
                path = folder / f"log-{i}.bin"
                raw = np.column_stack([sums, sums + i])
                path.write_bytes(log_bytes("b-1", i, ["pt-0", "pt-1"], raw, offsets))
            run = import_path(archive, path, "2026-12-01")
            ident = archive.one("SELECT identity FROM runs WHERE id = ?", (run.run_id,))[0]
            out.write(f"{run.run_id} {ident}\n")
            i += 1


def check_consistent(db):
    with open_archive(db, create=False) as archive:
        assert archive.integrity_problems() == []
        incomplete = archive.query(
            "SELECT r.id FROM runs r WHERE r.n_channels != "
            "(SELECT count(*) FROM run_channels c WHERE c.run_id = r.id)"
        )
        assert incomplete == []
        uncalibrated = archive.query(
            "SELECT c.run_id FROM run_channels c JOIN runs r ON r.id = c.run_id "
            "WHERE r.kind = 'run-file' AND c.probe_id IS NOT NULL AND NOT EXISTS "
            "(SELECT 1 FROM calibrations k WHERE k.probe_id = c.probe_id)"
        )
        assert uncalibrated == []
        return {row[0] for row in archive.query("SELECT identity FROM runs")}


@pytest.mark.slow
def test_sigkill_during_imports_leaves_a_consistent_archive(tmp_path):
    ctx = multiprocessing.get_context("fork")
    db = tmp_path / "a.sqlite"
    open_archive(db).close()
    rng = random.Random(20261201)
    committed: set[str] = set()
    inside = 0  # kills that landed after a run row was inserted and before its commit
    start = 0
    for _ in range(KILLS):
        read_fd, write_fd = os.pipe()
        child = ctx.Process(target=_importer, args=(db, tmp_path, start, write_fd))
        child.start()
        os.close(write_fd)
        with os.fdopen(read_fd) as pipe:
            assert pipe.readline() == "ready\n"
            time.sleep(rng.uniform(0.02, 0.4))
            os.kill(child.pid, signal.SIGKILL)
            child.join()
            lines = pipe.read().splitlines()
        assert child.exitcode == -signal.SIGKILL
        inside += bool(lines) and lines[-1] == "inside"
        committed |= {line.split(" ", 1)[1] for line in lines if line != "inside"}
        present = check_consistent(db)
        assert committed <= present, "a run reported as committed is missing"
        start += len(lines) + 2  # fresh file names; a killed half-written import is retried
    assert len(committed) > KILLS, len(committed)  # the kills landed among many imports
    assert inside >= KILLS // 5, inside  # and many inside a transaction (measured: 15 of 25)
