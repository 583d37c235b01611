"""Parametric families: trade names, parameters, maximum-likelihood fits, fast generators.

Each family maps to one scipy.stats distribution in this module and nowhere else. Parameters use
the trade's names and are stored in artifacts exactly as listed here:

============  ==========================  ======================================================
family        parameters                  meaning
============  ==========================  ======================================================
normal        mu, sigma                   mean and standard deviation
lognormal     mu, sigma, loc              mean and sd of log(x - loc)
exponential   scale, loc                  mean of x - loc (rate = 1 / scale)
gamma         shape, scale, loc           shape k, scale theta (mean k theta + loc)
weibull       shape, scale, loc           shape k, scale lambda
============  ==========================  ======================================================

Positive families have their location fixed at 0 unless the caller passes ``loc`` (a number:
the fit is made on ``x - loc``). Weights act as frequency weights: the log-likelihood is
``sum(w * log f(x))`` and the sample size used by BIC is ``sum(w)``.

Every fit is checked: the log-likelihood must be finite and the fitted support must contain every
data point (scipy's generic optimiser can silently return a location above the smallest value).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import optimize, special, stats

from .errors import FitError, MethodError

__all__ = ["FAMILIES", "Family", "FitOutcome", "fit_family", "get_family"]

Params = dict[str, float]


@dataclass(frozen=True)
class FitOutcome:
    """Result of a maximum-likelihood fit of one family."""

    family: str
    params: Params
    loglik: float
    n_params: int
    n_obs: float

    @property
    def aic(self) -> float:
        return 2.0 * self.n_params - 2.0 * self.loglik

    @property
    def bic(self) -> float:
        return self.n_params * float(np.log(self.n_obs)) - 2.0 * self.loglik


@dataclass(frozen=True)
class Family:
    """One parametric family: how to freeze it in scipy, fit it, and draw from it fast."""

    name: str
    param_names: tuple[str, ...]
    positive: bool
    discrete: bool
    min_obs: int
    _freeze: Callable[[Params], Any]
    _fit: Callable[[np.ndarray, np.ndarray, Mapping[str, Any]], Params]
    _draw: Callable[[Params, int | tuple[int, ...], np.random.Generator], np.ndarray] | None = None

    def frozen(self, params: Mapping[str, float]) -> Any:
        """The scipy frozen distribution for these parameters."""
        return self._freeze(dict(params))

    def draw(self, params: Mapping[str, float], size: int | tuple[int, ...],
             rng: np.random.Generator) -> np.ndarray:
        """Draws by the family's native numpy generator, else by inverse transform."""
        if self._draw is not None:
            return self._draw(dict(params), size, rng)
        return np.asarray(self.frozen(params).ppf(rng.random(size)))

    def fit(self, x: np.ndarray, w: np.ndarray | None = None, **options: Any) -> FitOutcome:
        """Maximum-likelihood fit with the checks described in the module docstring."""
        return fit_family(self.name, x, w, **options)


# ---------------------------------------------------------------------------------------------
# helpers


def _wmean(v: np.ndarray, w: np.ndarray) -> float:
    return float(np.sum(w * v) / np.sum(w))


def _shifted(x: np.ndarray, options: Mapping[str, Any], name: str, strict: bool) -> tuple[np.ndarray, float]:
    loc = options.get("loc", 0.0)
    if isinstance(loc, bool) or not isinstance(loc, int | float):
        raise MethodError(f"option 'loc' of {name}: expected a number, found {loc!r}")
    loc = float(loc)
    y = x - loc
    bad = (y <= 0) if strict else (y < 0)
    if bad.any():
        rel = ">" if strict else ">="
        raise MethodError(
            f"{name} needs every value {rel} {loc:g} (its location); found {int(bad.sum())} "
            f"value{'s' if bad.sum() > 1 else ''} outside, smallest {float(x.min())!r}"
        )
    return y, loc


def _need_spread(x: np.ndarray, name: str) -> None:
    if np.ptp(x) == 0:
        raise MethodError(f"{name} cannot be fitted: all {x.size} values equal {float(x[0])!r}")


# ---------------------------------------------------------------------------------------------
# closed forms and one-dimensional solves


