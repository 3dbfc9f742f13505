"""Checks that run unchanged under CPython (pytest, test_portable.py) and under the real
MicroPython interpreter (mp/run.mjs). Plain asserts, no pytest, MicroPython-safe syntax only.

Each check_* function takes `vectors`, a dict of vector files already read: {"frames": ...,
"conversions": ..., "run_log_bin": bytes, "run_log": ...}.
"""

import struct

from fakefs import FakeFs, PowerCut
from heatlog_fw import conversions as cv
from heatlog_fw import framing
from heatlog_fw import logformat as lf
from heatlog_fw.crc import crc16, crc32
from heatlog_fw.logstore import LogStore, run_name

ROOT = "/logs"
CHANNELS = [
    (lf.KIND_ADC_DIVIDER, 0, 26, 0, 10000000, "NTC-A1"),
    (lf.KIND_MAX31865, 4, 17, 0, 430000, "PT100-B7"),
]
# the vector run adds an ESP32 divider: Q15 of read_uv() readings, 1:2 excitation tap on GPIO 35
VECTOR_CHANNELS = CHANNELS + [
    (lf.KIND_ADC_DIVIDER, lf.MODE_UV_RATIO | (1 << 2), 34, 35, 22000000, "NTC-E1")
]
ANCHOR_MS = 1780000000000  # invented data: 2026-05-27T...Z as the host-set clock


def _unhex(s):
    return bytes(int(s[i : i + 2], 16) for i in range(0, len(s), 2))


def _hex(b):
    # not bytes.hex(): MicroPython 1.27 returns b"" (bytes) for an empty input
    return "".join(f"{x:02x}" for x in b)


def check_crc_check_values(vectors):
    # check values from the catalogue of parametrised CRC algorithms (CRC-16/CCITT-FALSE, CRC-32)
    assert crc16(b"123456789") == 0x29B1
    assert crc32(b"123456789") == 0xCBF43926
    assert crc32(b"6789", crc32(b"12345")) == 0xCBF43926
    assert crc16(b"") == 0xFFFF and crc32(b"") == 0
    from heatlog_fw.crc import crc32_table

    data = bytes((i * 7 + 3) & 0xFF for i in range(1000))
    assert crc32_table(b"123456789") == 0xCBF43926
    assert crc32_table(data) == crc32(data) and crc32_table(
        data[500:], crc32_table(data[:500])
    ) == crc32(data)


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
                    out.append(["frame", t, rid, _hex(payload)])
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


def _vraw(i):
    return _raw(i) + [10922 + 5 * i]


def build_vector_log():
    """The run in tests/vectors/run_log.bin (invented data). Returns (file bytes, facts)."""
    fs = FakeFs(total=1 << 20)
    st = _store(fs)
    run = st.start("board-7", "0.1.0", 1000, 4, VECTOR_CHANNELS, ANCHOR_MS, 0)
    facts = {"records": [], "segments": []}
    seq = 0
    for i in range(6):
        flags = lf.REC_SLOTS_SKIPPED if i == 3 else 0
        fault = 0b10 if i == 4 else 0
        if fault:
            flags |= lf.REC_PROBE_FAULT
        off = i * 1000 + (2000 if i >= 3 else 0) + (i % 2)
        st.add(seq, off, flags, fault, _vraw(i), off)
        facts["records"].append([seq, off, flags, fault, _vraw(i)])
        seq += 1
    st.clock_set(ANCHOR_MS + 1500, seq, 7500, 7500)  # host clock set: 1.5 s later than ours
    facts["segments"].append({"cause": lf.SEG_CLOCK_SET | lf.SEG_CLOCK_VALID, "first_record": 6})
    for i in range(6, 9):
        off = i * 1000 + 2000
        st.add(seq, off, 0, 0, _vraw(i), off)
        facts["records"].append([seq, off, 0, 0, _vraw(i)])
        seq += 1
    st.flush(11000)
    # a torn record on a FAT-like medium: 7 bytes of an unflushed record reach the medium
    st.add(seq, 12000, 0, 0, _vraw(9), 11001)
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
        st2.add(seq, off, lf.REC_SEGMENT_START if i == 0 else 0, 0, _vraw(10 + i), i * 1000)
        facts["records"].append([seq, off, lf.REC_SEGMENT_START if i == 0 else 0, 0, _vraw(10 + i)])
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
    return [struct.unpack_from("<IIii", b, 4) for b in _blocks(data, lf.RECORD_TAG)]


def _blocks(data, want_tag):
    """The CRC-valid blocks with tag want_tag in a run file, skipping anything else bytewise."""
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
            if tag == want_tag:
                out.append(data[pos : pos + size])
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
    ticks = []
    st.progress = lambda: ticks.append(1)
    assert st.checksum(1) == (size, crc) and len(ticks) >= 1  # the watchdog is fed meanwhile
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


