"""Seeded damage to run files (truncated mid-block, bit flips, a chunk deleted, junk appended,
records repeated, swapped or dropped with their CRCs still valid, header fields out of range
under a valid header CRC): every damaged file is named as damaged by `heatlog runs import`
(text and JSON; `--strict` refuses it with exit code 4 and stores nothing) and by `heatlog pull`
from a board whose flash holds it (text and JSON; `--strict` exits 4 but keeps the files)."""

import json
import struct
import zlib

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.logformat import decode, parse_header
from heatlog.sim.board import PtyServer, VirtualBoard
from heatlog.sim.scenarios import scenario

KINDS = ("truncate", "flip", "delete_chunk", "junk", "repeat", "swap", "drop_record")


@pytest.fixture(scope="module")
def clean_run(tmp_path_factory):
    """One finished run of 10 min of 2 s records, as the real firmware wrote it."""
    b = VirtualBoard(scenario("demo"), tmp_path_factory.mktemp("flash"), seed=7)
    run = b.log_run(600)
    return (b.root / f"r{run:04d}.hlg").read_bytes()


def damage(clean: bytes, kind: str, seed: int) -> bytes:
    rng = np.random.default_rng(seed)
    h = parse_header(clean)
    hs, r = h.header_size, h.record_size
    n = (len(clean) - hs) // r
    i = int(rng.integers(1, n - 3))
    rec = [clean[hs + k * r : hs + (k + 1) * r] for k in range(n)]
    if kind == "truncate":  # inside a record
        return clean[: hs + i * r + int(rng.integers(1, r))]
    if kind == "flip":
        pos = int(rng.integers(hs, len(clean)))
        out = bytearray(clean)
        out[pos] ^= 1 << int(rng.integers(0, 8))
        return bytes(out)
    if kind == "delete_chunk":
        a = hs + int(rng.integers(0, len(clean) - hs - 3 * r))
        k = int(rng.integers(1, 2 * r))
        return clean[:a] + clean[a + k :]
    if kind == "junk":
        return clean + rng.integers(0, 256, int(rng.integers(1, 64)), dtype=np.uint8).tobytes()
    if kind == "repeat":
        rec.insert(i + 1, rec[i])
    elif kind == "swap":
        rec[i], rec[i + 1] = rec[i + 1], rec[i]
    elif kind == "drop_record":
        del rec[i]
    return clean[:hs] + b"".join(rec)


def with_header(clean: bytes, **fields: int) -> bytes:
    """The clean file with header fields rewritten and the header CRC made valid again."""
    hs = parse_header(clean).header_size
    out = bytearray(clean)
    if "anchor" in fields:
        out[11] |= 1  # clock valid
        struct.pack_into("<q", out, 20, fields["anchor"])
    if "interval" in fields:
        struct.pack_into("<I", out, 12, fields["interval"])
    struct.pack_into("<I", out, hs - 4, zlib.crc32(bytes(out[: hs - 4])))
    return bytes(out)


def cases(clean):
    out = {f"{k}-{s}": damage(clean, k, 100 * s + j) for j, k in enumerate(KINDS) for s in range(4)}
    out["anchor-int64-max"] = with_header(clean, anchor=2**63 - 1)
    return out


def call(args):
    return CliRunner().invoke(main, args)


def test_the_clean_file_and_the_vectors_are_not_named_damaged(clean_run, tmp_path):
    assert not decode(clean_run).damaged
    f = tmp_path / "clean.hlg"
    f.write_bytes(clean_run)
    r = call(["runs", "import", str(f), "--db", str(tmp_path / "a.sqlite"), "--strict"])
    assert r.exit_code == 0 and "no damage found" in r.output, r.output