def _fit_normal(x: np.ndarray, w: np.ndarray, options: Mapping[str, Any]) -> Params:
    _need_spread(x, "normal")
    mu = _wmean(x, w)
    sigma = np.sqrt(_wmean((x - mu) ** 2, w))
    return {"mu": mu, "sigma": float(sigma)}


def _fit_lognormal(x: np.ndarray, w: np.ndarray, options: Mapping[str, Any]) -> Params:
    y, loc = _shifted(x, options, "lognormal", strict=True)
    ly = np.log(y)
    _need_spread(ly, "lognormal")
    mu = _wmean(ly, w)
    return {"mu": mu, "sigma": float(np.sqrt(_wmean((ly - mu) ** 2, w))), "loc": loc}


def _fit_exponential(x: np.ndarray, w: np.ndarray, options: Mapping[str, Any]) -> Params:
    y, loc = _shifted(x, options, "exponential", strict=False)
    scale = _wmean(y, w)
    if scale <= 0:
        raise MethodError("exponential cannot be fitted: every value equals the location")
    return {"scale": scale, "loc": loc}


def _fit_gamma(x: np.ndarray, w: np.ndarray, options: Mapping[str, Any]) -> Params:
    y, loc = _shifted(x, options, "gamma", strict=True)
    _need_spread(y, "gamma")
    m = _wmean(y, w)
    s = float(np.log(m) - _wmean(np.log(y), w))  # > 0 by Jensen when values differ
    # Minka (2002) starting value, then Newton on log k - digamma(k) = s.
    k = (3.0 - s + np.sqrt((s - 3.0) ** 2 + 24.0 * s)) / (12.0 * s)
    for _ in range(100):
        f = np.log(k) - special.digamma(k) - s
        df = 1.0 / k - special.polygamma(1, k)
        step = f / df
        k_new = k - step
        if k_new <= 0:
            k_new = k / 2.0
        if abs(k_new - k) <= 1e-14 * k:
            k = k_new
            break
        k = k_new
    else:  # pragma: no cover - Newton on this convex equation converges in a few steps
        raise FitError("gamma: shape equation did not converge")
    return {"shape": float(k), "scale": m / float(k), "loc": loc}


def _fit_weibull(x: np.ndarray, w: np.ndarray, options: Mapping[str, Any]) -> Params:
    y, loc = _shifted(x, options, "weibull", strict=True)
    _need_spread(y, "weibull")
    # Work with z = y / max(y) to avoid overflow; the shape equation is scale free.
    top = float(y.max())
    lz = np.log(y / top)
    mean_lz = _wmean(lz, w)

    def score(k: float) -> float:
        e = np.exp(k * lz)  # in (0, 1]
        return float(1.0 / k + mean_lz - np.sum(w * e * lz) / np.sum(w * e))

    # score(k) decreases from +inf (k -> 0) towards mean_lz < 0 (k -> inf); bracket the root.
    lo, hi = 1e-3, 1.0
    while score(hi) > 0:
        hi *= 2.0
        if hi > 1e6:
            raise FitError("weibull: shape equation has no root below 1e6 (data nearly constant)")
    while score(lo) < 0:
        lo /= 2.0
        if lo < 1e-12:
            raise FitError("weibull: shape equation has no root above 1e-12")
    k = optimize.brentq(score, lo, hi, xtol=1e-14, rtol=1e-14, maxiter=500)
    scale = top * _wmean(np.exp(k * lz), w) ** (1.0 / k)
    return {"shape": float(k), "scale": float(scale), "loc": loc}


# ---------------------------------------------------------------------------------------------
# registry

FAMILIES: dict[str, Family] = {}


def _register(family: Family) -> None:
    FAMILIES[family.name] = family


