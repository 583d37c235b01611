"""Maximum-likelihood fits of the parametric families (``fit(values, method=<family>)``).

Options (their names per family are in :mod:`samplewright.fitting.catalog`; anything else is
refused with a MethodError naming it):

- ``loc`` for positive families: a number (fixed; the fit is made on ``x - loc``, default 0)
  or ``"free"`` (estimated by profiling the likelihood over the location; lognormal, exponential,
  gamma, weibull, loglogistic, inverse_gaussian, rayleigh). For gamma, weibull and loglogistic
  the likelihood is unbounded as ``loc`` approaches ``min(x)`` when the shape is below 1, so a
  free-location fit whose shape ends at or below 1, or that finds no interior maximum, is refused
  with a MethodError: pass ``loc`` as a number instead. pareto and generalized_pareto take only a
  number (their threshold is the analyst's choice).
- ``lower``/``upper``: fixed bounds for beta (default 0 and 1), uniform and triangular (default:
  estimated). ``xm`` (a number) fixes the pareto minimum (default: ``min(x - loc)``).
- ``n_trials`` (required, int >= 1) for binomial.

Weights act as frequency weights: the log-likelihood is ``sum(w * log f(x))`` and the sample
size used by BIC is ``sum(w)``. Right-censored values (``censored=``, True where the value is a
lower bound on the true one) contribute ``w * log S(x)`` instead; censoring is available for
every continuous family except uniform and triangular, with ``loc`` fixed.

Shape limits: gev and generalized_pareto are fitted with ``xi >= -1`` (below it the likelihood
is unbounded); student_t with ``nu <= 1e8`` (a larger ``nu`` is a normal fit).

Every fit is checked: the log-likelihood must be finite and the fitted support must contain every
uncensored value (scipy's generic optimiser can silently return a location above the smallest
value). Closed-form estimates are used where they exist (:mod:`.mle_fits`); the rest use the
optimiser helpers of :mod:`.optimise`.
"""

from __future__ import annotations

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
from samplewright.fitting.mle_fits import (
    CENSORED_FITTERS,
    FITTERS,
    CensFitter,
    Fitter,
    loc_option,
    shifted,
)
from samplewright.fitting.optimise import Kind
from samplewright.fitting.registry import check_options, check_sample_for