def test_every_damaged_file_is_named_by_import_and_refused_under_strict(clean_run, tmp_path):
    files = cases(clean_run)
    assert len(files) >= 26
    db = str(tmp_path / "a.sqlite")
    for name, data in files.items():
        assert data != clean_run, name
        f = tmp_path / f"{name}.hlg"
        f.write_bytes(data)
        strict = call(["runs", "import", str(f), "--db", db, "--strict"])
        assert strict.exit_code == 4, (name, strict.output)
        assert "DAMAGED" in strict.output and "not imported" in strict.output
        assert len(strict.output.strip().splitlines()) == 1, strict.output
        r = call(["runs", "import", str(f), "--db", db])
        assert r.exit_code == 0 and "DAMAGED" in r.output, (name, r.output)
        d = json.loads(call(["runs", "import", str(f), "--db", db, "--json"]).output)
        assert d["damage"]["damaged"] is True and d["new"] is False, name
    listed = json.loads(call(["runs", "list", "--db", db, "--json"]).output)["runs"]
    assert len(listed) == len(files)  # only the non-strict imports were stored
    kinds = {n.split("-")[0]: json.loads(
        call(["runs", "import", str(tmp_path / f"{n}.hlg"), "--db", db, "--json"]).output
    )["damage"] for n in ("repeat-0", "swap-0", "drop_record-0", "junk-0", "truncate-0")}  # fmt: skip
    assert kinds["repeat"]["records_repeated"] == 1 and kinds["swap"]["records_out_of_order"] == 1
    assert kinds["drop_record"]["records_missing"] == 1 and kinds["junk"]["trailing_bytes"] > 0
    assert kinds["truncate"]["trailing_bytes"] > 0


def test_an_extreme_clock_anchor_is_named_not_a_crash(clean_run, tmp_path):
    f = tmp_path / "anchor.hlg"
    f.write_bytes(with_header(clean_run, anchor=2**63 - 1))
    r = call(["runs", "import", str(f), "--db", str(tmp_path / "a.sqlite"), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)["damage"]
    assert d["damaged"] and "clock anchor 9223372036854775807 ms" in d["problems"][0]


def test_a_header_field_out_of_range_is_one_line_naming_it(clean_run, tmp_path):
    f = tmp_path / "interval.hlg"
    f.write_bytes(with_header(clean_run, interval=0))
    r = call(["runs", "import", str(f), "--db", str(tmp_path / "a.sqlite")])
    assert r.exit_code == 2 and "sample interval (ms) = 0 is outside 100..3600000" in r.output
    assert "Traceback" not in r.output and len(r.output.strip().splitlines()) == 1


def test_every_damaged_file_on_the_board_is_named_by_pull(clean_run, tmp_path, monkeypatch):
    monkeypatch.setenv("HEATLOG_DB", str(tmp_path / "runs.sqlite"))
    files = cases(clean_run)
    files["interval-0"] = with_header(clean_run, interval=0)
    board = VirtualBoard(scenario("demo"), tmp_path / "flash", seed=7)
    names = {}
    for k, (name, data) in enumerate(files.items(), start=101):
        (board.root / f"r{k:04d}.hlg").write_bytes(data)
        names[k] = name
    (board.root / "r0100.hlg").write_bytes(clean_run)  # one clean run among them
    server = PtyServer(board, tmp_path / "board.link", speed=50.0).start()
    try:
        port = str(tmp_path / "board.link")
        out = tmp_path / "arch"
        r = CliRunner().invoke(main, ["pull", "--port", port, "--out", str(out), "--json", "--strict"])  # fmt: skip
        assert r.exit_code == 4, r.output
        assert "damaged on the board" in r.stderr and "kept in" in r.stderr
        d = json.loads(r.stdout)
        by_run = {e["run"]: e["damage"] for e in d["pulled"]}
        assert set(by_run) == set(names) | {100}
        assert not by_run[100]["damaged"]
        missed = [names[k] for k in names if not by_run[k]["damaged"]]
        assert missed == []
        # the unusable header is kept and named, not recorded
        bad = next(k for k, n in names.items() if n == "interval-0")
        assert "sample interval" in by_run[bad]["problems"][0]
        assert any(x.get("run") == bad and "error" in x for x in d["recorded"])
        # text: a second pull names the damaged files already archived
        r = CliRunner().invoke(main, ["pull", "--port", port, "--out", str(out)])
        assert r.exit_code == 0, r.output
        assert r.output.count("DAMAGED") == len(names)
    finally:
        server.close()


def test_the_export_metadata_carries_the_damage(clean_run, tmp_path):
    from heatlog.device.export import export_run

    f = tmp_path / "swap.hlg"
    f.write_bytes(damage(clean_run, "swap", 3))
    _, meta = export_run(f, None)
    d = json.loads(meta.read_text())["damage"]
    assert d["damaged"] and d["records_out_of_order"] == 1 and d["summary"].startswith("DAMAGED")
