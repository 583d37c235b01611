"""Parquet files with samplewright metadata held once, written atomically.

pyarrow normally stores a table's schema metadata twice in a Parquet file: as a plain key of the
file's key-value metadata (what generic tools such as duckdb or parquet-tools show) and inside
the serialised Arrow schema (``ARROW:schema``, what pyarrow and pandas read back). Two copies can
disagree, and a reader would then see other parameters than the ones that were verified.

:func:`write_table` therefore writes the plain key only, without the Arrow schema (the payload
columns are float64, which Parquet describes fully on its own). :func:`read_table` and
:func:`read_key` read the plain key and, for files written with both copies (older samplewright,
or another writer), refuse the file unless the two copies are byte for byte equal.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq

from samplewright.core.errors import IntegrityError
from samplewright.store.atomic import atomic_write

__all__ = ["read_key", "read_table", "write_table"]

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
