"""Parquet files with samplewright metadata held once, written atomically.

pyarrow normally stores a table's schema metadata twice in a Parquet file: as a plain key of the
file's key-value metadata (what generic tools such as duckdb or parquet-tools show) and inside
the serialised Arrow schema (``ARROW:schema``, what pyarrow and pandas read back). Two copies can
disagree, and a reader would then see other parameters than the ones that were verified.

:func:`write_table` therefore writes the plain key only, without the Arrow schema (the payload
columns are float64, which Parquet describes fully on its own). :func:`read_table` and
:func:`read_key` read the plain key and, for files written with both copies (older samplewright,
or another writer), refuse the file unless the two copies are byte for byte equal.

:func:`read_float_columns` reads float64 columns straight into numpy arrays: the file is opened
once (the metadata and the values come from the same file even if it is replaced meanwhile), its
row groups are decoded in parallel threads, each copied into its place in one preallocated array
(no concatenation pass, no pandas).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from samplewright.core.errors import IntegrityError
from samplewright.store.atomic import atomic_write

__all__ = ["FloatColumnError", "read_float_columns", "read_key", "read_table", "write_table"]

# ParquetWriter.add_key_value_metadata appeared after the oldest pyarrow samplewright supports;
# without it the metadata is written in both places (and both are checked when read).
_ONE_COPY = hasattr(pq.ParquetWriter, "add_key_value_metadata")


def write_table(
    path: str | Path,
    table: pa.Table,
    metadata: Mapping[bytes, bytes],
    *,
    compression: str = "snappy",
) -> None:
    """Write ``table`` to ``path`` atomically with ``metadata`` as the file's metadata, once."""
    plain = table.replace_schema_metadata(None)
    options: dict[str, Any] = {"use_dictionary": False, "compression": compression}

    def writer(tmp: str) -> None:
        if _ONE_COPY:
            with pq.ParquetWriter(tmp, plain.schema, store_schema=False, **options) as out:
                out.write_table(plain)
                out.add_key_value_metadata(dict(metadata))
        else:  # pragma: no cover - old pyarrow
            pq.write_table(plain.replace_schema_metadata(dict(metadata)), tmp, **options)

    atomic_write(path, writer)


def _key(path: Path, pf: pq.ParquetFile, key: bytes) -> bytes | None:
    plain = (pf.metadata.metadata or {}).get(key)
    arrow = (pf.schema_arrow.metadata or {}).get(key)
    if plain != arrow:
        raise IntegrityError(
            f"{path}: the two copies of the {key.decode()!r} metadata differ (the file's "
            "key-value metadata and the stored Arrow schema); the file was altered"
        )
    return plain


def read_key(path: str | Path, key: bytes) -> bytes | None:
    """The value of metadata ``key`` of a Parquet file (None if absent), both copies checked.

    Raises :class:`~samplewright.core.errors.IntegrityError` if the copies differ; errors of
    reading the file itself (missing, not Parquet) are pyarrow's or the operating system's.
    """
    with pq.ParquetFile(path) as pf:
        return _key(Path(path), pf, key)


def read_table(path: str | Path, key: bytes) -> tuple[pa.Table, bytes | None]:
    """The table of a Parquet file and the value of its metadata ``key`` (both copies checked)."""
    with pq.ParquetFile(path) as pf:
        raw = _key(Path(path), pf, key)
        return pf.read(), raw


class FloatColumnError(ValueError):
    """Columns :func:`read_float_columns` cannot hand out as float64 arrays (another type,
    nulls, a repeated name, row counts that contradict the footer)."""


def _threads(groups: int) -> int:
    """Worker threads for ``groups`` row groups: one per available core, at most four."""
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    return max(1, min(groups, cores or 1, 4))


def _into(out: np.ndarray, start: int, chunks: list[pa.Array], name: str) -> int:
    """Copy float64 ``chunks`` into ``out[start:]``; return the position after them."""
    for chunk in chunks:
        if chunk.null_count:
            raise FloatColumnError(
                f"column {name!r} holds {chunk.null_count} null(s), expected numbers only"
            )
        n = len(chunk)
        if n:
            data = chunk.buffers()[1]
            out[start : start + n] = np.frombuffer(data, "<f8", count=n, offset=chunk.offset * 8)
        start += n
    return start


def read_float_columns(
    path: str | Path, key: bytes, *, before: Callable[[bytes | None], object] | None = None
) -> tuple[dict[str, np.ndarray], bytes | None]:
    """Every column of a Parquet file as a float64 numpy array, and the value of metadata
    ``key`` (both copies checked, see :func:`read_key`).

    ``before``, when given, is called with that value before any column is decoded, so that a
    file can be refused on its metadata alone; its exceptions propagate.

    Columns come back in file order, as fresh writable arrays. Raises :class:`FloatColumnError`
    naming the first column that is not float64 or holds nulls (or repeated names), and
    :class:`~samplewright.core.errors.IntegrityError` if the metadata copies differ; errors of
    reading the file itself (missing, not Parquet, damaged pages) are pyarrow's or the
    operating system's.
    """
    path = Path(path)
    with pa.OSFile(str(path)) as source:  # reads by offset: safe to share between threads
        pf = pq.ParquetFile(source)
        raw = _key(path, pf, key)
        if before is not None:
            before(raw)
        schema = pf.schema_arrow
        if len(set(schema.names)) != len(schema.names):
            raise FloatColumnError(f"column names repeat ({', '.join(schema.names)})")
        for field in schema:
            if field.type != pa.float64():
                raise FloatColumnError(f"column {field.name!r} is {field.type}, expected double")
        meta = pf.metadata
        n_rows = meta.num_rows
        out = {name: np.empty(n_rows, dtype="<f8") for name in schema.names}
        starts = [0]
        for g in range(meta.num_row_groups):
            starts.append(starts[-1] + meta.row_group(g).num_rows)
        if starts[-1] != n_rows:
            raise FloatColumnError(f"row groups hold {starts[-1]} rows, the footer says {n_rows}")

        def group(g: int) -> None:
            reader = pf if meta.num_row_groups == 1 else pq.ParquetFile(source, metadata=meta)
            table = reader.read_row_group(g, use_threads=False)
            for i, name in enumerate(schema.names):
                end = _into(out[name], starts[g], table.column(i).chunks, name)
                if end != starts[g + 1]:
                    raise FloatColumnError(
                        f"column {name!r} holds another number of rows than the footer says"
                    )

        workers = _threads(meta.num_row_groups)
        if workers == 1:
            for g in range(meta.num_row_groups):
                group(g)
        else:
            with ThreadPoolExecutor(workers) as pool:
                list(pool.map(group, range(meta.num_row_groups)))  # re-raises a worker's error
    return out, raw
