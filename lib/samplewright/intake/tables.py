"""Several row-aligned numeric columns of one file (joint inputs), cleaned row by row.

The same reading options and missing-value rule as :func:`samplewright.intake.columns.read_column`
(see :mod:`samplewright.intake.options`); a row is kept or dropped as a whole, so the columns stay
aligned: a row with a missing value in any selected column counts as ``"missing"``, a row with
no missing value but an infinite one as ``"infinite"``.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from samplewright.core.errors import InputDataError
from samplewright.intake.options import Policy, ReadOptions, check_policy, file_kind, read_options

__all__ = ["TableResult", "read_numbers", "read_table"]


def read_numbers(
    path: Path, columns: list[str], options: ReadOptions, flags: Iterable[str] = ()
) -> tuple[dict[str, np.ndarray], int]:
    """float64 values (NaN where missing) of the named columns of a CSV/TSV or Parquet file,
    with the number of data rows read. Columns named in ``flags`` also accept true/false."""
    if file_kind(path) == "csv":
        from samplewright.intake.delimited import read_csv_numbers

        return read_csv_numbers(path, columns, options, flags)
    from samplewright.intake.parquet import read_parquet_numbers

    return read_parquet_numbers(path, columns, options, flags)


@dataclass(frozen=True)
class TableResult:
    """Row-aligned numeric columns read from one file.

    Attributes
    ----------
    columns : the column names, in the order asked for.
    values : float64 array of shape (n, len(columns)), one row per kept data row (read-only).
    source : the file read.
    n_rows_read : data rows in the file.
    dropped : rows dropped, by reason (``"missing"``, ``"infinite"``); empty if none.
    """

    columns: tuple[str, ...]
    values: np.ndarray
    source: str
    n_rows_read: int
    dropped: dict[str, int] = field(default_factory=dict)

    @property
    def n(self) -> int:
        """Rows kept."""
        return int(self.values.shape[0])

    @property
    def n_dropped(self) -> int:
        """Rows dropped, all reasons together."""
        return sum(self.dropped.values())

    def column(self, name: str) -> np.ndarray:
        """The kept values of one column (a read-only view)."""
        if name not in self.columns:
            raise InputDataError(f"column {name!r} was not read; columns: {list(self.columns)}")
        return self.values[:, self.columns.index(name)]


def read_table(
    path: str | Path,
    columns: Sequence[str],
    *,
    missing: Policy = "error",
    infinite: Policy = "error",
    min_rows: int = 1,
    separator: str | None = None,
    decimal: str = ".",
    missing_markers: Iterable[str] = (),
    encoding: str | None = None,
) -> TableResult:
    """Read several numeric columns of one file, dropping (or refusing) whole rows.

    Parameters
    ----------
    path : data file (CSV, TSV or Parquet).
    columns : names of the columns, each at most once.
    missing, infinite : ``"error"`` (default) or ``"drop"`` rows holding a missing / infinite
        value in any of the columns.
    min_rows : fewest rows that must remain.
    separator, decimal, missing_markers, encoding : reading options, as for
        :func:`samplewright.intake.columns.read_column`.
    """
    path = Path(path)
    check_policy("missing", missing)
    check_policy("infinite", infinite)
    names = _check_columns(columns)
    options = read_options(
        path,
        separator=separator,
        decimal=decimal,
        missing_markers=missing_markers,
        encoding=encoding,
    )
    got, n_read = read_numbers(path, names, options)
    table = np.empty((n_read, len(names)), dtype=np.float64)
    for j, name in enumerate(names):
        table[:, j] = got.pop(name)
    nan = np.isnan(table)
    rows_missing = nan.any(axis=1)
    keep = ~rows_missing
    dropped: dict[str, int] = {}
    if rows_missing.any():
        if missing == "error":
            j = int(np.flatnonzero(nan.any(axis=0))[0])
            from samplewright.intake.cells import policy_error  # error path only (pyarrow.compute)

            raise policy_error("missing", names[j], path.name, nan[:, j])
        dropped["missing"] = int(rows_missing.sum())
    inf = np.isinf(table)
    rows_inf = inf.any(axis=1) & keep
    if rows_inf.any():
        if infinite == "error":
            j = int(np.flatnonzero(inf.any(axis=0))[0])
            from samplewright.intake.cells import policy_error

            raise policy_error("infinite", names[j], path.name, inf[:, j])
        dropped["infinite"] = int(rows_inf.sum())
        keep &= ~rows_inf
    if dropped:
        table = table[keep]
    if table.shape[0] == 0:
        raise InputDataError(f"columns {names} in {path.name}: no rows left to use")
    if table.shape[0] < min_rows:
        raise InputDataError(
            f"columns {names} in {path.name}: {table.shape[0]} usable rows, "
            f"at least {min_rows} needed"
        )
    table.flags.writeable = False
    return TableResult(
        columns=tuple(names),
        values=table,
        source=str(path),
        n_rows_read=n_read,
        dropped=dropped,
    )


def _check_columns(columns: Sequence[str]) -> list[str]:
    if isinstance(columns, str) or not all(isinstance(c, str) for c in columns):
        raise InputDataError(f"columns: expected a list of column names, found {columns!r}")
    names = list(columns)
    if not names:
        raise InputDataError("columns: expected at least one column name, found none")
    twice = sorted({c for c in names if names.count(c) > 1})
    if twice:
        raise InputDataError(f"columns: {twice[0]!r} is listed more than once")
    return names
