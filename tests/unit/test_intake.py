"""Unit tests for samplewright.intake.columns: reading and cleaning one numeric column."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from samplewright.core.errors import InputDataError
from samplewright.intake.columns import MISSING_TOKENS, read_column, read_raw_columns


def _write(path: Path, text: str) -> Path:
    path.write_text(text)
    return path


def test_reads_csv_column_as_float64(tmp_path: Path) -> None:
    """A CSV column comes back as float64 values in file order, with its source recorded."""
    f = _write(tmp_path / "repairs.csv", "id,hours\na,1.5\nb,3\nc,2.25\n")
    data = read_column(f, "hours")
    assert data.values.dtype == np.float64
    np.testing.assert_array_equal(data.values, [1.5, 3.0, 2.25])
    assert (data.n, data.n_rows_read, data.column, data.source) == (3, 3, "hours", str(f))
    assert data.weights is None and data.censored is None and data.dropped == {}


@pytest.mark.parametrize("suffix", [".tsv", ".tab"])
def test_reads_tab_separated_files(tmp_path: Path, suffix: str) -> None:
    """.tsv and .tab files are split on tabs."""
    f = _write(tmp_path / f"repairs{suffix}", "id\thours\na\t1.5\nb\t3\n")
    np.testing.assert_array_equal(read_column(f, "hours").values, [1.5, 3.0])


@pytest.mark.parametrize("suffix", [".parquet", ".pq"])
def test_reads_parquet_files(tmp_path: Path, suffix: str) -> None:
    """Parquet float and integer columns are read as float64."""
    f = tmp_path / f"repairs{suffix}"
    pq.write_table(pa.table({"hours": [1.5, 3.0], "n": pa.array([4, 5], pa.int32())}), f)
    np.testing.assert_array_equal(read_column(f, "hours").values, [1.5, 3.0])
    np.testing.assert_array_equal(read_column(f, "n").values, [4.0, 5.0])


def test_csv_numbers_are_parsed_exactly(tmp_path: Path) -> None:
    """Seventeen-digit decimal text reads back to the very float64 written (correct rounding)."""
    x = np.random.default_rng(0).lognormal(0.0, 3.0, 2000)
    f = tmp_path / "many.csv"
    f.write_text("v\n" + "\n".join(repr(float(v)) for v in x) + "\n")
    # source: Python docs (floating-point tutorial): repr(float) reads back to the same float
    np.testing.assert_array_equal(read_column(f, "v").values, x)


def test_whitespace_around_numbers_is_ignored(tmp_path: Path) -> None:
    """Spaces around a number in a CSV cell do not make it non-numeric."""
    f = _write(tmp_path / "d.csv", "v\n 1.5\n2 \n")
    np.testing.assert_array_equal(read_column(f, "v").values, [1.5, 2.0])


def test_missing_tokens_are_exactly_the_documented_ones() -> None:
    """The missing-value tokens are the empty cell, NA, NaN, nan and null."""
    assert MISSING_TOKENS == ("", "NA", "NaN", "nan", "null")  # source: README "Data intake"


@pytest.mark.parametrize("token", MISSING_TOKENS)
def test_each_missing_token_is_an_error_by_default(tmp_path: Path, token: str) -> None:
    """Each missing token stops the read with the row number and the way to drop it."""
    f = _write(tmp_path / "d.csv", f"v,id\n1,a\n2,b\n{token},c\n")
    with pytest.raises(InputDataError) as info:
        read_column(f, "v")
    assert str(info.value) == (
        "column 'v' in d.csv has 1 missing value (first at row 3); use missing='drop' "
        "(--missing drop) to drop them"
    )


def test_missing_drop_counts_what_it_dropped(tmp_path: Path) -> None:
    """missing='drop' removes missing rows and records how many."""
    f = _write(tmp_path / "d.csv", "v,id\n1,a\nNA,b\n2,c\n,d\n3,e\n")
    data = read_column(f, "v", missing="drop")
    np.testing.assert_array_equal(data.values, [1.0, 2.0, 3.0])
    assert data.dropped == {"missing": 2} and data.n_rows_read == 5


def test_parquet_nulls_are_missing_values(tmp_path: Path) -> None:
    """A null in a Parquet column is a missing value, like an empty CSV cell."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": pa.array([1.0, None, 2.0])}), f)
    with pytest.raises(InputDataError, match="1 missing value \\(first at row 2\\)"):
        read_column(f, "v")
    assert read_column(f, "v", missing="drop").dropped == {"missing": 1}