_register(Family(
    "normal", ("mu", "sigma"), positive=False, discrete=False, min_obs=2,
    _freeze=lambda p: stats.norm(loc=p["mu"], scale=p["sigma"]),
    _fit=_fit_normal,
    _draw=lambda p, size, rng: rng.normal(p["mu"], p["sigma"], size),
))
_register(Family(
    "lognormal", ("mu", "sigma", "loc"), positive=True, discrete=False, min_obs=2,
    _freeze=lambda p: stats.lognorm(s=p["sigma"], loc=p["loc"], scale=np.exp(p["mu"])),
    _fit=_fit_lognormal,
    _draw=lambda p, size, rng: rng.lognormal(p["mu"], p["sigma"], size) + p["loc"],
))
_register(Family(
    "exponential", ("scale", "loc"), positive=True, discrete=False, min_obs=1,
    _freeze=lambda p: stats.expon(loc=p["loc"], scale=p["scale"]),
    _fit=_fit_exponential,
    _draw=lambda p, size, rng: rng.exponential(p["scale"], size) + p["loc"],
))
_register(Family(
    "gamma", ("shape", "scale", "loc"), positive=True, discrete=False, min_obs=2,
    _freeze=lambda p: stats.gamma(a=p["shape"], loc=p["loc"], scale=p["scale"]),
    _fit=_fit_gamma,
    _draw=lambda p, size, rng: rng.gamma(p["shape"], p["scale"], size) + p["loc"],
))
_register(Family(
    "weibull", ("shape", "scale", "loc"), positive=True, discrete=False, min_obs=2,
    _freeze=lambda p: stats.weibull_min(c=p["shape"], loc=p["loc"], scale=p["scale"]),
    _fit=_fit_weibull,
    _draw=lambda p, size, rng: p["scale"] * rng.weibull(p["shape"], size) + p["loc"],
))

# Options each family's fit accepts (anything else is rejected with a message naming it).
FIT_OPTIONS: dict[str, frozenset[str]] = {
    name: frozenset({"loc"}) if fam.positive else frozenset() for name, fam in FAMILIES.items()
}


def get_family(name: str) -> Family:
    """The family registered under ``name``; unknown names raise a MethodError listing them."""
    try:
        return FAMILIES[name]
    except KeyError:
        raise MethodError(
            f"unknown family {name!r}; expected one of: {', '.join(sorted(FAMILIES))}"
        ) from None


def loglik(family: Family, params: Mapping[str, float], x: np.ndarray, w: np.ndarray) -> float:
    """Weighted log-likelihood of ``x`` under ``family(params)``."""
    dist = family.frozen(params)
    logf = dist.logpmf(x) if family.discrete else dist.logpdf(x)
    return float(np.sum(w * logf))


def fit_family(name: str, x: np.ndarray, w: np.ndarray | None = None, **options: Any) -> FitOutcome:
    """Maximum-likelihood fit of family ``name`` to values ``x`` (weights ``w``).

    >>> out = fit_family("exponential", np.array([1.0, 2.0, 3.0]))
    >>> out.params["scale"], round(out.loglik, 6)
    (2.0, -5.079442)
    """
    family = get_family(name)
    unknown = set(options) - FIT_OPTIONS.get(name, frozenset())
    if unknown:
        allowed = ", ".join(sorted(FIT_OPTIONS.get(name, ()))) or "none"
        raise MethodError(
            f"unknown option {sorted(unknown)[0]!r} for {name} (allowed: {allowed})"
        )
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 1:
        raise MethodError(f"values: expected a 1-d array, found {x.ndim} dimensions")
    if x.size < family.min_obs:
        raise MethodError(f"{name} needs at least {family.min_obs} values, found {x.size}")
    if not np.all(np.isfinite(x)):
        raise MethodError("values: every value must be finite")
    w = np.ones_like(x) if w is None else np.asarray(w, dtype=np.float64)
    if w.shape != x.shape:
        raise MethodError(f"weights: expected {x.size} weights, found {w.size}")
    params = family._fit(x, w, options)
    ll = loglik(family, params, x, w)
    if not np.isfinite(ll):
        raise FitError(f"{name}: fit reached a non-finite log-likelihood ({ll}) with {params}")
    lo, hi = family.frozen(params).support()
    if x.min() < lo or x.max() > hi:
        raise FitError(
            f"{name}: fitted support [{lo}, {hi}] does not contain the data "
            f"[{x.min()}, {x.max()}]"
        )
    n_free = len(family.param_names) - (1 if family.positive else 0)
    return FitOutcome(name, params, ll, n_free, float(np.sum(w)))
