"""Paths that travel: a run file and an archive written with Windows-style paths read back here,
and what heatlog writes itself is relative with forward slashes (reads back on any system)."""

import shutil
import sqlite3
from pathlib import Path

import pytest
from archive_data import A_1, R0_1, probe_toml, write_run_file

from heatlog.archive import import_path, open_archive, reduce_run, run_record
from heatlog.archive.runs import list_runs, raw_bytes
from heatlog.runfile import load_run, run_file
from heatlog.storedpath import is_absolute, resolve_stored, to_stored


def _project(root: Path) -> Path:
    """root/data/{run.csv, run.toml, probes/p1.toml, cal/...}: a run file naming its log, probe
    and calibration run through sub-folders, written as a Windows user would."""
    data = root / "data"
    (data / "probes").mkdir(parents=True)
    (data / "logs").mkdir()
    (data / "probes" / "p1.toml").write_text(
        probe_toml("pt-1", "2026-10-01", R0_1, A_1), encoding="utf-8"
    )
    run = write_run_file(data, "run", 3, "probes\\p1.toml")
    shutil.move(data / "run.csv", data / "logs" / "run.csv")
    text = run.read_text(encoding="utf-8").replace('file = "run.csv"', 'file = "logs\\\\run.csv"')
    text = text.replace('probe = "probes\\p1.toml"', 'probe = "probes\\\\p1.toml"')
    run.write_text(text, encoding="utf-8")
    return run


def test_a_run_file_with_backslash_paths_reads_on_this_system(tmp_path):
    run = _project(tmp_path)
    assert 'file = "logs\\\\run.csv"' in run.read_text(encoding="utf-8")
    spec = load_run(run)
    assert spec.log.file == tmp_path / "data" / "logs" / "run.csv"
    assert spec.log.probe == tmp_path / "data" / "probes" / "p1.toml"
    assert run_file(run).reduction.delta_t_K > 0
    # and the forward-slash spelling is the same file
    fwd = run.read_text(encoding="utf-8").replace("\\\\", "/")
    run.write_text(fwd, encoding="utf-8")
    assert load_run(run).log.file == spec.log.file


@pytest.mark.parametrize(
    "stored, expected",
    [
        ("a\\b\\c.csv", ("a", "b", "c.csv")),
        ("a/b/c.csv", ("a", "b", "c.csv")),
        (".\\a\\\\b/c.csv", ("a", "b", "c.csv")),
        ("..\\up.csv", ("..", "up.csv")),
    ],
)
def test_either_separator_resolves_under_the_base(tmp_path, stored, expected):
    assert resolve_stored(stored, tmp_path) == tmp_path.joinpath(*expected)


def test_absolute_paths_of_any_system_are_kept(tmp_path):
    for value in ("/data/run.csv", "C:\\data\\run.csv", "c:/data/run.csv", "\\\\lab\\share\\x.csv"):
        assert is_absolute(value) and resolve_stored(value, tmp_path) == Path(value)
    assert to_stored(tmp_path / "a" / "b.csv", tmp_path) == "a/b.csv"
    outside = to_stored(tmp_path.parent / "x.csv", tmp_path)
    assert is_absolute(outside) and "\\" not in outside


def test_the_archive_stores_relative_forward_slash_paths_and_moves_with_its_folder(tmp_path):
    root = tmp_path / "project"
    run = _project(root)
    with open_archive(root / "heatlog.sqlite") as archive:
        imported = import_path(archive, run, "2026-12-01")
        first = reduce_run(archive, imported.run_id)
    with sqlite3.connect(root / "heatlog.sqlite") as conn:
        stored = conn.execute("SELECT raw_path, run_file_path FROM runs WHERE id = ?",
                              (imported.run_id,)).fetchone()  # fmt: skip
    assert stored == ("data/logs/run.csv", "data/run.toml")
    moved = tmp_path / "elsewhere" / "project"
    shutil.move(root, moved)  # the whole project folder goes to another place (or computer)
    with open_archive(moved / "heatlog.sqlite", create=False) as archive:
        rec = run_record(archive, imported.run_id)
        assert Path(rec.raw_path) == moved / "data" / "logs" / "run.csv"
        assert raw_bytes(rec)  # found and checksum-verified
        again = reduce_run(archive, imported.run_id)
        assert list_runs(archive)[0]["raw_path"] == rec.raw_path
    assert again.results["delta_t_K"] == pytest.approx(first.results["delta_t_K"], rel=1e-12)


def test_an_archive_written_on_windows_reads_back_here(tmp_path):
    """The rows a Windows heatlog wrote (backslashes, relative to the archive) resolve here."""
    root = tmp_path / "project"
    run = _project(root)
    with open_archive(root / "heatlog.sqlite") as archive:
        imported = import_path(archive, run, "2026-12-01")
        first = reduce_run(archive, imported.run_id)
    with sqlite3.connect(root / "heatlog.sqlite") as conn:
        conn.execute(
            "UPDATE runs SET raw_path = ?, run_file_path = ? WHERE id = ?",
            ("data\\logs\\run.csv", "data\\run.toml", imported.run_id),
        )
    with open_archive(root / "heatlog.sqlite", create=False) as archive:
        rec = run_record(archive, imported.run_id)
        assert Path(rec.raw_path) == root / "data" / "logs" / "run.csv"
        assert Path(rec.run_file_path) == root / "data" / "run.toml"
        again = reduce_run(archive, imported.run_id)
    assert again.results["delta_t_K"] == pytest.approx(first.results["delta_t_K"], rel=1e-12)


def test_mangled_stored_paths_resolve_or_stay_absolute(tmp_path):
    """Seeded mutations of stored paths (doubled, mixed and trailing separators, dots, spaces,
    drive letters): resolving never raises; a relative one without '..' stays under the base."""
    import random

    rng = random.Random(19)
    pieces = ["a", "b c", "run.csv", ".", "..", "", "\\", "/", "\\\\", "C:", "é", "x\x00"[:1]]
    for _ in range(300):
        value = "".join(rng.choice(pieces) for _ in range(rng.randint(0, 8)))
        p = resolve_stored(value, tmp_path)
        if is_absolute(value):
            assert p == Path(value)
        elif ".." not in value:
            assert p == tmp_path or tmp_path in p.parents
