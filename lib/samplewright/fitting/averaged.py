"""Model averaging: candidate families weighted by Akaike weights into one sampler (``averaged``).

Every candidate family is fitted by maximum likelihood to the same data (weights and right
censoring as :mod:`samplewright.fitting.mle` handles them). With ``IC_i`` the information
criterion of candidate ``i`` (``criterion``: ``aic`` = ``2 k - 2 log L``, or ``bic`` =
``k log n - 2 log L``) and ``Delta_i = IC_i - min_j IC_j``, its weight is::

    w_i = exp(-Delta_i / 2) / sum_j exp(-Delta_j / 2)

the Akaike weights of Burnham & Anderson (2002), *Model Selection and Multimodel Inference*,
2nd ed., section 2.9; with BIC the same formula gives the posterior model probabilities under
equal prior probabilities (their section 6.4, from memory). The result is the mixture
``F = sum_i w_i F_i`` (:class:`~samplewright.distributions.averaged.AveragedSampler`), so draws
carry the uncertainty about which family is right instead of betting on one.

Options:

* ``candidates``: family names (default: ``lognormal, gamma, weibull, exponential,
  inverse_gaussian`` when every value is > 0, else ``normal, logistic, gumbel, student_t``;
  these defaults are continuous even for whole-number data, which may be measurements). Count
  families may be averaged among themselves; a list mixing count and continuous families is
  refused, because a likelihood of a pmf and one of a density are not comparable.
* ``criterion``: ``aic`` (default) or ``bic``.

Each candidate is fitted with its default options. A candidate that cannot be fitted (or does
not handle censored data) is recorded with its error and weight 0; so is one whose weight
underflows to 0 (``Delta`` above about 1,490). Every candidate's log-likelihood, number of
parameters, AIC, BIC, ``Delta`` and weight are in the sampler's ``diagnostics["averaged"]``.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from samplewright.core.checks import CheckedSample, check_sample
from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.averaged import AveragedSampler
from samplewright.distributions.families import FAMILIES, get_family
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.catalog import CATALOG, CRITERIA
from samplewright.fitting.mle import FamilyFitResult, fit_checked

__all__ = [
    "DEFAULT_POSITIVE",
    "DEFAULT_REAL_LINE",
    "OPTIONS",
    "akaike_weights",
    "default_candidates",
    "fit_averaged",
    "fit_sample",
]

DEFAULT_POSITIVE = ("lognormal", "gamma", "weibull", "exponential", "inverse_gaussian")
DEFAULT_REAL_LINE = ("normal", "logistic", "gumbel", "student_t")
OPTIONS = frozenset({"candidates", "criterion"})
_NAME = "averaged"


def default_candidates(x: np.ndarray) -> tuple[str, ...]:
    """The candidates used when none are given: positive families when every value is > 0."""
    return DEFAULT_POSITIVE if np.all(x > 0) else DEFAULT_REAL_LINE


def akaike_weights(criteria: Sequence[float] | np.ndarray) -> np.ndarray:
    """``exp(-Delta_i / 2)`` normalised, ``Delta_i = IC_i - min IC``; a non-finite IC gets 0.

    Burnham & Anderson (2002), section 2.9.

    >>> akaike_weights([100.0, 102.0, float("nan")]).round(4).tolist()
    [0.7311, 0.2689, 0.0]
    """
    ic = np.asarray(criteria, dtype=np.float64).ravel()
    ok = np.isfinite(ic)
    if not ok.any():
        raise MethodError("criteria: expected at least one finite information criterion")
    delta = np.where(ok, ic - ic[ok].min(), np.inf)
    raw = np.exp(-0.5 * delta)
    return raw / raw.sum()


def _candidates(x: np.ndarray, given: Any) -> tuple[str, ...]:
    if given is None:
        return default_candidates(x)
    if isinstance(given, str) or not isinstance(given, list | tuple) or not given:
        raise MethodError(
            f"option 'candidates' of averaged: expected a list of family names, found {given!r}"
        )
    names = tuple(given)
    bad = [c for c in names if not isinstance(c, str) or c not in FAMILIES]
    if bad:
        raise MethodError(f"option 'candidates' of averaged: unknown family {bad[0]!r}")
    if len(set(names)) != len(names):
        raise MethodError(f"option 'candidates' of averaged: a family is listed twice: {names}")
    discrete = {get_family(c).discrete for c in names}
    if len(discrete) > 1:
        counts = [c for c in names if get_family(c).discrete]
        raise MethodError(
            "option 'candidates' of averaged: count families "
            f"({', '.join(counts)}) and continuous ones cannot be weighted together (a pmf's "
            "likelihood and a density's are not comparable)"
        )
    return names


def _fit_one(name: str, sample: CheckedSample) -> FamilyFitResult | str:
    """The fit of one candidate, or why it could not be made."""
    if sample.any_censored and not CATALOG[name].censoring:
        return f"MethodError: {name} does not handle censored data"
    try:
        return fit_checked(get_family(name), sample, {})
    except (MethodError, FitError) as exc:
        return f"{type(exc).__name__}: {exc}"


def fit_sample(sample: CheckedSample, method: str = _NAME, **options: Any) -> AveragedSampler:
    """Catalog fitter of ``averaged`` (options in the module docstring)."""
    unknown = sorted(set(options) - OPTIONS)
    if unknown:
        raise MethodError(
            f"unknown option {unknown[0]!r} for averaged (allowed: {', '.join(sorted(OPTIONS))})"
        )
    names = _candidates(sample.values, options.get("candidates"))
    criterion = options.get("criterion", "aic")
    if criterion not in CRITERIA:
        raise MethodError(
            f"option 'criterion' of averaged: expected 'aic' or 'bic', found {criterion!r}"
        )
    fits = {name: _fit_one(name, sample) for name in names}
    ok = [n for n in names if isinstance(fits[n], FamilyFitResult)]
    if not ok:
        first = next(iter(fits.values()))
        raise MethodError(f"averaged: no candidate could be fitted (first error: {first})")
    ic = [getattr(fits[n], criterion) for n in ok]
    weights = akaike_weights(ic)
    best = min(ic)  # fit_checked refuses non-finite log-likelihoods
    table: list[dict[str, Any]] = []
    components, labels, kept = [], [], []
    for name in names:
        res = fits[name]
        if isinstance(res, str):
            table.append({"family": name, "weight": 0.0, "error": res})
            continue
        w = float(weights[ok.index(name)])
        table.append(
            {
                "family": name,
                "params": dict(res.params),
                "loglik": res.loglik,
                "n_params": res.n_params,
                "aic": res.aic,
                "bic": res.bic,
                "delta": getattr(res, criterion) - best,
                "weight": w,
                "error": None,
            }
        )
        if w > 0.0:
            components.append(
                ParametricSampler(name, res.params, loglik=res.loglik, aic=res.aic, bic=res.bic)
            )
            labels.append(name)
            kept.append(w)
    diagnostics = {
        "averaged": {
            "criterion": criterion,
            "rule": "Akaike weights exp(-delta/2) / sum (Burnham & Anderson 2002, 2.9)",
            "candidates": table,
        }
    }
    w_kept = np.asarray(kept) / np.sum(kept)
    return AveragedSampler(
        components,
        w_kept,
        labels=labels,
        method=method,
        criterion=criterion,
        diagnostics=diagnostics,
    )


def fit_averaged(
    values: Any, weights: Any = None, censored: Any = None, **options: Any
) -> AveragedSampler:
    """The Akaike-weighted mixture of candidate families fitted to ``values``.

    Parameters
    ----------
    values : array_like
        1-d finite observations (at least 2).
    weights, censored : array_like, optional
        Frequency weights and right-censoring flags (as ``fit`` takes them).
    **options
        ``candidates`` (family names) and ``criterion`` (``aic`` or ``bic``); see the module
        docstring.

    Returns
    -------
    AveragedSampler
        Components labelled by family, weights in ``params["weights"]``, the whole comparison
        in ``diagnostics["averaged"]``.

    Examples
    --------
    >>> x = [3.1, 4.7, 2.2, 8.9, 5.0, 6.3, 3.8, 4.1]
    >>> s = fit_averaged(x, candidates=["lognormal", "gamma"])
    >>> s.labels, round(sum(s.params["weights"]), 12)
    (('lognormal', 'gamma'), 1.0)
    """
    sample = check_sample(values, weights, censored, min_n=2, what=_NAME)
    return fit_sample(sample, _NAME, **options)
