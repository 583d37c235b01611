"""Broken and hostile input to the intake readers: one line naming the file, column or row.

Each case of the table writes one file, reads it with :func:`read_column` and expects an
InputDataError (never another exception, never numbers) whose single-line message matches.
The cases come from the review of malformed files (issue "Never silently wrong", items 15, 16
and 23) -- reproductions, not outside reference values.
"""

from __future__ import annotations

import decimal
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from samplewright.core.errors import InputDataError
from samplewright.intake.columns import read_column
from samplewright.intake.tables import read_table


def _text(content: str | bytes) -> Callable[[Path], None]:
    data = content.encode() if isinstance(content, str) else content
    return lambda path: path.write_bytes(data)


def _parquet(table: pa.Table, **kwargs: Any) -> Callable[[Path], None]:
    return lambda path: pq.write_table(table, path, **kwargs)


def _flip_checked_page(path: Path) -> None:
    """A Parquet file with page checksums, one bit of a stored value flipped afterwards."""
    x = np.arange(1000, dtype=np.float64)
    pq.write_table(
        pa.table({"x": x}),
        path,
        write_page_checksum=True,
        use_dictionary=False,
        compression="none",
    )
    raw = bytearray(path.read_bytes())
    raw[bytes(raw).find(np.float64(500.0).tobytes())] ^= 1
    path.write_bytes(bytes(raw))


def _overwrite_value(path: Path) -> None:
    """A Parquet file without checksums, one stored value overwritten in place by 1e300."""
    x = np.linspace(1.0, 9.0, 500)
    pq.write_table(pa.table({"x": x}), path, use_dictionary=False, compression="none")
    raw = bytearray(path.read_bytes())
    pos = bytes(raw).find(x[100].tobytes())
    raw[pos : pos + 8] = np.float64(1e300).tobytes()
    path.write_bytes(bytes(raw))


