"""Thermogram import: numeric CSV through the shared gate, ISO-8601 time by hand, clean errors."""

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog.errors import InputError
from heatlog.thermogram import Thermogram, read_thermogram_csv


def _write(tmp_path, text, name="run.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_reads_time_temp_and_channels(tmp_path):
    rows = "\n".join(f"{i},{20 + 0.01 * i},{18.5}" for i in range(10))
    p = _write(tmp_path, "# invented data\ntime_s,temp_C,jacket_C\n" + rows + "\n")
    th = read_thermogram_csv(p, channels=("jacket_C",))
    assert len(th) == 10
    assert th.time_s.dtype == np.float64
    np.testing.assert_allclose(th.temp_C[3], 20.03)
    np.testing.assert_allclose(th.channels["jacket_C"], 18.5)
    assert th.metadata["source"] == str(p)
    assert th.duration_s == 9.0


def test_other_column_names(tmp_path):
    rows = "\n".join(f"{i * 2},{25 - 0.1 * i}" for i in range(10))
    p = _write(tmp_path, "t,probe\n" + rows + "\n")
    th = read_thermogram_csv(p, time_col="t", temp_col="probe")
    assert th.time_s[-1] == 18.0


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("", "empty"),
        ("time_s,temp_C\n0,20\n", "at least"),
        ("time_s,temp_C\n" + "".join(f"{i},20\n" for i in range(9)) + "9,nan\n", "non-finite"),
        ("time_s,temp_C\n" + "".join(f"{i},20\n" for i in range(9)) + "9,warm\n", "non-numeric"),
        (
            "time_s,temp_C\n" + "".join(f"{i},20\n" for i in (0, 1, 2, 3, 4, 2, 3, 4, 5, 6, 7)),
            "row 6",
        ),
        ("clock,temp_C\n0,20\n", "missing column"),
    ],
)
def test_bad_files_give_one_line_errors(tmp_path, text, fragment):
    p = _write(tmp_path, text)
    with pytest.raises(InputError) as err:
        read_thermogram_csv(p)
    assert fragment in str(err.value)
    assert "\n" not in str(err.value)


def test_iso_time_becomes_seconds_from_first_row(tmp_path):
    start = datetime(2026, 3, 1, 10, 15, 0)
    rows = "\n".join(
        f"{(start + timedelta(seconds=2.5 * i)).isoformat()},{20 + i * 0.01}" for i in range(12)
    )
    p = _write(tmp_path, "time,temp_C\n" + rows + "\n")
    th = read_thermogram_csv(p, time_col="time", iso_time=True)
    np.testing.assert_allclose(th.time_s, 2.5 * np.arange(12))


def test_iso_time_with_zone_and_bad_cells(tmp_path):
    rows = [f"2026-03-01T10:00:{i:02d}Z,20" for i in range(10)]
    p = _write(tmp_path, "time,temp_C\n" + "\n".join(rows) + "\n")
    assert read_thermogram_csv(p, time_col="time", iso_time=True).time_s[-1] == 9.0
    rows[4] = "yesterday,20"
    p = _write(tmp_path, "time,temp_C\n" + "\n".join(rows) + "\n")
    with pytest.raises(InputError, match=r"line 6, column 'time': 'yesterday'.*date-time"):
        read_thermogram_csv(p, time_col="time", iso_time=True)
    rows[4] = "2026-03-01T10:00:04Z,hot"
    p = _write(tmp_path, "time,temp_C\n" + "\n".join(rows) + "\n")
    with pytest.raises(InputError, match="not a number"):
        read_thermogram_csv(p, time_col="time", iso_time=True)
    with pytest.raises(InputError, match="no such file"):
        read_thermogram_csv(tmp_path / "nope.csv", iso_time=True)


@settings(max_examples=40, deadline=None)
@given(
    base=st.datetimes(min_value=datetime(2000, 1, 1), max_value=datetime(2090, 1, 1)),
    steps=st.lists(st.integers(1, 10_000_000), min_size=7, max_size=20),
)
def test_iso_round_trip(tmp_path_factory, base, steps):
    # Round trip: seconds -> ISO-8601 text (microsecond precision) -> seconds.
    offsets = np.cumsum([0, *steps]) / 1000.0
    stamps = [(base.replace(tzinfo=UTC) + timedelta(seconds=float(s))).isoformat() for s in offsets]
    p = tmp_path_factory.mktemp("iso") / "r.csv"
    p.write_text("time,temp_C\n" + "".join(f"{s},21.0\n" for s in stamps))
    th = read_thermogram_csv(p, time_col="time", iso_time=True)
    np.testing.assert_allclose(th.time_s, offsets - offsets[0], atol=2e-6)


def test_dataclass_checks_arrays():
    with pytest.raises(InputError, match="equal length"):
        Thermogram(np.arange(10.0), np.zeros(9))
    with pytest.raises(InputError, match="channel"):
        Thermogram(np.arange(10.0), np.zeros(10), channels={"jacket_C": np.zeros(3)})
