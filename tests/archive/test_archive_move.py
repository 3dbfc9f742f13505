"""Moving a project folder does not orphan its runs: the archive keeps its own content-addressed
copy of every raw file beside the SQLite file, and reads it (verified by the same SHA-256) once
the original is gone."""

import json
import shutil
import stat

from click.testing import CliRunner

from heatlog.archive import rawstore
from heatlog.archive.rawfiles import sha256_bytes
from heatlog.cli import main


def _run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_import_move_the_folder_reduce(tmp_path):
    from heatlog.demo import run_demo

    project = tmp_path / "project"
    demo = run_demo(project)
    db = tmp_path / "keep" / "runs.sqlite"
    db.parent.mkdir()
    r = _run("runs", "import", demo.out / "dissolution.toml", "--db", db, "--json")
    assert r.exit_code == 0, r.output
    run_id = json.loads(r.output)["run_id"]
    before = json.loads(_run("runs", "reduce", run_id, "--db", db, "--json").output)
    log_csv = (demo.out / "dissolution.toml").parent / json.loads(
        _run("runs", "show", run_id, "--db", db, "--json").output
    )["run"]["raw_path"]
    copy = rawstore.stored(db, sha256_bytes(log_csv.read_bytes()))
    assert copy is not None and copy.read_bytes() == log_csv.read_bytes()
    assert not copy.stat().st_mode & stat.S_IWUSR  # the copy is read-only

    shutil.move(str(project), str(tmp_path / "moved"))  # the folder goes elsewhere
    assert not log_csv.exists()
    after = _run("runs", "reduce", run_id, "--db", db, "--json")
    assert after.exit_code == 0, after.output
    assert json.loads(after.output)["results"]["delta_t_K"] == before["results"]["delta_t_K"]
    shown = _run("runs", "show", run_id, "--db", db, "--json")
    assert shown.exit_code == 0, shown.output


def test_a_damaged_copy_is_refused_not_used(tmp_path):
    data = b"invented raw bytes"
    sha = sha256_bytes(data)
    path = rawstore.keep(tmp_path / "a.sqlite", data, sha)
    assert rawstore.keep(tmp_path / "a.sqlite", data, sha) == path  # written once
    try:
        rawstore.keep(tmp_path / "a.sqlite", b"other bytes", sha)
    except ValueError as exc:
        assert "SHA-256" in str(exc)
    else:
        raise AssertionError("bytes filed under the wrong SHA-256 were accepted")
