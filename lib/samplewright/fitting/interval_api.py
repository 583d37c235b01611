"""Fitting incomplete data: truncated values, interval-censored rows, grouped counts.

Two entry points turn raw columns into a sampler, by any method of :data:`INCOMPLETE_METHODS`:

* :func:`fit_truncated` (``values``, right-censoring flags, lower truncation points): what
  ``samplewright.fit(..., truncation=...)`` does. A truncation point is a deductible or a delayed
  entry: the row was recorded only because its value exceeded it.
* :func:`fit_interval` (``lower``, ``upper`` per row): ``lower == upper`` exact, ``upper = inf``
  right-censored, ``lower = -inf`` (or the family's lower end, 0 for positive families)
  left-censored, otherwise known to lie in ``(lower, upper]``. Grouped data are rows (one per
  group) with their counts as ``weights``.

Methods
-------
* Every continuous family of :data:`INCOMPLETE_FAMILIES` (the package's families that
  :func:`~samplewright.fitting.incomplete.fit_incomplete` offers): a
  :class:`~samplewright.distributions.parametric.ParametricSampler` of that family with the
  package's parameter names, carrying log-likelihood, AIC and BIC of the incomplete-data
  likelihood. It is the **whole** (ground-up) distribution, below the truncation points too,
  where it extrapolates by the family's shape; a fit whose mass above the smallest truncation
  point the data cannot pin down is refused
  (:mod:`~samplewright.fitting.incomplete_drift`). Options as for complete data: ``loc`` (a
  number; default 0; ``"free"`` is not offered here) for positive families, ``xm`` for pareto,
  and any parameter by its own name (``shape=2.0``), held at that number while the others
  maximise the incomplete-data likelihood (not counted in AIC/BIC; :func:`incomplete_fixed`).
  ``lomax`` is not offered: it is ``generalized_pareto`` with ``xi = 1 / alpha``.
* ``"kaplan_meier"``: exact and right-censored rows with entry times (truncation), a
  :class:`~samplewright.distributions.kaplan_meier.KaplanMeierSampler`.
* ``"turnbull"``: any rows, a piecewise sampler of Turnbull's estimate.
* ``"auto"`` (the methods of :data:`RANKING_INCOMPLETE`): the candidate families ranked on the
  rows by their incomplete-data likelihood, the winner tested by the bootstrap that redoes the
  truncation and censoring. Its fitter lives in a later stage
  (:mod:`samplewright.check.auto_incomplete`) and is reached through the catalog
  (:attr:`~samplewright.fitting.catalog.MethodSpec.incomplete`), as ``fit`` reaches ``auto``.

Both nonparametric methods take option ``tail`` (``"at_last"`` default, or ``"exponential"``)
for the mass beyond the data and describe ``X`` given ``X > t_min`` when every row is truncated
(:mod:`~samplewright.fitting.incomplete_samplers` has the rules for mass the data cannot place).

Weights are frequency weights, finite and >= 0; rows of weight 0 are dropped first, as
everywhere in the package (row numbers in later messages count the rows kept).

:func:`rank_incomplete` ranks candidate families on the same rows by AIC or BIC (the rule of
``auto``); :func:`incomplete_candidates` gives the default candidates.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal, get_args

import numpy as np

from samplewright.core.checks import CheckedSample, check_sample
from samplewright.core.errors import FitError, MethodError, SamplewrightError
from samplewright.distributions.base import Sampler
from samplewright.distributions.families import FAMILIES
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.catalog import CATALOG, CRITERIA, Criterion
from samplewright.fitting.incomplete import FAMILY_NAMES, IncompleteFitResult, fit_incomplete
from samplewright.fitting.incomplete_checks import XI_RANGE, spec_for
from samplewright.fitting.incomplete_sample import (
    IncompleteSample,
    incomplete_from_flags,
    incomplete_sample,
)
from samplewright.fitting.incomplete_samplers import product_limit_sampler, turnbull_sampler
from samplewright.fitting.mle_spread import check_collapse, explain_failure
from samplewright.fitting.mle_sums import Obs

__all__ = [
    "INCOMPLETE_FAMILIES",
    "INCOMPLETE_METHODS",
    "IncompleteRankResult",
    "NONPARAMETRIC_INCOMPLETE",
    "RANKING_INCOMPLETE",
    "check_product_limit_rows",
    "fit_incomplete_sample",
    "fit_interval",
    "fit_sample",
    "fit_truncated",
    "incomplete_candidates",
    "incomplete_fixed",
    "min_rows",
    "rank_incomplete",
]

NonparametricIncomplete = Literal["kaplan_meier", "turnbull"]
NONPARAMETRIC_INCOMPLETE: tuple[str, ...] = get_args(NonparametricIncomplete)
# the package's continuous families that the incomplete-data likelihood fits
INCOMPLETE_FAMILIES: tuple[str, ...] = tuple(
    n for n in FAMILY_NAMES if n in FAMILIES and not FAMILIES[n].discrete
)
# methods that rank candidates on the rows (their catalog entry names an ``incomplete`` fitter)
RANKING_INCOMPLETE: tuple[str, ...] = tuple(n for n, m in CATALOG.items() if m.incomplete)
INCOMPLETE_METHODS: tuple[str, ...] = (
    INCOMPLETE_FAMILIES + RANKING_INCOMPLETE + NONPARAMETRIC_INCOMPLETE
)
_NONPARAMETRIC_OPTIONS = frozenset({"tail"})
# default candidates (the same split as ``auto`` on complete data)
_POSITIVE = ("lognormal", "gamma", "weibull", "exponential", "inverse_gaussian")
_REAL_LINE = ("normal", "logistic", "gumbel", "student_t")


# ---------------------------------------------------------------------------------------------
# methods and options


def _method(method: Any) -> str:
    if isinstance(method, str) and method in INCOMPLETE_METHODS:
        return method
    if isinstance(method, str) and method in CATALOG:
        raise MethodError(
            f"method {method!r} does not handle truncated or interval-censored data; expected "
            f"one of: {', '.join(INCOMPLETE_METHODS)}"
        )
    raise MethodError(
        f"unknown method {method!r}; expected one of: {', '.join(INCOMPLETE_METHODS)}"
    )


def _allowed(method: str) -> frozenset[str]:
    if method in NONPARAMETRIC_INCOMPLETE:
        return _NONPARAMETRIC_OPTIONS
    spec = CATALOG.get(method)
    return spec.option_names if spec is not None else frozenset()


def _check_options(method: str, options: Mapping[str, Any]) -> None:
    allowed = _allowed(method)
    unknown = sorted(set(options) - allowed)
    if unknown:
        names = ", ".join(sorted(allowed)) or "none"
        raise MethodError(f"unknown option {unknown[0]!r} for {method} (allowed: {names})")


def incomplete_fixed(method: str, options: Mapping[str, Any]) -> dict[str, float]:
    """The fixed parameters that a family's options ask for, checked.

    Every option of a family fit names a parameter: the settings ``loc`` and ``xm`` and any
    estimated parameter (``shape=2.0``), held at that number while the others are estimated.
    An option that names no parameter of the family is refused, never ignored. Nonparametric
    methods fix nothing.

    >>> incomplete_fixed("gamma", {"loc": 100})
    {'loc': 100.0}
    >>> incomplete_fixed("weibull", {"shape": 1.5})
    {'shape': 1.5}
    """
    method = _method(method)
    _check_options(method, options)
    if method in NONPARAMETRIC_INCOMPLETE:
        return {}
    spec = spec_for(method)
    params = spec.settings + spec.estimated
    fixed: dict[str, float] = {}
    for k, v in options.items():
        if k not in params:
            raise MethodError(
                f"option {k!r} of {method} is not offered for truncated or interval-censored "
                f"data (options that fix a parameter: {', '.join(params)})"
            )
        if v == "free":
            raise MethodError(
                f"option {k!r} of {method}: 'free' is not offered for truncated or "
                "interval-censored data; pass a number"
            )
        if isinstance(v, bool) or not isinstance(v, int | float | np.integer | np.floating):
            raise MethodError(f"option {k!r} of {method}: expected a number, found {v!r}")
        x = float(v)
        if not np.isfinite(x):
            raise MethodError(f"option {k!r} of {method}: expected a finite number, found {x!r}")
        if (spec.kinds.get(k) == "log" or k == "xm") and not x > 0:
            raise MethodError(f"option {k!r} of {method}: expected a number > 0, found {x!r}")
        if spec.kinds.get(k) == "xi" and not XI_RANGE[0] <= x <= XI_RANGE[1]:
            raise MethodError(
                f"option {k!r} of {method}: expected a number in [{XI_RANGE[0]:g}, "
                f"{XI_RANGE[1]:g}], found {x!r}"
            )
        fixed[k] = x
    return fixed


def min_rows(method: str) -> int:
    """The fewest rows (of weight > 0) ``method`` fits on incomplete data: its catalog minimum,
    1 for the nonparametric methods.

    >>> min_rows("gamma"), min_rows("turnbull")
    (2, 1)
    """
    spec = CATALOG.get(method)
    return spec.min_obs if spec is not None and method not in NONPARAMETRIC_INCOMPLETE else 1


# ---------------------------------------------------------------------------------------------
# entry points


def fit_truncated(
    values: Any,
    method: str,
    *,
    censored: Any = None,
    truncation: Any = None,
    weights: Any = None,
    **options: Any,
) -> Sampler:
    """Fit a sampler to values that may be right-censored and lower-truncated.

    Parameters
    ----------
    values : array_like
        1-d finite values: the observation, or the censoring point where ``censored``.
    method : str
        One of :data:`INCOMPLETE_METHODS`.
    censored : array_like of bool or 0/1, optional
        True where the value is right-censored (the true value is larger: a loss capped at a
        policy limit, a unit still working at the end of the study).
    truncation : float or array_like, optional
        Lower truncation point, one for all rows or one per row (``-inf``: none): the row was
        recorded only because its value exceeded it (a deductible, a delayed entry).
    weights : array_like, optional
        Frequency weights (finite, >= 0; rows of weight 0 are dropped).
    **options
        Method options (module docstring).

    Returns
    -------
    Sampler
        Its ``diagnostics["incomplete"]`` counts the rows of each kind.

    Raises
    ------
    MethodError
        Bad input, unknown method or option, or data the method cannot describe.
    FitError
        The optimiser did not converge or reached an impossible answer.

    Examples
    --------
    >>> s = fit_truncated([3.0, 5.0, 8.0, 10.0], "exponential",
    ...                   censored=[False, False, False, True], truncation=1.0)
    >>> s.family.name, round(s.params["scale"], 4)  # (2 + 4 + 7 + 9) / 3 uncensored
    ('exponential', 7.3333)
    """
    method = _method(method)
    _check_options(method, options)
    checked = check_sample(values, weights, censored, min_n=min_rows(method), what=method)
    n = int(np.size(values))
    if truncation is None or np.ndim(truncation) == 0:
        t = truncation
    else:
        t = np.asarray(truncation)
        if t.shape != (n,):
            raise MethodError(
                f"truncation: expected one number or {n} values (one per value), found shape "
                f"{t.shape}"
            )
        if checked.weights is not None:
            t = t[np.asarray(weights, dtype=np.float64) > 0]
    flags = checked.censored if checked.censored is not None else np.zeros(checked.n, bool)
    sample = incomplete_from_flags(checked.values, flags, truncation=t, weights=checked.weights)
    return fit_incomplete_sample(sample, method, n_dropped=checked.n_dropped, **options)


def fit_interval(
    lower: Any,
    upper: Any,
    method: str,
    *,
    truncation: Any = None,
    weights: Any = None,
    **options: Any,
) -> Sampler:
    """Fit a sampler to rows known to lie in ``(lower, upper]`` (exact where equal).

    Parameters
    ----------
    lower, upper : array_like
        One pair per row: ``lower == upper`` exact, ``upper = inf`` right-censored at
        ``lower``, ``lower = -inf`` (or 0 for a positive quantity) left-censored at ``upper``,
        otherwise an interval. Grouped data: one row per group.
    method : str
        One of :data:`INCOMPLETE_METHODS` (``kaplan_meier`` takes exact and right-censored rows
        only).
    truncation : float or array_like, optional
        Lower truncation point(s), as in :func:`fit_truncated`.
    weights : array_like, optional
        Frequency weights, e.g. the count of each group (finite, >= 0; rows of weight 0 are
        dropped).
    **options
        Method options (module docstring).

    Returns
    -------
    Sampler

    Raises
    ------
    MethodError, FitError
        As for :func:`fit_truncated`.

    Examples
    --------
    >>> s = fit_interval([0, 10, 20, 40], [10, 20, 40, np.inf], "turnbull",
    ...                  weights=[12, 9, 6, 3], tail="exponential")
    >>> round(float(s.cdf(20.0)), 4), round(s.diagnostics["incomplete"]["mass_beyond"], 4)
    (0.7, 0.1)
    """
    method = _method(method)
    _check_options(method, options)
    keep: np.ndarray | None = None
    w = weights
    if weights is not None:
        try:
            raw = np.asarray(weights, dtype=np.float64)
        except (TypeError, ValueError):
            raise MethodError("weights: expected numbers, found values that are not") from None
        bad = ~(np.isfinite(raw) & (raw >= 0))
        if raw.ndim == 1 and bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise MethodError(
                f"weights: expected finite values >= 0, found {float(raw[i])!r} at row {i} "
                f"({int(bad.sum())} in all)"
            )
        keep = raw > 0
        if raw.ndim == 1 and raw.size and not keep.any():
            raise MethodError("weights: expected at least one weight > 0, found all 0")
        w = np.where(keep, raw, 1.0)  # zero rows are checked like the others, then dropped
    full = incomplete_sample(lower, upper, truncation=truncation, weights=w)
    n_dropped = 0
    sample = full
    if keep is not None and not keep.all():
        n_dropped = int((~keep).sum())
        sample = incomplete_sample(
            full.lower[keep],
            full.upper[keep],
            truncation=full.truncation[keep],
            weights=full.weights[keep],
        )
    need = min_rows(method)
    if sample.n_rows < need:
        raise MethodError(f"{method} needs at least {need} rows, found {sample.n_rows}")
    return fit_incomplete_sample(sample, method, n_dropped=n_dropped, **options)


def fit_incomplete_sample(
    sample: IncompleteSample, method: str, *, n_dropped: int = 0, **options: Any
) -> Sampler:
    """The sampler of ``method`` for checked rows (what both entry points call).

    ``n_dropped`` (rows of weight 0 removed before) is recorded in the diagnostics.
    """
    method = _method(method)
    _check_options(method, options)
    if method == "kaplan_meier":
        check_product_limit_rows(sample)
        sampler: Sampler = product_limit_sampler(sample, tail=options.get("tail", "at_last"))
    elif method == "turnbull":
        sampler = turnbull_sampler(sample, tail=options.get("tail", "at_last"))
    elif method in RANKING_INCOMPLETE:
        from samplewright.fitting.registry import load_object

        ranking_fitter = load_object(str(CATALOG[method].incomplete))
        sampler = ranking_fitter(sample, method, **options)
    else:
        r = _fit_family(sample, method, incomplete_fixed(method, options))
        sampler = ParametricSampler(
            method,
            r.params,
            loglik=r.loglik,
            aic=r.aic,
            bic=r.bic,
            method=method,
            diagnostics={"incomplete": _family_diagnostics(sample, r)},
        )
    sampler.diagnostics["incomplete"]["n_dropped"] = int(n_dropped)
    return sampler


def check_product_limit_rows(sample: IncompleteSample) -> None:
    """Refuse rows ``kaplan_meier`` cannot take: any that is neither exact nor right-censored."""
    bad = ~sample.is_exact & ~sample.is_right
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise MethodError(
            f"kaplan_meier takes exact and right-censored rows; row {i} is "
            f"({float(sample.lower[i])!r}, {float(sample.upper[i])!r}] "
            f"({int(bad.sum())} such rows): use method 'turnbull'"
        )


def fit_sample(sample: CheckedSample, method: str, **options: Any) -> Sampler:
    """Catalog-style fitter (``fitter(sample, method, **options)``) for plain checked values.

    Right-censored flags become right-censored rows; no truncation. This is how a catalog
    entry such as ``turnbull`` is reached from ``fit(values, "turnbull", censored=...)``.
    """
    flags = sample.censored if sample.censored is not None else np.zeros(sample.n, bool)
    rows = incomplete_from_flags(sample.values, flags, weights=sample.weights)
    return fit_incomplete_sample(rows, method, n_dropped=sample.n_dropped, **options)


def _fit_family(sample: IncompleteSample, method: str, fixed: Mapping[str, float]) -> Any:
    """The family's fit, refused on data with (almost) no spread as complete data are
    (:mod:`~samplewright.fitting.mle_spread`, on the rows' finite ends).

    Floating-point warnings are silenced (the answer is checked) and a numerical solver's
    ValueError (NaN on extreme parameters) becomes a FitError naming the method.
    """
    lo, hi = sample.lower, sample.upper
    points = np.concatenate([lo, hi[lo != hi]])  # an exact row counts once
    ends = Obs(points[np.isfinite(points)])
    try:
        with np.errstate(all="ignore"):
            r = fit_incomplete(sample, method, fixed=fixed)
    except SamplewrightError:
        raise
    except ValueError as exc:
        err = FitError(f"{method}: a numerical solver failed: {exc}")
        raise explain_failure(method, ends, err) or err from None
    if not r.converged:
        err = FitError(
            f"{method}: the optimiser did not converge within its budget ({r.n_iter} "
            "iterations); the best point found is not a maximum"
        )
        raise explain_failure(method, ends, err) or err
    if r.n_params and ends.n:
        check_collapse(method, ends, r.loglik, r.n_obs)
    return r


def _family_diagnostics(sample: IncompleteSample, r: IncompleteFitResult) -> dict[str, Any]:
    t = sample.truncation
    return {
        "estimator": "maximum_likelihood",
        "n_rows": sample.n_rows,
        "n_exact": r.n_exact,
        "n_right": r.n_right,
        "n_left": r.n_left,
        "n_interval": r.n_interval,
        "n_truncated": r.n_truncated,
        "total_weight": r.n_obs,
        "truncation_min": float(t[t > -np.inf].min()) if np.any(t > -np.inf) else None,
        "mass_above_truncation": r.mass_above_truncation,
        "n_iter": r.n_iter,
    }


# ---------------------------------------------------------------------------------------------
# ranking


@dataclass(frozen=True)
class IncompleteRankResult:
    """One candidate family fitted to incomplete data; ``error`` holds why a fit failed.

    Attributes
    ----------
    family : str
    params : dict
        Fitted parameters (fixed ones included), package names.
    loglik, aic, bic : float
        Of the incomplete-data likelihood (NaN when the fit failed).
    n_params : int
        Estimated parameters.
    mass_above_truncation : float
        Fitted mass above the smallest truncation point (1.0 without truncation).
    error : str or None
        The one-line reason the fit failed.
    diagnostics : dict
        What a fit of the family records under ``diagnostics["incomplete"]`` (counts of the
        rows of each kind, truncation, iterations); empty when the fit failed.
    """

    family: str
    params: dict[str, float] = field(default_factory=dict)
    loglik: float = float("nan")
    n_params: int = 0
    aic: float = float("nan")
    bic: float = float("nan")
    mass_above_truncation: float = float("nan")
    error: str | None = None
    diagnostics: dict[str, Any] = field(default_factory=dict)

    @property
    def ok(self) -> bool:
        """Whether the fit succeeded."""
        return self.error is None


def incomplete_candidates(sample: IncompleteSample) -> tuple[str, ...]:
    """Default candidates: positive families when every exact value is > 0 and no finite end is
    below 0 (left-censored rows may start at -inf or 0), else real-line families.

    >>> incomplete_candidates(incomplete_sample([1.0, 0.0], [1.0, 2.0]))
    ('lognormal', 'gamma', 'weibull', 'exponential', 'inverse_gaussian')
    """
    lo, hi = sample.lower, sample.upper
    exact = sample.is_exact
    ends = np.concatenate([lo[np.isfinite(lo)], hi[np.isfinite(hi)]])
    positive = bool(np.all(lo[exact] > 0) and np.all(ends >= 0) and np.all(hi > 0))
    return _POSITIVE if positive else _REAL_LINE


def rank_incomplete(
    sample: IncompleteSample,
    families: Sequence[str],
    *,
    criterion: Criterion = "aic",
    options: Mapping[str, Mapping[str, Any]] | None = None,
) -> tuple[IncompleteRankResult, ...]:
    """Fit every candidate family to the same incomplete rows and order them best first.

    Rule (that of ``auto``): among the fits that succeeded, the lowest ``criterion`` wins
    (criteria equal to 8 decimal places tie), a tie goes to fewer estimated parameters, then
    to the family listed first; failed fits (refused, not converged) follow in the order
    listed, each with its one-line ``error``. Every family uses the same likelihood (densities
    of exact rows, probabilities of censored ones, divided by the mass above each truncation
    point), so the criteria compare.

    Parameters
    ----------
    sample : IncompleteSample
    families : sequence of str
        Distinct names from :data:`INCOMPLETE_FAMILIES`.
    criterion : {"aic", "bic"}
    options : mapping, optional
        Options per family, e.g. ``{"gamma": {"loc": 0.0}}``.

    Examples
    --------
    >>> x = np.random.default_rng(3).gamma(4.0, 2.0, 300)
    >>> s = incomplete_from_flags(x[x > 5], np.zeros((x > 5).sum(), bool), truncation=5.0)
    >>> [c.family for c in rank_incomplete(s, ["exponential", "gamma"])]
    ['gamma', 'exponential']
    """
    if criterion not in CRITERIA:
        raise MethodError(f"criterion: expected 'aic' or 'bic', found {criterion!r}")
    names = list(families)
    if not names:
        raise MethodError("families: expected at least one family name, found none")
    if len(set(names)) != len(names):
        raise MethodError(f"families: expected distinct names, found {names}")
    bad = [n for n in names if n not in INCOMPLETE_FAMILIES]
    if bad:
        raise MethodError(
            f"families: {bad[0]!r} is not fitted to incomplete data; expected names from: "
            f"{', '.join(INCOMPLETE_FAMILIES)}"
        )
    options = dict(options or {})
    extra = sorted(set(options) - set(names))
    if extra:
        raise MethodError(f"options: family {extra[0]!r} is not among the candidates")
    fixed = {n: incomplete_fixed(n, options.get(n, {})) for n in names}
    ok: list[tuple[tuple[float, int, int], IncompleteRankResult]] = []
    failed: list[IncompleteRankResult] = []
    for i, name in enumerate(names):
        try:
            r = _fit_family(sample, name, fixed[name])
        except (FitError, MethodError) as err:
            failed.append(IncompleteRankResult(name, error=str(err)))
            continue
        cand = IncompleteRankResult(
            name,
            dict(r.params),
            r.loglik,
            r.n_params,
            r.aic,
            r.bic,
            r.mass_above_truncation,
            diagnostics=_family_diagnostics(sample, r),
        )
        ok.append(((round(r.aic if criterion == "aic" else r.bic, 8), r.n_params, i), cand))
    ok.sort(key=lambda t: t[0])
    return tuple(c for _, c in ok) + tuple(failed)
