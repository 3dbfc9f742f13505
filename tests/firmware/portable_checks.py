"""Checks that run unchanged under CPython (pytest, test_portable.py) and under the real
MicroPython interpreter (mp/run.mjs). Plain asserts, no pytest, MicroPython-safe syntax only.

Each check_* function takes `vectors`, a dict of vector files already read: {"frames": ...,
"conversions": ..., "run_log_bin": bytes, "run_log": ...}.
"""

import struct

from fakefs import FakeFs, PowerCut
from heatlog_fw import framing
from heatlog_fw import logformat as lf
from heatlog_fw.crc import crc16, crc32
from heatlog_fw.logstore import LogStore, run_name

ROOT = "/logs"
CHANNELS = [
    (lf.KIND_ADC_DIVIDER, 0, 26, 0, 10000000, "NTC-A1"),
    (lf.KIND_MAX31865, 4, 17, 0, 430000, "PT100-B7"),
]
ANCHOR_MS = 1780000000000  # invented data: 2026-05-27T...Z as the host-set clock


def _unhex(s):
    return bytes(int(s[i : i + 2], 16) for i in range(0, len(s), 2))


def check_crc_check_values(vectors):
    # check values from the catalogue of parametrised CRC algorithms (CRC-16/CCITT-FALSE, CRC-32)
    assert crc16(b"123456789") == 0x29B1
    assert crc32(b"123456789") == 0xCBF43926
    assert crc32(b"6789", crc32(b"12345")) == 0xCBF43926
    assert crc16(b"") == 0xFFFF and crc32(b"") == 0


def check_frame_vectors(vectors):
    for case in vectors["frames"]["encode"]:
        got = framing.encode(case["type"], case["request_id"], _unhex(case["payload"]))
        assert bytes(got) == _unhex(case["frame"]), case["name"]
    for case in vectors["frames"]["streams"]:
        p = framing.Parser()
        out = []
        for chunk in case["chunks"]:
            for t, rid, payload in p.feed(_unhex(chunk)):
                if t == framing.BAD:
                    out.append(["bad", payload.decode(), rid])
                else:
                    out.append(
                        ["frame", t, rid, payload.hex() if hasattr(payload, "hex") else payload]
                    )
        want = [list(x) for x in case["expect"]]
        assert out == want, (case["name"], out, want)


def check_parser_bounded_on_garbage(vectors):
    p = framing.Parser()
    seed = 12345
    data = bytearray(4000)
    for i in range(len(data)):
        seed = (seed * 1103515245 + 12345) & 0x7FFFFFFF
        data[i] = (seed >> 16) & 0xFF
        if i % 97 == 0:
            data[i] = framing.SOF
    for _ in p.feed(data):
        pass
    assert p.n <= len(p.buf)
    good = framing.encode(3, 9, b"x")
    p.reset()
    frames = [f for f in p.feed(good) if f[0] != framing.BAD]
    assert frames == [(3, 9, b"x")]


def _store(fs, batch=4):
    return LogStore(ROOT, fs, batch_records=batch, flush_ms=1000, space_ms=0)


def _raw(i):
    return [1000 * 4 + i * 7, 7620 * 4 - i * 3]


def build_vector_log():
    """The run in tests/vectors/run_log.bin (invented data). Returns (file bytes, facts)."""
    fs = FakeFs(total=1 << 20)
    st = _store(fs)
    run = st.start("board-7", "0.1.0", 1000, 4, CHANNELS, ANCHOR_MS, 0)
    facts = {"records": [], "segments": []}
    seq = 0
    for i in range(6):
        flags = lf.REC_SLOTS_SKIPPED if i == 3 else 0
        fault = 0b10 if i == 4 else 0
        if fault:
            flags |= lf.REC_PROBE_FAULT
        off = i * 1000 + (2000 if i >= 3 else 0) + (i % 2)
        st.add(seq, off, flags, fault, _raw(i), off)
        facts["records"].append([seq, off, flags, fault, _raw(i)])
        seq += 1
    st.clock_set(ANCHOR_MS + 1500, seq, 7500, 7500)  # host clock set: 1.5 s later than ours
    facts["segments"].append({"cause": lf.SEG_CLOCK_SET | lf.SEG_CLOCK_VALID, "first_record": 6})
    for i in range(6, 9):
        off = i * 1000 + 2000
        st.add(seq, off, 0, 0, _raw(i), off)
        facts["records"].append([seq, off, 0, 0, _raw(i)])
        seq += 1
    st.flush(11000)
    # a torn record on a FAT-like medium: 7 bytes of an unflushed record reach the medium
    st.add(seq, 12000, 0, 0, _raw(9), 11001)
    fs.budget = 7  # the power fails 7 bytes into writing the next batch
    try:
        st.flush(11002)
        raise AssertionError("no power cut")
    except PowerCut:
        pass
    fs2 = fs.crashed(torn=7)
    st2 = _store(fs2)
    res = st2.resume(1, 0, 1000, 0)
    assert res is not None and res[0] == run and res[1] == seq and res[2] == 10000 + 1000
    facts["segments"].append(
        {"cause": lf.SEG_REBOOT | lf.SEG_TORN_TAIL | lf.SEG_GAP_UNKNOWN, "first_record": 9}
    )
    for i in range(2):
        off = res[2] + i * 1000
        st2.add(seq, off, lf.REC_SEGMENT_START if i == 0 else 0, 0, _raw(10 + i), i * 1000)
        facts["records"].append([seq, off, lf.REC_SEGMENT_START if i == 0 else 0, 0, _raw(10 + i)])
        seq += 1
    st2.stop(5000)
    with fs2.open(ROOT + "/" + run_name(run), "rb") as f:
        data = f.read()
    facts["torn_bytes"] = 7
    return data, facts


