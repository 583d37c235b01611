"""read_table: several row-aligned numeric columns of one file, cleaned row by row."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from samplewright.core.errors import InputDataError
from samplewright.intake.tables import TableResult, read_table


def _write(path: Path, text: str) -> Path:
    path.write_text(text)
    return path


def test_columns_come_back_row_aligned(tmp_path: Path) -> None:
    """The (n, d) array holds the asked columns in the asked order, rows as in the file."""
    f = _write(tmp_path / "jobs.csv", "id,hours,cost\na,1.5,100\nb,3,250.5\nc,2,80\n")
    t = read_table(f, ["cost", "hours"])
    assert isinstance(t, TableResult)
    assert t.columns == ("cost", "hours") and t.values.shape == (3, 2)
    # source: pandas.read_csv of the same file (an outside reader)
    expected = pd.read_csv(f)[["cost", "hours"]].to_numpy(dtype=np.float64)
    np.testing.assert_array_equal(t.values, expected)
    np.testing.assert_array_equal(t.column("hours"), [1.5, 3.0, 2.0])
    assert (t.n, t.n_rows_read, t.n_dropped, t.source) == (3, 3, 0, str(f))


def test_rows_with_a_missing_value_anywhere_are_dropped_whole(tmp_path: Path) -> None:
    """A missing cell in any selected column drops its whole row; reasons are counted by row."""
    f = _write(
        tmp_path / "d.csv",
        "a,b,note\n1,10,x\nNA,20,y\n3,,z\n4,inf,w\n,NA,v\n6,60,\n",
    )
    t = read_table(f, ["a", "b"], missing="drop", infinite="drop")
    np.testing.assert_array_equal(t.values, [[1.0, 10.0], [6.0, 60.0]])
    assert t.dropped == {"missing": 3, "infinite": 1} and t.n_dropped == 4
    assert t.n_rows_read == 6


def test_missing_values_are_an_error_by_default(tmp_path: Path) -> None:
    """Without missing='drop' the first column holding a missing value is named with its row."""
    f = _write(tmp_path / "d.csv", "a,b\n1,2\n3,NA\n,4\n")
    with pytest.raises(InputDataError) as info:
        read_table(f, ["a", "b"])
    assert str(info.value) == (
        "column 'a' in d.csv has 1 missing value (first at row 3); use missing='drop' "
        "(--missing drop) to drop them"
    )


def test_infinite_values_are_an_error_by_default(tmp_path: Path) -> None:
    """An infinite value is refused with its column and row unless infinite='drop'."""
    f = _write(tmp_path / "d.csv", "a,b\n1,2\n3,-inf\n")
    with pytest.raises(InputDataError, match=r"column 'b' in d.csv has 1 infinite value"):
        read_table(f, ["a", "b"])


def test_options_apply_to_every_column(tmp_path: Path) -> None:
    """Separator, decimal comma and markers apply to all selected columns."""
    f = _write(tmp_path / "d.csv", "a;b\n1,5;n/a\n2,5;3\n-;4,75\n")
    t = read_table(f, ["a", "b"], separator=";", decimal=",", missing="drop",
                   missing_markers=["n/a", "-"])  # fmt: skip
    np.testing.assert_array_equal(t.values, [[2.5, 3.0]])
    assert t.dropped == {"missing": 2}


def test_parquet_table_with_nulls(tmp_path: Path) -> None:
    """Parquet nulls drop their rows; integer and float columns mix in one float64 table."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"n": pa.array([1, None, 3], pa.int32()), "x": [0.5, 1.5, None]}), f)
    t = read_table(f, ["x", "n"], missing="drop")
    np.testing.assert_array_equal(t.values, [[0.5, 1.0]])
    assert t.dropped == {"missing": 2}


def test_values_are_read_only_and_result_is_frozen(tmp_path: Path) -> None:
    """The table cannot be changed in place, nor its fields reassigned."""
    t = read_table(_write(tmp_path / "d.csv", "a,b\n1,2\n"), ["a", "b"])
    assert not t.values.flags.writeable
    with pytest.raises(dataclasses.FrozenInstanceError):
        t.source = "x"  # type: ignore[misc]


@pytest.mark.parametrize(
    ("columns", "message"),
    [
        ([], "expected at least one column name"),
        ("ab", "expected a list of column names"),
        (["a", "a"], "'a' is listed more than once"),
    ],
)
def test_bad_column_lists_are_refused(tmp_path: Path, columns: object, message: str) -> None:
    """An empty list, a bare string or a repeated name is refused before reading."""
    f = _write(tmp_path / "d.csv", "a,b\n1,2\n")
    with pytest.raises(InputDataError, match=message):
        read_table(f, columns)  # type: ignore[arg-type]


def test_min_rows_counts_kept_rows(tmp_path: Path) -> None:
    """min_rows applies to the rows left after dropping."""
    f = _write(tmp_path / "d.csv", "a,b\n1,2\nNA,3\n4,5\n")
    with pytest.raises(InputDataError, match="2 usable rows, at least 3 needed"):
        read_table(f, ["a", "b"], missing="drop", min_rows=3)


def test_asking_for_a_column_not_read(tmp_path: Path) -> None:
    """column() of a name that was not read is an error naming the columns read."""
    t = read_table(_write(tmp_path / "d.csv", "a,b\n1,2\n"), ["a"])
    with pytest.raises(InputDataError, match="column 'b' was not read"):
        t.column("b")
