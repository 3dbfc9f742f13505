"""CSV files as other loggers and spreadsheets write them: date-time columns, semicolons with
decimal commas, units in the header, and errors that name the file line (invented data)."""

import io
from datetime import datetime, timedelta

import numpy as np
import pytest

from heatlog.csvtable import read_columns, read_table, split_unit
from heatlog.errors import InputError
from heatlog.thermogram import read_thermogram_csv


def _rows(n=20):
    return [(2.0 * i, 20.0 + 0.01 * i) for i in range(n)]


def test_a_text_cell_names_the_line_a_text_editor_shows(tmp_path):
    lines = ["# invented data", "# second comment", "time_s,temp_C"]
    lines += [f"{t},{y}" for t, y in _rows(600)]
    lines[2 + 500] = "1000.0,warm"  # data row 500 is file line 503
    p = tmp_path / "a.csv"
    p.write_text("\n".join(lines) + "\n")
    with pytest.raises(InputError, match=r"line 503, column 'temp_C': 'warm' is not a number"):
        read_columns(p, ["time_s", "temp_C"])


def test_long_files_name_the_line_too(tmp_path):
    lines = ["# invented data", "time_s,temp_C"] + [
        f"{i * 0.5!r},{20 + 1e-3 * i!r}" for i in range(20_000)
    ]
    lines[1 + 15_000] = "7499.5,"
    p = tmp_path / "long.csv"
    p.write_text("\n".join(lines) + "\n")
    with pytest.raises(InputError, match=r"line 15002, column 'temp_C': empty"):
        read_columns(p, ["time_s", "temp_C"])


def test_nan_names_the_line_with_blank_lines_counted():
    text = "time_s,temp_C\n0,1\n\n1,2\n2,nan\n"
    with pytest.raises(InputError, match="non-finite.*line 5"):
        read_columns(io.StringIO(text), ["time_s", "temp_C"])


def test_semicolons_and_decimal_commas(tmp_path):
    p = tmp_path / "de.csv"
    p.write_text(
        "time_s;temp_C\n" + "".join(f"{t:g};{y:.2f}\n".replace(".", ",") for t, y in _rows(12)),
        encoding="utf-8",
    )
    th = read_thermogram_csv(p)
    np.testing.assert_allclose(th.temp_C, [y for _, y in _rows(12)])
    assert [f.code for f in th.metadata["findings"]] == ["read-as"]


@pytest.mark.parametrize(
    "fmt",
    [
        lambda d: d.isoformat(),
        lambda d: d.isoformat() + "Z",
        lambda d: d.strftime("%Y-%m-%d %H:%M:%S"),
        lambda d: d.strftime("%d.%m.%Y %H:%M:%S"),
        lambda d: d.strftime("%d/%m/%Y %H:%M:%S"),
        lambda d: d.strftime("%Y/%m/%d %H:%M:%S"),
        lambda d: d.strftime("%H:%M:%S"),
    ],
    ids=["iso", "iso-z", "iso-space", "dotted", "slash-dmy", "slash-ymd", "clock"],
)
def test_date_time_columns_become_seconds(tmp_path, fmt):
    start = datetime(2026, 3, 1, 23, 58, 0)  # crosses midnight
    p = tmp_path / "dt.csv"
    p.write_text(
        "time,temp_C\n"
        + "".join(f"{fmt(start + timedelta(seconds=5 * i))},{20 + 0.01 * i}\n" for i in range(40))
    )
    th = read_thermogram_csv(p)  # the default time_s column matches a 'time' header
    np.testing.assert_allclose(th.time_s, 5.0 * np.arange(40))


def test_a_bad_date_names_its_line(tmp_path):
    p = tmp_path / "dt.csv"
    rows = [f"2026-03-01T10:00:{i:02d},20" for i in range(20)]
    rows[7] = "soon,20"
    p.write_text("time,temp_C\n" + "\n".join(rows) + "\n")
    with pytest.raises(InputError, match=r"line 9, column 'time_s': 'soon'"):
        read_thermogram_csv(p)


@pytest.mark.parametrize(
    "name, base, unit",
    [
        ("temp (°C)", "temp", "°C"),
        ("T [K]", "T", "K"),
        ("time [ms]", "time", "ms"),
        ("time/s", "time", "s"),
        ("temp_C", "temp_C", ""),
    ],
)
def test_units_split_from_header_names(name, base, unit):
    assert split_unit(name) == (base, unit)


def test_unit_in_header_matches_the_default_names():
    t = read_table(io.StringIO("time [ms],temp (°C)\n0,20\n1000,21\n"), ["time_s", "temp_C"])
    assert t.units == {"time_s": "ms", "temp_C": "°C"}
    assert t.headers == {"time_s": "time [ms]", "temp_C": "temp (°C)"}


def test_wrong_encoding_is_one_line(tmp_path):
    p = tmp_path / "latin.csv"
    p.write_bytes("time_s,temp_C\n0,20\n1,21 \xb0C\n".encode("latin-1"))
    with pytest.raises(InputError, match="not a UTF-8 text file"):
        read_columns(p, ["time_s", "temp_C"])
