"""A cheap look at the data before a fit: can this method fit these values at all?

:func:`precheck` answers from the method catalog and a few passes over the values, without
fitting anything. A workflow plan calls it for each candidate whose artifact does not exist yet,
so a method that cannot fit the data stops the planning with the reason, instead of failing
inside a job with the reason only in a log file. It checks what ``fit`` refuses for sure:

* fewer values than the method needs (the catalog's ``min_obs``, after rows of weight 0 are
  dropped);
* right-censored values for a method without censored fits, weights for one without weights;
* observed (uncensored) values outside the family's support: at or below the location for the
  positive families with a fixed location (``loc``, default 0; below it for exponential,
  rayleigh and generalized pareto), outside ``(lower, upper)`` for beta, above ``n_trials``
  for binomial, and not whole numbers >= 0 for the count methods; values <= 0 for a mixture of
  a positive family;
* every value censored;
* values that are all equal, for the continuous families (no spread to estimate a scale);
* counts that are not over-dispersed (variance <= mean) for the negative binomial.

It never refuses what ``fit`` accepts (the tests compare the two over a grid of methods and
data), and it does not promise that a fit it lets through succeeds: an optimiser can still
fail, and the job then says why.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.fitting.catalog import CATALOG

__all__ = ["POSITIVE_FAMILIES", "precheck"]

# positive families with a location: True when values must exceed it, False when they may equal it
POSITIVE_FAMILIES: dict[str, bool] = {
    "lognormal": True,
    "gamma": True,
    "weibull": True,
    "loglogistic": True,
    "pareto": True,
    "inverse_gaussian": True,
    "exponential": False,
    "rayleigh": False,
    "generalized_pareto": False,
}
_COUNT_METHODS = ("poisson", "negative_binomial", "geometric", "binomial", "empirical_pmf")
_SPREAD_METHODS = (
    "normal",
    "gamma",
    "weibull",
    "gumbel",
    "logistic",
    "beta",
    "generalized_pareto",
    "gev",
    "inverse_gaussian",
    "loglogistic",
    "student_t",
    "triangular",
    "uniform",
    "mixture",
)


def _first(mask: np.ndarray, x: np.ndarray) -> str:
    i = int(np.flatnonzero(mask)[0])
    n = int(np.count_nonzero(mask))
    return f"{n} value{'s' if n != 1 else ''} outside it (first: value {i + 1} = {float(x[i])!r})"


def _number(options: Mapping[str, Any], key: str, default: float) -> float | None:
    """Option ``key`` as a float, ``default`` when absent, None when not a plain number (the
    fit itself then says what is wrong with it)."""
    v = options.get(key, default)
    if isinstance(v, bool) or not isinstance(v, int | float):
        return None
    return float(v) if np.isfinite(v) else None


def _support_problem(
    method: str, x: np.ndarray, observed: np.ndarray, options: Mapping[str, Any]
) -> str | None:
    if method in POSITIVE_FAMILIES and options.get("loc") != "free":
        loc = _number(options, "loc", 0.0)
        if loc is not None:  # a censored value only says the variable is larger: not checked
            strict = POSITIVE_FAMILIES[method]
            x = observed
            bad = x <= loc if strict else x < loc
            if bad.any():
                rel = ">" if strict else ">="
                return f"{method} needs every value {rel} {loc:g} (its location): {_first(bad, x)}"
    if method in _COUNT_METHODS or method == "zero_inflated":
        bad = (x < 0) | (x != np.floor(x))
        if bad.any():
            return f"{method} needs counts (whole numbers >= 0): {_first(bad, x)}"
    if method == "binomial":
        n = options.get("n_trials")
        if isinstance(n, int) and not isinstance(n, bool) and n >= 1:
            bad = x > n
            if bad.any():
                return f"binomial needs every value <= n_trials = {n}: {_first(bad, x)}"
    if method == "beta":
        lo, hi = _number(options, "lower", 0.0), _number(options, "upper", 1.0)
        if lo is not None and hi is not None and lo < hi:
            bad = (x <= lo) | (x >= hi)
            if bad.any():
                return f"beta needs every value strictly inside ({lo:g}, {hi:g}): {_first(bad, x)}"
    if method == "mixture":
        family = options.get("family")
        if family in ("lognormal", "gamma", "weibull"):
            bad = x <= 0
            if bad.any():
                return f"a mixture of {family} needs every value > 0: {_first(bad, x)}"
    return None


def precheck(
    values: Any,
    method: str,
    options: Mapping[str, Any] | None = None,
    *,
    weights: Any = None,
    censored: Any = None,
) -> str | None:
    """Why ``method`` with ``options`` cannot fit ``values``, or None when no reason is seen.

    Parameters
    ----------
    values : array_like
        The cleaned values (finite numbers), as a snapshot holds them.
    method : str
        A method name of the catalog; an unknown name is left to ``fit`` (returns None).
    options : mapping, optional
        The method's options as configured.
    weights, censored : array_like, optional
        Frequency weights and right-censoring flags, one per value.

    Returns
    -------
    str or None
        One line naming what the method needs and what the data have.

    Examples
    --------
    >>> precheck([1.5, 0.0, 2.0], "lognormal")
    'lognormal needs every value > 0 (its location): 1 value outside it (first: value 2 = 0.0)'
    >>> precheck([1.5, 0.0, 2.0], "lognormal", {"loc": "free"}) is None
    True
    >>> precheck([3.0], "normal")
    'normal needs at least 2 values, found 1'
    """
    spec = CATALOG.get(method) if isinstance(method, str) else None
    if spec is None:
        return None
    opts = dict(options or {})
    x = np.asarray(values, dtype=np.float64).ravel()
    w = None if weights is None else np.asarray(weights, dtype=np.float64).ravel()
    c = None if censored is None else np.asarray(censored, dtype=bool).ravel()
    if w is not None and w.shape == x.shape:
        keep = w > 0
        x, w = x[keep], w[keep]
        c = None if c is None or c.shape != keep.shape else c[keep]
    if x.size < spec.min_obs:
        plural = "s" if spec.min_obs != 1 else ""
        return f"{method} needs at least {spec.min_obs} value{plural}, found {x.size}"
    if c is not None and c.any() and not spec.censoring:
        return (
            f"{method} does not handle right-censored values ({int(c.sum())} of {c.size} are "
            "censored); use a family that offers censored fits or 'kaplan_meier'"
        )
    if c is not None and c.size and c.all():
        return f"{method}: every value is censored; at least one must be observed"
    if w is not None and not spec.weights:
        return f"{method} does not take weights; use 'empirical'"
    observed = x if c is None or c.shape != x.shape else x[~c]
    problem = _support_problem(method, x, observed, opts)
    if problem is not None:
        return problem
    if method in _SPREAD_METHODS and x.size and float(np.min(x)) == float(np.max(x)):
        return f"{method} cannot be fitted: all {x.size} values equal {float(x[0])!r}"
    if method == "negative_binomial" and x.size > 1:
        ww = np.ones_like(x) if w is None or w.shape != x.shape else w
        mean = float(np.dot(ww, x) / ww.sum())
        var = float(np.dot(ww, (x - mean) ** 2) / ww.sum())
        if var <= mean:
            return (
                f"negative_binomial needs over-dispersed counts (variance > mean); found "
                f"variance {var:.4g} <= mean {mean:.4g}: use poisson"
            )
    return None
