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
* counts that are not over-dispersed (variance <= mean) for the negative binomial;
* ``spliced`` with a given ``threshold`` (or ``threshold_quantile``) leaving fewer than
  :data:`~samplewright.fitting.spliced.MIN_EXCEEDANCES` values above it, or none at or below;
* ``hurdle``: no value other than ``at``, fewer other values than its ``body`` family needs, or
  other values its body cannot fit (the same checks, on them); ``zero_inflated`` with every
  count 0.

:func:`precheck_rows` does the same for truncated, censored and interval rows (what
``fit(..., truncation=...)`` and ``fit_interval`` take): the rows as the fitters build them,
fewer rows than the method needs, rows ``kaplan_meier`` cannot take, and for a family the checks
the incomplete-data fit makes before it optimises (fixed parameters, exact values and upper ends
inside the support, rows carrying information; :mod:`samplewright.fitting.incomplete_checks`);
``auto`` is refused only when none of its candidates passes (:func:`precheck` hands ``auto``'s
right-censored values to it too).

It never refuses what ``fit`` accepts (the tests compare the two over a grid of methods and
data), and it does not promise that a fit it lets through succeeds: an optimiser can still
fail, and the job then says why.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.fitting.catalog import CATALOG

__all__ = ["POSITIVE_FAMILIES", "precheck", "precheck_rows"]

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


def _spliced_problem(x: np.ndarray, w: np.ndarray | None, options: Mapping[str, Any]) -> str | None:
    """Too few exceedances above a given threshold (the rule of ``spliced``'s fitter)."""
    if "threshold" in options and "threshold_quantile" in options:
        return None  # the fit names the conflict
    if "threshold" in options:
        u, key = _number(options, "threshold", 0.0), "threshold"
    elif "threshold_quantile" in options:
        q = _number(options, "threshold_quantile", 0.5)
        if q is None or not 0.0 < q < 1.0:
            return None
        from samplewright.fitting.spliced import _lower_quantile

        u, key = float(_lower_quantile(x, w, q)), "threshold_quantile"
    else:
        return None  # the threshold is chosen from the data
    if u is None:
        return None
    from samplewright.fitting.spliced import MIN_EXCEEDANCES

    n_exc = int(np.count_nonzero(x > u))
    if n_exc < MIN_EXCEEDANCES:
        return (
            f"spliced needs at least {MIN_EXCEEDANCES} values above its threshold ({key}: "
            f"{u:g}), found {n_exc}"
        )
    if n_exc == x.size:
        return f"spliced needs a value at or below its threshold ({key}: {u:g}), found none"
    return None


def _hurdle_problem(x: np.ndarray, w: np.ndarray | None, options: Mapping[str, Any]) -> str | None:
    """The hurdle's other values: enough of them, and fit for its body (the same checks)."""
    at = _number(options, "at", 0.0)
    body = options.get("body", "lognormal")
    spec = CATALOG.get(body) if isinstance(body, str) else None
    if at is None or spec is None or spec.group != "family" or spec.counts:
        return None  # the fit names a bad option
    rest = x != at
    n_rest = int(np.count_nonzero(rest))
    if n_rest == 0:
        return f"hurdle: every value equals at={at:g}; a continuous part needs other values"
    if n_rest < spec.min_obs:
        return (
            f"hurdle with body {body!r} needs at least {spec.min_obs} values other than "
            f"at={at:g}, found {n_rest}"
        )
    reason = precheck(x[rest], body, {}, weights=None if w is None else w[rest])
    return None if reason is None else f"hurdle body {body!r}: {reason}"


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
    if spec.incomplete is not None and c is not None and c.shape == x.shape and c.any():
        return precheck_rows(method, opts, values=x, censored=c, weights=w)  # ranked as rows
    observed = x if c is None or c.shape != x.shape else x[~c]
    problem = _support_problem(method, x, observed, opts)
    if problem is not None:
        return problem
    if method == "spliced":
        return _spliced_problem(x, w if w is not None and w.shape == x.shape else None, opts)
    if method == "hurdle":
        return _hurdle_problem(x, w if w is not None and w.shape == x.shape else None, opts)
    if method == "zero_inflated" and x.size and not np.any(x > 0):
        return "zero_inflated: every count is 0; a zero-inflated model needs positive counts"
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


# ---------------------------------------------------------------------------------------------
# truncated, censored and interval rows