@pytest.mark.parametrize("text", ["inf", "-inf", "Infinity"])
def test_infinite_values_are_an_error_by_default(tmp_path: Path, text: str) -> None:
    """An infinite value stops the read, naming the column, file and first row."""
    f = _write(tmp_path / "d.csv", f"v\n1\n{text}\n")
    with pytest.raises(
        InputDataError,
        match=r"column 'v' in d.csv has 1 infinite value "
        r"\(first at row 2\)",
    ):
        read_column(f, "v")


def test_infinite_drop_counts_what_it_dropped(tmp_path: Path) -> None:
    """infinite='drop' removes infinite rows and records the count next to missing ones."""
    f = _write(tmp_path / "d.csv", "v\n1\ninf\n-inf\nNA\n4\n")
    data = read_column(f, "v", missing="drop", infinite="drop")
    np.testing.assert_array_equal(data.values, [1.0, 4.0])
    assert data.dropped == {"missing": 1, "infinite": 2}


def test_non_numeric_message_names_column_file_row_and_text(tmp_path: Path) -> None:
    """Non-numeric text is counted and the first one is shown with its row."""
    f = _write(tmp_path / "repairs.csv", "hours\n1\n2\nn/a\n4\nabc\n")
    with pytest.raises(InputDataError) as info:
        read_column(f, "hours")
    assert str(info.value) == (
        "column 'hours' in repairs.csv has 2 non-numeric values (first at row 3: 'n/a')"
    )  # source: README "Data intake and errors" (message form)


def test_one_non_numeric_value_is_singular(tmp_path: Path) -> None:
    """A single bad cell is reported as '1 non-numeric value'."""
    f = _write(tmp_path / "d.csv", 'v\n1\n"1,5"\n')
    with pytest.raises(InputDataError, match=r"has 1 non-numeric value \(first at row 2: '1,5'\)"):
        read_column(f, "v")


def test_other_spellings_of_nan_are_not_missing(tmp_path: Path) -> None:
    """Only the listed tokens are missing: 'NAN' or 'None' is an error, not a silent NaN."""
    f = _write(tmp_path / "d.csv", "v\n1\nNone\n")
    with pytest.raises(InputDataError, match="non-numeric value \\(first at row 2: 'None'\\)"):
        read_column(f, "v", missing="drop")


def test_parquet_text_column_is_checked_like_csv(tmp_path: Path) -> None:
    """A Parquet column stored as text is parsed, and bad text is reported with its row."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": ["1.5", "x", "2"]}), f)
    with pytest.raises(InputDataError, match="first at row 2: 'x'"):
        read_column(f, "v")


def test_parquet_column_of_wrong_type_is_refused(tmp_path: Path) -> None:
    """A Parquet timestamp column is not numbers."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"t": pd.to_datetime(["2024-01-01", "2024-01-02"])}), f)
    with pytest.raises(InputDataError, match="column 't' in d.parquet has type .*expected numbers"):
        read_column(f, "t")


def test_missing_file_is_reported(tmp_path: Path) -> None:
    """A file that does not exist gives 'data file not found'."""
    with pytest.raises(InputDataError, match="nope.csv: data file not found"):
        read_column(tmp_path / "nope.csv", "v")


def test_unknown_suffix_is_reported(tmp_path: Path) -> None:
    """A suffix that is not CSV, TSV or Parquet lists the accepted ones."""
    f = _write(tmp_path / "d.xlsx", "v\n1\n")
    with pytest.raises(InputDataError, match="unknown file type '.xlsx'; expected .csv"):
        read_column(f, "v")


def test_empty_file_is_reported(tmp_path: Path) -> None:
    """A CSV without even a header line is refused."""
    f = _write(tmp_path / "d.csv", "")
    with pytest.raises(InputDataError, match="file is empty"):
        read_column(f, "v")


def test_corrupt_parquet_is_reported(tmp_path: Path) -> None:
    """A .parquet file that is not Parquet is refused with one InputDataError."""
    f = _write(tmp_path / "d.parquet", "not parquet at all")
    with pytest.raises(InputDataError, match="not a readable Parquet file"):
        read_column(f, "v")


def test_missing_column_lists_the_columns_present(tmp_path: Path) -> None:
    """Asking for an absent column names it and shows the columns that exist."""
    f = _write(tmp_path / "d.csv", "a,b\n1,2\n")
    with pytest.raises(InputDataError) as info:
        read_column(f, "hours")
    assert str(info.value) == f"{f}: no column 'hours' (columns: 'a', 'b')"


def test_missing_weight_column_is_reported(tmp_path: Path) -> None:
    """An absent weight column is reported like an absent value column."""
    f = _write(tmp_path / "d.csv", "v\n1\n")
    with pytest.raises(InputDataError, match="no column 'w'"):
        read_column(f, "v", weights="w")


