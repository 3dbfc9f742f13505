"""The archive: sanitised names from board data (no path traversal, no absolute paths),
files never overwritten, a manifest of SHA-256 checksums, partial downloads that resume."""

import hashlib
import json
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from heatlog.device.archive import Archive, archive_name, safe_name

VECTOR = Path(__file__).resolve().parents[1] / "vectors" / "run_log.bin"


@pytest.mark.parametrize(
    "bad", ["../../etc", "/abs", "..", ".", "", "a/../../b", "C:\\x", "\x00nul", None]
)
def test_board_ids_cannot_escape_the_archive(bad, tmp_path):
    name = archive_name(bad, 3, None)
    assert "/" not in name and "\\" not in name and not name.startswith(".")
    assert (tmp_path / name).resolve().parent == tmp_path.resolve()


@given(st.text(max_size=200))
def test_safe_name_keeps_only_plain_characters(text):
    s = safe_name(text)
    assert s and len(s) <= 32 and all(c.isascii() and (c.isalnum() or c in "_-") for c in s)


def test_commit_verifies_renames_read_only_and_records_the_sha256(tmp_path):
    data = VECTOR.read_bytes()
    a = Archive(tmp_path)
    part, have = a.start_partial("../../etc", 7, len(data))
    assert have == 0 and part.parent.parent == tmp_path
    part.write_bytes(data)
    entry = a.commit("../../etc", 7)
    final = tmp_path / entry.name
    assert final.read_bytes() == data and not final.stat().st_mode & 0o222
    assert entry.sha256 == hashlib.sha256(data).hexdigest()
    manifest = json.loads((tmp_path / "manifest.json").read_text())
    assert manifest["files"][entry.name]["sha256"] == entry.sha256
    assert a.find("../../etc", 7) == entry and a.verify(entry)
    assert not part.exists()


def test_commit_never_overwrites_a_different_file_of_the_same_name(tmp_path):
    data = VECTOR.read_bytes()
    a = Archive(tmp_path)
    for content in (data, data + b"\x00" * 18):
        part, _ = a.start_partial("b", 1, len(content))
        part.write_bytes(content)
        a.commit("b", 1)
    files = sorted(p.name for p in tmp_path.glob("*.hlg"))
    assert len(files) == 2 and files[1].endswith("_2.hlg")
    assert {p.read_bytes() for p in tmp_path.glob("*.hlg")} == {data, data + b"\x00" * 18}


def test_a_partial_resumes_only_for_the_same_board_and_run(tmp_path):
    a = Archive(tmp_path)
    part, _ = a.start_partial("b", 1, 1000)
    part.write_bytes(b"x" * 300)
    assert a.start_partial("b", 1, 1000)[1] == 300
    assert a.start_partial("b", 1, 200)[1] == 0  # longer than the run now is: start over
    part.write_bytes(b"x" * 300)
    (tmp_path / ".partial" / "b_r0001.json").write_text(json.dumps({"board_id": "other", "run": 1}))
    assert a.start_partial("b", 1, 1000)[1] == 0


def test_a_damaged_manifest_is_one_clear_error(tmp_path):
    (tmp_path / "manifest.json").write_text("{not json")
    from heatlog.errors import InputError

    with pytest.raises(InputError, match="damaged"):
        Archive(tmp_path).manifest()