def check_conversion_vectors(vectors):
    v = vectors["conversions"]
    c = v["callendar_van_dusen"]
    for case in c["cases"]:
        r = cv.cvd_ohms(case["t_C"], c["R0_ohm"], c["A"], c["B"], c["C"])
        assert abs(r - case["R_ohm"]) <= case["tol_ohm"], (case, r)
        t = cv.cvd_c(case["R_ohm"], c["R0_ohm"], c["A"], c["B"], c["C"])
        assert abs(t - case["t_C"]) <= case["tol_C"], (case, t)
    s = v["steinhart_hart"]
    for case in s["cases"]:
        t = cv.steinhart_hart_c(case["R_ohm"], s["A"], s["B"], s["C"])
        assert abs(t - case["t_C"]) <= case["tol_C"], (case, t)
    b = v["beta"]
    for case in b["cases"]:
        t = cv.beta_c(case["R_ohm"], b["R25_ohm"], b["beta_K"])
        assert abs(t - case["t_C"]) <= case["tol_C"], (case, t)
    m = v["max31865"]
    for case in m["cases"]:
        r = cv.rtd_ohms(case["code"], 1, m["R_ref_ohm"])
        t = cv.cvd_c(r, 100.0)
        assert abs(t - case["t_C"]) <= case["tol_C"], (case, t)
    d = v["adc_divider"]
    for case in d["cases"]:
        r = cv.divider_ohms(case["raw"], case["full_scale"], d["R_fixed_ohm"])
        if case["R_ohm"] is None:
            assert r is None
        else:
            assert abs(r - case["R_ohm"]) <= case["tol_ohm"], (case, r)
    model = {"type": "callendar_van_dusen", "R0": 100.0}
    assert abs(cv.to_celsius(model, 138.5055) - 100.0) < 1e-3
    assert abs(cv.to_celsius({"type": "beta", "R25": 1e4, "beta": 3950.0}, 1e4) - 25.0) < 1e-9
    assert cv.to_celsius(model, None) is None and cv.to_celsius({"type": "x"}, 100.0) is None


def check_drivers(vectors):
    import machine
    from heatlog_fw import adc_divider, ads1115, max31865

    adc = machine.ADC(machine.Pin(26))
    ch = adc_divider.AdcDivider(adc)
    adc.codes = [2047, 2048, 2049, 2048]
    assert ch.read_raw(4) == 2048 + 2049 + 2048 + 2047 and ch.fault == 0  # first read discarded
    adc.codes = [0]
    ch.read_raw(8)
    assert ch.fault == adc_divider.FAULT_SHORT
    adc.codes = [4095]
    ch.read_raw(8)
    assert ch.fault == adc_divider.FAULT_OPEN
    adc.codes = [512]
    ch2 = adc_divider.AdcDivider(adc, dnl={512: 511})
    assert ch2.read_raw(3) == 3 * 511

    # ESP32: midpoint and excitation in calibrated microvolts, stored as Q15 of V_mid / V_top
    assert adc_divider.q15(1, 3) == 10922 and adc_divider.q15(5, 5) == 32768  # floor(32768/3)
    assert adc_divider.q15(0, 7) == 0 and adc_divider.q15(2**28, 2**29 - 1) == 16384
    mid = machine.ADC(machine.Pin(34), atten=machine.ADC.ATTN_11DB)
    top = machine.ADC(machine.Pin(35), atten=machine.ADC.ATTN_11DB)
    uv = adc_divider.AdcDividerUv(mid, top, k=2)
    mid.uv = [1100000]
    top.uv = [1650000]  # a 1:2 divider on the 3.3 V top: ratio 1.1 / 3.3 = 1/3
    assert uv.read_raw(16) == 10922 and uv.fault == 0
    mid.uv = [999000, 1001000]  # noise averages out in the sums
    assert uv.read_raw(2) == 9929 and uv.fault == 0  # 2.0 V / (2 x 3.3 V) x 32768 = 9929.7
    mid.uv = [5000]
    uv.read_raw(4)
    assert uv.fault == adc_divider.FAULT_SHORT  # midpoint at ground: NTC (low side) shorted
    mid.uv = [3100000]  # 3.3 V top: the midpoint of an open NTC saturates the ADC
    uv.read_raw(4)
    assert uv.fault == adc_divider.FAULT_RANGE
    top.uv = [2000000]  # a divider fed from a 2.0 V reference, read directly (k = 1)
    uv1 = adc_divider.AdcDividerUv(mid, top, k=1)
    mid.uv = [1995000]
    uv1.read_raw(4)
    assert uv1.fault == adc_divider.FAULT_OPEN  # midpoint at the top: NTC open
    top.uv = [1650000]
    mid.uv = [120000]  # 3.6 % of the top, but below the ADC's linear range
    uv.read_raw(4)
    assert uv.fault == adc_divider.FAULT_RANGE
    mid.uv = [1100000]
    top.uv = [0]  # excitation lead off
    assert uv.read_raw(4) == 0 and uv.fault == adc_divider.FAULT_RANGE

    i2c = machine.I2C(0)
    dev = machine.FakeAds1115()
    i2c.devices[0x48] = dev
    ads = ads1115.Ads1115(i2c, 0x48, gain=1, rate=7)
    ads.wait_ms = 0
    dev.volts_uv = {4: 1100000, 7: 3300000}  # AIN0 = 1.1 V, AIN3 = 3.3 V (over range at 4.096)
    r = ads1115.Ads1115Ratio(ads, 4, 7)
    q = r.read_raw(2)
    # AIN0 code = 1.1/4.096*32768 = 8800; AIN3 = 26400: ratio 1/3 in Q15
    assert q == 8800 * 32768 // 26400 and r.fault == 0, q
    reg, cfg = dev.writes[-1]
    assert (
        reg == 1
        and cfg & 0x8000
        and (cfg >> 12) & 7 == 7
        and (cfg >> 9) & 7 == 1
        and (cfg >> 5) & 7 == 7
    )
    assert cfg & 0x0100  # single-shot
    dev.volts_uv = {4: 1100000, 7: 0}
    assert r.read_raw(1) == 0 and r.fault == ads1115.FAULT_OPEN

    spi = machine.SPI(0)
    rtd = machine.FakeMax31865(resistance=100.0, r_ref=430.0)
    spi.device = rtd
    cs = machine.Pin(17, machine.Pin.OUT)
    m = max31865.Max31865(spi, cs, wires=3, mains_hz=50, high_code=0x7FF0, low_code=0x0400)
    m.wait_ms = 0
    assert rtd.regs[0] & 0x80 and rtd.regs[0] & 0x10 and rtd.regs[0] & 0x01  # VBIAS, 3-wire, 50 Hz
    assert (rtd.regs[3] << 8 | rtd.regs[4]) >> 1 == 0x7FF0 and (
        rtd.regs[5] << 8 | rtd.regs[6]
    ) >> 1 == 0x0400
    assert m.read_raw(2) == 2 * 7620 and m.fault == 0  # 100 ohm / 430 ohm * 32768 = 7620
    assert cs.v == 1
    rtd.fault = 0x04 | 0x08  # RTDIN- open
    m.read_raw(1)
    assert m.fault == max31865.FAULT_OPEN and m.fault_reg == 0x0C and rtd.regs[7] == 0  # cleared
    rtd.fault = 0x40  # below the low threshold at a mid-scale code: out of range, not a short
    m.read_raw(1)
    assert m.fault == max31865.FAULT_RANGE
    rtd.fault = 0x80
    m.read_raw(1)
    assert m.fault == max31865.FAULT_RANGE
    rtd.fault = 0
    m.read_raw(1)
    assert m.fault == 0
    try:
        max31865.Max31865(spi, cs, wires=5)
        raise AssertionError("accepted 5 wires")
    except ValueError:
        pass


