"""Data intake: read one numeric column (and optional weight / censoring columns) from a file.

Formats: CSV (``.csv``), TSV (``.tsv``, ``.tab``) and Parquet (``.parquet``, ``.pq``), chosen by
the file suffix. Rows are counted from 1, the header line and blank lines not included ("row 1"
is the first data row). Which cells are missing and which are numbers is one rule, written in
:mod:`samplewright.intake.options`: by default empty cells and exactly the tokens in
:data:`MISSING_TOKENS` are missing values, extra markers (``n/a``, ``-``...) can be declared, and
any other text that is not a number is an error. Reading options (``separator``, ``decimal``,
``missing_markers``, ``encoding``) are checked before the file is opened. Malformed files -- rows
with more or fewer fields than the header, unbalanced quotes, NUL bytes, undeclared encodings,
duplicate column names, damaged Parquet pages, integers beyond 2**53 -- are one-line errors.

Policies for the value column: missing values (NaN) and infinite values are errors unless the
caller asks to drop them (``missing="drop"``, ``infinite="drop"``); the numbers dropped are kept
in :class:`ColumnData` and end up in the artifact's provenance. Weights must be finite and > 0.
A censoring column holds 1/0 or true/false (1 = right-censored).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from samplewright.core.errors import InputDataError
from samplewright.intake.options import (
    MISSING_TOKENS,
    Policy,
    check_policy,
    file_kind,
    read_options,
)
from samplewright.intake.tables import read_numbers

if TYPE_CHECKING:
    import pandas as pd

# Start-up of a rule job: pandas (~0.4 s) is imported only by read_raw_columns, and the cell
# rules of samplewright.intake.cells (which load pyarrow.compute, ~0.05 s) only where an error
# message needs them or a column holds text.

__all__ = ["MISSING_TOKENS", "ColumnData", "Policy", "read_column", "read_raw_columns"]


@dataclass(frozen=True)
class ColumnData:
    """Values read from one file, cleaned and ready for fitting (arrays are read-only)."""

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


def read_raw_columns(path: str | Path, columns: list[str]) -> dict[str, pd.Series]:
    """Read the named columns as they are stored (text for CSV/TSV), checking they exist."""
    import pandas as pd

    path = Path(path)
    wanted = list(dict.fromkeys(columns))
    if file_kind(path) == "csv":
        from samplewright.intake.delimited import read_csv_text

        text = read_csv_text(path, wanted, read_options(path))
        return {c: pd.Series(text[c], dtype=object, name=c) for c in wanted}
    from samplewright.intake.parquet import read_parquet_columns

    table = read_parquet_columns(path, wanted)
    return {c: table.column(c).to_pandas().rename(c) for c in wanted}


def _all_finite(values: np.ndarray, step: int = 1 << 16) -> bool:
    """Whether every value is finite, checked in slices (no temporary the size of the column)."""
    return all(np.isfinite(values[i : i + step]).all() for i in range(0, values.size, step))


def _frozen(a: np.ndarray) -> np.ndarray:
    a = np.ascontiguousarray(a)
    a.flags.writeable = False
    return a


def read_column(
    path: str | Path,
    column: str,
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
) -> ColumnData:
    """Read and clean one value column (plus optional weight and censoring columns).

    Parameters
    ----------
    path : data file (CSV, TSV or Parquet).
    column : name of the value column.
    weights : name of a column of positive weights, or None.
    censor : name of a 0/1 (or true/false) column, 1 meaning the value is right-censored, or None.
    missing, infinite : ``"error"`` (default) or ``"drop"`` rows whose value is NaN / ±inf.
    min_rows : fewest rows that must remain.
    separator : field separator of a CSV/TSV file, one of ``, ; tab | : space``; default by
        suffix (``,`` for .csv, tab for .tsv/.tab).
    decimal : decimal mark of numbers written as text, ``"."`` (default) or ``","``.
    missing_markers : extra cells that mean "missing" besides :data:`MISSING_TOKENS` (e.g.
        ``["n/a", "-"]``), compared after trimming whitespace, case-sensitive.
    encoding : text encoding of a CSV/TSV file (e.g. ``"latin-1"``); default UTF-8, or what a
        byte-order mark says (UTF-16/32).
    """
    path = Path(path)
    check_policy("missing", missing)
    check_policy("infinite", infinite)
    options = read_options(
        path,
        separator=separator,
        decimal=decimal,
        missing_markers=missing_markers,
        encoding=encoding,
    )
    cols = list(dict.fromkeys([column] + [c for c in (weights, censor) if c is not None]))
    got, n_read = read_numbers(path, cols, options, flags=[censor] if censor else [])
    values = got[column]
    keep: np.ndarray | None = None  # None: every row kept
    dropped: dict[str, int] = {}
    where = path.name

    if not _all_finite(values):
        from samplewright.intake.cells import policy_error

        nan = np.isnan(values)
        if nan.any():
            if missing == "error":
                raise policy_error("missing", column, where, nan)
            dropped["missing"] = int(nan.sum())
            keep = ~nan
        del nan
        inf = np.isinf(values)
        if inf.any():
            if infinite == "error":
                raise policy_error("infinite", column, where, inf)
            dropped["infinite"] = int(inf.sum())
            keep = ~inf if keep is None else keep & ~inf
        del inf

    w = None
    if weights is not None:
        w = got[weights]
        kept = np.ones(w.size, dtype=bool) if keep is None else keep
        bad = ~np.isfinite(w) & kept
        if bad.any():
            from samplewright.intake.cells import count_noun, first_row

            raise InputDataError(
                f"weight column {weights!r} in {where} has "
                f"{count_noun(int(bad.sum()), 'missing or infinite weight')} "
                f"(first at row {first_row(bad)})"
            )
        nonpos = (w <= 0) & kept
        if nonpos.any():
            from samplewright.intake.cells import count_noun, first_row

            r = first_row(nonpos)
            raise InputDataError(
                f"weight column {weights!r} in {where} has "
                f"{count_noun(int(nonpos.sum()), 'weight')} <= 0 "
                f"(first at row {r}: {float(w[r - 1])!r}); weights must be > 0"
            )
        w = w if keep is None else w[keep]

    c = None
    if censor is not None:
        cv = got[censor]
        kept = np.ones(cv.size, dtype=bool) if keep is None else keep
        bad = ~np.isin(cv, (0.0, 1.0)) & kept
        if bad.any():
            from samplewright.intake.cells import first_row

            r = first_row(bad)
            v = float(cv[r - 1])
            shown = "missing" if np.isnan(v) else repr(np.format_float_positional(v, trim="-"))
            raise InputDataError(
                f"censoring column {censor!r} in {where} must hold 0/1 or true/false "
                f"(first bad value at row {r}: {shown})"
            )
        c = (cv if keep is None else cv[keep]) == 1.0

    if keep is not None:
        values = values[keep]
    if values.size == 0:
        empty = " (the file has no data rows)" if n_read == 0 else ""
        raise InputDataError(f"column {column!r} in {where}: no rows left to use{empty}")
    if values.size < min_rows:
        raise InputDataError(
            f"column {column!r} in {where}: {values.size} usable rows, at least {min_rows} needed"
        )
    return ColumnData(
        values=_frozen(values),
        weights=None if w is None else _frozen(w),
        censored=None if c is None else _frozen(c),
        source=str(path),
        column=column,
        weight_column=weights,
        censor_column=censor,
        n_rows_read=n_read,
        dropped=dropped,
    )