def test_no_rows_left_after_dropping(tmp_path: Path) -> None:
    """Dropping every row is an error, not an empty result."""
    f = _write(tmp_path / "d.csv", "v,id\nNA,a\n,b\n")
    with pytest.raises(InputDataError, match="column 'v' in d.csv: no rows left to use"):
        read_column(f, "v", missing="drop")


def test_header_only_file_has_no_rows(tmp_path: Path) -> None:
    """A header with no data rows is 'no rows left'."""
    f = _write(tmp_path / "d.csv", "v\n")
    with pytest.raises(InputDataError, match="no rows left to use"):
        read_column(f, "v")


def test_min_rows_is_enforced(tmp_path: Path) -> None:
    """Fewer usable rows than min_rows gives a message with both counts."""
    f = _write(tmp_path / "d.csv", "v\n1\n2\n")
    with pytest.raises(InputDataError, match="2 usable rows, at least 3 needed"):
        read_column(f, "v", min_rows=3)
    assert read_column(f, "v", min_rows=2).n == 2


@pytest.mark.parametrize("option", ["missing", "infinite"])
def test_bad_policy_is_refused(tmp_path: Path, option: str) -> None:
    """A policy other than 'error' or 'drop' is refused, naming the option."""
    f = _write(tmp_path / "d.csv", "v\n1\n")
    with pytest.raises(InputDataError, match=f"option '{option}': expected 'error' or 'drop'"):
        read_column(f, "v", **{option: "skip"})  # type: ignore[arg-type]


def test_weights_are_read_alongside_values(tmp_path: Path) -> None:
    """Weights come back aligned with the values, after dropped rows are removed."""
    f = _write(tmp_path / "d.csv", "v,w\n1,2\nNA,-5\n3,0.5\n")
    data = read_column(f, "v", weights="w", missing="drop")
    np.testing.assert_array_equal(data.values, [1.0, 3.0])
    np.testing.assert_array_equal(data.weights, [2.0, 0.5])
    assert data.weight_column == "w"


@pytest.mark.parametrize(("cell", "shown"), [("-1", "-1.0"), ("0", "0.0")])
def test_non_positive_weights_are_refused(tmp_path: Path, cell: str, shown: str) -> None:
    """A zero or negative weight is reported with its row and value."""
    f = _write(tmp_path / "d.csv", f"v,w\n1,1\n2,{cell}\n")
    with pytest.raises(InputDataError) as info:
        read_column(f, "v", weights="w")
    assert str(info.value) == (
        f"weight column 'w' in d.csv has 1 weight <= 0 (first at row 2: {shown}); "
        "weights must be > 0"
    )


def test_missing_weight_is_refused(tmp_path: Path) -> None:
    """A missing weight on a kept row is an error naming its row."""
    f = _write(tmp_path / "d.csv", "v,w\n1,1\n2,\n")
    with pytest.raises(InputDataError, match="missing or infinite weight \\(first at row 2\\)"):
        read_column(f, "v", weights="w")


@pytest.mark.parametrize(
    ("cells", "expected"),
    [(["0", "1", "0"], [False, True, False]), (["true", "FALSE", " True "], [True, False, True])],
)
def test_censor_column_accepts_0_1_and_true_false(
    tmp_path: Path, cells: list[str], expected: list[bool]
) -> None:
    """Censoring flags may be 0/1 or true/false in any case."""
    f = _write(tmp_path / "d.csv", "v,c\n" + "".join(f"{i},{c}\n" for i, c in enumerate(cells)))
    data = read_column(f, "v", censor="c")
    assert data.censored is not None and data.censored.tolist() == expected


def test_censor_value_other_than_0_1_is_refused(tmp_path: Path) -> None:
    """A censoring flag of 2 is reported with its row and text."""
    f = _write(tmp_path / "d.csv", "v,c\n1,0\n2,2\n")
    with pytest.raises(InputDataError) as info:
        read_column(f, "v", censor="c")
    assert str(info.value) == (
        "censoring column 'c' in d.csv must hold 0/1 or true/false (first bad value at row 2: '2')"
    )


def test_censor_text_is_refused(tmp_path: Path) -> None:
    """A censoring flag like 'yes' is reported as non-numeric with its row."""
    f = _write(tmp_path / "d.csv", "v,c\n1,0\n2,yes\n")
    with pytest.raises(InputDataError, match="column 'c' in d.csv .*first at row 2: 'yes'"):
        read_column(f, "v", censor="c")


def test_read_raw_columns_keeps_text_and_dedupes(tmp_path: Path) -> None:
    """Raw CSV columns come back as text, each requested name once."""
    f = _write(tmp_path / "d.csv", "a,b\n01,x\n2,y\n")
    raw = read_raw_columns(f, ["a", "a", "b"])
    assert list(raw) == ["a", "b"]
    assert raw["a"].tolist() == ["01", "2"] and raw["b"].tolist() == ["x", "y"]
