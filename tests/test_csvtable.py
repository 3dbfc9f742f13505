"""CSV reading: the one gate every user table passes through."""

import io

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from heatlog.csvtable import read_columns
from heatlog.errors import InputError


def test_reads_named_columns_in_any_order_and_case(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("# invented data\nTemp_C, time_s ,other\n20.5,0,x\n20.6,1,y\n")
    cols = read_columns(p, ["time_s", "temp_C"], min_rows=2)
    np.testing.assert_array_equal(cols["time_s"], [0.0, 1.0])
    np.testing.assert_array_equal(cols["temp_C"], [20.5, 20.6])


def test_semicolon_delimiter_is_detected():
    cols = read_columns(io.StringIO("time_s;temp_C\n0;1\n1;2\n"), ["time_s", "temp_C"])
    assert cols["temp_C"].tolist() == [1.0, 2.0]


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("", "empty"),
        ("time_s,temp_C\n", "no data rows"),
        ("time_s,temp\n0,1\n", "missing column(s) 'temp_C'"),
        ("time_s,temp_C\n0,1\n1,abc\n", "non-numeric"),
        ("time_s,temp_C\n0,\n", "non-numeric"),
        ("time_s,temp_C\n0,1\n1,nan\n", "non-finite"),
        ("time_s,temp_C\n0,1\n", "at least 2"),
    ],
    ids=["empty", "header-only", "missing-col", "text-cell", "empty-cell", "nan", "too-few"],
)
def test_bad_tables_end_in_one_clear_line(text, fragment):
    with pytest.raises(InputError) as err:
        read_columns(io.StringIO(text), ["time_s", "temp_C"], min_rows=2)
    assert fragment in str(err.value)
    assert "\n" not in str(err.value)


def test_missing_file_is_a_clean_error(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        read_columns(tmp_path / "nope.csv", ["a"])


@given(st.lists(st.tuples(st.floats(-1e6, 1e6), st.floats(-1e6, 1e6)), min_size=1, max_size=40))
def test_round_trip_of_written_values(rows):
    text = "a,b\n" + "".join(f"{a!r},{b!r}\n" for a, b in rows)
    cols = read_columns(io.StringIO(text), ["a", "b"])
    assert cols["a"].tolist() == [a for a, _ in rows]
    assert cols["b"].tolist() == [b for _, b in rows]


@given(st.text(max_size=200))
def test_arbitrary_text_never_escapes_as_a_traceback(text):
    try:
        read_columns(io.StringIO(text), ["a", "b"])
    except InputError:
        pass


def _long_file(path, rows=20_000, bad_row=None, bad="abc"):
    lines = ["# invented data", "time_s,temp_C"]
    for i in range(rows):
        lines.append(f"{i * 0.5!r},{20 + 1e-3 * i!r}" if i != bad_row else f"{i * 0.5!r},{bad}")
    path.write_text("\n".join(lines) + "\n")


def test_long_files_read_exactly_as_numpy_loadtxt(tmp_path):
    p = tmp_path / "long.csv"
    _long_file(p)
    assert p.stat().st_size > 1 << 16  # past the head: the fast parser is used
    cols = read_columns(p, ["temp_C", "time_s"], min_rows=2)
    ref = np.loadtxt(p, delimiter=",", skiprows=2)
    np.testing.assert_array_equal(cols["time_s"], ref[:, 0])
    np.testing.assert_array_equal(cols["temp_C"], ref[:, 1])


@pytest.mark.parametrize(
    "bad, fragment", [("abc", "non-numeric"), ("", "non-numeric"), ("nan", "non-finite")]
)
def test_long_files_report_bad_cells_like_short_ones(tmp_path, bad, fragment):
    p = tmp_path / "long.csv"
    _long_file(p, bad_row=15_000, bad=bad)
    with pytest.raises(InputError) as err:
        read_columns(p, ["time_s", "temp_C"])
    assert fragment in str(err.value) and "\n" not in str(err.value)
