"""Reading options of the intake stage: separator, decimal mark, missing markers, encoding."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from samplewright.core.errors import InputDataError
from samplewright.intake.columns import read_column
from samplewright.intake.options import MISSING_TOKENS, SEPARATORS, read_options


def _write(path: Path, data: str | bytes) -> Path:
    path.write_bytes(data.encode() if isinstance(data, str) else data)
    return path


def test_semicolons_and_decimal_commas(tmp_path: Path) -> None:
    """A semicolon-separated file with decimal commas reads with separator=';', decimal=','."""
    f = _write(tmp_path / "d.csv", "id;hours\na;1,5\nb;2,25\nc;-3e2\nd;1,5E-3\n")
    data = read_column(f, "hours", separator=";", decimal=",")
    # source: the decimal text itself, read by hand (1,5 = 1.5 ...)
    np.testing.assert_array_equal(data.values, [1.5, 2.25, -300.0, 0.0015])


@pytest.mark.parametrize("sep", SEPARATORS)
def test_every_listed_separator_splits_fields(tmp_path: Path, sep: str) -> None:
    """Each allowed separator splits the header and the rows."""
    f = _write(tmp_path / "d.csv", f"id{sep}v\n1{sep}2.5\n2{sep}4\n")
    np.testing.assert_array_equal(read_column(f, "v", separator=sep).values, [2.5, 4.0])


def test_separator_default_follows_the_suffix(tmp_path: Path) -> None:
    """Without a separator option .csv splits on commas and .tsv on tabs."""
    assert read_options(tmp_path / "a.csv").separator == ","
    assert read_options(tmp_path / "a.tsv").separator == "\t"
    assert read_options(tmp_path / "a.parquet").separator is None


def test_extra_markers_are_missing_values(tmp_path: Path) -> None:
    """Declared markers (n/a, -) are missing like the default tokens, and are counted."""
    f = _write(tmp_path / "d.csv", "v\n1\nn/a\n-\n2\nNA\n")
    with pytest.raises(InputDataError, match=r"3 missing values \(first at row 2\)"):
        read_column(f, "v", missing_markers=["n/a", "-"])
    data = read_column(f, "v", missing="drop", missing_markers=["n/a", "-"])
    np.testing.assert_array_equal(data.values, [1.0, 2.0])
    assert data.dropped == {"missing": 3}


def test_markers_are_compared_after_trimming_and_with_case(tmp_path: Path) -> None:
    """'  n/a ' and a quoted "n/a" are the marker n/a; 'N/A' is not (case matters)."""
    f = _write(tmp_path / "d.csv", 'v\n1\n  n/a \n"n/a"\n2\n')
    data = read_column(f, "v", missing="drop", missing_markers=["n/a"])
    np.testing.assert_array_equal(data.values, [1.0, 2.0])
    g = _write(tmp_path / "e.csv", "v\n1\nN/A\n")
    with pytest.raises(InputDataError, match=r"non-numeric value \(first at row 2: 'N/A'\)"):
        read_column(g, "v", missing="drop", missing_markers=["n/a"])


def test_numeric_sentinel_marker_matches_its_exact_text(tmp_path: Path) -> None:
    """A marker -999 makes '-999' (with or without spaces) missing, but not '-999.0'."""
    f = _write(tmp_path / "d.csv", "v\n1\n-999\n -999 \n-999.0\n")
    data = read_column(f, "v", missing="drop", missing_markers=["-999"])
    np.testing.assert_array_equal(data.values, [1.0, -999.0])
    assert data.dropped == {"missing": 2}


def test_default_missing_rule_is_the_documented_one(tmp_path: Path) -> None:
    """Empty, NA, NaN, nan, null (trimmed) are missing; NAN, None, n/a are errors by default."""
    assert MISSING_TOKENS == ("", "NA", "NaN", "nan", "null")  # source: README "Data intake"
    f = _write(tmp_path / "d.csv", "v,k\n1,a\n,b\n NA ,c\nNaN,d\nnan,e\nnull,f\n  ,g\n")
    assert read_column(f, "v", missing="drop").dropped == {"missing": 6}
    for cell in ("NAN", "None", "n/a", "-"):
        g = _write(tmp_path / "g.csv", f"v\n1\n{cell}\n")
        with pytest.raises(InputDataError, match="non-numeric"):
            read_column(g, "v", missing="drop")


def test_latin1_file_reads_when_declared(tmp_path: Path) -> None:
    """A latin-1 file with accented header names reads when encoding='latin-1' is given."""
    f = _write(tmp_path / "d.csv", "durée;coût\n1,5;2\n3;4,25\n".encode("latin-1"))
    data = read_column(f, "coût", separator=";", decimal=",", encoding="latin-1")
    np.testing.assert_array_equal(data.values, [2.0, 4.25])


@pytest.mark.parametrize("codec", ["utf-16", "utf-16-be", "utf-32", "utf-8-sig"])
def test_byte_order_mark_decides_the_encoding(tmp_path: Path, codec: str) -> None:
    """UTF-8/16/32 files with a byte-order mark read without declaring an encoding."""
    text = "ñame,v\nx,1.5\ny,-2\n"
    raw = text.encode(codec)
    if codec == "utf-16-be":
        raw = b"\xfe\xff" + raw
    f = _write(tmp_path / "d.csv", raw)
    np.testing.assert_array_equal(read_column(f, "v").values, [1.5, -2.0])


def test_declared_utf16_without_mark(tmp_path: Path) -> None:
    """UTF-16 text without a mark reads once its byte order is declared."""
    f = _write(tmp_path / "d.csv", "v\n1.5\n2\n".encode("utf-16-le"))
    np.testing.assert_array_equal(read_column(f, "v", encoding="utf-16-le").values, [1.5, 2.0])


def test_quoted_fields_with_separators_and_newlines(tmp_path: Path) -> None:
    """Quoted text holding separators, doubled quotes and line breaks does not shift numbers."""
    f = _write(tmp_path / "d.csv", 'note,v\n"a, b",1\n"say ""hi""\nthere",2\n"x",3\n')
    np.testing.assert_array_equal(read_column(f, "v").values, [1.0, 2.0, 3.0])


def test_literal_quote_inside_a_plain_field(tmp_path: Path) -> None:
    """A quote in the middle of an unquoted field (12" pipe) is text, not the start of a quote."""
    f = _write(tmp_path / "d.csv", 'part,v\n12" pipe,1\n3" cap,2\n')
    np.testing.assert_array_equal(read_column(f, "v").values, [1.0, 2.0])


def test_blank_lines_and_crlf_are_not_rows(tmp_path: Path) -> None:
    """Windows line ends and blank lines neither add rows nor shift row numbers."""
    f = _write(tmp_path / "d.csv", "v,w\r\n1,2\r\n\r\n3,4\r\nx,5\r\n")
    with pytest.raises(InputDataError, match=r"first at row 3: 'x'"):
        read_column(f, "v")


def test_values_are_read_only(tmp_path: Path) -> None:
    """The arrays handed out cannot be changed by accident (they may be views of the file)."""
    f = _write(tmp_path / "d.csv", "v,w\n1,1\n2,2\n")
    data = read_column(f, "v", weights="w")
    assert not data.values.flags.writeable
    assert data.weights is not None and not data.weights.flags.writeable


def test_header_name_with_a_line_break(tmp_path: Path) -> None:
    """A quoted header name holding a line break is one name, and the rows below read."""
    f = _write(tmp_path / "d.csv", '"cost\n(EUR)",v\n1,2.5\n3,4\n')
    np.testing.assert_array_equal(read_column(f, "cost\n(EUR)").values, [1.0, 3.0])
    np.testing.assert_array_equal(read_column(f, "v").values, [2.5, 4.0])
