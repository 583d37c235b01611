"""Parquet files: only the wanted columns are read, float64 columns without a copy where possible.

Page checksums are verified where the writer stored them. A float64 column of one row group
without nulls comes back as a read-only view of Arrow's memory (no copy); a column of several
row groups is copied group by group into one array, so the peak stays near one column. Integer
columns must fit float64 exactly; text columns follow the same rule as CSV cells; booleans read
as 1/0; any other type (timestamps, lists...) is refused.

Numeric values leave Arrow through their buffers (``np.frombuffer``), not through pyarrow's
``to_numpy``: in pyarrow 26 that imports pandas, which alone costs a rule job ~0.4 s of start-up.
"""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from samplewright.core.errors import InputDataError
from samplewright.intake.files import check_file, check_names
from samplewright.intake.options import ReadOptions

__all__ = ["open_parquet", "read_parquet_columns", "read_parquet_numbers"]


def _one_line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return text[0] if text else type(exc).__name__


def open_parquet(path: Path) -> pq.ParquetFile:
    """The Parquet file at ``path``, or a one-line error if it is not one."""
    check_file(path)
    try:
        return pq.ParquetFile(path, page_checksum_verification=True)
    except Exception as exc:  # pyarrow raises several types for a damaged file
        raise InputDataError(f"{path}: not a readable Parquet file ({_one_line(exc)})") from None


def read_parquet_columns(path: Path, columns: list[str]) -> pa.Table:
    """The named columns as stored (checked to exist once)."""
    pf = open_parquet(path)
    check_names(path, columns, pf.schema_arrow.names)
    return _read(pf, path, columns)


def _read(pf: pq.ParquetFile, path: Path, columns: list[str], group: int | None = None) -> pa.Table:
    try:
        if group is None:
            return pf.read(columns=columns, use_threads=True)
        return pf.read_row_group(group, columns=columns, use_threads=True)
    except Exception as exc:  # damaged pages raise OSError or ArrowInvalid, among others
        shown = ", ".join(repr(c) for c in columns)
        raise InputDataError(
            f"{path}: column {shown} could not be decoded, the file looks damaged "
            f"({_one_line(exc)})"
        ) from None


def _slots(arr: pa.Array, dtype: np.dtype) -> np.ndarray:
    """The value slots of a fixed-width Arrow array as a read-only numpy view (a null slot holds
    whatever the writer left there)."""
    n = len(arr)
    data = arr.buffers()[1]
    if n == 0 or data is None:
        out = np.empty(0, dtype=dtype)
    else:
        out = np.frombuffer(data, dtype=dtype, count=n, offset=arr.offset * dtype.itemsize)
    out.flags.writeable = False
    return out


def _nulls(arr: pa.Array) -> np.ndarray | None:
    """Mask of the null slots of ``arr`` from its validity bitmap (None when it has none)."""
    if arr.null_count == 0:
        return None
    bits = np.unpackbits(np.frombuffer(arr.buffers()[0], dtype=np.uint8), bitorder="little")
    return bits[arr.offset : arr.offset + len(arr)] == 0


def _joined(col: pa.ChunkedArray, dtype: np.dtype, fill: float) -> tuple[np.ndarray, bool]:
    """The values of a fixed-width column as one numpy array, ``fill`` in null slots, and
    whether it had nulls. One chunk without nulls comes back as a read-only view of Arrow's
    memory; otherwise the chunks are copied one by one into one new array."""
    chunks = col.chunks
    if len(chunks) == 1 and chunks[0].null_count == 0:
        return _slots(chunks[0], dtype), False
    out = np.empty(len(col), dtype=dtype)
    pos = 0
    for chunk in chunks:
        end = pos + len(chunk)
        out[pos:end] = _slots(chunk, dtype)
        nulls = _nulls(chunk)
        if nulls is not None:
            out[pos:end][nulls] = fill
        pos = end
    return out, col.null_count > 0


def _floats(col: pa.ChunkedArray) -> np.ndarray:
    """float64 values of a float64 column, NaN where null."""
    return _joined(col, np.dtype(np.float64), np.nan)[0]


def _int_dtype(t: pa.DataType) -> np.dtype:
    return np.dtype(f"{'i' if pa.types.is_signed_integer(t) else 'u'}{t.bit_width // 8}")


def _null_mask(arr: pa.Array) -> np.ndarray:
    nulls = _nulls(arr)
    return np.zeros(len(arr), dtype=bool) if nulls is None else nulls


def _is_floatlike(t: pa.DataType) -> bool:
    return pa.types.is_floating(t) or pa.types.is_integer(t) or pa.types.is_boolean(t)


