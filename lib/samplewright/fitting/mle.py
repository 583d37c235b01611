"""Maximum-likelihood fits of the parametric families (``fit(values, method=<family>)``).

Options (declared per family in :mod:`samplewright.fitting.catalog`; anything else is refused
with a MethodError naming it):

- **Any parameter, by its own name, fixes it at a number**: ``fit(x, "weibull", shape=1.5)``
  fits the scale alone (``**{"lambda": 2.0}`` where the name is a Python keyword). A fixed
  parameter is stored with the others and not counted in ``n_params``, AIC or BIC. Values are
  checked: scales, shapes, rates and ``r`` > 0, ``p`` in (0, 1), ``xi`` >= -1, student_t ``nu``
  at most 1e8. Parameters a family's own estimator cannot hold fixed are fitted numerically
  with the given ones held (from the family's estimate as a start).
- ``loc`` of positive families follows the same rule with a default: a number (fixed, the fit
  is made on ``x - loc``; default 0) or ``"free"`` (estimated by profiling the likelihood over
  the location; lognormal, exponential, gamma, weibull, loglogistic, inverse_gaussian,
  rayleigh). For gamma, weibull and loglogistic the likelihood is unbounded as ``loc`` approaches
  ``min(x)`` when the shape is below 1, so a free-location fit whose shape ends at or below 1, or
  that finds no interior maximum, is refused with a MethodError: pass ``loc`` as a number.
- ``lower``/``upper`` of beta are always fixed (default 0 and 1); of uniform and triangular they
  are estimated unless given. ``xm`` of pareto is estimated as ``min(x - loc)`` unless given.
- ``n_trials`` (required, int >= 1) for binomial.

Weights act as frequency weights: the log-likelihood is ``sum(w * log f(x))`` and the sample
size used by BIC is ``sum(w)``. Right-censored values (``censored=``, True where the value is a
lower bound on the true one) contribute ``w * log S(x)`` instead; censoring is available for
every continuous family except uniform and triangular, with ``loc`` fixed.

A value outside what the family (with its fixed parameters) can produce, such as a 0 for
rayleigh, a value below ``loc``, a negative or fractional count, is an input error: a
MethodError naming the value and its row (counted from 1 among rows of positive weight).

Every fit is checked: the log-likelihood must be finite, the fitted support (scipy's) must
contain every uncensored value (scipy's generic optimiser can silently return a location above
the smallest value), and a continuous fit must not shrink onto a point: data with (almost) no
spread are refused with a MethodError that says so (:mod:`.mle_spread`). Every fit ends in
bounded time: closed forms where they exist (:mod:`.mle_fits`, their log-likelihood from the
same sums), one-dimensional solvers with step caps, and a numerical optimiser with a cap on
evaluations (:mod:`.optimise`) for the rest (:mod:`.mle_numeric`, :mod:`.mle_bounded`,
:mod:`.mle_student_t`). Location-scale families are fitted to standardised values, so values of
any magnitude work; values whose spread overflows float64 are refused with a MethodError naming
them.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from samplewright.core.checks import CheckedSample
from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.families import FAMILIES, Family, Params, get_family
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting import optimise as _mle
from samplewright.fitting.catalog import CATALOG
from samplewright.fitting.mle_bounded import fit_triangular, fit_uniform
from samplewright.fitting.mle_fits import (
    CENSORED_FITTERS,
    CENSORED_FIXABLE,
    FITTERS,
    FITTERS0,
    FIXABLE,
    CensFitter,
    Fitted,
    Fitter0,
    check_shift,
    loc_option,
)
from samplewright.fitting.mle_numeric import (
    fit0_generalized_pareto,
    fit0_loglogistic,
    fit_beta,
    fit_gev,
    fit_logistic,
)
from samplewright.fitting.mle_options import fixed_options
from samplewright.fitting.mle_spread import check_collapse, explain_failure
from samplewright.fitting.mle_student_t import NU_MAX, fit_student_t
from samplewright.fitting.mle_sums import Obs, dot, refuse_outside
from samplewright.fitting.mle_warnings import fit_warnings
from samplewright.fitting.optimise import Kind
from samplewright.fitting.registry import check_options, check_sample_for

__all__ = [
    "FAMILY_FITS",
    "FamilyFit",
    "FamilyFitResult",
    "fit_checked",
    "fit_family",
    "fit_parametric",
    "fixed_names",
    "fixed_options",
    "free_params",
    "loglik",
]


@dataclass(frozen=True)
class FamilyFitResult:
    """Result of a maximum-likelihood fit of one family (``n_params`` counts estimated ones)."""

    family: str
    params: Params
    loglik: float
    n_params: int
    n_obs: float

    @property
    def aic(self) -> float:
        """Akaike's criterion ``2 n_params - 2 loglik``."""
        return 2.0 * self.n_params - 2.0 * self.loglik

    @property
    def bic(self) -> float:
        """Schwarz's criterion ``n_params log(n_obs) - 2 loglik``."""
        return self.n_params * float(np.log(self.n_obs)) - 2.0 * self.loglik