def _truncated_parquet(path: Path) -> None:
    pq.write_table(pa.table({"x": np.arange(100.0)}), path)
    raw = path.read_bytes()
    path.write_bytes(raw[: len(raw) // 2])


def _folder(path: Path) -> None:
    path.mkdir()


def _nothing(path: Path) -> None:
    """Leave the path absent."""


DUPLICATE_NAMES = pa.Table.from_arrays([pa.array([1.0]), pa.array([2.0])], names=["x", "x"])

# (id, file name, how to make it, reading options, expected message pattern)
CASES: list[tuple[str, str, Callable[[Path], None], dict[str, Any], str]] = [
    (
        "header one field, rows two",
        "d.csv",
        _text("x\n1,5\n2,5\n"),
        {},
        r"d\.csv: row 1 has 2 field\(s\) but the header has 1 \('1,5'\).*option separator",
    ),
    ("ragged row, short", "d.csv", _text("x,y\n1,5\n2\n3,4\n"), {}, r"row 2 has 1 field\(s\)"),
    ("ragged row, long", "d.csv", _text("x,y\n1,5\n2,3,4\n"), {}, r"row 2 has 3 field\(s\)"),
    (
        "ragged row after a blank line",
        "d.csv",
        _text("x,y\n1,2\n\n3,4\n5\n"),
        {},
        r"row 3 has 1 field\(s\) but the header has 2",
    ),
    ("NUL byte", "d.csv", _text("x,y\n1,5\n2\x00,3\n"), {}, r"d\.csv: holds a NUL byte \(line 3"),
    ("binary file", "d.csv", _text(bytes(range(256)) * 8), {}, r"NUL byte.*not a text CSV"),
    (
        "latin-1 header, encoding not declared",
        "d.csv",
        _text("dur\xe9e,x\n1,2\n".encode("latin-1")),
        {},
        r"header is not UTF-8 text \(byte 0xe9.*encoding='latin-1'",
    ),
    (
        "latin-1 cell in the value column",
        "d.csv",
        _text("x,y\n1\xe9,2\n".encode("latin-1")),
        {},
        r"column 'x' in d\.csv: row 1 is not UTF-8 text.*encoding=",
    ),
    (
        "UTF-16 without a byte-order mark",
        "d.csv",
        _text("x,y\n1,2\n".encode("utf-16-le")),
        {},
        r"looks like UTF-16 text without a byte-order mark; pass encoding='utf-16-le'",
    ),
    (
        "text not in the declared encoding",
        "d.csv",
        _text("x\n1\xe9\n".encode("latin-1")),
        {"encoding": "ascii"},
        r"d\.csv: not valid ascii text \(byte 0xe9 on line 2\)",
    ),
    (
        "unbalanced quote at the end",
        "d.csv",
        _text('x,y\n1,"5\n2,3\n'),
        {},
        r"unbalanced quote: the row starting on line 2",
    ),
    (
        "unbalanced quote swallowing rows",
        "d.csv",
        _text('x,y\n1,5\n2,"3\n4,5\n6,7\n'),
        {},
        r"unbalanced quote: the row starting on line 3",
    ),
    ("text after a closing quote", "d.csv", _text('x,y\n1,"5\n2,"3\n'), {}, r"line 3: .*quote"),
    (
        "unbalanced quote in the header",
        "d.csv",
        _text('"x,y\n1,2\n'),
        {},
        r"unbalanced quote in the header line",
    ),
    (
        "text after a closing quote in the header",
        "d.csv",
        _text('"x"y,z\n1,2\n'),
        {},
        r"text after a closing quote in the header line",
    ),
    (
        "header line longer than 1 MiB",
        "d.csv",
        _text("x" * (1 << 21) + "\n1\n"),
        {},
        r"header line is longer than 1 MiB",
    ),
    ("duplicate CSV column", "d.csv", _text("x,y,x\n1,2,3\n"), {}, r"'x' appears 2 times"),
    ("duplicate Parquet column", "d.parquet", _parquet(DUPLICATE_NAMES), {}, r"appears 2 times"),
    ("not Parquet", "d.parquet", _text("x\n1\n"), {}, r"d\.parquet: not a readable Parquet file"),
    ("truncated Parquet", "d.parquet", _truncated_parquet, {}, r"not a readable Parquet file"),
    (
        "damaged Parquet page (checksum)",
        "d.parquet",
        _flip_checked_page,
        {},
        r"d\.parquet: column 'x' could not be decoded, the file looks damaged \(.*CRC",
    ),
    (
        "Parquet value damaged in place (statistics)",
        "d.parquet",
        _overwrite_value,
        {},
        r"column 'x' holds values from 1\.0 to 1e\+300 where the file's statistics record 1\.0 "
        r"to 9\.0; the file looks damaged",
    ),
    ("empty file", "d.csv", _text(""), {}, r"d\.csv: file is empty \(no header line\)"),
    ("blank lines only", "d.csv", _text("\n\r\n\n"), {}, r"file is empty \(no header line\)"),
    (
        "header only",
        "d.csv",
        _text("x,y\n"),
        {},
        r"column 'x' in d\.csv: no rows left to use \(the file has no data rows\)",
    ),
    ("a folder", "d.csv", _folder, {}, r"d\.csv: is a folder, expected a data file"),
    ("no file", "d.csv", _nothing, {}, r"d\.csv: data file not found"),
    ("unknown suffix", "d.xlsx", _text("x\n1\n"), {}, r"unknown file type '\.xlsx'"),
    (
        "missing column, near name",
        "d.csv",
        _text("Hours,y\n1,2\n"),
        {},
        r"no column 'x' \(columns: 'Hours', 'y'\)",
    ),
    (
        "wrong separator",
        "d.csv",
        _text("x;y\n1;2\n"),
        {},
        r"no column 'x' \(columns: 'x;y'\); the header looks separated by ';': pass separator=';'",
    ),
    (
        "non-numeric cells",
        "d.csv",
        _text("x\n1\nabc\n2\nn/a\n"),
        {},
        r"column 'x' in d\.csv has 2 non-numeric values \(first at row 2: 'abc'\)$",
    ),
    ("NaN spelled NAN", "d.csv", _text("x\n1\nNAN\n"), {}, r"1 non-numeric value \(first at row 2"),
    (
        "decimal comma without the option",
        "d.csv",
        _text('x\n1\n"2,5"\n'),
        {},
        r"\(first at row 2: '2,5'\); is the decimal mark ','\? \(option decimal",
    ),
    (
        "decimal point with the comma option",
        "d.csv",
        _text("x;y\n1,5;2\n2.5;3\n"),
        {"separator": ";", "decimal": ","},
        r"first at row 2: '2\.5'\); is the decimal mark '\.'\?",
    ),
    (
        "integer above 2**53 in CSV",
        "d.csv",
        _text("x\n1\n9007199254740993\n-12345678901234567891\n"),
        {},
        r"has 2 integers that float64 cannot hold exactly \(first at row 2: 9007199254740993\)",
    ),
    (
        "integer above 2**53 in Parquet",
        "d.parquet",
        _parquet(pa.table({"x": pa.array([1, 2**53 + 1], pa.int64())})),
        {},
        r"1 integer that float64 cannot hold exactly \(first at row 2: 9007199254740993\)",
    ),
    (
        "integer above 2**53 in a later Parquet row group",
        "d.parquet",
        _parquet(pa.table({"x": pa.array([1] * 25 + [2**60 + 1], pa.int64())}), row_group_size=10),
        {},
        r"\(first at row 26: 1152921504606846977\)",
    ),
    ("overflow", "d.csv", _text("x\n1\n-1e400\n"), {}, r"1 value beyond the float64 range"),
    (
        "timestamps in Parquet",
        "d.parquet",
        _parquet(pa.table({"x": pd.to_datetime(["2024-01-01"])})),
        {},
        r"column 'x' in d\.parquet has type timestamp.*expected numbers",
    ),
    (
        "censoring flag 2",
        "d.csv",
        _text("x,c\n1,0\n2,2\n"),
        {"censor": "c"},
        r"censoring column 'c' in d\.csv must hold 0/1 or true/false \(first bad value at row 2",
    ),
    ("bad separator", "d.csv", _text("x\n1\n"), {"separator": ";;"}, r"option 'separator'"),
    ("bad decimal", "d.csv", _text("x\n1\n"), {"decimal": "_"}, r"option 'decimal': expected"),
    (
        "decimal equal to the separator",
        "d.csv",
        _text("x\n1\n"),
        {"decimal": ","},
        r"option 'decimal': ',' is also the field separator",
    ),
    (
        "markers given as one string",
        "d.csv",
        _text("x\n1\n"),
        {"missing_markers": "n/a"},
        r"option 'missing_markers': expected a list of strings, found the string 'n/a'",
    ),
    (
        "marker with spaces",
        "d.csv",
        _text("x\n1\n"),
        {"missing_markers": [" - "]},
        r"option 'missing_markers': ' - ' has whitespace around it",
    ),
    (
        "marker that is not text",
        "d.csv",
        _text("x\n1\n"),
        {"missing_markers": [-999]},
        r"option 'missing_markers': expected strings, found -999",
    ),
    ("unknown encoding", "d.csv", _text("x\n1\n"), {"encoding": "utf-9"}, r"option 'encoding'"),
    ("not a text encoding", "d.csv", _text("x\n1\n"), {"encoding": "base64"}, r"'base64'"),
    (
        "separator for Parquet",
        "d.parquet",
        _parquet(pa.table({"x": [1.0]})),
        {"separator": ";"},
        r"option 'separator' applies to CSV/TSV files, not to Parquet",
    ),
    ("bad policy", "d.csv", _text("x\n1\n"), {"missing": "skip"}, r"option 'missing': expected"),
]


@pytest.mark.parametrize(
    ("name", "make", "options", "pattern"),
    [pytest.param(f, m, o, p, id=i) for i, f, m, o, p in CASES],
)
def test_bad_input_is_one_line_input_error(
    tmp_path: Path,
    name: str,
    make: Callable[[Path], None],
    options: dict[str, Any],
    pattern: str,
) -> None:
    """Every malformed file or option gives one InputDataError line naming what is wrong."""
    path = tmp_path / name
    make(path)
    with pytest.raises(InputDataError) as info:
        read_column(path, "x", **options)
    message = str(info.value)
    assert "\n" not in message
    assert re.search(pattern, message), message


@pytest.mark.parametrize(
    ("name", "make", "options", "pattern"),
    [pytest.param(f, m, o, p, id=i) for i, f, m, o, p in CASES if "censor" not in o],
)
def test_read_table_refuses_the_same_files(
    tmp_path: Path,
    name: str,
    make: Callable[[Path], None],
    options: dict[str, Any],
    pattern: str,
) -> None:
    """read_table shares the readers: the same malformed files give an InputDataError line."""
    path = tmp_path / name
    make(path)
    with pytest.raises(InputDataError) as info:
        read_table(path, ["x"], **options)
    assert "\n" not in str(info.value)


def test_decimal_parquet_values_are_rounded_like_their_text(tmp_path: Path) -> None:
    """A Parquet decimal column reads as the float64 nearest to its decimal text."""
    f = tmp_path / "d.parquet"
    cells = ["0.1", "12.345", "-7.005"]
    pq.write_table(
        pa.table({"x": pa.array([decimal.Decimal(c) for c in cells], pa.decimal128(10, 3))}), f
    )
    # source: Python's float() of the decimal text (correctly rounded, David Gay's algorithm)
    np.testing.assert_array_equal(read_column(f, "x").values, [float(c) for c in cells])


def test_semicolon_header_hint_beats_a_near_name(tmp_path: Path) -> None:
    """'hours;cost' read with commas points to the separator, not to the name 'hours;cost'."""
    f = tmp_path / "d.csv"
    f.write_text("hours;cost\n1,5;2\n")
    with pytest.raises(InputDataError) as info:
        read_column(f, "hours")
    assert str(info.value).endswith("the header looks separated by ';': pass separator=';'")


def _quoted_rows(n: int) -> str:
    return "".join(f'{i},"site ""{i % 7}"", a,b",{i * 0.5}\n' for i in range(n))


def test_quotes_checked_across_scan_slices(tmp_path: Path) -> None:
    """A valid file of quoted text larger than one scan slice reads; a quote left open near its
    end is still found (the check carries its state from slice to slice)."""
    body = _quoted_rows(150_000)  # about 5 MiB, more than one 4 MiB slice
    good = tmp_path / "good.csv"
    good.write_text("id,note,x\n" + body)
    np.testing.assert_array_equal(read_column(good, "x").values, np.arange(150_000) * 0.5)
    bad = tmp_path / "bad.csv"
    bad.write_text("id,note,x\n" + body + '150000,"open,1\n150001,b,2\n')
    with pytest.raises(InputDataError, match="unbalanced quote: the row starting on line 150002"):
        read_column(bad, "x")


def test_text_after_a_closing_quote_is_not_glued_to_the_number(tmp_path: Path) -> None:
    """'"1"5' is refused, where Arrow alone would read the number 15."""
    f = tmp_path / "d.csv"
    f.write_text('x,y\n"1"5,a\n2,b\n')
    with pytest.raises(InputDataError, match=r"d\.csv: line 2: .*quote"):
        read_column(f, "x")
