"""Data intake: read one numeric column (and optional weight / censoring columns) from a file.

Formats: CSV (``.csv``), TSV (``.tsv``, ``.tab``) and Parquet (``.parquet``, ``.pq``), chosen by
the file suffix. Rows are counted from 1, the header line not included ("row 1" is the first data
row). Empty cells and exactly the tokens in :data:`MISSING_TOKENS` are missing values; any other
text that is not a number is an error.

Policies for the value column: missing values (NaN) and infinite values are errors unless the
caller asks to drop them (``missing="drop"``, ``infinite="drop"``); the numbers dropped are kept
in :class:`ColumnData` and end up in the artifact's provenance. Weights must be finite and > 0.
A censoring column holds 1/0 or true/false (1 = right-censored).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd
import pyarrow.parquet as pq

from samplewright.core.errors import InputDataError

__all__ = ["MISSING_TOKENS", "ColumnData", "Policy", "read_column", "read_raw_columns"]

Policy = Literal["error", "drop"]
MISSING_TOKENS = ("", "NA", "NaN", "nan", "null")
_CSV = {".csv": ",", ".tsv": "\t", ".tab": "\t"}
_PARQUET = {".parquet", ".pq"}


@dataclass(frozen=True)
class ColumnData:
    """Values read from one file, cleaned and ready for fitting."""

    values: np.ndarray
    weights: np.ndarray | None = None
    censored: np.ndarray | None = None
    source: str = ""
    column: str = ""
    weight_column: str | None = None
    censor_column: str | None = None
    n_rows_read: int = 0
    dropped: dict[str, int] = field(default_factory=dict)

    @property
    def n(self) -> int:
        return int(self.values.size)


def _file_kind(path: Path) -> str:
    suffix = path.suffix.lower()
    if suffix in _CSV:
        return "csv"
    if suffix in _PARQUET:
        return "parquet"
    raise InputDataError(
        f"{path}: unknown file type {suffix!r}; expected .csv, .tsv, .tab, .parquet or .pq"
    )


def read_raw_columns(path: str | Path, columns: list[str]) -> dict[str, pd.Series]:
    """Read the named columns as they are stored (text for CSV/TSV), checking they exist."""
    path = Path(path)
    kind = _file_kind(path)
    if not path.is_file():
        raise InputDataError(f"{path}: data file not found")
    wanted = list(dict.fromkeys(columns))
    if kind == "csv":
        sep = _CSV[path.suffix.lower()]
        try:
            header = pd.read_csv(path, sep=sep, nrows=0).columns
        except pd.errors.EmptyDataError:
            raise InputDataError(f"{path}: file is empty (no header line)") from None
        _check_columns(path, wanted, list(header))
        frame = pd.read_csv(
            path, sep=sep, usecols=wanted, dtype=str, keep_default_na=False, na_filter=False
        )
    else:
        try:
            schema_names = pq.read_schema(path).names
        except Exception as exc:  # pyarrow raises several types for a corrupt file
            raise InputDataError(f"{path}: not a readable Parquet file ({exc})") from None
        _check_columns(path, wanted, schema_names)
        frame = pq.read_table(path, columns=wanted).to_pandas()
    return {c: frame[c] for c in wanted}


def _check_columns(path: Path, wanted: list[str], present: list[str]) -> None:
    for col in wanted:
        if col not in present:
            shown = ", ".join(repr(c) for c in present[:8]) + (" ..." if len(present) > 8 else "")
            raise InputDataError(f"{path}: no column {col!r} (columns: {shown})")


def _to_float(series: pd.Series, path: Path, column: str) -> np.ndarray:
    """Numbers as float64; missing tokens become NaN; other text is an error naming the row."""
    if series.dtype == object or pd.api.types.is_string_dtype(series.dtype):
        text = series.astype(str).str.strip()
        missing = text.isin(MISSING_TOKENS) | series.isna()
        numbers = pd.to_numeric(text.where(~missing, "nan"), errors="coerce")
        bad = numbers.isna() & ~missing
        if bad.any():
            pos = np.flatnonzero(bad.to_numpy())
            raise InputDataError(
                f"column {column!r} in {path.name} has {pos.size} non-numeric value"
                f"{'s' if pos.size > 1 else ''} (first at row {pos[0] + 1}: {text.iloc[pos[0]]!r})"
            )
        # pd.to_numeric keeps only about 16 significant digits, so the accepted text is parsed
        # again exactly (correctly rounded): CSV and Parquet then give the same float64 values.
        try:
            return text.where(~missing, "nan").to_numpy(dtype=str).astype(np.float64)
        except ValueError:  # pragma: no cover - text pandas accepts but numpy does not
            return numbers.to_numpy(dtype=np.float64)
    if pd.api.types.is_bool_dtype(series.dtype):
        return series.to_numpy(dtype=np.float64)
    if not pd.api.types.is_numeric_dtype(series.dtype):
        raise InputDataError(
            f"column {column!r} in {path.name} has type {series.dtype}, expected numbers"
        )
    return series.to_numpy(dtype=np.float64, na_value=np.nan)


def _count(mask: np.ndarray, noun: str) -> str:
    """'1 missing value' / '3 missing values'."""
    n = int(mask.sum())
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"


def _first_row(mask: np.ndarray) -> int:
    return int(np.flatnonzero(mask)[0]) + 1


def read_column(
    path: str | Path,
    column: str,
    *,
    weights: str | None = None,
    censor: str | None = None,
    missing: Policy = "error",
    infinite: Policy = "error",
    min_rows: int = 1,
) -> ColumnData:
    """Read and clean one value column (plus optional weight and censoring columns).

    Parameters
    ----------
    path : data file (CSV, TSV or Parquet).
    column : name of the value column.
    weights : name of a column of positive weights, or None.
    censor : name of a 0/1 column, 1 meaning the value is right-censored, or None.
    missing, infinite : ``"error"`` (default) or ``"drop"`` rows whose value is NaN / ±inf.
    min_rows : fewest rows that must remain.
    """
    path = Path(path)
    for name, value in (("missing", missing), ("infinite", infinite)):
        if value not in ("error", "drop"):
            raise InputDataError(f"option {name!r}: expected 'error' or 'drop', found {value!r}")
    cols = [column] + [c for c in (weights, censor) if c is not None]
    raw = read_raw_columns(path, cols)
    values = _to_float(raw[column], path, column)
    n_read = values.size
    keep = np.ones(n_read, dtype=bool)
    dropped: dict[str, int] = {}

    nan = np.isnan(values)
    if nan.any():
        if missing == "error":
            raise InputDataError(
                f"column {column!r} in {path.name} has {_count(nan, 'missing value')} "
                f"(first at row {_first_row(nan)}); use missing='drop' (--missing drop) "
                "to drop them"
            )
        dropped["missing"] = int(nan.sum())
        keep &= ~nan
    inf = np.isinf(values)
    if inf.any():
        if infinite == "error":
            raise InputDataError(
                f"column {column!r} in {path.name} has {_count(inf, 'infinite value')} "
                f"(first at row {_first_row(inf)}); use infinite='drop' (--infinite drop) "
                "to drop them"
            )
        dropped["infinite"] = int(inf.sum())
        keep &= ~inf

    w = None
    if weights is not None:
        w = _to_float(raw[weights], path, weights)
        bad = ~np.isfinite(w) & keep
        if bad.any():
            raise InputDataError(
                f"weight column {weights!r} in {path.name} has "
                f"{_count(bad, 'missing or infinite weight')} (first at row {_first_row(bad)})"
            )
        nonpos = (w <= 0) & keep
        if nonpos.any():
            r = _first_row(nonpos)
            raise InputDataError(
                f"weight column {weights!r} in {path.name} has {_count(nonpos, 'weight')} "
                f"<= 0 (first at row {r}: {float(w[r - 1])!r}); weights must be > 0"
            )
        w = w[keep]

    c = None
    if censor is not None:
        series = raw[censor]
        if series.dtype == object:
            series = series.astype(str).str.strip().str.lower().replace({"true": "1", "false": "0"})
        cv = _to_float(series, path, censor)
        bad = ~np.isin(cv, (0.0, 1.0)) & keep
        if bad.any():
            r = _first_row(bad)
            raise InputDataError(
                f"censoring column {censor!r} in {path.name} must hold 0/1 or true/false "
                f"(first bad value at row {r}: {raw[censor].iloc[r - 1]!r})"
            )
        c = cv[keep].astype(bool)

    values = values[keep]
    if values.size == 0:
        raise InputDataError(f"column {column!r} in {path.name}: no rows left to use")
    if values.size < min_rows:
        raise InputDataError(
            f"column {column!r} in {path.name}: {values.size} usable rows, "
            f"at least {min_rows} needed"
        )
    return ColumnData(
        values=np.ascontiguousarray(values),
        weights=None if w is None else np.ascontiguousarray(w),
        censored=c,
        source=str(path),
        column=column,
        weight_column=weights,
        censor_column=censor,
        n_rows_read=n_read,
        dropped=dropped,
    )
