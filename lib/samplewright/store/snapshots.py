"""Column snapshots: the cleaned values of one data column, stored under their fingerprint.

In a pipeline, only the snapshot rule reads the raw data file; every rule below reads the
snapshot. The snapshot is a Parquet file with columns ``value`` (and ``weight``, ``censor`` when
used) plus metadata key ``samplewright-snapshot`` (canonical JSON, held once: see
:mod:`.tables`) recording where the values came from.
"""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from samplewright.core.canonical import canonical_bytes, parse_json
from samplewright.core.errors import InputDataError, IntegrityError
from samplewright.intake.columns import ColumnData, Policy, read_column
from samplewright.store.fingerprints import fingerprint_column
from samplewright.store.tables import read_key, write_table

__all__ = ["SNAPSHOT_KEY", "read_data", "snapshot_info", "write_snapshot"]

SNAPSHOT_KEY = b"samplewright-snapshot"


def _float_array(values: np.ndarray) -> pa.Array:
    """A float64 Arrow array over ``values``' buffer (``pa.array`` would import pandas)."""
    v = np.ascontiguousarray(values, dtype=np.float64)
    return pa.Array.from_buffers(pa.float64(), v.size, [None, pa.py_buffer(v)])


def write_snapshot(data: ColumnData, path: str | Path) -> dict[str, Any]:
    """Write cleaned column data to ``path`` atomically; return the info recorded with it."""
    cols: dict[str, Any] = {"value": _float_array(data.values)}
    if data.weights is not None:
        cols["weight"] = _float_array(data.weights)
    if data.censored is not None:
        cols["censor"] = _float_array(data.censored.astype(np.float64))
    info = {
        "fingerprint": fingerprint_column(data),
        "source": data.source,
        "column": data.column,
        "weight_column": data.weight_column,
        "censor_column": data.censor_column,
        "n_rows_read": data.n_rows_read,
        "dropped": data.dropped,
    }
    write_table(path, pa.table(cols), {SNAPSHOT_KEY: canonical_bytes(info)})
    return info


def snapshot_info(path: str | Path) -> dict[str, Any] | None:
    """The snapshot record of a Parquet file, or None if it is not a snapshot."""
    path = Path(path)
    if path.suffix.lower() not in (".parquet", ".pq") or not path.is_file():
        return None
    try:
        raw = read_key(path, SNAPSHOT_KEY)
    except IntegrityError:
        raise
    except Exception:
        return None  # not readable as Parquet: reading it as data gives the precise error
    if raw is None:
        return None
    try:
        info = parse_json(raw)
    except ValueError as exc:
        raise InputDataError(f"{path}: snapshot metadata is unusable: {exc}") from None
    if not isinstance(info, dict):
        raise InputDataError(f"{path}: snapshot metadata is not a JSON object")
    return info


def read_data(
    path: str | Path,
    column: str | None,
    *,
    weights: str | None = None,
    censor: str | None = None,
    missing: Policy = "error",
    infinite: Policy = "error",
    min_rows: int = 1,
    separator: str | None = None,
    decimal: str = ".",
    missing_markers: Iterable[str] = (),
    encoding: str | None = None,
) -> tuple[ColumnData, dict[str, Any] | None]:
    """Read a data file or a snapshot. For a snapshot, ``column`` may be None (its roles are
    fixed), the reading options do not apply, and the original source is returned as the second
    element."""
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
            separator=separator,
            decimal=decimal,
            missing_markers=missing_markers,
            encoding=encoding,
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
