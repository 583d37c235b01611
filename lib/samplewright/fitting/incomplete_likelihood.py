"""One likelihood for incomplete data: truncation, censoring on either side, intervals, groups.

With ``f``, ``F``, ``S = 1 - F`` the density, CDF and survival function of a continuous family,
a row of an :class:`~samplewright.fitting.incomplete_sample.IncompleteSample` with weight ``w``
contributes

====================  ========================================
row                   log-likelihood term
====================  ========================================
exact ``x``           ``w log f(x)``
interval ``(l, u]``   ``w log(F(u) - F(l))``
right-censored        ``w log S(l)``
left-censored         ``w log F(u)``
truncated at ``t``    in addition ``- w log S(t)``
====================  ========================================

where a censored row's ``l`` is ``max(lower, truncation)``. Interval masses are computed from
``log F`` near the lower tail and from ``log S`` near the upper tail, as
``a + log(-expm1(b - a))`` with ``a >= b`` the two logs, so neither tail loses precision to
cancellation (``1 - 1e-17`` rounds to 1 in floating point; ``log S`` does not).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.fitting.incomplete_sample import IncompleteSample

__all__ = ["Fn", "RowLayout", "incomplete_loglik", "layout_loglik", "row_layout"]

Fn = Callable[[np.ndarray], Any]


def _log_diff(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``log(exp(a) - exp(b))`` for ``a >= b``; ``-inf`` where the difference is not positive."""
    with np.errstate(divide="ignore", invalid="ignore"):
        out = a + np.log(-np.expm1(b - a))
    return np.where((a > b) & (a > -np.inf), out, -np.inf)


def _log_mass(lc_lo: np.ndarray, lc_hi: np.ndarray, ls_lo: np.ndarray, ls_hi: np.ndarray) -> Any:
    """``log P(lo < X <= hi)`` from log F and log S at both ends, whichever tail keeps precision."""
    upper_tail = ls_lo < lc_hi  # S(lo) < F(hi): the interval sits in the upper tail
    return _log_diff(np.where(upper_tail, ls_lo, lc_hi), np.where(upper_tail, ls_hi, lc_lo))


@dataclass(frozen=True)
class RowLayout:
    """Distinct rows grouped by kind, with summed weights (built once per fit)."""

    x: np.ndarray  # exact values
    w_x: np.ndarray
    right: np.ndarray  # lower ends of right-censored rows
    w_right: np.ndarray
    left: np.ndarray  # upper ends of left-censored rows
    w_left: np.ndarray
    lo: np.ndarray  # interval rows
    hi: np.ndarray
    w_int: np.ndarray
    trunc: np.ndarray  # truncation points
    w_trunc: np.ndarray
    cdf_at: np.ndarray  # where log F is needed: left, lo, hi
    sf_at: np.ndarray  # where log S is needed: right, lo, hi, trunc


def _grouped(w: np.ndarray, *cols: np.ndarray) -> tuple[np.ndarray, ...]:
    """Distinct combinations of ``cols`` with their summed weights (weights last)."""
    if cols[0].size == 0:
        return (*cols, w)
    keys, inverse = np.unique(np.column_stack(cols), axis=0, return_inverse=True)
    total = np.bincount(inverse.ravel(), weights=w, minlength=keys.shape[0])
    return (*(keys[:, j] for j in range(len(cols))), total)


def row_layout(sample: IncompleteSample, floor: float = -np.inf) -> RowLayout:
    """Sort rows by kind; lower ends at or below ``floor`` count as left-censored."""
    lo, hi, t, w = sample.lower, sample.upper, sample.truncation, sample.weights
    exact = lo == hi
    eff = np.maximum(np.maximum(lo, t), floor)
    right = ~exact & (hi == np.inf)
    left = ~exact & ~right & (eff <= floor)
    inter = ~exact & ~right & ~left
    # a right-censored row at or below its truncation point (or the floor) contributes
    # log S(t) - log S(t) = 0: drop it, truncation term included
    void = right & (eff <= np.maximum(t, floor))
    right &= ~void
    trunc = (t > floor) & ~void
    x, w_x = _grouped(w[exact], lo[exact])
    r, w_r = _grouped(w[right], eff[right])
    u, w_u = _grouped(w[left], hi[left])
    a, b, w_i = _grouped(w[inter], eff[inter], hi[inter])
    tt, w_t = _grouped(w[trunc], t[trunc])
    cdf_at = np.concatenate([u, a, b])
    sf_at = np.concatenate([r, a, b, tt])
    return RowLayout(x, w_x, r, w_r, u, w_u, a, b, w_i, tt, w_t, cdf_at, sf_at)


def layout_loglik(lay: RowLayout, logpdf: Fn, logcdf: Fn, logsf: Fn) -> float:
    """Log-likelihood of grouped rows: one call each of ``logpdf``, ``logcdf`` and ``logsf``."""
    nl, ni, nr = lay.left.size, lay.lo.size, lay.right.size
    total = 0.0
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if lay.x.size:
            total += float(np.sum(lay.w_x * np.asarray(logpdf(lay.x), float)))
        lc = np.asarray(logcdf(lay.cdf_at), float) if lay.cdf_at.size else lay.cdf_at
        ls = np.asarray(logsf(lay.sf_at), float) if lay.sf_at.size else lay.sf_at
        total += float(np.sum(lay.w_left * lc[:nl]))
        total += float(np.sum(lay.w_right * ls[:nr]))
        if ni:
            lm = _log_mass(
                lc[nl : nl + ni], lc[nl + ni :], ls[nr : nr + ni], ls[nr + ni : nr + 2 * ni]
            )
            total += float(np.sum(lay.w_int * lm))
        lt = ls[nr + 2 * ni :]
        if lt.size and total > -np.inf:
            if np.any(lt == -np.inf):  # truncation point beyond the support
                return -np.inf
            total -= float(np.sum(lay.w_trunc * lt))
    return total


def incomplete_loglik(sample: IncompleteSample, logpdf: Fn, logcdf: Fn, logsf: Fn) -> float:
    """Log-likelihood of incomplete data under one fully specified continuous distribution.

    Parameters
    ----------
    sample : IncompleteSample
        The checked rows (:func:`incomplete_sample`).
    logpdf, logcdf, logsf : callable
        Vectorised log density, log CDF and log survival function of the distribution; they must
        return ``-inf`` (not NaN) outside the support and accept ``-inf``/``+inf``.

    Returns
    -------
    float
        ``sum(w * term)`` with the terms of the module docstring; ``-inf`` if some row has
        probability 0.

    Examples
    --------
    >>> from scipy import stats
    >>> from samplewright.fitting.incomplete_sample import incomplete_sample
    >>> s = incomplete_sample([1.0, 2.0], [1.0, np.inf])
    >>> d = stats.expon(scale=2.0)
    >>> round(incomplete_loglik(s, d.logpdf, d.logcdf, d.logsf), 6)  # log(e^-0.5/2) - 1
    -2.193147
    """
    return layout_loglik(row_layout(sample), logpdf, logcdf, logsf)