def check_max31865_fault_detection(vectors):
    """Thresholds come from the probe's valid range; open, shorted and out-of-range RTDs are
    flagged in the record's fault mask; the fault-detection cycle runs at the start, when a code
    faults, and every fault_check_s."""
    import machine
    from heatlog_fw import channels, max31865
    from heatlog_fw.sampler import Sampler

    cfg = dict(EXAMPLE_CONFIG)
    cfg["fault_check_s"] = 10  # interval 1000 ms: a cycle every 10 samples
    ch = cfg["channels"][1]  # Pt100 on R_ref 430 ohm
    low, high = channels.rtd_thresholds(ch)
    # IEC 60751 table: R(-200 degC) = 18.52 ohm, R(850 degC) = 390.48 ohm; code = R*32768/R_ref
    assert abs(low - 18.52 * 32768 / 430) <= 1 and abs(high - 390.48 * 32768 / 430) <= 1.5
    hw = _FakeHw(machine)
    drivers = channels.build(cfg, hw)
    rtd, m = hw.rtd, drivers[1]
    m.wait_ms = 0
    assert (rtd.regs[3] << 8 | rtd.regs[4]) >> 1 == high
    assert (rtd.regs[5] << 8 | rtd.regs[6]) >> 1 == low
    assert m.cycle_every == 10 and rtd.cycles == 0
    s = Sampler(drivers, 1000, 2)
    s.start(0)
    assert rtd.cycles == 1  # at run start

    def fault_after_step(k):
        s.step(k * 1000, None, False)
        code = (s.fault_mask >> 2) & 3
        assert bool(s.last_flags & lf.REC_PROBE_FAULT) == (s.fault_mask != 0)
        return code

    assert fault_after_step(0) == max31865.FAULT_NONE  # 119.3971 ohm: about 50 degC
    rtd.resistance = None  # open element: code at full scale, D7, and D5 from the cycle
    assert fault_after_step(1) == max31865.FAULT_OPEN and rtd.cycles == 2
    rtd.resistance = 0.4  # shorted element (leads only): far below the low threshold
    assert fault_after_step(2) == max31865.FAULT_SHORT
    rtd.resistance = 400.0  # about 880 degC: past the probe's range, not an open circuit
    assert fault_after_step(3) == max31865.FAULT_RANGE
    rtd.resistance = 15.0  # below -200 degC
    assert fault_after_step(4) == max31865.FAULT_RANGE
    rtd.resistance = 119.3971
    assert fault_after_step(5) == max31865.FAULT_NONE  # last cycle was clean again
    cycles = rtd.cycles
    rtd.cycle_fault = 0x10  # an open force lead that only the fault-detection cycle sees
    k = 6
    while fault_after_step(k) == max31865.FAULT_NONE:
        assert rtd.cycles == cycles  # clean until the next periodic cycle
        k += 1
    assert rtd.cycles == cycles + 1 and k - 6 < 10  # the periodic cycle came within 10 samples
    assert (s.fault_mask >> 2) & 3 == max31865.FAULT_OPEN
    assert fault_after_step(k + 1) == max31865.FAULT_OPEN  # held until the next cycle


