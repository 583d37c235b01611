"""Parquet intake: only the wanted column, no needless copies, every stored type read right."""

from __future__ import annotations

import tracemalloc
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from samplewright.core.errors import InputDataError
from samplewright.intake.columns import read_column

N = 200_000


def _numpy_peak(path: Path, column: str) -> tuple[int, np.ndarray]:
    """Peak bytes numpy allocated while reading (numpy reports its buffers to tracemalloc;
    Arrow's own memory is not counted)."""
    read_column(path, column)  # first call: lazy imports, whose allocations would count
    tracemalloc.start()
    try:
        values = read_column(path, column).values
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    return peak, values


def test_one_row_group_is_read_without_a_copy(tmp_path: Path) -> None:
    """A float64 column of one row group without nulls is handed out as a view (no numpy copy)."""
    x = np.random.default_rng(1).lognormal(size=N)
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": x, "other": np.arange(N)}), f, row_group_size=N)
    peak, values = _numpy_peak(f, "v")
    np.testing.assert_array_equal(values, x)
    assert peak < 0.1 * x.nbytes  # a copy would be the column's size
    assert not values.flags.writeable


def test_row_groups_are_gathered_into_one_array(tmp_path: Path) -> None:
    """Several row groups are copied one by one into a single array (numpy peak ~ one column)."""
    x = np.random.default_rng(2).normal(size=N)
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": x}), f, row_group_size=N // 8)
    peak, values = _numpy_peak(f, "v")
    np.testing.assert_array_equal(values, x)
    assert peak < 1.3 * x.nbytes


@pytest.mark.parametrize(
    ("array", "expected"),
    [
        (pa.array([0.1, 2.5], pa.float32()), [np.float32(0.1), 2.5]),
        (pa.array([1, -7], pa.int8()), [1.0, -7.0]),
        (pa.array([2**53, 3], pa.uint64()), [2.0**53, 3.0]),
        (pa.array([True, False]), [1.0, 0.0]),
        (pa.array(["1.5", " 2 "]).dictionary_encode(), [1.5, 2.0]),
        (pa.array(["1e-300", "-4"], pa.large_string()), [1e-300, -4.0]),
    ],
    ids=["float32", "int8", "uint64 at 2**53", "bool", "dictionary text", "large text"],
)
def test_stored_types_read_as_float64(tmp_path: Path, array: pa.Array, expected: list) -> None:
    """Floats widen exactly, integers up to 2**53 and booleans convert, text parses."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": array}), f)
    # source: numpy's float64 conversion of the same Python / numpy values
    np.testing.assert_array_equal(read_column(f, "v").values, np.asarray(expected, np.float64))


def test_nulls_and_nans_are_missing(tmp_path: Path) -> None:
    """A null and a stored NaN are both missing values, counted together."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": pa.array([1.0, None, float("nan"), 4.0])}), f)
    with pytest.raises(InputDataError, match=r"2 missing values \(first at row 2\)"):
        read_column(f, "v")
    np.testing.assert_array_equal(read_column(f, "v", missing="drop").values, [1.0, 4.0])


def test_integer_nulls_do_not_round_other_values(tmp_path: Path) -> None:
    """An int64 column with nulls keeps its exact integers (no detour through float NaN)."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": pa.array([2**53, None, -(2**53)], pa.int64())}), f)
    data = read_column(f, "v", missing="drop")
    np.testing.assert_array_equal(data.values, [2.0**53, -(2.0**53)])


def test_all_null_column_is_all_missing(tmp_path: Path) -> None:
    """A column of nulls has only missing values, and nothing left once they are dropped."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": pa.array([None, None], pa.null())}), f)
    with pytest.raises(InputDataError, match="no rows left to use"):
        read_column(f, "v", missing="drop")


def test_text_column_uses_the_markers_and_decimal_option(tmp_path: Path) -> None:
    """Parquet text follows the CSV cell rule, including declared markers and decimal commas."""
    f = tmp_path / "d.parquet"
    pq.write_table(pa.table({"v": ["1,5", "n/a", "2"]}), f)
    data = read_column(f, "v", decimal=",", missing="drop", missing_markers=["n/a"])
    np.testing.assert_array_equal(data.values, [1.5, 2.0])


def test_weights_and_censoring_from_parquet(tmp_path: Path) -> None:
    """Weight and boolean censoring columns are read alongside the values."""
    f = tmp_path / "d.parquet"
    pq.write_table(
        pa.table({"v": [1.0, 2.0], "w": pa.array([3, 1], pa.int16()), "c": [True, False]}), f
    )
    data = read_column(f, "v", weights="w", censor="c")
    np.testing.assert_array_equal(data.weights, [3.0, 1.0])
    assert data.censored is not None and data.censored.tolist() == [True, False]
