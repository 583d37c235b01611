"""Incomplete observations as one checked table: exact, censored, interval and truncated rows.

Each row is what is known about one value ``X``:

==========================  ===============================  ============================
row                         ``lower``, ``upper``             known
==========================  ===============================  ============================
exact                       ``lower == upper == x``          ``X = x``
right-censored              ``lower = l``, ``upper = +inf``  ``X > l``
left-censored               ``lower = -inf``, ``upper = u``  ``X <= u``
interval-censored, grouped  ``lower = l < upper = u``        ``l < X <= u``
==========================  ===============================  ============================

For a family on the positive half-line a left-censored row may also be written with
``lower = 0`` (or the family's location): ``(0, u]`` holds the same mass as ``(-inf, u]``.

``truncation`` (one value per row, ``-inf`` for none) is a lower truncation point: the row was
only recorded because ``X > t`` (a deductible, a delayed study entry, a detection threshold).
Its probabilities are conditional on that: the likelihood divides by ``P(X > t)``. An interval
or left-censored row whose lower end lies below its truncation point is known to lie in
``(t, u]``: the likelihood and the nonparametric estimators use ``max(lower, truncation)`` as its
lower end (see :attr:`IncompleteSample.effective_lower`). An exact or right-censored row must not
lie below its truncation point (a value recorded before it could have been recorded). An exact
value equal to its truncation point is accepted here (a tie of probability 0 for a continuous
family) but refused by the nonparametric estimators, whose risk sets hold the rows with
``entry < t <= time``.

``weights`` are frequency weights (positive, finite): a row of weight 3 counts as three rows.

:func:`incomplete_sample` checks everything once; the estimators trust an ``IncompleteSample``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal, get_args

import numpy as np

from samplewright.core.errors import MethodError

__all__ = [
    "CENSORED_SIDES",
    "IncompleteSample",
    "incomplete_from_flags",
    "incomplete_sample",
]

CensoredSide = Literal["right", "left"]
CENSORED_SIDES: tuple[str, ...] = get_args(CensoredSide)


@dataclass(frozen=True)
class IncompleteSample:
    """Rows of incomplete observations (build with :func:`incomplete_sample`).

    Attributes
    ----------
    lower, upper : ndarray
        Ends of what is known about each value: ``lower == upper`` exact, ``upper = +inf``
        right-censored, ``lower = -inf`` left-censored, otherwise the interval ``(lower, upper]``.
    truncation : ndarray
        Lower truncation point of each row, ``-inf`` where the row is not truncated.
    weights : ndarray
        Frequency weight of each row, all positive.

    The arrays are read-only.
    """

    lower: np.ndarray
    upper: np.ndarray
    truncation: np.ndarray
    weights: np.ndarray

    @property
    def n_rows(self) -> int:
        """Number of rows."""
        return int(self.lower.size)

    @property
    def is_exact(self) -> np.ndarray:
        """Rows observed exactly."""
        return np.asarray(self.lower == self.upper)

    @property
    def is_right(self) -> np.ndarray:
        """Right-censored rows (``upper = +inf``)."""
        return np.asarray(self.upper == np.inf)

    @property
    def is_left(self) -> np.ndarray:
        """Left-censored rows written with ``lower = -inf``."""
        return np.asarray((self.lower == -np.inf) & np.isfinite(self.upper))

    @property
    def is_interval(self) -> np.ndarray:
        """Rows known to lie in a finite interval ``(lower, upper]``."""
        return np.asarray(np.isfinite(self.lower) & np.isfinite(self.upper) & ~self.is_exact)

    @property
    def is_truncated(self) -> np.ndarray:
        """Rows with a truncation point."""
        return np.asarray(self.truncation > -np.inf)

    @property
    def effective_lower(self) -> np.ndarray:
        """``max(lower, truncation)`` for censored rows, ``lower`` for exact ones."""
        return np.where(self.is_exact, self.lower, np.maximum(self.lower, self.truncation))


def _column(values: Any, name: str, n: int | None) -> np.ndarray:
    try:
        a = np.array(values, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise MethodError(
            f"{name}: expected numbers, found {type(values).__name__} ({exc})"
        ) from None
    if a.ndim != 1:
        raise MethodError(f"{name}: expected a one-dimensional array, found shape {a.shape}")
    if n is None and a.size == 0:
        raise MethodError(f"{name}: expected at least one row, found none")
    if n is not None and a.size != n:
        raise MethodError(f"{name}: expected {n} values (one per row of lower), found {a.size}")
    nan = np.flatnonzero(np.isnan(a))
    if nan.size:
        raise MethodError(
            f"{name}: expected numbers, found NaN at row {nan[0]} ({nan.size} in all)"
        )
    return a


def _first(mask: np.ndarray) -> int:
    return int(np.flatnonzero(mask)[0])


def _refuse_rows(mask: np.ndarray, message: str) -> None:
    """Raise ``message`` (formatted with the first offending row ``i`` and the count ``k``)."""
    if mask.any():
        raise MethodError(message.format(i=_first(mask), k=int(mask.sum())))


def incomplete_sample(
    lower: Any, upper: Any, *, truncation: Any = None, weights: Any = None
) -> IncompleteSample:
    """Check rows of incomplete observations and return them as an :class:`IncompleteSample`.

    Parameters
    ----------
    lower, upper : array_like
        One pair per row; see the module docstring for how each kind of row is written.
    truncation : array_like or float, optional
        Lower truncation point per row (or one for all), ``-inf`` for none. Default: none.
    weights : array_like, optional
        Positive frequency weights. Default: 1 for every row.

    Raises
    ------
    MethodError
        Naming the argument and the first offending row: NaN, ``lower > upper``, a row with
        ``lower = -inf`` and ``upper = +inf`` (no information), ``lower = +inf`` or
        ``upper = -inf``, a truncation point above an exact value or a right-censored row's lower
        end or at/above a censored row's upper end, a weight that is not finite and positive, or
        arrays of different lengths.

    Examples
    --------
    >>> s = incomplete_sample([2.0, 3.0, 0.0], [2.0, np.inf, 1.5], truncation=[1.0, 1.0, -np.inf])
    >>> s.is_exact.tolist(), s.is_right.tolist(), s.is_interval.tolist()
    ([True, False, False], [False, True, False], [False, False, True])
    """
    lo = _column(lower, "lower", None)
    n = lo.size
    hi = _column(upper, "upper", n)
    if truncation is None:
        t = np.full(n, -np.inf)
    elif np.ndim(truncation) == 0:
        t = np.full(n, _column([truncation], "truncation", None)[0])
    else:
        t = _column(truncation, "truncation", n)
    w = np.ones(n) if weights is None else _column(weights, "weights", n)

    _refuse_rows(lo == np.inf, "lower: expected a finite number or -inf, found +inf at row {i}")
    _refuse_rows(hi == -np.inf, "upper: expected a finite number or +inf, found -inf at row {i}")
    bad = lo > hi
    if bad.any():
        i = _first(bad)
        a, b = float(lo[i]), float(hi[i])
        raise MethodError(
            f"lower > upper at row {i} ({a!r} > {b!r}; {int(bad.sum())} rows in all): "
            "expected lower <= upper"
        )
    _refuse_rows(
        (lo == -np.inf) & (hi == np.inf),
        "row {i} has lower=-inf and upper=+inf ({k} rows in all): it carries no information; "
        "drop it",
    )
    _refuse_rows(t == np.inf, "truncation: expected a finite number or -inf, found +inf at row {i}")
    exact = lo == hi
    right = hi == np.inf
    for mask, what in (
        (exact, "the exact value"),
        (right & ~exact, "lower of a right-censored row"),
    ):
        bad = mask & (t > lo)
        if bad.any():
            i = _first(bad)
            a, b = float(t[i]), float(lo[i])
            raise MethodError(
                f"truncation at row {i} ({a!r}) is above {what} ({b!r}): a row truncated "
                f"at t is recorded only from t on ({int(bad.sum())} rows in all)"
            )
    bad = ~exact & ~right & (t >= hi)
    if bad.any():
        i = _first(bad)
        a, b = float(t[i]), float(hi[i])
        raise MethodError(
            f"truncation at row {i} ({a!r}) is at or above upper ({b!r}): the row's "
            f"interval lies wholly below its truncation point ({int(bad.sum())} rows in all)"
        )
    bad = ~np.isfinite(w) | (w <= 0)
    if bad.any():
        i = _first(bad)
        raise MethodError(
            f"weights: expected finite values > 0, found {float(w[i])!r} at row {i} "
            f"({int(bad.sum())} in all)"
        )
    for column in (lo, hi, t, w):
        column.setflags(write=False)
    return IncompleteSample(lower=lo, upper=hi, truncation=t, weights=w)


def incomplete_from_flags(
    values: Any,
    censored: Any,
    *,
    side: CensoredSide = "right",
    truncation: Any = None,
    weights: Any = None,
    left_end: float = -np.inf,
) -> IncompleteSample:
    """Build an :class:`IncompleteSample` from values with censoring flags.

    Parameters
    ----------
    values : array_like
        One value per row: the observation, or the censoring point where ``censored`` is True.
    censored : array_like of bool
        True where the value is only a bound on the true one.
    side : {"right", "left"}
        ``"right"``: a censored value is a lower bound (``X > value``, e.g. still working at the
        end of the study, a loss capped at a policy limit). ``"left"``: an upper bound
        (``X <= value``, e.g. below a detection limit).
    truncation : array_like or float, optional
        Lower truncation point per row (entry time, deductible), ``-inf`` for none.
    weights : array_like, optional
        Positive frequency weights.
    left_end : float
        Lower end given to left-censored rows: ``-inf`` (default) or the lower end of the
        quantity's range (0 for amounts and durations).

    Examples
    --------
    >>> s = incomplete_from_flags([4.0, 7.0, 2.5], [False, True, False], truncation=1.0)
    >>> s.upper.tolist()
    [4.0, inf, 2.5]
    """
    if side not in CENSORED_SIDES:
        raise MethodError(f"side: expected one of {CENSORED_SIDES}, found {side!r}")
    x = _column(values, "values", None)
    if np.isinf(x).any():
        i = _first(np.isinf(x))
        raise MethodError(f"values: expected finite numbers, found {float(x[i])!r} at row {i}")
    c = np.asarray(censored)
    if c.shape != x.shape or c.dtype != np.bool_:
        raise MethodError(
            f"censored: expected {x.size} booleans (one per value), found dtype {c.dtype} "
            f"and shape {c.shape}"
        )
    left_end = float(left_end)
    if np.isnan(left_end) or left_end == np.inf:
        raise MethodError(f"left_end: expected a finite number or -inf, found {left_end!r}")
    if side == "right":
        lower, upper = x, np.where(c, np.inf, x)
    else:
        bad = c & (x <= left_end)
        if bad.any():
            i = _first(bad)
            raise MethodError(
                f"values: left-censored value {float(x[i])!r} at row {i} is not above "
                f"left_end={left_end!r}"
            )
        lower, upper = np.where(c, left_end, x), x
    return incomplete_sample(lower, upper, truncation=truncation, weights=weights)