def check_max31865_bias_only_during_conversion(vectors):
    """bias "conversion": VBIAS goes on, settles, the one-shot starts with it on, then it goes
    off; with the default the bias stays on and every one-shot finds it already on."""
    import machine
    from heatlog_fw import channels

    cfg = dict(EXAMPLE_CONFIG)
    ch = dict(cfg["channels"][1])
    ch["bias"] = "conversion"
    ch["bias_settle_ms"] = 1
    cfg["channels"] = [ch]
    hw = _FakeHw(machine)
    (m,) = channels.build(cfg, hw)
    m.wait_ms = 0
    rtd = hw.rtd
    assert not rtd.regs[0] & 0x80  # idle: bias off
    rtd.config_writes = []
    assert m.read_raw(2) == 2 * int(119.3971 * 32768 / 430.0) and m.fault == 0
    w = rtd.config_writes
    assert [x & 0xA0 for x in w] == [0x80, 0xA0, 0x00] * 2, w  # on, on + one-shot, off
    assert rtd.unsettled == 0 and not rtd.regs[0] & 0x80
    rtd.config_writes = []
    m.fault_cycle()
    assert [x & 0x8C for x in rtd.config_writes][-3:] == [0x80, 0x84, 0x00]  # cycle with bias
    always = dict(EXAMPLE_CONFIG)  # default: bias always on
    hw2 = _FakeHw(machine)
    (m2,) = channels.build(always, hw2)[1:]
    m2.wait_ms = 0
    m2.read_raw(2)
    assert hw2.rtd.regs[0] & 0x80 and hw2.rtd.unsettled == 0
    assert all(x & 0x80 for x in hw2.rtd.config_writes)


POWER_CHANNEL = {
    "kind": "ina226",
    "probe_id": "heater",
    "address": 0x40,
    "i2c": {"id": 0, "sda": 4, "scl": 5},
    "shunt_ohm": 0.1,
    "averages": 16,
    "conversion_us": 1100,
    "max_current_A": 0.8,
}


def check_ina_power_monitor(vectors):
    """INA226/INA219 codes, config words, faults; one config channel logs bus and shunt."""
    import machine
    from heatlog_fw import channels, config, ina2xx
    from heatlog_fw import logformat as lf

    # config words (TI SBOS547 / SBOS448, from memory): AVG 16 = 0b010, CT 1100 us = 0b100
    assert ina2xx.config_word("ina226", 16, 4) == (2 << 9) | (4 << 6) | (4 << 3) | 7
    assert (
        ina2xx.config_word("ina219", 128, 0, 3, True)
        == 0x2000 | (3 << 11) | (0xF << 7) | (0xF << 3) | 7
    )
    assert ina2xx.result_ms("ina226", 16, 4) == 36  # 16 x (1100 + 1100) us = 35.2 ms
    assert ina2xx.result_ms("ina219", 128, 0) == 137  # 2 x 68.1 ms
    i2c = machine.I2C(0)
    dev = machine.FakeIna2xx("ina226", bus_uv=12000000, shunt_nv=50000000)
    i2c.devices[0x40] = dev
    ina = ina2xx.Ina2xx(i2c, 0x40, "ina226", 16, 4)
    assert dev.writes[-1] == (0, ina.config)
    bus, shunt = ina2xx.InaBus(ina), ina2xx.InaShunt(ina)
    assert bus.read_raw(4) == 9600 and bus.fault == 0  # 12 V / 1.25 mV
    assert shunt.read_raw(4) == 20000 and shunt.fault == 0  # 50 mV / 2.5 uV
    dev.shunt_nv = -1250000  # reverse current: a signed code
    assert shunt.read_raw(1) == -500
    dev.shunt_nv = 90000000  # beyond +-81.92 mV: saturated, flagged
    assert shunt.read_raw(1) == 32767 and shunt.fault == ina2xx.FAULT_RANGE
    dev.present = False
    assert bus.read_raw(1) == 0 and bus.fault == ina2xx.FAULT_OPEN
    dev.present = True
    dev.writes = []
    bus.run_start()
    assert dev.writes == [(0, ina.config)]  # configured again at each run start

    d219 = machine.FakeIna2xx("ina219", bus_uv=5000000, shunt_nv=25000000)
    i2c.devices[0x41] = d219
    i219 = ina2xx.Ina2xx(i2c, 0x41, "ina219", 8, 0, 1, False)  # +-80 mV, 16 V bus
    assert ina2xx.InaBus(i219).read_raw(1) == 1250  # 5 V / 4 mV
    assert ina2xx.InaShunt(i219).read_raw(1) == 2500  # 25 mV / 10 uV
    d219.shunt_nv = 85000000
    sh = ina2xx.InaShunt(i219)
    assert sh.read_raw(1) == 8000 and sh.fault == ina2xx.FAULT_RANGE  # the 80 mV range's end

    cfg = {
        "board_id": "pw-1",
        "interval_ms": 1000,
        "board": "rp2040",
        "channels": [EXAMPLE_CONFIG["channels"][0], POWER_CHANNEL],
    }
    assert config.validate(cfg, "rp2") == [], config.validate(cfg, "rp2")
    assert config.logged_channels(cfg) == 3
    tab = channels.table(cfg)
    assert tab[1] == (lf.KIND_INA226, lf.MODE_BUS, 0x40, 3, 100000, "heater")
    assert tab[2] == (lf.KIND_INA226, lf.MODE_SHUNT, 0x40, 3, 100000, "heater")
    bad = dict(POWER_CHANNEL, shunt_ohm=0.2, averages=5, conversion_us=1000)
    errs = config.validate(dict(cfg, channels=[bad]), "rp2")
    assert any("averages must be one of" in e for e in errs), errs
    assert any("conversion_us must be one of" in e for e in errs), errs
    assert any("exceeds the ina226 shunt range" in e for e in errs), errs  # 0.8 A x 0.2 ohm
    slow = dict(POWER_CHANNEL, averages=1024, conversion_us=8244)  # 16.9 s per result
    errs = config.validate(dict(cfg, channels=[slow]), "rp2")
    assert any("readings would repeat" in e for e in errs), errs
    many = dict(cfg, channels=[POWER_CHANNEL] * 5)  # 10 logged channels
    assert any("at most 8 in all" in e for e in config.validate(many, "rp2"))


