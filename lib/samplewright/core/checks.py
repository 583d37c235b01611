"""The one input check: raw values, weights and censoring flags turned into a checked sample.

Every entry point that takes data (``fit``, the family fits, goodness of fit, the sampler
constructors) calls :func:`check_sample` once; the code below it trusts what it gets. The rules,
the same everywhere:

* ``values``: a 1-d array of finite numbers.
* ``weights`` (optional): frequency weights, one per value, finite and >= 0. **A row of weight 0
  is dropped** (with its value and flag) before anything else: it carries no information. At
  least one weight must be positive. ``None`` means every row counts once.
* ``censored`` (optional): one flag per value, True (or 1) where the value is right-censored
  (the true value is larger). Booleans, or numbers that are all 0 or 1.
* at least ``min_n`` rows must remain after the zero-weight rows are dropped.

Each refusal is a one-line :class:`~samplewright.core.errors.MethodError` that starts with the
argument's name and says what was expected and what was found, e.g.
``"values: every value must be finite; value 3 is nan"``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError

__all__ = ["CheckedSample", "check_counts", "check_sample"]


@dataclass(frozen=True)
class CheckedSample:
    """Values, weights and censoring flags that passed :func:`check_sample`.

    Attributes
    ----------
    values : numpy.ndarray
        1-d float64, every value finite (rows of weight 0 removed).
    weights : numpy.ndarray or None
        float64 weights > 0 aligned with ``values``, or None when none were given.
    censored : numpy.ndarray or None
        bool flags aligned with ``values`` (True: right-censored), or None when none were given.
    n_dropped : int
        Rows removed because their weight was 0.
    """

    values: np.ndarray
    weights: np.ndarray | None = None
    censored: np.ndarray | None = None
    n_dropped: int = 0

    @property
    def n(self) -> int:
        """Number of rows."""
        return int(self.values.size)

    @property
    def any_censored(self) -> bool:
        """Whether any value is censored."""
        return self.censored is not None and bool(self.censored.any())

    @property
    def total_weight(self) -> float:
        """Sum of the weights (the number of rows when unweighted)."""
        return float(self.n if self.weights is None else np.sum(self.weights))

    def weights_or_ones(self) -> np.ndarray:
        """The weights, or an array of ones when unweighted."""
        return np.ones(self.n) if self.weights is None else self.weights


def _first_bad(bad: np.ndarray) -> int:
    return int(np.flatnonzero(bad)[0])


def check_sample(
    values: Any,
    weights: Any = None,
    censored: Any = None,
    *,
    min_n: int = 1,
    what: str = "values",
) -> CheckedSample:
    """Check raw ``values``, ``weights`` and ``censored`` by the rules in the module docstring.

    Parameters
    ----------
    values, weights, censored : array_like
        As described in the module docstring; ``weights`` and ``censored`` may be None.
    min_n : int
        Fewest rows needed after dropping rows of weight 0.
    what : str
        What needs them, for the message when there are too few (a method or family name).

    Returns
    -------
    CheckedSample

    Raises
    ------
    MethodError
        Naming the argument, what was expected and what was found.

    Examples
    --------
    >>> s = check_sample([3.0, 1.0, 2.0], weights=[1.0, 0.0, 2.0])
    >>> s.values.tolist(), s.weights.tolist(), s.n_dropped
    ([3.0, 2.0], [1.0, 2.0], 1)
    >>> check_sample([1.0, float("nan")])
    Traceback (most recent call last):
    ...
    samplewright.core.errors.MethodError: values: every value must be finite; value 2 is nan
    """
    try:
        x = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        raise MethodError("values: expected numbers, found values that are not") from None
    if x.ndim != 1:
        raise MethodError(f"values: expected a 1-d array, found {x.ndim} dimensions")
    finite = np.isfinite(x)
    if not finite.all():
        i = _first_bad(~finite)
        raise MethodError(f"values: every value must be finite; value {i + 1} is {float(x[i])}")
    w = None
    if weights is not None:
        try:
            w = np.asarray(weights, dtype=np.float64)
        except (TypeError, ValueError):
            raise MethodError("weights: expected numbers, found values that are not") from None
        if w.shape != x.shape:
            raise MethodError(f"weights: expected {x.size} weights, found {w.size}")
        good = np.isfinite(w) & (w >= 0)
        if not good.all():
            i = _first_bad(~good)
            raise MethodError(
                f"weights: expected finite non-negative weights; weight {i + 1} is {float(w[i])}"
            )
    c = None
    if censored is not None:
        raw = np.asarray(censored)
        if raw.shape != x.shape:
            raise MethodError(f"censored: expected {x.size} flags, found {raw.size}")
        if raw.dtype == np.bool_:
            c = raw
        else:
            try:
                num = raw.astype(np.float64)
            except (TypeError, ValueError):
                raise MethodError("censored: flags must be 0/1 or booleans") from None
            bad = (num != 0) & (num != 1)
            if bad.any():
                i = _first_bad(bad)
                raise MethodError(
                    f"censored: flags must be 0/1 or booleans; flag {i + 1} is {raw[i].item()!r}"
                )
            c = num == 1
    n_dropped = 0
    if w is not None:
        keep = w > 0
        if not keep.all():
            if not keep.any():
                raise MethodError("weights: expected at least one weight > 0, found all 0")
            n_dropped = int(x.size - np.count_nonzero(keep))
            x, w = x[keep], w[keep]
            c = None if c is None else c[keep]
    if x.size < min_n:
        raise MethodError(
            f"{what} needs at least {min_n} value{'s' if min_n != 1 else ''}, found {x.size}"
        )
    return CheckedSample(x, w, c, n_dropped)


def check_counts(values: np.ndarray, what: str) -> None:
    """Refuse checked ``values`` that are not non-negative whole numbers (naming the first).

    >>> check_counts(np.array([0.0, 2.0, -1.0]), "poisson")
    Traceback (most recent call last):
    ...
    samplewright.core.errors.MethodError: poisson: counts must be non-negative integers; value 3 ...
    """
    bad = (values < 0) | (values != np.floor(values))
    if bad.any():
        i = _first_bad(bad)
        raise MethodError(
            f"{what}: counts must be non-negative integers; value {i + 1} is {float(values[i])!r}"
        )