def check_run_log_vector(vectors):
    data, facts = build_vector_log()
    assert data == vectors["run_log_bin"], "firmware no longer writes tests/vectors/run_log.bin"
    want = vectors["run_log"]
    assert [r[0] for r in want["records"]] == [r[0] for r in facts["records"]]


def check_header_roundtrip(vectors):
    hdr = lf.pack_header("b", "0.1.0", 250, 16, 0, 3, CHANNELS)
    h = lf.unpack_header(hdr)
    assert h["n_channels"] == 2 and h["record_size"] == 22 and h["interval_ms"] == 250
    assert h["flags"] & lf.HDR_CLOCK_VALID == 0 and h["run"] == 3 and h["oversample"] == 16
    bad = bytearray(hdr)
    bad[20] ^= 1
    try:
        lf.unpack_header(bad)
        raise AssertionError("header with a flipped bit accepted")
    except ValueError:
        pass


def _scenario(fs, n_records=10, batch=3):
    """Start, log n records (flush every `batch`), stop. Returns the store (PowerCut propagates)."""
    st = _store(fs, batch)
    st.start("b", "0.1.0", 1000, 4, CHANNELS, 0, 0)
    for i in range(n_records):
        st.add(i, i * 1000, 0, 0, _raw(i), i * 1000)
    st.stop(n_records * 1000)
    return st


def _records(data):
    """(seq, offset, raw0, raw1) of the CRC-valid records in a run file (independent walk)."""
    h = lf.unpack_header(data)
    r = h["record_size"]
    out = []
    pos = h["header_size"]
    while pos < len(data):
        tag = data[pos]
        size = r if tag == lf.RECORD_TAG else lf.SEGMENT_SIZE if tag == lf.SEGMENT_TAG else 0
        if (
            size
            and pos + size <= len(data)
            and crc16(data, 0xFFFF, pos, pos + size - 2)
            == struct.unpack_from("<H", data, pos + size - 2)[0]
        ):
            if tag == lf.RECORD_TAG:
                out.append(struct.unpack_from("<IIii", data, pos + 4))
            pos += size
        else:
            pos += 1
    return out