EXAMPLE_CONFIG = {
    "board_id": "bench-1",
    "interval_ms": 1000,
    "oversample": 4,
    "flush_ms": 3000,
    "channels": [
        {
            "kind": "adc_divider",
            "probe_id": "NTC-A1",
            "pin": 26,
            "r_fixed_ohm": 10000,
            "model": {"type": "steinhart_hart", "A": 1.129148e-3, "B": 2.34125e-4, "C": 8.76741e-8},
        },
        {
            "kind": "max31865",
            "probe_id": "PT100-C3",
            "spi": {"id": 0, "sck": 18, "mosi": 19, "miso": 16},
            "cs": 17,
            "r_ref_ohm": 430,
            "wires": 4,
            "model": {"type": "callendar_van_dusen", "R0": 100},
        },
    ],
}


class _Link:
    """Host side of the serial link for the logger checks (firmware framing, no pyserial)."""

    def __init__(self, lg):
        self.lg = lg
        self.out = bytearray()
        self.parser = framing.Parser()
        self.rid = 0

    def write(self, data):
        self.out.extend(data)

    def frames(self):
        got = list(self.parser.feed(bytes(self.out)))
        self.out = bytearray()
        return got

    def ask(self, t, payload=b"", now=0):
        self.rid = (self.rid + 1) & 0xFF
        self.lg.poll(framing.encode(t, self.rid, payload), now)
        got = [f for f in self.frames() if f[0] != 0xC0]
        assert len(got) == 1 and got[0][1] == self.rid, got
        return got[0][0], got[0][2]


def _logger(cfg, fs=None, machine_mod=None):
    import json

    import machine
    from heatlog_fw.logger import Logger

    fs = fs or FakeFs()
    fs.mkdir(ROOT)
    if cfg is not None:
        with fs.open(ROOT + "/config.json", "w") as f:
            f.write(json.dumps(cfg) if not isinstance(cfg, str) else cfg)
    holder = []
    lg = Logger(fs, ROOT, machine_mod or _FakeHw(machine), lambda d: holder[0].write(d), 1, None)
    for d in lg.sampler.channels if lg.sampler else ():
        if hasattr(d, "wait_ms"):
            d.wait_ms = 0  # no real conversion time to wait for
    link = _Link(lg)
    holder.append(link)
    return lg, link, fs


class _FakeHw:
    """The fake machine module, with an RTD attached to every SPI bus created."""

    def __init__(self, machine):
        self.m = machine
        self.Pin = machine.Pin
        self.rtd = machine.FakeMax31865(resistance=119.3971, r_ref=430.0)

    def ADC(self, pin):
        return self.m.ADC(pin)

    def I2C(self, *a, **k):
        return self.m.I2C(*a, **k)

    def SPI(self, *a, **k):
        s = self.m.SPI(*a, **k)
        s.device = self.rtd
        return s