__all__ = [
    "FAMILY_FITS",
    "FamilyFit",
    "FamilyFitResult",
    "fit_checked",
    "fit_family",
    "fit_parametric",
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


def _no_fixed(options: Mapping[str, Any]) -> frozenset[str]:
    return frozenset()


def _always_valid(params: Params) -> bool:
    return True


@dataclass(frozen=True)
class FamilyFit:
    """How one family is fitted.

    Attributes
    ----------
    fit : callable
        ``(x, w, options) -> params`` for uncensored values (location included).
    kinds : mapping
        Optimiser coordinate of each parameter a numerical maximisation may move
        (:data:`~samplewright.fitting.optimise.Kind`).
    fixed : callable
        options -> names of the parameters the options fix (not estimated).
    fit_censored : callable, optional
        ``(x, w, e, options) -> params`` with event weights ``e``; None maximises the censored
        likelihood numerically from the uncensored fit.
    valid : callable
        Whether parameters lie in the region the fit is restricted to.
    """

    fit: Fitter
    kinds: Mapping[str, Kind] = field(default_factory=dict)
    fixed: Callable[[Mapping[str, Any]], frozenset[str]] = _no_fixed
    fit_censored: CensFitter | None = None
    valid: Callable[[Params], bool] = _always_valid


def loglik(
    family: Family,
    params: Mapping[str, float],
    x: np.ndarray,
    w: np.ndarray,
    censored: np.ndarray | None = None,
) -> float:
    """Weighted log-likelihood of ``x`` under ``family(params)``; censored values use log S."""
    dist = family.bound(params)
    with np.errstate(divide="ignore"):
        if family.discrete:
            return float(np.sum(w * dist.logpmf(x)))
        if censored is None or not np.any(censored):
            return float(np.sum(w * dist.logpdf(x)))
        c = np.asarray(censored, dtype=bool)
        return float(np.sum(w[~c] * dist.logpdf(x[~c])) + np.sum(w[c] * dist.logsf(x[c])))


# ---------------------------------------------------------------------------------------------
# the table


def _free_loc_ok(name: str) -> bool:
    """Whether the catalog lets ``loc`` be ``"free"`` for this family."""
    return any("free" in o.choices for o in CATALOG[name].options if o.name == "loc")


def _fixed_loc(options: Mapping[str, Any]) -> frozenset[str]:
    return frozenset() if options.get("loc") == "free" else frozenset({"loc"})


def _positive(
    name: str,
    kinds: Mapping[str, Kind],
    *,
    strict: bool = True,
    shape: str | None = None,
    valid: Callable[[Params], bool] = _always_valid,
) -> FamilyFit:
    """A positive family: the location-0 fitters of :mod:`.mle_fits` plus ``loc``.

    ``strict``: values must exceed ``loc`` (else reach it); ``shape``: the parameter that must
    end above 1 in a free-location fit.
    """
    fit0, cens0 = FITTERS[name], CENSORED_FITTERS.get(name)

    def fit(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
        loc = loc_option(o, name, _free_loc_ok(name))
        if loc != "free":
            p = fit0(shifted(x, float(loc), name, strict), w, o)
            p["loc"] = float(loc)
            return p
        if name == "exponential":  # closed form: loc = min(x), scale = mean - min
            p = fit0(x - x.min(), w, o)
            p["loc"] = float(x.min())
            return p
        fam = FAMILIES[name]

        def inner(y: np.ndarray, wy: np.ndarray) -> tuple[Params, float]:
            p = fit0(y, wy, o)
            p["loc"] = 0.0
            return p, loglik(fam, p, y, wy)

        return _mle.profile_threshold(inner, x, w, label=name, shape=shape)

    def fit_censored(x: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
        assert cens0 is not None
        loc = float(loc_option(o, name, False))
        p = cens0(shifted(x, loc, name, strict), w, e, o)
        p["loc"] = loc
        return p

    return FamilyFit(fit, kinds, _fixed_loc, None if cens0 is None else fit_censored, valid)


def _bounds_given(options: Mapping[str, Any]) -> frozenset[str]:
    return frozenset(k for k in ("lower", "upper") if k in options)


_LOG: Kind = ("log",)
FAMILY_FITS: dict[str, FamilyFit] = {
    "normal": FamilyFit(FITTERS["normal"], {"mu": ("real", "sigma"), "sigma": _LOG}),
    "lognormal": _positive("lognormal", {"mu": ("real", "sigma"), "sigma": _LOG}),
    "exponential": _positive("exponential", {"scale": _LOG}, strict=False),
    "gamma": _positive("gamma", {"shape": _LOG, "scale": _LOG}, shape="shape"),
    "weibull": _positive("weibull", {"shape": _LOG, "scale": _LOG}, shape="shape"),
    "gumbel": FamilyFit(FITTERS["gumbel"], {"mu": ("real", "beta"), "beta": _LOG}),
    "logistic": FamilyFit(FITTERS["logistic"], {"mu": ("real", "s"), "s": _LOG}),
    "loglogistic": _positive("loglogistic", {"alpha": _LOG, "beta": _LOG}, shape="beta"),
    "pareto": _positive("pareto", {"alpha": _LOG}),
    "generalized_pareto": _positive(
        "generalized_pareto",
        {"xi": ("real", 1.0), "sigma": _LOG},
        strict=False,
        valid=lambda p: p["xi"] >= -1.0,
    ),
    "gev": FamilyFit(
        FITTERS["gev"],
        {"mu": ("real", "sigma"), "sigma": _LOG, "xi": ("real", 1.0)},
        valid=lambda p: p["xi"] >= -1.0,
    ),
    "beta": FamilyFit(
        FITTERS["beta"],
        {"alpha": _LOG, "beta": _LOG},
        fixed=lambda o: frozenset({"lower", "upper"}),
    ),
    "uniform": FamilyFit(FITTERS["uniform"], fixed=_bounds_given),
    "triangular": FamilyFit(FITTERS["triangular"], fixed=_bounds_given),
    "inverse_gaussian": _positive("inverse_gaussian", {"mu": _LOG, "lambda": _LOG}),
    "student_t": FamilyFit(
        FITTERS["student_t"],
        {"mu": ("real", "sigma"), "sigma": _LOG, "nu": _LOG},
        valid=lambda p: p["nu"] <= 1e8,  # beyond, the fit is a normal one: stop there
    ),
    "rayleigh": _positive("rayleigh", {"sigma": _LOG}, strict=False),
    "poisson": FamilyFit(FITTERS["poisson"]),
    "negative_binomial": FamilyFit(FITTERS["negative_binomial"]),
    "geometric": FamilyFit(FITTERS["geometric"]),
    "binomial": FamilyFit(FITTERS["binomial"], fixed=lambda o: frozenset({"n_trials"})),
}


def free_params(name: str, options: Mapping[str, Any]) -> list[str]:
    """Parameters of family ``name`` that a fit with ``options`` estimates, in order."""
    fixed = FAMILY_FITS[name].fixed(options)
    return [k for k in get_family(name).param_names if k not in fixed]


# ---------------------------------------------------------------------------------------------
# fitting


def _fit_censored_generic(
    family: Family, x: np.ndarray, w: np.ndarray, c: np.ndarray, options: Mapping[str, Any]
) -> Params:
    """Maximise the censored likelihood from the fit that treats every value as observed."""
    how = FAMILY_FITS[family.name]
    try:
        start = how.fit(x, w, options)
    except (FitError, MethodError):  # e.g. many values censored at one time: start from events
        start = how.fit(x[~c], w[~c], options)
    start = {k: float(start[k]) for k in family.param_names}
    total = float(np.sum(w))

    def mean_loglik(p: Params) -> float:
        return loglik(family, p, x, w, c) / total if how.valid(p) else -np.inf

    return _mle.maximise_params(
        mean_loglik,
        start,
        free_params(family.name, options),
        how.kinds,
        label=f"{family.name} (censored)",
    )


def fit_checked(
    family: Family, sample: CheckedSample, options: Mapping[str, Any]
) -> FamilyFitResult:
    """Fit ``family`` to a checked sample (options names already checked; see fit_family)."""
    name = family.name
    how = FAMILY_FITS[name]
    x = sample.values
    w = sample.weights_or_ones()
    c = sample.censored if sample.any_censored else None
    if c is None:
        params = how.fit(x, w, options)
    else:
        if options.get("loc") == "free":
            raise MethodError(
                f"censored: {name} with loc='free' is not offered; pass loc as a number"
            )
        e = np.where(c, 0.0, w)
        if not e.sum() > 0:
            raise MethodError("censored: every value is censored; at least one must be observed")
        if how.fit_censored is not None:
            params = how.fit_censored(x, w, e, options)
        else:
            params = _fit_censored_generic(family, x, w, c, options)
    params = {k: float(params[k]) for k in family.param_names}
    ll = loglik(family, params, x, w, c)
    if not np.isfinite(ll):
        raise FitError(f"{name}: fit reached a non-finite log-likelihood ({ll}) with {params}")
    lo, hi = family.bound(params).support()
    obs = x if c is None else x[~c]
    if obs.min() < lo or obs.max() > hi:
        raise FitError(
            f"{name}: fitted support [{lo}, {hi}] does not contain the data "
            f"[{obs.min()}, {obs.max()}]"
        )
    n_params = len(family.param_names) - len(how.fixed(options))
    return FamilyFitResult(name, params, ll, n_params, float(np.sum(w)))


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
        Family options, see the module docstring.

    Returns
    -------
    FamilyFitResult
        Parameters (fixed ones included), log-likelihood, number of estimated parameters.

    Raises
    ------
    MethodError
        Bad input or option, or data the family cannot describe.
    FitError
        The optimiser failed or reached an impossible answer.

    Examples
    --------
    >>> out = fit_family("exponential", np.array([1.0, 2.0, 3.0]))
    >>> out.params["scale"], round(out.loglik, 6)
    (2.0, -5.079442)
    """
    family = get_family(name)
    spec = check_options(name, options)
    return fit_checked(family, check_sample_for(spec, x, w, censored), options)


def fit_parametric(sample: CheckedSample, method: str, **options: Any) -> ParametricSampler:
    """Catalog fitter of every family: the fit as a sampler carrying loglik, AIC and BIC."""
    out = fit_checked(get_family(method), sample, options)
    return ParametricSampler(method, out.params, loglik=out.loglik, aic=out.aic, bic=out.bic)