def check_power_cut_every_byte(vectors, torn_values=(0, 1, 5, 1000)):
    """Cut power at every byte the scenario writes; after reboot every flushed record survives,
    the run resumes in a new segment, and the file stays decodable."""
    ref = FakeFs(total=1 << 20, budget=1 << 30)
    _scenario(ref)
    total = (1 << 30) - ref.budget
    path = ROOT + "/" + run_name(1)
    cases = 0
    for cut in range(total):
        fs = FakeFs(total=1 << 20, budget=cut)
        flushed = []
        st = _store(fs, 3)
        try:
            st.start("b", "0.1.0", 1000, 4, CHANNELS, 0, 0)
            for i in range(10):
                st.add(i, i * 1000, 0, 0, _raw(i), i * 1000)
                if fs.durable_size(path) >= 0 and fs.durable_size(path) > 0:
                    hsize = lf.header_size(2)
                    flushed = list(range(max(0, (fs.durable_size(path) - hsize) // 22)))
            st.stop(10000)
            raise AssertionError(f"no power cut at byte {cut} of {total}")
        except PowerCut:
            pass
        for torn in torn_values:
            cases += 1
            fs2 = fs.crashed(torn)
            st2 = _store(fs2, 3)
            res = st2.resume(3, 0, 1000, 0)
            if res is not None:
                for k in range(2):
                    st2.add(res[1] + k, res[2] + k * 1000, 0, 0, _raw(50 + k), k)
                st2.stop(5000)
            else:  # no run to resume: a new one must start cleanly and not reuse a file
                st2.start("b", "0.1.0", 1000, 4, CHANNELS, 0, 0)
                st2.stop(1)
            if fs2.size(path) < 0:
                assert not flushed
                continue
            with fs2.open(path, "rb") as f:
                data = f.read()
            if len(data) < lf.header_size(2):
                assert not flushed, (cut, torn)
                continue
            recs = _records(data)
            seqs = [r[0] for r in recs]
            for i in flushed:
                assert (i, i * 1000, _raw(i)[0], _raw(i)[1]) in recs, (cut, torn, i)
            assert seqs == sorted(seqs), (cut, torn, seqs)
            if res is not None:
                assert seqs[-2:] == [res[1], res[1] + 1], (cut, torn, seqs, res)
    assert cases == len(torn_values) * total
    return total


def check_storage_floor_stops_cleanly(vectors):
    fs = FakeFs(total=4000)
    st = LogStore(ROOT, fs, batch_records=2, flush_ms=10**6, space_ms=0)
    st.start("b", "0.1.0", 1000, 4, CHANNELS, 0, 0)
    i = 0
    while st.add(i, i, 0, 0, _raw(i), i):
        i += 1
        assert i < 1000
    assert st.stop_reason == "full" and not st.active
    free, total = st.space()
    assert free >= total // 10 - 64, (free, total)  # the floor, less the state file's rewrite
    with fs.open(ROOT + "/" + run_name(1), "rb") as f:
        data = f.read()
    recs = _records(data)
    assert len(recs) == i + 1 and recs[-1][0] == i
    last = data[-22:]
    assert last[1] & lf.REC_LAST
    try:
        st.start("b", "0.1.0", 1000, 4, CHANNELS, 0, 0)
        raise AssertionError("started a run below the floor")
    except Exception as e:  # StoreFull
        assert "floor" in str(e)


def check_enospc_keeps_earlier_records(vectors):
    fs = FakeFs(total=300)
    st = LogStore(ROOT, fs, batch_records=2, flush_ms=10**6, floor_pct=10, space_ms=10**9)
    st.start("b", "0.1.0", 1000, 4, CHANNELS, 0, 0)
    i = 0
    while st.add(i, i, 0, 0, _raw(i), i):
        i += 1
    assert st.stop_reason == "full"
    with fs.open(ROOT + "/" + run_name(1), "rb") as f:
        recs = _records(f.read())
    assert [r[0] for r in recs] == list(range(len(recs))) and len(recs) >= i - 2


def check_erase_needs_checksum(vectors):
    fs = FakeFs()
    st = _scenario(fs, 5)
    size, crc = st.checksum(1)
    with fs.open(ROOT + "/" + run_name(1), "rb") as f:
        data = f.read()
    assert (size, crc) == (len(data), crc32(data))
    for bad in ((size, crc ^ 1), (size - 1, crc)):
        try:
            st.erase(1, bad[0], bad[1])
            raise AssertionError("erased with a wrong checksum")
        except Exception as e:
            assert "mismatch" in str(e)
    assert st.runs() == [(1, size)]
    buf = bytearray(50)
    n, total = st.read(1, 40, buf)
    assert n == 50 and bytes(buf) == data[40:90] and total == size
    st.erase(1, size, crc)
    assert st.runs() == []


def check_state_survives_cut_in_rename(vectors):
    fs = FakeFs()
    st = _store(fs)
    st.start("b", "0.1.0", 1000, 4, CHANNELS, 0, 0)
    # leave a stale temp file (cut between write and rename): boot still finds the run
    with fs.open(ROOT + "/state.json.tmp", "w") as f:
        f.write("{garbage")
    st2 = _store(fs.crashed())
    assert st2.state["active"] == 1


CHECKS = [
    check_crc_check_values,
    check_frame_vectors,
    check_parser_bounded_on_garbage,
    check_header_roundtrip,
    check_run_log_vector,
    check_storage_floor_stops_cleanly,
    check_enospc_keeps_earlier_records,
    check_erase_needs_checksum,
    check_state_survives_cut_in_rename,
    check_power_cut_every_byte,
]