def check_logger_commands(vectors):
    import json

    from heatlog_fw import protocol as pr

    lg, link, fs = _logger(EXAMPLE_CONFIG)
    assert lg.boot(0) is None and lg.config_errors == []
    t, p = link.ask(pr.IDENTIFY)
    ident = json.loads(p)
    assert t == pr.IDENTIFY | 0x80 and ident["board_id"] == "bench-1" and ident["clock_ms"] is None
    assert ident["format"] == 1 and ident["protocol"] == 1 and ident["record_size"] == 22
    t, p = link.ask(pr.SET_CLOCK, struct.pack("<q", ANCHOR_MS), 0)
    assert t == pr.SET_CLOCK | 0x80 and struct.unpack("<qq", p) == (ANCHOR_MS, 0)
    t, p = link.ask(pr.START_RUN, b"", 10)
    assert t == pr.START_RUN | 0x80 and struct.unpack("<I", p) == (1,)
    t, p = link.ask(pr.START_RUN, b"", 10)
    assert t == pr.ERROR and p[0] == pr.E_STATE
    t, p = link.ask(pr.STREAM, b"\x01", 10)
    assert t == pr.STREAM | 0x80 and struct.unpack("<BH", p) == (1, 22)
    live = 0
    for now in range(10, 10010, 250):
        lg.poll(None, now)
        live += len([f for f in link.frames() if f[0] == pr.LIVE])
    assert live == 9, live  # one live record per 1000 ms slot (the first came before STREAM)
    lg.poll(None, 20000)  # late by 9 slots: skipped, not sampled in a burst
    recs = [f for f in link.frames() if f[0] == pr.LIVE]
    assert len(recs) == 1 and recs[0][2][1] & lf.REC_SLOTS_SKIPPED
    assert struct.unpack_from("<I", recs[0][2], 8)[0] == 19000 + 990  # slot offset + lateness
    t, p = link.ask(pr.SET_CLOCK, struct.pack("<q", ANCHOR_MS + 25000), 20100)
    t, p = link.ask(pr.STOP_RUN, b"", 20200)
    assert struct.unpack("<I", p) == (1,)
    t, p = link.ask(pr.LIST_RUNS, struct.pack("<H", 0))
    runs = json.loads(p)
    assert runs["active"] is None and runs["more"] is False and runs["runs"][0][0] == 1
    size = runs["runs"][0][1]
    data = bytearray()
    while len(data) < size:
        t, p = link.ask(pr.READ_RUN, struct.pack("<IIH", 1, len(data), 100))
        run, off, total = struct.unpack_from("<III", p)
        assert (run, off, total) == (1, len(data), size)
        data.extend(p[12:])
    h = lf.unpack_header(data)
    assert h["anchor_ms"] == ANCHOR_MS + 10 and h["flags"] & lf.HDR_CLOCK_VALID
    recs = _records(bytes(data))
    assert [r[0] for r in recs] == list(range(12)) and recs[0][1] == 0, recs
    assert recs[-1][1] == 20090 and data.count(b"\x5e\x14") >= 1  # clock-set segment marker
    assert recs[1][2] == 4 * 2048  # ADC raw: sum of 4 codes
    assert recs[1][3] == 4 * int(119.3971 * 32768 / 430)  # RTD: 50 degC, IEC 60751
    t, p = link.ask(pr.RUN_CHECKSUM, struct.pack("<I", 1))
    assert struct.unpack("<III", p) == (1, size, crc32(bytes(data)))
    t, p = link.ask(pr.ERASE_RUN, struct.pack("<III", 1, size, crc32(bytes(data)) ^ 1))
    assert t == pr.ERROR and p[0] == pr.E_CHECKSUM
    t, p = link.ask(pr.READ_RUN, struct.pack("<IIH", 7, 0, 10))
    assert t == pr.ERROR and p[0] == pr.E_NOT_FOUND
    t, p = link.ask(pr.ERASE_RUN, struct.pack("<III", 1, size, crc32(bytes(data))))
    assert t == pr.ERASE_RUN | 0x80
    t, p = link.ask(pr.GET_CONFIG)
    assert json.loads(p) == EXAMPLE_CONFIG
    t, p = link.ask(pr.PUT_CONFIG, b'{"board_id": 5}')
    assert t == pr.ERROR and p[0] == pr.E_CONFIG and b"board_id" in p and b"interval_ms" in p
    t, p = link.ask(pr.PUT_CONFIG, b"__import__('os').remove('x')")
    assert t == pr.ERROR and p[0] == pr.E_CONFIG and b"not valid JSON" in p
    new = dict(EXAMPLE_CONFIG)
    new["board_id"] = "bench-2"
    t, p = link.ask(pr.PUT_CONFIG, json.dumps(new).encode())
    assert t == pr.PUT_CONFIG | 0x80, p
    assert json.loads(link.ask(pr.IDENTIFY)[1])["board_id"] == "bench-2"
    for bad_t, bad_p, code in (
        (0x55, b"", pr.E_UNKNOWN),
        (pr.READ_RUN, b"\x01", pr.E_PAYLOAD),
        (pr.READ_RUN, struct.pack("<IIH", 1, 0, 0), pr.E_PAYLOAD),
        (pr.SET_CLOCK, struct.pack("<q", 5), pr.E_PAYLOAD),
        (pr.STREAM, b"\x07", pr.E_PAYLOAD),
        (pr.STOP_RUN, b"", pr.E_STATE),
    ):
        t, p = link.ask(bad_t, bad_p)
        assert t == pr.ERROR and p[0] == code, (bad_t, p)
    lg.poll(b"\xa7\x01\x01\x09\x00\x00\xff\xff", 0)  # bad CRC
    got = link.frames()
    assert got[0][0] == pr.ERROR and got[0][2][0] == pr.E_BAD_FRAME


def check_logger_drops_a_cut_request_after_silence(vectors):
    from heatlog_fw import protocol as pr
    from heatlog_fw.logger import IDLE_RESET_MS

    lg, link, fs = _logger(EXAMPLE_CONFIG)
    lg.boot(0)
    whole = framing.encode(pr.IDENTIFY, 9, b"")
    lg.poll(whole[:4], 1000)  # the rest of this request is lost on the way
    lg.poll(None, 1000 + IDLE_RESET_MS - 1)
    assert link.frames() == []  # still waiting within the idle window
    lg.poll(None, 1000 + IDLE_RESET_MS)
    got = link.frames()
    assert len(got) == 1 and got[0][0] == pr.ERROR and got[0][2][0] == pr.E_BAD_FRAME, got
    # the next request is parsed from its own start byte and answered
    t, p = link.ask(pr.IDENTIFY, b"", 2000)
    assert t == pr.IDENTIFY | 0x80


def check_logger_bad_config_idles(vectors):
    from heatlog_fw import protocol as pr

    for cfg, words in (
        (None, "no config.json"),
        ("{not json", "not valid JSON"),
        ({"board_id": "x", "interval_ms": 50, "channels": []}, "interval_ms"),
        (dict(EXAMPLE_CONFIG, oversample=200), "oversample"),
    ):
        lg, link, fs = _logger(cfg)
        lg.boot(0)
        text = bytes(link.out).decode()
        assert "config invalid" in text and words in text, (words, text)
        link.out = bytearray()
        t, p = link.ask(pr.START_RUN)
        assert t == pr.ERROR and words in p.decode(), p
        assert lg.poll(None, 100) == 50 and not lg.watchdog_wanted
        t, p = link.ask(pr.IDENTIFY)
        assert t == pr.IDENTIFY | 0x80


