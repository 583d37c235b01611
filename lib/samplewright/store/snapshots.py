"""Column snapshots: the cleaned values of one data column, stored under their fingerprint.

In a pipeline, only the snapshot rule reads the raw data file; every rule below reads the
snapshot. The snapshot is a Parquet file with columns ``value`` (and ``weight``, ``censor`` when
used) plus metadata key ``samplewright-snapshot`` recording where the values came from.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from samplewright.core.errors import InputDataError
from samplewright.intake.columns import ColumnData, Policy, read_column
from samplewright.store.artifacts import atomic_write
from samplewright.store.fingerprints import fingerprint_column

__all__ = ["SNAPSHOT_KEY", "read_data", "snapshot_info", "write_snapshot"]

SNAPSHOT_KEY = b"samplewright-snapshot"


def write_snapshot(data: ColumnData, path: str | Path) -> dict[str, Any]:
    """Write cleaned column data to ``path`` atomically; return the info recorded with it."""
    cols: dict[str, Any] = {"value": pa.array(data.values)}
    if data.weights is not None:
        cols["weight"] = pa.array(data.weights)
    if data.censored is not None:
        cols["censor"] = pa.array(data.censored.astype(np.float64))
    info = {
        "fingerprint": fingerprint_column(data),
        "source": data.source,
        "column": data.column,
        "weight_column": data.weight_column,
        "censor_column": data.censor_column,
        "n_rows_read": data.n_rows_read,
        "dropped": data.dropped,
    }
    table = pa.table(cols).replace_schema_metadata({SNAPSHOT_KEY: json.dumps(info).encode()})
    atomic_write(Path(path), lambda tmp: pq.write_table(table, tmp, use_dictionary=False))
    return info


def snapshot_info(path: str | Path) -> dict[str, Any] | None:
    """The snapshot record of a Parquet file, or None if it is not a snapshot."""
    path = Path(path)
    if path.suffix.lower() not in (".parquet", ".pq") or not path.is_file():
        return None
    try:
        meta = pq.read_schema(path).metadata or {}
    except Exception:
        return None
    raw = meta.get(SNAPSHOT_KEY)
    return None if raw is None else json.loads(raw)


def read_data(
    path: str | Path,
    column: str | None,
    *,
    weights: str | None = None,
    censor: str | None = None,
    missing: Policy = "error",
    infinite: Policy = "error",
    min_rows: int = 1,
) -> tuple[ColumnData, dict[str, Any] | None]:
    """Read a data file or a snapshot. For a snapshot, ``column`` may be None (its roles are
    fixed) and the original source is returned as the second element."""
    info = snapshot_info(path)
    if info is None:
        if column is None:
            raise InputDataError(f"{path}: --column is required for a data file")
        return read_column(
            path,
            column,
            weights=weights,
            censor=censor,
            missing=missing,
            infinite=infinite,
            min_rows=min_rows,
        ), None
    names = pq.read_schema(path).names
    data = read_column(
        path,
        "value",
        weights="weight" if "weight" in names else None,
        censor="censor" if "censor" in names else None,
        min_rows=min_rows,
    )
    return data, info