def _always_valid(params: Params) -> bool:
    return True


@dataclass(frozen=True)
class FamilyFit:
    """How one family is fitted.

    Attributes
    ----------
    fit : callable
        ``(obs, options) -> (params, loglik or None)`` for uncensored values (location
        included; options already checked by :func:`fixed_options`).
    kinds : mapping
        Optimiser coordinate of each parameter a numerical maximisation may move
        (:data:`~samplewright.fitting.optimise.Kind`).
    fixable : frozenset
        Parameters ``fit`` holds at a value an option gives (the others are then fitted
        numerically with the given ones held).
    always_fixed : frozenset
        Parameters never estimated (beta's bounds, binomial's n_trials).
    fit_censored : callable, optional
        ``(y, w, e, options) -> params`` at location 0 with event weights ``e``; None maximises
        the censored likelihood numerically from the uncensored fit.
    valid : callable
        Whether parameters lie in the region the fit is restricted to.
    """

    fit: Callable[[Obs, Mapping[str, Any]], Fitted]
    kinds: Mapping[str, Kind] = field(default_factory=dict)
    fixable: frozenset[str] = frozenset()
    always_fixed: frozenset[str] = frozenset()
    fit_censored: CensFitter | None = None
    valid: Callable[[Params], bool] = _always_valid


def loglik(
    family: Family,
    params: Mapping[str, float],
    x: np.ndarray,
    w: np.ndarray | None = None,
    censored: np.ndarray | None = None,
) -> float:
    """Weighted log-likelihood of ``x`` under ``family(params)``; censored values use log S."""
    dist = family.bound(params)

    def total(v: Any, wt: np.ndarray | None) -> float:
        v = np.asarray(v, dtype=np.float64)
        return float(v.sum() if wt is None else dot(wt, v))

    with np.errstate(all="ignore"):
        if family.discrete:
            return total(dist.logpmf(x), w)
        if censored is None or not np.any(censored):
            return total(dist.logpdf(x), w)
        c = np.asarray(censored, dtype=bool)
        wo, wc = (None, None) if w is None else (w[~c], w[c])
        return total(dist.logpdf(x[~c]), wo) + total(dist.logsf(x[c]), wc)


# ---------------------------------------------------------------------------------------------
# options: fixed parameters


def fixed_names(name: str, options: Mapping[str, Any]) -> frozenset[str]:
    """Parameters of family ``name`` that ``options`` fix (not estimated)."""
    if not options and name in _DEFAULT_FIXED:
        return _DEFAULT_FIXED[name]
    fam = get_family(name)
    given = {k for k in fam.param_names if k in options and options[k] != "free"}
    if fam.positive and options.get("loc") != "free":
        given.add("loc")  # default 0
    return frozenset(given) | FAMILY_FITS[name].always_fixed


_DEFAULT_FIXED: dict[str, frozenset[str]] = {}  # filled below, once the table exists


def free_params(name: str, options: Mapping[str, Any]) -> list[str]:
    """Parameters of family ``name`` that a fit with ``options`` estimates, in order."""
    fixed = fixed_names(name, options)
    return [k for k in get_family(name).param_names if k not in fixed]


# ---------------------------------------------------------------------------------------------
# the table


def _free_loc_ok(name: str) -> bool:
    """Whether the catalog lets ``loc`` be ``"free"`` for this family."""
    return any("free" in o.choices for o in CATALOG[name].options if o.name == "loc")