def _rows(values: Any, censored: Any, lower: Any, upper: Any, truncation: Any, weights: Any) -> Any:
    """The rows as the fitters build them (rows of weight 0 dropped first)."""
    from samplewright.fitting.incomplete_sample import incomplete_from_flags, incomplete_sample

    w = None if weights is None else np.asarray(weights, dtype=np.float64).ravel()
    keep = None if w is None else w > 0
    t = truncation
    if keep is not None and t is not None and np.ndim(t) == 1 and np.shape(t) == keep.shape:
        t = np.asarray(t, dtype=np.float64)[keep]
    kept_w = None if w is None or keep is None else w[keep]

    def pick(a: Any) -> np.ndarray:
        arr = np.asarray(a, dtype=np.float64).ravel()
        return arr if keep is None or arr.shape != keep.shape else arr[keep]

    if lower is not None or upper is not None:
        return incomplete_sample(pick(lower), pick(upper), truncation=t, weights=kept_w)
    x = pick(values)
    flags = np.zeros(x.size, bool) if censored is None else pick(censored).astype(bool)
    return incomplete_from_flags(x, flags, truncation=t, weights=kept_w)


def _family_rows(rows: Any, family: str, options: Mapping[str, Any]) -> str | None:
    """What the incomplete-data fit of ``family`` checks before it optimises."""
    from samplewright.core.errors import MethodError
    from samplewright.fitting.incomplete_checks import (
        check_information,
        check_support,
        settings,
        spec_for,
    )
    from samplewright.fitting.incomplete_likelihood import row_layout
    from samplewright.fitting.interval_api import incomplete_fixed

    try:
        spec = spec_for(family)
        fix = settings(spec, family, rows, incomplete_fixed(family, options))
        floor = spec.floor(fix)
        check_support(rows, family, floor, spec.closed_floor)
        if any(k not in fix for k in spec.estimated):
            check_information(row_layout(rows, floor), spec, family, floor)
    except MethodError as exc:
        return str(exc)
    return None


def precheck_rows(
    method: str,
    options: Mapping[str, Any] | None = None,
    *,
    values: Any = None,
    censored: Any = None,
    lower: Any = None,
    upper: Any = None,
    truncation: Any = None,
    weights: Any = None,
) -> str | None:
    """Why ``method`` cannot fit truncated, censored or interval rows, or None (module
    docstring). Rows are ``values`` with ``censored`` flags, or ``lower``/``upper`` ends; with
    ``truncation`` (one number or one per row) and ``weights``.

    >>> precheck_rows("lognormal", lower=[0.0, 2.0], upper=[0.0, 3.0])
    'lognormal needs every exact value > 0.0 (its lower end); found 0.0 at row 0 (1 rows in all)'
    >>> precheck_rows("kaplan_meier", lower=[1.0, 2.0], upper=[1.5, 2.0]) is not None
    True
    >>> precheck_rows("auto", values=[1.0, 2.0, 5.0], truncation=0.5) is None
    True
    """
    from samplewright.core.errors import SamplewrightError
    from samplewright.fitting.interval_api import (
        INCOMPLETE_FAMILIES,
        INCOMPLETE_METHODS,
        NONPARAMETRIC_INCOMPLETE,
        check_product_limit_rows,
        min_rows,
    )

    if method not in INCOMPLETE_METHODS:
        return None  # the configuration refuses it
    opts = dict(options or {})
    try:
        rows = _rows(values, censored, lower, upper, truncation, weights)
        need = min_rows(method)
        if rows.n_rows < need:
            plural = "s" if need != 1 else ""
            return f"{method} needs at least {need} row{plural}, found {rows.n_rows}"
        if method == "kaplan_meier":
            check_product_limit_rows(rows)
    except SamplewrightError as exc:
        return str(exc)
    if method in NONPARAMETRIC_INCOMPLETE:
        return None
    if method != "auto":
        return _family_rows(rows, method, opts)
    from samplewright.check.auto_incomplete import default_candidates_rows

    given = opts.get("candidates")
    names = list(given) if isinstance(given, list | tuple) else default_candidates_rows(rows)
    reasons = [(n, _family_rows(rows, n, {})) for n in names if n in INCOMPLETE_FAMILIES]
    if reasons and all(r is not None for _, r in reasons):
        first, why = reasons[0]
        return f"auto: none of its candidates can fit these rows (first, {first}: {why})"
    return None
