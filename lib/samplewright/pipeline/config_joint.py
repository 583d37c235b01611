"""The ``joint`` entries of a workflow configuration: several columns fitted as one sampler.

An entry names one data file, its columns in draw order, each column's method, and how the
columns move together (``coupling``)::

    joint:
      repair_job:
        path: data/repairs.csv
        columns: {hours: spliced, cost_per_crew_hour: {method: gamma, loc: free}}
        coupling: rank_correlation           # rows | rank_correlation | gaussian_copula | t_copula
        rank_correlation: [[1, 0.6], [0.6, 1]]   # optional, in the order of columns

:func:`check_joint` checks what the JSON Schema cannot (the file exists, methods and options are
the catalog's, ``rows`` takes only empirical marginals, a given matrix is d x d, symmetric with a
unit diagonal and entries in [-1, 1], and is offered only where it is used) and normalises the
columns into :func:`marginal_specs`. Errors are one-line :class:`ConfigError` naming the key.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from samplewright.core.errors import ConfigError
from samplewright.pipeline.config import MethodSpec, check_method

__all__ = ["GIVEN_MATRIX_COUPLINGS", "check_joint", "marginal_specs"]

# couplings that take an analyst's rank-correlation matrix (the others estimate their own)
GIVEN_MATRIX_COUPLINGS = ("rank_correlation", "gaussian_copula")
_MATRIX_TOL = 1e-9


def marginal_specs(name: str, entry: Mapping[str, Any]) -> list[tuple[str, MethodSpec]]:
    """(column, method spec) of joint entry ``name``, in the order of its ``columns``.

    A column's value is a method name or ``{method: m, <option>: value, ...}``.

    >>> [(c, s.method, s.options) for c, s in marginal_specs("j", {"columns": {
    ...     "a": "gamma", "b": {"method": "lognormal", "loc": 0}}})]
    [('a', 'gamma', {}), ('b', 'lognormal', {'loc': 0})]
    """
    out = []
    for column, item in entry["columns"].items():
        where = f"samplewright.joint.{name}.columns.{column}"
        if isinstance(item, str):
            method, options = item, {}
        else:
            method = item["method"]
            options = {k: v for k, v in item.items() if k != "method"}
        out.append((column, check_method(where, method, options)))
    return out


def check_joint(name: str, entry: dict[str, Any]) -> None:
    """Check one joint entry (defaults already filled from the schema)."""
    where = f"samplewright.joint.{name}"
    if not Path(entry["path"]).is_file():
        raise ConfigError(f"{where}.path: file {entry['path']!r} not found")
    specs = marginal_specs(name, entry)
    coupling = entry["coupling"]
    if coupling == "rows":
        odd = next((c for c, s in specs if s.method != "empirical" or s.options), None)
        if odd is not None:
            raise ConfigError(
                f"{where}.columns.{odd}: coupling 'rows' resamples whole rows, so every "
                "column's method is 'empirical'"
            )
    matrix = entry.get("rank_correlation")
    if matrix is None:
        return
    if coupling not in GIVEN_MATRIX_COUPLINGS:
        raise ConfigError(
            f"{where}.rank_correlation: a given matrix is used by couplings "
            f"{' and '.join(map(repr, GIVEN_MATRIX_COUPLINGS))}, not {coupling!r}"
        )
    _check_matrix(f"{where}.rank_correlation", matrix, len(specs))


def _check_matrix(where: str, matrix: list[list[float]], d: int) -> None:
    """d x d, symmetric, unit diagonal, entries in [-1, 1] (positive semi-definiteness is the
    fitter's: it repairs a matrix that is not, with a warning that says how far it moved)."""
    if len(matrix) != d or any(len(row) != d for row in matrix):
        shape = f"{len(matrix)} rows of lengths {sorted({len(r) for r in matrix})}"
        raise ConfigError(
            f"{where}: expected a {d} x {d} matrix (one row per column), found {shape}"
        )
    for i in range(d):
        if abs(matrix[i][i] - 1.0) > _MATRIX_TOL:
            raise ConfigError(
                f"{where}[{i}][{i}]: expected 1 on the diagonal, found {matrix[i][i]}"
            )
        for j in range(d):
            v = matrix[i][j]
            if not -1.0 <= v <= 1.0:
                raise ConfigError(f"{where}[{i}][{j}]: expected a value in [-1, 1], found {v}")
            if abs(v - matrix[j][i]) > _MATRIX_TOL:
                raise ConfigError(
                    f"{where}[{i}][{j}]: expected a symmetric matrix, found {v} and "
                    f"[{j}][{i}] = {matrix[j][i]}"
                )
