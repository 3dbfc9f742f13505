"""Host decoder against the run log the firmware wrote (tests/vectors/run_log.bin)."""

import json
import struct
import zlib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog import logformat as lf
from heatlog.errors import HeatlogError

VECTORS = Path(__file__).resolve().parent / "vectors"
DATA = (VECTORS / "run_log.bin").read_bytes()
FACTS = json.loads((VECTORS / "run_log.json").read_text())


def test_crc16_check_value():
    # catalogue of parametrised CRC algorithms: CRC-16/CCITT-FALSE check = 0x29B1
    assert lf.crc16_ccitt_false(b"123456789") == 0x29B1


def test_header_matches_scenario():
    log = lf.decode(DATA)
    h, want = log.header, FACTS["header"]
    assert (h.board_id, h.firmware, h.run) == (want["board_id"], want["firmware"], want["run"])
    assert (h.interval_ms, h.oversample, h.anchor_ms) == (
        want["interval_ms"],
        want["oversample"],
        want["anchor_ms"],
    )
    assert h.clock_set
    assert [
        (c.kind_code, c.mode, c.source, c.gain, round(c.ref_ohm * 1000), c.probe_id)
        for c in h.channels
    ] == [tuple(c) for c in want["channels"]]
    assert [c.kind for c in h.channels] == ["adc_divider", "max31865", "adc_divider"]
    assert [c.q15_ratio for c in h.channels] == [False, False, True]  # ESP32 microvolt divider
    assert h.channels[2].ntc_side == "low" and h.channels[2].gain == 35  # excitation pin


def test_records_match_scenario():
    log = lf.decode(DATA)
    recs = FACTS["records"]
    assert log.n_records == len(recs)
    assert log.seq.tolist() == [r[0] for r in recs]
    assert log.offset_ms.tolist() == [r[1] for r in recs]
    assert log.flags.tolist() == [r[2] for r in recs]
    assert log.fault_mask.tolist() == [r[3] for r in recs]
    assert log.raw.tolist() == [r[4] for r in recs]
    assert log.raw.dtype == np.int32 and log.raw.shape == (len(recs), 3)


def test_segments_and_torn_tail_reported():
    log = lf.decode(DATA)
    assert [(s.cause, s.first_record) for s in log.segments] == [
        (f["cause"], f["first_record"]) for f in FACTS["segments"]
    ]
    clock, reboot = log.segments
    assert clock.clock_set and clock.anchor_ms == FACTS["header"]["anchor_ms"] + 1500
    assert reboot.reboot and reboot.torn_tail and reboot.gap_unknown and reboot.anchor_ms is None
    assert log.bad_blocks == 1 and log.bad_bytes == FACTS["torn_bytes"] and log.trailing_bytes == 0
    t = log.epoch_ms()
    a = FACTS["header"]["anchor_ms"]
    assert t[0] == a + log.offset_ms[0] and t[6] == a + 1500 + log.offset_ms[6]
    assert np.isnan(t[9:]).all()  # after an outage of unknown length, wall time is unknown


def test_torn_end_counted_as_trailing():
    log = lf.decode(DATA[:-5])
    # a record is R = 14 + 4 * 3 = 26 bytes
    assert log.n_records == len(FACTS["records"]) - 1 and log.trailing_bytes == 26 - 5


@pytest.mark.parametrize(
    ("mutate", "message"),
    [
        (lambda d: b"XLOG" + d[4:], "magic"),
        (lambda d: d[:4] + struct.pack("<H", 9) + d[6:], "version 9"),
        (lambda d: d[:40] + b"!" + d[41:], "header CRC"),
        (lambda d: d[:100], "ends inside its header"),
    ],
)
def test_bad_header_is_log_corrupt(mutate, message):
    with pytest.raises(lf.LogCorrupt, match=message) as e:
        lf.decode(mutate(DATA))
    assert isinstance(e.value, HeatlogError)


def test_read_log_missing_file(tmp_path):
    with pytest.raises(lf.LogCorrupt, match="cannot read"):
        lf.read_log(tmp_path / "none.hlg")
    (tmp_path / "r.hlg").write_bytes(DATA)
    assert lf.read_log(tmp_path / "r.hlg").n_records == len(FACTS["records"])


@settings(max_examples=150, deadline=None)
@given(st.data())
def test_corruption_never_yields_a_wrong_record(data):
    """Flip bytes after the header: every record returned is one that was written, and each
    damaged block is counted (a CRC-16 collision is possible at ~1/65536 per block: the
    odds that 150 examples meet one are below 1 %, and the check below tolerates none)."""
    buf = bytearray(DATA)
    hsize = lf.parse_header(DATA).header_size
    n = data.draw(st.integers(1, 4))
    spots = data.draw(st.lists(st.integers(hsize, len(buf) - 1), min_size=n, max_size=n))
    for p in spots:
        buf[p] ^= data.draw(st.integers(1, 255))
    log = lf.decode(bytes(buf))
    written = {(r[0], r[1], tuple(r[4])) for r in FACTS["records"]}
    got = {
        (int(s), int(o), tuple(r))
        for s, o, r in zip(log.seq, log.offset_ms, log.raw.tolist(), strict=True)
    }
    assert got <= written
    lost = len(FACTS["records"]) - log.n_records
    assert lost == 0 or log.bad_blocks + (log.trailing_bytes > 0) >= 1


@given(st.binary(max_size=300))
def test_garbage_after_header_is_counted_not_decoded(junk):
    hsize = lf.parse_header(DATA).header_size
    log = lf.decode(DATA[:hsize] + junk)
    assert log.bad_bytes + log.trailing_bytes + log.n_records * 26 + 32 * len(log.segments) == len(
        junk
    )


def test_header_crc_is_zlib_crc32():
    hsize = lf.parse_header(DATA).header_size
    assert struct.unpack_from("<I", DATA, hsize - 4)[0] == zlib.crc32(DATA[: hsize - 4])


def test_channel_faults_and_ratio():
    log = lf.decode(DATA)
    faults = log.channel_faults()
    assert faults.shape == (log.n_records, 3)
    # record 4 of the scenario has fault mask 0b10: channel 0 code 2 (short), channel 1 ok
    assert faults[4].tolist() == [lf.FAULT_SHORT, lf.FAULT_NONE, lf.FAULT_NONE]
    assert faults[[0, 1, 2, 3, 5]].sum() == 0
    r = log.ratio()
    # channel 0: sum of 4 ADC codes over 4*4096; channel 1: RTD code sum / (4*32768) = R/R_ref;
    # channel 2 (ESP32 microvolt divider): Q15, raw / 32768 whatever the oversampling
    np.testing.assert_allclose(
        r[0], [4000 / (4 * 4096), (7620 * 4) / (4 * 32768), 10922 / 32768], rtol=0, atol=1e-12
    )


def test_decode_record_checks_crc():
    log = lf.decode(DATA)
    hsize = log.header.header_size
    rec = DATA[hsize : hsize + 26]
    assert lf.decode_record(rec, 3) == (0, 0, 0, 0, (4000, 30480, 10922))
    with pytest.raises(lf.LogCorrupt, match="CRC"):
        lf.decode_record(rec[:-1] + bytes([rec[-1] ^ 1]), 3)
    with pytest.raises(lf.LogCorrupt, match="26 bytes"):
        lf.decode_record(rec[:-1], 3)