def check_logger_resumes_after_reset(vectors):
    lg, link, fs = _logger(EXAMPLE_CONFIG)
    lg.boot(0)
    lg.start_run(0)
    for now in range(0, 7001, 500):
        lg.poll(None, now)
    fs2 = fs.crashed()  # power cut: records after the last flush (3000 ms) are gone
    lg2, link2, _ = _logger(None, fs2)
    assert lg2.boot(100) == 1 and lg2.watchdog_wanted
    for now in range(100, 2200, 500):
        lg2.poll(None, now)
    lg2.stop_run(3000)
    with fs2.open(ROOT + "/" + run_name(1), "rb") as f:
        data = f.read()
    recs = _records(data)
    seqs = [r[0] for r in recs]
    assert seqs == list(range(len(seqs))) and len(seqs) >= 4 + 3, seqs
    assert b"\x5e" in data[lf.header_size(2) :]
    assert "resumed run 1" in bytes(link2.out).decode()


class _QuietAdc:
    """Allocation-free ADC for the allocation check (the general fakes allocate freely)."""

    def read_u16(self):
        return 0x8008

    def read_uv(self):
        return 1650000


class _QuietSpi:
    """Allocation-free SPI answering like a MAX31865 at code 7620 with no fault."""

    def write(self, buf):
        pass

    def readinto(self, buf):
        if len(buf) == 2:
            buf[0] = (7620 << 1) >> 8
            buf[1] = (7620 << 1) & 0xFF
        else:
            buf[0] = 0


def _quiet_pin(v=None):
    return None


def check_sampler_allocates_nothing(vectors):
    """Under MicroPython: no heap allocation per sample (CPython has no gc.mem_alloc: skip)."""
    import gc

    from heatlog_fw.adc_divider import AdcDivider, AdcDividerUv
    from heatlog_fw.max31865 import Max31865
    from heatlog_fw.sampler import Sampler

    if not hasattr(gc, "mem_alloc"):
        return
    fs = FakeFs()
    store = LogStore(ROOT, fs, batch_records=400, flush_ms=10**8, space_ms=10**8)
    store.start("b", "0.1.0", 1000, 4, VECTOR_CHANNELS, 0, 0)
    rtd = Max31865(_QuietSpi(), _quiet_pin)
    rtd.wait_ms = 0
    esp = AdcDividerUv(_QuietAdc(), _QuietAdc(), 2)
    s = Sampler([AdcDivider(_QuietAdc()), rtd, esp], 1000, 4)
    s.start(0)
    s.step(0, store, False)
    gc.collect()
    gc.disable()
    before = gc.mem_alloc()
    for k in range(1, 201):
        s.step(k * 1000 + 7, store, False)
    after = gc.mem_alloc()
    gc.enable()
    assert s.seq == 201 and store.pending == 201
    assert after - before == 0, after - before


class _CountingChannel:
    fault = 0

    def read_raw(self, n):
        return n


def check_sampler_no_drift_across_wrap(vectors):
    """Slots stay on start + k*interval across the 2**30 ms ticks wrap; late wake-ups do not
    accumulate; a stall of several intervals skips those slots and flags the next record."""
    from heatlog_fw.sampler import Sampler
    from heatlog_fw.ticks import ticks_add, ticks_diff

    class Sink:
        def __init__(self):
            self.rows = []

        def add(self, seq, off, flags, fault, raw, now):
            self.rows.append((seq, off, flags))
            return True

    start = ticks_add(0, -2500)  # 2.5 s before the ticks counter wraps
    s = Sampler([_CountingChannel()], 100, 3)
    s.start(start)
    sink = Sink()
    now = start
    for k in range(300):
        if k == 150:
            now = ticks_add(now, 730)  # a stall of 7.3 intervals
        lateness = (k * 37) % 23  # the loop wakes up 0..22 ms late
        now2 = ticks_add(now, lateness)
        while not s.due(now2):
            now2 = ticks_add(now2, 1)
        s.step(now2, sink, False)
        now = ticks_add(s.next_due, 0)
    offs = [r[1] for r in sink.rows]
    assert ticks_diff(now, start) > 2500  # the run crossed the wrap
    assert offs == sorted(offs)
    skipped = [r for r in sink.rows if r[2] & lf.REC_SLOTS_SKIPPED]
    assert len(skipped) == 1 and s.skipped == 7, (skipped, s.skipped)
    assert skipped[0][:2] == (150, (150 + 7) * 100 + 30 + 7)  # slot 157 + 30 ms stall + 7 ms late
    for seq, off, flags in sink.rows:
        if not flags & lf.REC_SLOTS_SKIPPED:  # slot start + lateness: never drifting
            assert off % 100 == (seq * 37) % 23 and off // 100 == seq + (7 if seq > 150 else 0)
    assert sink.rows[-1][1] // 100 == 299 + 7


def _timegm(t):
    try:
        import calendar

        return calendar.timegm(tuple(t[:6]) + (0, 0, 0))
    except ImportError:  # MicroPython (unix/wasm): mktime is UTC, epoch 1970
        import time

        return time.mktime(t)


