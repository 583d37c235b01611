"""Named statistics for bootstrap intervals and Monte Carlo errors, computed over batches.

Every named statistic is a functional of the (weighted) empirical distribution ``F_n`` of the
values, so integer weights give exactly the estimate of the same rows repeated:

===================  ================================================================
name                 value
===================  ================================================================
``mean``             the (weighted) mean
``std``              the plug-in standard deviation, divisor ``n`` (numpy's default
                     ``ddof=0``); multiply by ``sqrt(n / (n - 1))`` for the sample one
``quantile:<p>``     ``F_n^-1(p)``, the smallest value ``x`` with ``F_n(x) >= p``, for
                     ``0 <= p <= 1`` (numpy's ``method="inverted_cdf"``)
``tail_mean:<p>``    expected shortfall ``1/(1-p) * integral_p^1 F_n^-1(u) du`` for
                     ``0 <= p < 1``: the mean of the values at or beyond the p-quantile,
                     the value at the quantile counted with the fraction of it that lies
                     beyond ``p`` (``tail_mean:0`` is the mean)
``exceedance:<v>``   the (weighted) share of values strictly greater than ``v``
===================  ================================================================

Unweighted statistics are computed along the last axis of a ``(batch, n)`` array at once (order
statistics through ``np.partition``, never a Python loop). Weights are frequency weights (a row
of weight 3 is three observations): :meth:`NamedStatistic.weighted` evaluates a statistic on
rows of counts (a ``(batch, n)`` array of how often each value was drawn, or the weights
themselves), which is what a resample of weighted data is; on whole-number counts it equals the
unweighted statistic of the values repeated that often. Cumulative weights are compared with
``p`` up to a relative ``1e-11``, so a level that the weights reach exactly (``0.3`` with ten
weights of ``0.1``) counts as reached.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from samplewright.core.errors import MethodError

__all__ = [
    "STATISTICS",
    "NamedStatistic",
    "StatisticName",
    "evaluate",
    "order_index",
    "parse_statistic",
]

StatisticName = Literal["mean", "std", "quantile", "tail_mean", "exceedance"]
STATISTICS: tuple[StatisticName, ...] = ("mean", "std", "quantile", "tail_mean", "exceedance")
_PARAMETRISED = ("quantile", "tail_mean", "exceedance")
_CUM_TOL = 1e-11


@dataclass(frozen=True)
class NamedStatistic:
    """A parsed statistic name; call it like ``f(sample, axis=-1)`` on a batch of samples.

    Attributes
    ----------
    name : str
        One of ``STATISTICS``.
    param : float or None
        The level ``p`` of ``quantile``/``tail_mean``, the threshold of ``exceedance``.
    text : str
        The name as written, e.g. ``"quantile:0.99"``.
    """

    name: StatisticName
    param: float | None
    text: str

    @property
    def parameter(self) -> float:
        """``param`` of a parametrised statistic (a MethodError for ``mean`` and ``std``)."""
        if self.param is None:
            raise MethodError(f"statistic: {self.text!r} takes no parameter")
        return self.param

    def __call__(self, sample: Any, axis: int = -1) -> np.ndarray:
        """The statistic of each unweighted sample along ``axis``, vectorised."""
        x = np.moveaxis(np.asarray(sample, dtype=np.float64), axis, -1)
        n = x.shape[-1]
        if self.name == "mean":
            return np.asarray(x.mean(axis=-1))
        if self.name == "std":
            return np.asarray(x.std(axis=-1))
        if self.name == "exceedance":
            return np.count_nonzero(x > self.parameter, axis=-1) / n
        j = order_index(n, self.parameter)
        part = np.partition(x, j, axis=-1)
        if self.name == "quantile":
            return np.asarray(part[..., j])
        beyond = part[..., j + 1 :].sum(axis=-1)
        return np.asarray(
            ((j + 1 - n * self.parameter) * part[..., j] + beyond) / (n * (1 - self.parameter))
        )

    def estimate(self, values: np.ndarray, weights: np.ndarray | None = None) -> float:
        """The statistic of one sample, with frequency weights (any positive scale) when given."""
        if weights is None:
            return float(self(values))
        return float(self.weighted(values, np.asarray(weights, dtype=np.float64)[None, :])[0])

    def weighted(self, values: np.ndarray, counts: np.ndarray) -> np.ndarray:
        """The statistic of each row of ``counts``, frequency weights of ``values``, vectorised.

        ``counts`` has shape ``(batch, n)`` (non-negative, each row with a positive sum): how
        often each value was drawn in each resample, or weights. Values in ascending order
        save a sort (it is checked in O(n)).

        >>> s = parse_statistic("quantile:0.5")
        >>> s.weighted(np.array([1.0, 2.0, 3.0]), np.array([[3, 0, 1], [0, 1, 3]])).tolist()
        [1.0, 3.0]
        """
        x = np.asarray(values, dtype=np.float64)
        c = np.asarray(counts, dtype=np.float64)
        if x.size > 1 and not np.all(x[:-1] <= x[1:]):
            order = np.argsort(x, kind="stable")
            x, c = x[order], c[:, order]
        total = c.sum(axis=-1)
        if self.name == "mean":
            return (c @ x) / total
        if self.name == "std":
            d = x - ((c @ x) / total)[:, None]
            d *= d
            return np.sqrt(np.einsum("ij,ij->i", c, d) / total)
        if self.name == "exceedance":
            return c[:, np.searchsorted(x, self.parameter, side="right") :].sum(axis=-1) / total
        p = self.parameter
        cum = np.cumsum(c, axis=-1)
        j = np.count_nonzero(cum < ((p - _CUM_TOL) * total)[:, None], axis=-1)
        np.minimum(j, x.size - 1, out=j)
        if self.name == "quantile":
            return x[j]
        inside = np.maximum(cum[np.arange(c.shape[0]), j] - p * total, 0.0)
        beyond = np.where(np.arange(x.size) > j[:, None], c * x, 0.0).sum(axis=-1)
        return (inside * x[j] + beyond) / (total * (1 - p))

    def evaluate_inplace(self, sample: np.ndarray) -> np.ndarray:
        """The statistic of each row of a C-contiguous ``(batch, n)`` float64 array that may be
        overwritten (reordered or transformed): the same numbers as calling the statistic,
        without its full-size temporary copies."""
        n = sample.shape[-1]
        if self.name == "std":
            # numpy's own std, step by step, in place: the same rounding
            mean = np.add.reduce(sample, axis=-1, keepdims=True)
            mean /= n
            sample -= mean
            sample *= sample
            return np.sqrt(np.add.reduce(sample, axis=-1) / n)
        if self.name in ("quantile", "tail_mean"):
            j = order_index(n, self.parameter)
            sample.partition(j, axis=-1)
            if self.name == "quantile":
                return sample[..., j].copy()
            beyond = sample[..., j + 1 :].sum(axis=-1)
            p = self.parameter
            return np.asarray(((j + 1 - n * p) * sample[..., j] + beyond) / (n * (1 - p)))
        return self(sample)

    def influence(self, values: np.ndarray, weights: np.ndarray) -> np.ndarray:
        """Empirical influence values under the weighted empirical distribution, up to scale.

        Mean ``x - mu``; std ``(x - mu)**2 - sigma**2``; exceedance ``1{x > v} - P``; quantile
        ``p - 1{x <= q}``; tail mean ``(x - q)_+``. A positive factor (``1 / (2 sigma)``,
        ``1 / f(q)``, ``1 / (1 - p)``) is left out: the BCa acceleration does not depend on it.
        The values are centred to weighted mean 0.
        """
        x, w = values, weights
        if self.name == "mean":
            u = x.copy()
        elif self.name == "std":
            u = (x - w @ x) ** 2
        elif self.name == "exceedance":
            u = (x > self.parameter).astype(np.float64)
        else:
            ys, _, _, j = self._weighted_order(x, w)
            q = ys[j]
            u = -(x <= q).astype(np.float64) if self.name == "quantile" else np.maximum(x - q, 0)
        return u - w @ u

    def _weighted_order(
        self, x: np.ndarray, w: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
        """Sorted values, their weights, cumulative weights and the index of the cell of ``p``."""
        order = np.argsort(x, kind="stable")
        ys, ws = x[order], w[order]
        cum = np.cumsum(ws)
        j = int(np.searchsorted(cum, self.parameter - _CUM_TOL, side="left"))
        return ys, ws, cum, min(j, ys.size - 1)


def order_index(n: int, p: float) -> int:
    """0-based index of ``F_n^-1(p)`` among ``n`` sorted values: ``ceil(n p) - 1``, at least 0.

    >>> order_index(10, 0.5), order_index(10, 0.51), order_index(10, 0.0), order_index(10, 1.0)
    (4, 5, 0, 9)
    """
    return min(max(math.ceil(n * p) - 1, 0), n - 1)


def parse_statistic(text: Any) -> NamedStatistic:
    """Parse ``"mean"``, ``"std"``, ``"quantile:<p>"``, ``"tail_mean:<p>"``, ``"exceedance:<v>"``.

    >>> parse_statistic("quantile:0.99")
    NamedStatistic(name='quantile', param=0.99, text='quantile:0.99')
    """
    if not isinstance(text, str):
        raise MethodError(
            f"statistic: expected a callable or a name ({_known()}), found {type(text).__name__}"
        )
    name, sep, arg = text.strip().partition(":")
    if name not in STATISTICS:
        raise MethodError(f"statistic: expected a callable or a name ({_known()}), found {text!r}")
    if name not in _PARAMETRISED:
        if sep:
            raise MethodError(f"statistic: {name!r} takes no parameter, found {text!r}")
        return NamedStatistic(name, None, text)  # type: ignore[arg-type]
    try:
        value = float(arg)
    except ValueError:
        raise MethodError(
            f"statistic: {name!r} needs a number after ':' (e.g. '{name}:0.99'), found {text!r}"
        ) from None
    if not math.isfinite(value):
        raise MethodError(f"statistic: expected a finite parameter, found {text!r}")
    if name == "quantile" and not 0.0 <= value <= 1.0:
        raise MethodError(f"statistic: quantile level must be in [0, 1], found {text!r}")
    if name == "tail_mean" and not 0.0 <= value < 1.0:
        raise MethodError(f"statistic: tail_mean level must be in [0, 1), found {text!r}")
    return NamedStatistic(name, value, text)  # type: ignore[arg-type]


def _known() -> str:
    return "mean, std, quantile:<p>, tail_mean:<p>, exceedance:<value>"


def evaluate(statistic: Any, sample: np.ndarray) -> np.ndarray:
    """``statistic(sample, axis=-1)`` for a ``(batch, n)`` sample, checked to give ``(batch,)``."""
    out = np.asarray(statistic(sample, axis=-1), dtype=np.float64)
    if out.shape != sample.shape[:-1]:
        raise MethodError(
            f"statistic: expected one value per resample, shape {sample.shape[:-1]},"
            f" found shape {out.shape} (is it vectorised with an 'axis' argument?)"
        )
    return out
