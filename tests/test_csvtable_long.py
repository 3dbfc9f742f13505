"""Long CSV files (past the decoded head, parsed by numpy.loadtxt straight from disk) behave
exactly like the same text read in memory: the same columns bit for bit, the same notes and
line numbers, the same one-line error for each kind of defect."""

import io

import numpy as np
import pytest

from heatlog.csvtable import _HEAD_CHARS, read_table
from heatlog.errors import InputError

ROWS = 12_000  # about 200 kB: well past the head


def _rows(rng, sep=",", decimal="."):
    t = np.arange(ROWS) * 0.05
    y = 20.0 + np.cumsum(rng.normal(size=ROWS)) * 1e-3
    e = 21.0 + rng.normal(size=ROWS) * 1e-2
    lines = [
        f"{a!r}{sep}{b!r}{sep}{c!r}"
        for a, b, c in zip(t.tolist(), y.tolist(), e.tolist(), strict=True)
    ]
    if decimal != ".":
        lines = [line.replace(".", decimal) for line in lines]
    return lines


def _variant(name, rng):
    """(file bytes, the text a user sees) of a long file with one kind of feature or defect."""
    sep = ";" if name == "decimal-comma" else "\t" if name == "tabs" else ","
    lines = _rows(rng, sep=sep, decimal="," if name == "decimal-comma" else ".")
    header = sep.join(["time_s", "temp_C", "env_C"])
    deep = 9_000  # a row far past the head
    if name == "comments-and-blanks":
        lines[deep:deep] = ["# a note in the middle", "", "#"]
    elif name == "text-cell":
        lines[deep] = lines[deep].replace(",", ",abc,", 1).rsplit(",", 1)[0]
    elif name == "empty-cell":
        lines[deep] = "12.5,,21.0"
    elif name in ("nan", "inf", "-inf"):
        lines[deep] = f"450.0,{name},21.0"
    elif name == "too-few-cells":
        lines[deep] = "450.0"
    elif name == "too-many-cells":
        lines[deep] = lines[deep] + ",7.0"
    elif name == "spaces":
        lines = [line.replace(",", " , ") for line in lines]
    elif name == "quoted":
        lines[deep] = '"450.0","20.5","21.0"'
    elif name == "unused-text-column":
        header += ",note"
        lines = [line + ",ok" for line in lines]
    text = "# invented data\n" + header + "\n" + "\n".join(lines) + "\n"
    if name == "crlf":
        text = text.replace("\n", "\r\n")
    raw = text.encode("utf-8")
    if name == "bom":
        raw = b"\xef\xbb\xbf" + raw
    return raw, text


VARIANTS = (
    "clean",
    "comments-and-blanks",
    "text-cell",
    "empty-cell",
    "nan",
    "inf",
    "-inf",
    "too-few-cells",
    "too-many-cells",
    "spaces",
    "quoted",
    "unused-text-column",
    "decimal-comma",
    "tabs",
    "crlf",
    "bom",
)


def _outcome(source, where):
    try:
        table = read_table(source, ["time_s", "temp_C"], optional=["env_C"], what=where)
    except InputError as err:
        return ("error", str(err))
    cols = {k: v.tobytes() for k, v in table.columns.items()}
    return ("table", cols, table.notes, table.line_numbers().tolist(), table.units)


@pytest.mark.parametrize("name", VARIANTS)
def test_a_long_file_reads_like_the_same_text_in_memory(tmp_path, name):
    rng = np.random.default_rng(VARIANTS.index(name))
    raw, text = _variant(name, rng)
    path = tmp_path / "long.csv"
    path.write_bytes(raw)
    assert len(text) > 2 * _HEAD_CHARS  # the rows are parsed from disk, not from the head
    on_disk = _outcome(path, str(path))
    in_memory = _outcome(io.StringIO(text), str(path))
    assert on_disk == in_memory
    if on_disk[0] == "error":
        assert "\n" not in on_disk[1] and str(path) in on_disk[1]
    expected_error = name not in (
        "clean",
        "comments-and-blanks",
        "too-many-cells",  # only the wanted columns are read
        "spaces",
        "unused-text-column",
        "decimal-comma",
        "tabs",
        "crlf",
        "bom",
    )
    assert (on_disk[0] == "error") == expected_error, on_disk[:2]


def test_the_defects_are_named_by_their_file_line(tmp_path):
    rng = np.random.default_rng(1)
    for name, fragment in (("text-cell", "not a number"), ("nan", "non-finite")):
        raw, _ = _variant(name, rng)
        path = tmp_path / f"{name}.csv"
        path.write_bytes(raw)
        with pytest.raises(InputError) as err:
            read_table(path, ["time_s", "temp_C"])
        # comment line, header, then data row 9000 (0-based) is file line 9003
        assert "line 9003" in str(err.value) and fragment in str(err.value)


def test_long_files_are_rounded_like_python_float(tmp_path):
    # 17 significant digits: each cell rounds to the nearest double, as float() does
    rng = np.random.default_rng(5)
    cells = [f"{v:.16e}" for v in rng.uniform(-1e3, 1e3, size=2 * ROWS)]
    rows = [f"{a},{b}" for a, b in zip(cells[::2], cells[1::2], strict=True)]
    path = tmp_path / "digits.csv"
    path.write_text("time_s,temp_C\n" + "\n".join(rows) + "\n", encoding="utf-8")
    cols = read_table(path, ["time_s", "temp_C"]).columns
    assert cols["time_s"].tolist() == [float(c) for c in cells[::2]]
    assert cols["temp_C"].tolist() == [float(c) for c in cells[1::2]]
