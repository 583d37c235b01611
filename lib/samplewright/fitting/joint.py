"""Fitting joint inputs: row-aligned columns to one joint sampler, marginals and coupling.

:func:`fit_joint` takes a table (a mapping of column to values, a pandas DataFrame, a 2-D array
with ``columns=``, or a :class:`~samplewright.intake.tables.TableResult` read from a file), keeps
the rows complete in every chosen column, fits each column's marginal with
:func:`samplewright.fitting.api.fit` (any method, options as in ``fit``) or takes a sampler given
for it (e.g. user-drawn knots), and estimates the coupling:

``"rows"``
    Nothing to estimate: the complete rows are the sampler.
``"rank_correlation"``
    The rows' Spearman matrix, or one the user gives (expert judgement). Draws reorder the
    marginals by the Iman-Conover method (Iman & Conover 1982) aimed at that matrix; a matrix
    that is not positive semi-definite, or that the method's normal scores cannot reach, is
    repaired to the nearest one that is, with a :class:`UserWarning` stating the Frobenius
    distance it moved (in rank correlation).
``"gaussian_copula"``
    Correlation from Kendall's tau (``sin(pi tau / 2)``) or from normal scores, see
    :func:`~samplewright.fitting.copulas.fit_gaussian_copula`; or, when the user gives a Spearman
    matrix, its Gaussian-copula equivalent ``2 sin(pi rho / 6)`` (Pearson 1907).
``"t_copula"``
    Kendall correlation and degrees of freedom by maximum pseudo-likelihood
    (:func:`~samplewright.fitting.copulas.fit_t_copula`).

Missing values: NaN or None in a chosen column drops the whole row (counted in the sampler's
diagnostics, ``rows.dropped.missing``); an infinite value or a non-number is an error naming the
column and the row.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from samplewright.core.errors import InputDataError, MethodError, SamplewrightError
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.distributions.base import Sampler, json_float
from samplewright.distributions.joint import COUPLINGS, Coupling, JointSampler, spearman_matrix
from samplewright.fitting.api import fit
from samplewright.fitting.copulas import (
    CORRELATION_METHODS,
    CorrelationMethod,
    fit_gaussian_copula,
    fit_t_copula,
)
from samplewright.fitting.coupling import _check_correlation, _spearman_to_scores
from samplewright.intake.tables import TableResult

__all__ = ["MarginalSpec", "fit_joint"]

# a method name, {"method": name, **options}, or a sampler used as given
MarginalSpec = str | Mapping[str, Any] | Sampler
_N_CHECK = 4096  # draws that measure the achieved rank correlation when rng is given


def fit_joint(
    table: Any,
    marginals: Mapping[str, MarginalSpec] | None = None,
    *,
    coupling: Coupling = "rank_correlation",
    rank_correlation: Any = None,
    columns: Sequence[str] | None = None,
    correlation_method: CorrelationMethod = "kendall",
    rng: SeedLike = None,
) -> JointSampler:
    """Fit a joint sampler to row-aligned columns: marginals plus a coupling.

    Parameters
    ----------
    table : mapping, pandas.DataFrame, 2-D array or TableResult
        The data, one column per input, rows observed together.
    marginals : mapping of column -> method, options or sampler, optional
        The chosen columns, in order, each with a method name (``"gamma"``), a dict
        ``{"method": ..., **options}`` as :func:`~samplewright.fitting.api.fit` takes, or a
        one-dimensional sampler used as given. Default: every column, ``"empirical"``. With
        ``coupling="rows"`` every marginal is the column's empirical distribution, so only
        ``"empirical"`` is accepted.
    coupling : {"rows", "rank_correlation", "gaussian_copula", "t_copula"}
        How the columns move together (see the module notes).
    rank_correlation : array_like, shape (d, d), optional
        A Spearman matrix to use instead of the data's (``"rank_correlation"`` and
        ``"gaussian_copula"`` only), in the order of the chosen columns.
    columns : sequence of str, optional
        Names of the columns of a 2-D array ``table`` (required then, refused otherwise).
    correlation_method : {"kendall", "normal_scores"}
        How a Gaussian copula's correlation is estimated.
    rng : None, int, SeedSequence or Generator
        Seed of 4096 check draws whose Spearman matrix is recorded in the diagnostics
        (``achieved``), beside the target; None skips the check.

    Returns
    -------
    JointSampler
        Its ``diagnostics`` hold ``rows`` (used, read, dropped by reason), ``coupling`` (how it
        was estimated, the repair distance, the copula's pseudo-log-likelihood), ``marginals``
        (each fit's own diagnostics) and, with ``rng``, ``achieved``.

    Examples
    --------
    >>> rng = np.random.default_rng(3)
    >>> hours = rng.gamma(2.0, 3.0, 400)
    >>> cost = 40.0 * hours + rng.normal(0.0, 30.0, 400)
    >>> s = fit_joint({"hours": hours, "cost": cost}, {"hours": "gamma", "cost": "empirical"})
    >>> s.columns, round(float(s.rank_correlation[0, 1]), 2), s.draw(5, rng=1).shape
    (('hours', 'cost'), 0.98, (5, 2))
    """
    if coupling not in COUPLINGS:
        raise MethodError(f"coupling: expected one of {', '.join(COUPLINGS)}, found {coupling!r}")
    if correlation_method not in CORRELATION_METHODS:
        raise MethodError(
            f"correlation_method: expected one of {', '.join(CORRELATION_METHODS)}, "
            f"found {correlation_method!r}"
        )
    raw, n_read, dropped = _table_columns(table, columns)
    specs = _marginal_specs(marginals, list(raw))
    names = list(specs)
    data, missing = _complete_rows(raw, names)
    if missing:
        dropped["missing"] = dropped.get("missing", 0) + missing
    rows_section = {"n_used": int(data.shape[0]), "n_read": n_read, "dropped": dropped}
    if coupling == "rows":
        odd = {c: s for c, s in specs.items() if not _is_empirical(s)}
        if odd:
            c = next(iter(odd))
            raise MethodError(
                f"marginals: coupling 'rows' resamples whole rows, so each column's marginal is "
                f"its empirical distribution; found {odd[c]!r} for column {c!r}"
            )
        if rank_correlation is not None:
            raise MethodError("rank_correlation: coupling 'rows' keeps the rows' own dependence")
        if data.shape[0] == 0:
            raise InputDataError(f"columns {names}: no complete rows left to use")
        return JointSampler(names, coupling="rows", rows=data, diagnostics={"rows": rows_section})
    fitted = [_fit_marginal(c, specs[c], data[:, j]) for j, c in enumerate(names)]
    if rank_correlation is None:
        _check_rankable(data, names)
    params, section = _coupling(data, names, coupling, rank_correlation, correlation_method)
    diagnostics: dict[str, Any] = {"rows": rows_section, "coupling": section}
    own = {c: m.diagnostics for c, m in zip(names, fitted, strict=True) if m.diagnostics}
    if own:
        diagnostics["marginals"] = own
    sampler = JointSampler(
        names, coupling=coupling, marginals=fitted, diagnostics=diagnostics, **params
    )
    if rng is not None:
        sampler.diagnostics["achieved"] = _achieved(sampler, rng)
    return sampler


def _coupling(
    data: np.ndarray,
    names: list[str],
    coupling: Coupling,
    given: Any,
    correlation_method: CorrelationMethod,
) -> tuple[dict[str, Any], dict[str, Any]]:
    """The sampler's coupling parameters and the diagnostics section saying how they came."""
    d = len(names)
    section: dict[str, Any] = {"estimated_from": "data" if given is None else "given"}
    if coupling == "rank_correlation" or (coupling == "gaussian_copula" and given is not None):
        start = spearman_matrix(data) if given is None else given
        checked = _check_correlation(start, "rank_correlation", size=d)
        scores = _spearman_to_scores(checked)  # warns with the distance when it repairs
        plain = 2.0 * np.sin(np.pi * checked / 6.0)
        np.fill_diagonal(plain, 1.0)
        if np.array_equal(scores, plain):
            target = checked
        else:  # the rank correlation the repaired scores reach (Pearson 1907, inverted)
            target = 6.0 / np.pi * np.arcsin(scores / 2.0)
            np.fill_diagonal(target, 1.0)
        section["repair_distance"] = float(np.linalg.norm(target - checked))
        if coupling == "rank_correlation":
            return {"rank_correlation": target}, section
        return {"correlation": scores}, section
    if given is not None:
        raise MethodError(
            "rank_correlation: a given matrix is used by couplings 'rank_correlation' and "
            "'gaussian_copula'; 't_copula' estimates its correlation and df together from data"
        )
    if coupling == "gaussian_copula":
        res = fit_gaussian_copula(data, method=correlation_method)
        params: dict[str, Any] = {"correlation": res.correlation}
    else:
        res = fit_t_copula(data)
        params = {"correlation": res.correlation, "df": res.df}
    section |= {
        "correlation_method": res.method,
        "repair_distance": res.repair_distance,
        "log_likelihood": json_float(res.log_likelihood),
    }
    return params, section


def _achieved(sampler: JointSampler, rng: SeedLike) -> dict[str, Any]:
    """Spearman matrix of check draws, and its largest gap from the one aimed at."""
    got = spearman_matrix(sampler.draw(_N_CHECK, rng=make_rng(rng)))
    out: dict[str, Any] = {"n_draws": _N_CHECK, "rank_correlation": got.tolist()}
    aim = sampler.rank_correlation
    if aim is not None:
        out["largest_gap"] = float(np.nanmax(np.abs(got - aim)))
    return out


def _is_empirical(spec: MarginalSpec) -> bool:
    """Whether a marginal spec asks for the plain empirical distribution."""
    if isinstance(spec, Mapping):
        return dict(spec) == {"method": "empirical"}
    return isinstance(spec, str) and spec == "empirical"


def _fit_marginal(name: str, spec: MarginalSpec, values: np.ndarray) -> Sampler:
    if isinstance(spec, Sampler):
        return spec
    if isinstance(spec, str):
        method, options = spec, {}
    else:
        options = dict(spec)
        method = options.pop("method", None)
        if not isinstance(method, str):
            raise MethodError(
                f"marginals: the options of column {name!r} need a 'method' name, found {method!r}"
            )
    try:
        return fit(values, method, **options)
    except SamplewrightError as exc:
        exc.add_note(f"while fitting the marginal of column {name!r}")
        raise


def _marginal_specs(
    marginals: Mapping[str, MarginalSpec] | None, available: list[str]
) -> dict[str, MarginalSpec]:
    """The chosen columns with their specs, checked against the table's columns."""
    if marginals is None:
        return dict.fromkeys(available, "empirical")
    if not isinstance(marginals, Mapping):
        raise MethodError(
            f"marginals: expected a mapping of column -> method, found {type(marginals).__name__}"
        )
    for c, spec in marginals.items():
        if c not in available:
            raise InputDataError(f"marginals: no column {c!r} in the table; columns: {available}")
        if not isinstance(spec, str | Mapping | Sampler):
            raise MethodError(
                f"marginals: expected a method name, an options dict or a sampler for column "
                f"{c!r}, found {type(spec).__name__}"
            )
    return dict(marginals)


def _table_columns(
    table: Any, columns: Sequence[str] | None
) -> tuple[dict[str, Any], int | None, dict[str, int]]:
    """Column name -> raw values, the rows read from a file (or None), rows dropped there."""
    if isinstance(table, np.ndarray):
        if table.ndim != 2:
            raise InputDataError(f"table: expected a 2-D array, found shape {table.shape}")
        if columns is None or isinstance(columns, str) or len(columns) != table.shape[1]:
            raise MethodError(
                f"columns: a 2-D array table needs one name per column ({table.shape[1]}), "
                f"found {columns!r}"
            )
        names = [str(c) for c in columns]
        if len(set(names)) != len(names):
            raise MethodError(f"columns: each name once, found {names}")
        return {c: table[:, j] for j, c in enumerate(names)}, None, {}
    if columns is not None:
        raise MethodError(
            "columns: names only the columns of a 2-D array table; choose columns "
            "by the keys of marginals"
        )
    if isinstance(table, TableResult):
        raw = {c: table.values[:, j] for j, c in enumerate(table.columns)}
        return raw, table.n_rows_read, dict(table.dropped)
    if hasattr(table, "columns") and hasattr(table, "to_numpy"):  # a pandas DataFrame
        names = [str(c) for c in table.columns]
        if len(set(names)) != len(names):
            raise InputDataError(f"table: column names repeat: {names}")
        return {str(c): table[c] for c in table.columns}, None, {}
    if isinstance(table, Mapping):
        bad = [c for c in table if not isinstance(c, str)]
        if bad:
            raise InputDataError(f"table: expected column names as strings, found {bad[0]!r}")
        return dict(table), None, {}
    raise InputDataError(
        "table: expected a mapping of column -> values, a pandas DataFrame, a 2-D array with "
        f"columns=, or a TableResult; found {type(table).__name__}"
    )


def _complete_rows(raw: Mapping[str, Any], names: list[str]) -> tuple[np.ndarray, int]:
    """The chosen columns as an (n, d) array of the rows complete in all; rows dropped."""
    cols = [_floats(c, raw[c]) for c in names]
    lengths = {c: v.size for c, v in zip(names, cols, strict=True)}
    if len(set(lengths.values())) > 1:
        raise InputDataError(f"table: columns must have the same length, found {lengths}")
    data = np.column_stack(cols) if cols else np.empty((0, 0))
    for j, c in enumerate(names):
        inf = np.isinf(data[:, j])
        if inf.any():
            row = int(np.flatnonzero(inf)[0])
            raise InputDataError(
                f"column {c!r}: expected finite values or missing ones, found {data[row, j]} "
                f"at row {row}"
            )
    complete = ~np.isnan(data).any(axis=1)
    return data[complete], int(np.sum(~complete))


def _floats(name: str, values: Any) -> np.ndarray:
    """One column as 1-d float64, NaN where missing (None, NaN, pandas NA)."""
    if hasattr(values, "to_numpy"):  # a pandas Series: its NA becomes NaN
        try:
            values = values.to_numpy(dtype=np.float64, na_value=np.nan)
        except (TypeError, ValueError):
            values = values.to_numpy(dtype=object)
    try:
        out = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        cells = np.asarray(values, dtype=object).ravel()
        for row, cell in enumerate(cells):
            try:
                float(cell if cell is not None else math.nan)
            except (TypeError, ValueError):
                raise InputDataError(
                    f"column {name!r}: expected numbers, found {cell!r} at row {row}"
                ) from None
        raise InputDataError(f"column {name!r}: expected numbers") from None
    if out.ndim != 1:
        raise InputDataError(
            f"column {name!r}: expected one value per row, found shape {out.shape}"
        )
    return out


def _check_rankable(data: np.ndarray, names: list[str]) -> None:
    """Enough complete rows, and no constant column, to estimate a dependence from ranks."""
    if data.shape[0] < 3:
        raise InputDataError(
            f"columns {names}: {data.shape[0]} complete rows, at least 3 needed to estimate "
            "their dependence"
        )
    constant = np.all(data == data[0], axis=0)
    if constant.any():
        c = names[int(np.argmax(constant))]
        raise InputDataError(
            f"column {c!r}: constant ({data[0, int(np.argmax(constant))]}), so "
            "it has no ranks to estimate a dependence from"
        )