def _numbers(
    col: pa.ChunkedArray,
    where: str,
    column: str,
    options: ReadOptions,
    flags: bool,
    offset: int = 0,
) -> np.ndarray:
    """float64 values (NaN where missing) of one stored column."""
    t = col.type
    if pa.types.is_dictionary(t):
        return _numbers(col.cast(t.value_type), where, column, options, flags, offset)
    if pa.types.is_floating(t):
        return _floats(col if t == pa.float64() else col.cast(pa.float64()))
    if pa.types.is_boolean(t):
        return _floats(col.cast(pa.float64()))
    if pa.types.is_null(t):
        return np.full(len(col), np.nan)
    # the integer and text rules live with pyarrow.compute (~0.05 s to load): imported here
    from samplewright.intake.cells import ints_to_float, parse_text

    if pa.types.is_integer(t):
        ints, has_nulls = _joined(col, _int_dtype(t), 0)
        out = ints_to_float(ints, where=where, column=column, offset=offset)
        if has_nulls:
            out[np.concatenate([_null_mask(c) for c in col.chunks])] = np.nan
        return out
    if pa.types.is_decimal(t):  # through text, so that the rounding is correct
        return parse_text(col.cast(pa.string()), where=where, column=column, options=options)
    if any(
        f(t)
        for f in (
            pa.types.is_string,
            pa.types.is_large_string,
            pa.types.is_binary,
            pa.types.is_large_binary,
        )
    ):
        return parse_text(col, where=where, column=column, options=options, flags=flags)
    raise InputDataError(f"column {column!r} in {where} has type {t}, expected numbers")


def read_parquet_numbers(
    path: Path, columns: list[str], options: ReadOptions, flags: Iterable[str] = ()
) -> tuple[dict[str, np.ndarray], int]:
    """float64 values (NaN where missing) of the named columns, and the number of rows."""
    flagged = set(flags)
    pf = open_parquet(path)
    schema = pf.schema_arrow
    check_names(path, columns, schema.names)
    n_rows = pf.metadata.num_rows
    out: dict[str, np.ndarray] = {}
    for c in columns:
        if _is_floatlike(schema.field(c).type):
            out[c] = _by_group(pf, path, c, options, n_rows)
        else:
            out[c] = _numbers(_read(pf, path, [c]).column(0), path.name, c, options, c in flagged)
        if out[c].size != n_rows:
            raise InputDataError(
                f"{path}: column {c!r} holds {out[c].size} values, the file says {n_rows} rows"
            )
    return out, n_rows


def _by_group(
    pf: pq.ParquetFile, path: Path, column: str, options: ReadOptions, n_rows: int
) -> np.ndarray:
    """A numeric column read row group by row group, each checked against the statistics its
    footer records; one group is handed out as it is (a view where Arrow allows), several are
    copied one by one into one float64 array."""
    chunk_paths = [pf.metadata.schema.column(i).path for i in range(pf.metadata.num_columns)]
    index = chunk_paths.index(column) if column in chunk_paths else None
    groups = pf.metadata.num_row_groups
    out = np.empty(n_rows if groups > 1 else 0, dtype=np.float64)
    pos = 0
    for g in range(groups):
        col = _read(pf, path, [column], g).column(0)
        part = _numbers(col, path.name, column, options, False, pos)
        if index is not None:
            _check_statistics(pf.metadata.row_group(g).column(index), part, col.null_count, path)
        if groups == 1:
            return part
        end = pos + part.size
        if end > n_rows:
            raise InputDataError(
                f"{path}: column {column!r} holds more values than the file's {n_rows} rows"
            )
        out[pos:end] = part
        pos = end
    if pos != n_rows:
        raise InputDataError(
            f"{path}: column {column!r} holds {pos} values, the file says {n_rows} rows"
        )
    return out


def _check_statistics(
    chunk: pq.ColumnChunkMetaData, part: np.ndarray, nulls: int, path: Path
) -> None:
    """Refuse a row group whose decoded values contradict the statistics of its footer: another
    null count, or values outside the recorded bounds (a sign of pages damaged in place)."""
    st = chunk.statistics
    if st is None or chunk.physical_type not in ("DOUBLE", "FLOAT", "INT32", "INT64", "BOOLEAN"):
        return
    where = f"{path}: column {chunk.path_in_schema!r}"
    if st.has_null_count and st.null_count != nulls:
        raise InputDataError(
            f"{where} has {nulls} nulls where the file's statistics record {st.null_count}; "
            "the file looks damaged"
        )
    if not st.has_min_max or part.size == nulls:
        return
    lo, hi = float(part.min()), float(part.max())
    if np.isnan(lo) or np.isnan(hi):  # stored NaNs: the bounds exclude them
        lo, hi = float(np.fmin.reduce(part)), float(np.fmax.reduce(part))
    low, high = float(st.min), float(st.max)
    if lo < low or hi > high:
        raise InputDataError(
            f"{where} holds values from {lo!r} to {hi!r} where the file's statistics record "
            f"{low!r} to {high!r}; the file looks damaged"
        )