def check_rtc_keeps_clock_through_reset(vectors):
    import time

    import machine
    from heatlog_fw.clock import rtc_read, rtc_write

    rtc = machine.RTC()
    rtc.datetime((2021, 1, 1, 4, 0, 0, 0, 0))  # rp2 after power-up: not a host-set time
    assert rtc_read(rtc, _timegm, 1970) == 0
    rtc_write(rtc, ANCHOR_MS + 999, time.gmtime, 1970)
    assert rtc_read(rtc, _timegm, 1970) == ANCHOR_MS  # whole seconds kept
    # esp32 counts from 2000: the same wall time must come back
    rtc_write(rtc, ANCHOR_MS, lambda s: time.gmtime(s + 946684800), 2000)
    assert rtc_read(rtc, lambda t: _timegm(t) - 946684800, 2000) == ANCHOR_MS
    # a logger reset by the watchdog resumes with the time known, no gap flag
    rtc_write(rtc, ANCHOR_MS, time.gmtime, 1970)
    lg, link, fs = _logger(EXAMPLE_CONFIG)
    lg.rtc = (rtc, time.gmtime, _timegm, 1970)
    lg.boot(0)
    lg.start_run(0)
    for now in range(0, 4001, 500):
        lg.poll(None, now)
    rtc.datetime(rtc.datetime())  # RTC kept running: 10 s later at reboot
    rtc_write(rtc, ANCHOR_MS + 10000, time.gmtime, 1970)
    lg2, link2, _ = _logger(None, fs.crashed())
    lg2.rtc = (rtc, time.gmtime, _timegm, 1970)
    assert lg2.boot(0) == 1
    lg2.poll(None, 0)
    lg2.stop_run(10)
    with lg2.fs.open(ROOT + "/" + run_name(1), "rb") as f:
        data = f.read()
    segs = _blocks(data, lf.SEGMENT_TAG)
    assert len(segs) == 1
    cause = segs[0][1]
    offset = struct.unpack_from("<I", segs[0], 12)[0]
    assert cause & lf.SEG_REBOOT and cause & lf.SEG_CLOCK_VALID and not cause & lf.SEG_GAP_UNKNOWN
    assert offset == 10000, offset


def check_power_cut_during_resume(vectors):
    """A second power cut at every byte of the resume (marker, state file, new records): records
    flushed before either cut survive, sequence numbers only grow, the file stays decodable."""
    path = ROOT + "/" + run_name(1)
    fs0 = FakeFs(total=1 << 20, budget=1 << 30)
    st = _store(fs0, 3)
    st.start("b", "0.1.0", 1000, 4, CHANNELS, 0, 0)
    for i in range(7):
        st.add(i, i * 1000, 0, 0, _raw(i), i * 100)  # batches of 3 flushed; record 6 waits
    fs0.budget = 9  # cut 9 bytes into the next batch write
    try:
        st.flush(900)
        raise AssertionError("no cut")
    except PowerCut:
        pass
    first = fs0.crashed(torn=9)
    first_recs = _records(first.open(path, "rb").read())
    assert [r[0] for r in first_recs] == [0, 1, 2, 3, 4, 5]

    def phase2(fs):
        st2 = _store(fs, 2)
        res = st2.resume(3, 0, 1000, 0)
        for k in range(3):
            st2.add(res[1] + k, res[2] + k * 1000, 0, 0, _raw(20 + k), k * 1000)
        st2.stop(5000)

    ref = first.crashed()
    ref.budget = 1 << 30
    phase2(ref)
    total = (1 << 30) - ref.budget
    for cut in range(total):
        fs = first.crashed()
        fs.budget = cut
        try:
            phase2(fs)
            raise AssertionError("no cut")
        except PowerCut:
            pass
        for torn in (0, 1000):
            fs3 = fs.crashed(torn)
            st3 = _store(fs3, 2)
            res = st3.resume(3, 0, 1000, 0)
            assert res is not None, cut  # the state still names the run
            st3.add(res[1], res[2], 0, 0, _raw(99), 0)
            st3.stop(10)
            recs = _records(fs3.open(path, "rb").read())
            for r in first_recs:
                assert r in recs, (cut, torn, r)
            seqs = [r[0] for r in recs]
            assert seqs == sorted(seqs) and len(set(seqs)) == len(seqs), (cut, torn, seqs)
            assert recs[-1][0] == res[1] and recs[-1][2] == _raw(99)[0]
    assert total > 3 * 22 + 32


def check_clock_survives_ticks_wrap(vectors):
    """The host-set clock stays right over 20 days of ticks (ticks_diff alone fails after 6.2)."""
    from heatlog_fw.clock import Clock
    from heatlog_fw.ticks import ticks_add

    c = Clock()
    assert c.now_ms(0) == 0 and not c.is_set
    t0 = ticks_add(0, -1000)
    c.set(ANCHOR_MS, t0)
    now = t0
    for _ in range(20 * 24):  # read once an hour for 20 days
        now = ticks_add(now, 3600000)
        c.now_ms(now)
    assert c.now_ms(now) == ANCHOR_MS + 20 * 24 * 3600000
    assert c.set(ANCHOR_MS, now) == ANCHOR_MS + 20 * 24 * 3600000 and c.sets == 2


CHECKS = [
    check_ina_power_monitor,
    check_max31865_bias_only_during_conversion,
    check_max31865_fault_detection,
    check_clock_survives_ticks_wrap,
    check_rtc_keeps_clock_through_reset,
    check_sampler_no_drift_across_wrap,
    check_logger_commands,
    check_logger_drops_a_cut_request_after_silence,
    check_logger_bad_config_idles,
    check_logger_resumes_after_reset,
    check_sampler_allocates_nothing,
    check_drivers,
    check_conversion_vectors,
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
    check_power_cut_during_resume,
]