def _positive(
    name: str,
    fit0: Fitter0,
    kinds: Mapping[str, Kind],
    fixable: frozenset[str],
    *,
    shape: str | None = None,
    valid: Callable[[Params], bool] = _always_valid,
) -> FamilyFit:
    """A positive family: a location-0 fitter plus ``loc`` (a number, or ``"free"``).

    ``shape``: the parameter that must end above 1 in a free-location fit.
    """
    free_ok = _free_loc_ok(name)

    def fit(obs: Obs, o: Mapping[str, Any]) -> Fitted:
        loc = loc_option(o, name, free_ok)
        if loc != "free":
            p, ll = fit0(obs, float(loc), o)
            return {**p, "loc": float(loc)}, ll
        if name == "exponential":  # closed form: loc = min(x), scale = mean - min
            p, ll = fit0(obs, obs.lo, o)
            return {**p, "loc": obs.lo}, ll
        fam = FAMILIES[name]

        def inner(at: float) -> tuple[Params, float]:
            p, ll = fit0(obs, at, o)
            p = {**p, "loc": at}
            return p, (loglik(fam, p, obs.x, obs.w) if ll is None else ll)

        return _mle.profile_threshold(inner, obs.lo, obs.hi, label=name, shape=shape), None

    cens0 = CENSORED_FITTERS.get(name)
    return FamilyFit(fit, kinds, fixable | {"loc"}, fit_censored=cens0, valid=valid)


_LOG: Kind = ("log",)
_REAL: Kind = ("real", 1.0)
FAMILY_FITS: dict[str, FamilyFit] = {
    "normal": FamilyFit(
        FITTERS["normal"], {"mu": ("real", "sigma"), "sigma": _LOG}, FIXABLE["normal"]
    ),
    "lognormal": _positive(
        "lognormal",
        FITTERS0["lognormal"],
        {"mu": ("real", "sigma"), "sigma": _LOG},
        FIXABLE["lognormal"],
    ),
    "exponential": _positive(
        "exponential", FITTERS0["exponential"], {"scale": _LOG}, FIXABLE["exponential"]
    ),
    "gamma": _positive(
        "gamma",
        FITTERS0["gamma"],
        {"shape": _LOG, "scale": _LOG},
        FIXABLE["gamma"],
        shape="shape",
    ),
    "weibull": _positive(
        "weibull",
        FITTERS0["weibull"],
        {"shape": _LOG, "scale": _LOG},
        FIXABLE["weibull"],
        shape="shape",
    ),
    "gumbel": FamilyFit(
        FITTERS["gumbel"], {"mu": ("real", "beta"), "beta": _LOG}, FIXABLE["gumbel"]
    ),
    "logistic": FamilyFit(fit_logistic, {"mu": ("real", "s"), "s": _LOG}, frozenset({"mu", "s"})),
    "loglogistic": _positive(
        "loglogistic",
        fit0_loglogistic,
        {"alpha": _LOG, "beta": _LOG},
        frozenset({"alpha", "beta"}),
        shape="beta",
    ),
    "pareto": _positive("pareto", FITTERS0["pareto"], {"alpha": _LOG}, FIXABLE["pareto"]),
    "generalized_pareto": _positive(
        "generalized_pareto",
        fit0_generalized_pareto,
        {"xi": _REAL, "sigma": _LOG},
        frozenset({"xi", "sigma"}),
        valid=lambda p: p["xi"] >= -1.0,
    ),
    "gev": FamilyFit(
        fit_gev,
        {"mu": ("real", "sigma"), "sigma": _LOG, "xi": _REAL},
        frozenset({"mu", "sigma", "xi"}),
        valid=lambda p: p["xi"] >= -1.0,
    ),
    "beta": FamilyFit(
        fit_beta,
        {"alpha": _LOG, "beta": _LOG},
        frozenset({"alpha", "beta", "lower", "upper"}),
        always_fixed=frozenset({"lower", "upper"}),
    ),
    "uniform": FamilyFit(fit_uniform, fixable=frozenset({"lower", "upper"})),
    "triangular": FamilyFit(fit_triangular, fixable=frozenset({"lower", "mode", "upper"})),
    "inverse_gaussian": _positive(
        "inverse_gaussian",
        FITTERS0["inverse_gaussian"],
        {"mu": _LOG, "lambda": _LOG},
        FIXABLE["inverse_gaussian"],
    ),
    "student_t": FamilyFit(
        fit_student_t,
        {"mu": ("real", "sigma"), "sigma": _LOG, "nu": _LOG},
        frozenset({"mu", "sigma", "nu"}),
        valid=lambda p: p["nu"] <= NU_MAX,  # beyond, the fit is a normal one: stop there
    ),
    "rayleigh": _positive("rayleigh", FITTERS0["rayleigh"], {"sigma": _LOG}, FIXABLE["rayleigh"]),
    "poisson": FamilyFit(FITTERS["poisson"], {"lambda": _LOG}, FIXABLE["poisson"]),
    "negative_binomial": FamilyFit(
        FITTERS["negative_binomial"], {"r": _LOG}, FIXABLE["negative_binomial"]
    ),
    "geometric": FamilyFit(FITTERS["geometric"], {"p": _LOG}, FIXABLE["geometric"]),
    "binomial": FamilyFit(
        FITTERS["binomial"],
        {"p": _LOG},
        FIXABLE["binomial"],
        always_fixed=frozenset({"n_trials"}),
    ),
}


_DEFAULT_FIXED.update({name: fixed_names(name, {}) for name in FAMILY_FITS})


# ---------------------------------------------------------------------------------------------
# fitting


def _fit_numeric(family: Family, obs: Obs, o: Mapping[str, Any], held: set[str]) -> Params:
    """Fit with parameters ``held`` (which the family's estimator cannot hold) at their values:
    the estimate without them is the start, then the free ones are maximised numerically."""
    name = family.name
    how = FAMILY_FITS[name]
    if o.get("loc") == "free":
        raise MethodError(
            f"{name}: loc='free' together with fixed {', '.join(sorted(held))} is not offered; "
            "pass loc as a number"
        )
    start, _ = how.fit(obs, {k: v for k, v in o.items() if k not in held})
    start = {k: float(start[k]) for k in family.param_names}
    start.update({k: float(o[k]) for k in held})
    free = free_params(name, o)
    if not free:
        return start
    x, w, total = obs.x, obs.w, obs.total

    def mean_ll(p: Params) -> float:
        return loglik(family, p, x, w) / total if how.valid(p) else -np.inf

    label = f"{name} with {', '.join(sorted(held))} fixed"
    return _mle.maximise_params(mean_ll, start, free, how.kinds, label=label)


def _fit_uncensored(family: Family, obs: Obs, o: Mapping[str, Any]) -> Fitted:
    how = FAMILY_FITS[family.name]
    if o:
        held = {k for k in family.param_names if k in o and k not in how.fixable}
        if held:
            return _fit_numeric(family, obs, o, held), None
    return how.fit(obs, o)


def _fit_censored(family: Family, obs: Obs, c: np.ndarray, o: Mapping[str, Any]) -> Params:
    """Right-censored fit: a closed form where one exists, else the censored likelihood
    maximised from the fit that treats every value as observed."""
    name = family.name
    how = FAMILY_FITS[name]
    if o.get("loc") == "free":
        raise MethodError(f"censored: {name} with loc='free' is not offered; pass loc as a number")
    x, w = obs.x, obs.weights()
    e = np.where(c, 0.0, w)
    if not e.sum() > 0:
        raise MethodError("censored: every value is censored; at least one must be observed")
    given = {k for k in family.param_names if k in o and k != "loc"}
    if how.fit_censored is not None and given <= CENSORED_FIXABLE.get(name, frozenset()):
        loc = float(loc_option(o, name, False))
        check_shift(obs, loc, name, name not in ("exponential", "generalized_pareto"))
        return {**how.fit_censored(x - loc, w, e, o), "loc": loc}
    try:
        start, _ = _fit_uncensored(family, obs, o)
    except (FitError, MethodError):  # e.g. many values censored at one time: start from events
        start, _ = _fit_uncensored(family, obs.subset(~c), o)
    start = {k: float(start[k]) for k in family.param_names}
    total = obs.total

    def mean_ll(p: Params) -> float:
        return loglik(family, p, x, obs.w, c) / total if how.valid(p) else -np.inf

    free = free_params(name, o)
    if not free:
        return start
    return _mle.maximise_params(mean_ll, start, free, how.kinds, label=f"{name} (censored)")


def fit_checked(
    family: Family, sample: CheckedSample, options: Mapping[str, Any]
) -> FamilyFitResult:
    """Fit ``family`` to a checked sample (options names already checked; see fit_family)."""
    name = family.name
    o = fixed_options(name, options)
    obs = Obs(sample.values, sample.weights, sample.n_dropped)
    c = sample.censored if sample.any_censored else None
    ll: float | None = None
    # floating-point warnings are silenced: every result is checked below (finite, in support)
    with np.errstate(all="ignore"):
        try:
            if c is None:
                params, ll = _fit_uncensored(family, obs, o)
            else:
                params = _fit_censored(family, obs, c, o)
        except FitError as err:  # on data with (almost) no spread, say so
            better = None if family.discrete else explain_failure(name, obs, err)
            if better is None:
                raise
            raise better from None
        params = {k: float(params[k]) for k in family.param_names}
        if ll is None:
            ll = loglik(family, params, obs.x, obs.w, c)
    n_params = len(family.param_names) - len(fixed_names(name, o))
    ll = float(ll)
    lo, hi = family.support(params)
    seen = obs if c is None else obs.subset(~c)
    outside = (lo > -math.inf and seen.lo < lo) or (hi < math.inf and seen.hi > hi)
    if n_params == 0 and (outside or not math.isfinite(ll)):  # every parameter was given
        with np.errstate(all="ignore"):
            dens = family.bound(params).logpmf if family.discrete else family.bound(params).logpdf
            bad = ~np.isfinite(np.asarray(dens(obs.x), dtype=np.float64))
        refuse_outside(obs, bad, f"{name} with the given parameters {params} gives density 0")
    if not math.isfinite(ll):
        raise FitError(f"{name}: fit reached a non-finite log-likelihood ({ll}) with {params}")
    if outside:
        raise FitError(
            f"{name}: fitted support [{lo}, {hi}] does not contain the data [{seen.lo}, {seen.hi}]"
        )
    if n_params and not family.discrete:
        check_collapse(name, obs, ll)  # a density narrower than the data's rounding
    return FamilyFitResult(name, params, ll, n_params, obs.total)


def fit_family(
    name: str,
    x: Any,
    w: Any = None,
    *,
    censored: Any = None,
    **options: Any,
) -> FamilyFitResult:
    """Maximum-likelihood fit of family ``name`` to values ``x`` (frequency weights ``w``).

    Parameters
    ----------
    name : str
        A family name (see :mod:`samplewright.distributions.families`).
    x : array_like
        1-d finite values.
    w : array_like, optional
        Non-negative frequency weights (default 1); rows of weight 0 are dropped.
    censored : array_like of bool, optional
        True where ``x`` is right-censored (the true value is larger). Continuous families only.
    **options
        Family options, see the module docstring (a parameter's name fixes it).

    Returns
    -------
    FamilyFitResult
        Parameters (fixed ones included), log-likelihood, number of estimated parameters.

    Raises
    ------
    MethodError
        Bad input or option, a value outside the family's support, or data the family cannot
        describe.
    FitError
        The optimiser failed or reached an impossible answer.

    Examples
    --------
    >>> out = fit_family("exponential", np.array([1.0, 2.0, 3.0]))
    >>> out.params["scale"], round(out.loglik, 6)
    (2.0, -5.079442)
    >>> fixed = fit_family("weibull", np.array([1.0, 2.0, 3.0]), shape=2.0)
    >>> fixed.params["shape"], fixed.n_params
    (2.0, 1)
    """
    family = get_family(name)
    spec = check_options(name, options)
    return fit_checked(family, check_sample_for(spec, x, w, censored), options)


def fit_parametric(sample: CheckedSample, method: str, **options: Any) -> ParametricSampler:
    """Catalog fitter of every family: the fit as a sampler carrying loglik, AIC and BIC, and
    its warnings (:mod:`.mle_warnings`) in ``diagnostics["warnings"]``."""
    family = get_family(method)
    out = fit_checked(family, sample, options)
    warnings = [w.as_dict() for w in fit_warnings(family, out.params, sample.values)]
    return ParametricSampler(
        method,
        out.params,
        loglik=out.loglik,
        aic=out.aic,
        bic=out.bic,
        diagnostics={"warnings": warnings},
    )
