"""Maximum-likelihood estimates with a closed form or one score equation, family by family.

Fitters take the checked data as an :class:`~samplewright.fitting.mle_sums.Obs` (values,
optional weights, extremes computed once) and the options, and return ``(params, loglik)``:
the log-likelihood from the same sums where it has a closed form, else None (the caller
computes it). Positive families' fitters (``fit0``) also take the location ``loc`` and fit
``y = x - loc``; :mod:`.mle` adds ``loc`` to the parameters. The table that uses them, the
numerical fits and the option rules are in :mod:`.mle`, :mod:`.mle_numeric` and
:mod:`.mle_bounded`.

Closed forms: normal, lognormal, exponential, inverse gaussian, rayleigh, pareto, poisson,
geometric, binomial; gamma, weibull and negative binomial solve one score equation
(:mod:`.optimise`). A parameter fixed by an option (a float under the parameter's own name,
checked by :func:`samplewright.fitting.mle.fixed_options`) is used as given; the ones these
fitters handle are listed in :data:`FIXABLE` (the others are fitted numerically by :mod:`.mle`).
The sums are taken in chunks (:mod:`.mle_sums`), so a fit of a huge column holds no n-long
temporaries (weibull keeps one array of logarithms). The right-censored fitters at the end take
arrays and event weights ``e`` (``w`` where the value is observed, 0 where censored).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from scipy import special

from samplewright.core.checks import check_counts
from samplewright.core.errors import MethodError
from samplewright.distributions.families import Params
from samplewright.fitting import optimise as _mle
from samplewright.fitting.mle_sums import (
    CHUNK,
    Obs,
    array_moments,
    dot,
    log_moments,
    log_ratios,
    moments,
    refuse_outside,
    sum_inv_dev,
    sum_log,
    sum_shifted,
    sum_sq,
)

__all__ = [
    "CENSORED_FITTERS",
    "CensFitter",
    "FITTERS",
    "FITTERS0",
    "FIXABLE",
    "Fitted",
    "Fitter",
    "Fitter0",
    "check_shift",
    "fixed",
    "loc_option",
    "need_finite",
    "need_spread",
    "number_option",
]

Fitted = tuple[Params, float | None]
Fitter = Callable[[Obs, Mapping[str, Any]], Fitted]
Fitter0 = Callable[[Obs, float, Mapping[str, Any]], Fitted]
CensFitter = Callable[[np.ndarray, np.ndarray, np.ndarray, Mapping[str, Any]], Params]

_LOG_2PI = float(np.log(2.0 * np.pi))
_MAX_COUNT = 2.0**53  # counts above it are not exact integers in float64


# ---------------------------------------------------------------------------------------------
# option and data helpers


def number_option(
    options: Mapping[str, Any], key: str, name: str, default: float | None
) -> float | None:
    """Option ``key`` of method ``name`` as a float (``default`` when absent; None allowed)."""
    v = options.get(key, default)
    if v is None:
        return None
    if (
        isinstance(v, bool)
        or not isinstance(v, int | float | np.integer | np.floating)
        or not np.isfinite(v)
    ):
        raise MethodError(f"option {key!r} of {name}: expected a finite number, found {v!r}")
    return float(v)


def loc_option(options: Mapping[str, Any], name: str, free_ok: bool) -> float | str:
    """Option ``loc``: a number (default 0), or ``"free"`` where ``free_ok``."""
    v = options.get("loc", 0.0)
    if type(v) is float and math.isfinite(v):  # the common case, quickly
        return v
    if free_ok and v == "free":
        return "free"
    if isinstance(v, str):
        want = "a number or 'free'" if free_ok else "a number"
        raise MethodError(f"option 'loc' of {name}: expected {want}, found {v!r}")
    return float(number_option(options, "loc", name, 0.0))  # type: ignore[arg-type]


def fixed(options: Mapping[str, Any], key: str) -> float | None:
    """The value of parameter ``key`` fixed by the (already checked) options, or None."""
    v = options.get(key)
    return None if v is None else float(v)


def check_shift(obs: Obs, loc: float, name: str, strict: bool) -> None:
    """Refuse values at or below ``loc`` (below it, unless ``strict``), naming the first."""
    if obs.lo > loc or (not strict and obs.lo >= loc):
        return
    rel = ">" if strict else ">="
    bad = obs.x <= loc if strict else obs.x < loc
    refuse_outside(obs, bad, f"{name} needs every value {rel} {loc!r} (its location)")


def need_spread(obs: Obs, name: str) -> None:
    """Refuse values that are all equal, or whose spread overflows float64."""
    if obs.lo == obs.hi:
        raise MethodError(
            f"{name} cannot be fitted: all {obs.n} values equal {obs.lo!r} "
            "(the data have no spread)"
        )
    if not np.isfinite(obs.hi - obs.lo):
        raise MethodError(
            f"{name}: the values span {obs.lo!r} to {obs.hi!r}, a spread that overflows float64 "
            "arithmetic; fit rescaled values (other units)"
        )


def need_finite(name: str, obs: Obs, *values: float) -> None:
    """Refuse a fit whose sums overflowed or underflowed (values of extreme magnitude)."""
    if all(math.isfinite(v) for v in values):
        return
    raise MethodError(
        f"{name}: the values (from {obs.lo!r} to {obs.hi!r}) are too extreme for float64 "
        "arithmetic in this fit; fit rescaled values (other units)"
    )


def _pow2(v: float) -> float:
    """The largest power of two at or below ``v > 0`` (dividing by it is exact)."""
    return float(2.0 ** math.floor(math.log2(v)))


# ---------------------------------------------------------------------------------------------
# families on the real line


def _fit_normal(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    need_spread(obs, "normal")
    span = obs.hi - obs.lo
    scale = 1.0 if 1e-100 < span < 1e100 else _pow2(span)  # keeps squares in range
    m, q = moments(obs, scale)
    big_w = obs.total
    mu = fixed(o, "mu")
    mu = m * scale if mu is None else mu
    d2 = q + big_w * (m - mu / scale) ** 2  # sum of squared deviations from mu, over scale**2
    sigma = fixed(o, "sigma")
    sigma = scale * float(np.sqrt(d2 / big_w)) if sigma is None else sigma
    if not sigma > 0:
        raise MethodError(f"normal cannot be fitted: every value equals mu = {mu!r}")
    ll = -big_w * (np.log(sigma) + 0.5 * _LOG_2PI) - d2 / (2.0 * (sigma / scale) ** 2)
    need_finite("normal", obs, mu, sigma, ll)
    return {"mu": mu, "sigma": sigma}, float(ll)


def _fit_gumbel(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    need_spread(obs, "gumbel")
    beta = fixed(o, "beta")
    w = obs.weights()
    if beta is None:
        mu, beta = _mle.gumbel_fit(obs.x, w)
        return {"mu": mu, "beta": beta}, None
    # beta given: mu = -beta log(mean(exp(-x / beta))) (log-sum-exp around the smallest value)
    a = np.log(w) - (obs.x - obs.lo) / beta
    amax = float(a.max())
    lse = amax + float(np.log(np.sum(np.exp(a - amax)))) - float(np.log(obs.total))
    return {"mu": obs.lo - beta * lse, "beta": beta}, None


# ---------------------------------------------------------------------------------------------
# positive families at location 0 (``loc`` subtracted chunk by chunk); :mod:`.mle` adds ``loc``


def _fit0_lognormal(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    check_shift(obs, loc, "lognormal", True)
    m, q = log_moments(obs, loc)
    if q == 0:
        need_spread(obs, "lognormal")
    big_w = obs.total
    mu = fixed(o, "mu")
    mu = m if mu is None else mu
    d2 = q + big_w * (m - mu) ** 2
    sigma = fixed(o, "sigma")
    sigma = float(np.sqrt(d2 / big_w)) if sigma is None else sigma
    if not sigma > 0:
        raise MethodError(
            "lognormal cannot be fitted: log(x - loc) does not vary (the data have no spread)"
        )
    ll = -big_w * (m + np.log(sigma) + 0.5 * _LOG_2PI) - d2 / (2.0 * sigma * sigma)
    need_finite("lognormal", obs, m, ll)
    return {"mu": mu, "sigma": sigma}, float(ll)


def _fit0_exponential(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    check_shift(obs, loc, "exponential", False)
    s = sum_shifted(obs, loc)
    need_finite("exponential", obs, s)
    scale = fixed(o, "scale")
    if scale is None:
        scale = s / obs.total
        if not scale > 0:
            raise MethodError("exponential cannot be fitted: every value equals the location")
    return {"scale": scale}, float(-s / scale - obs.total * np.log(scale))


def _digamma_inv(c: float) -> float:
    """The k > 0 with ``digamma(k) = c`` (Minka's start, Newton; digamma increases)."""
    k = float(np.exp(c) + 0.5) if c >= -2.22 else float(-1.0 / (c - special.digamma(1.0)))
    for _ in range(60):
        step = float((special.digamma(k) - c) / special.polygamma(1, k))
        k_new = k - step if k - step > 0 else k / 2.0
        if abs(k_new - k) <= 1e-15 * k:
            return k_new
        k = k_new
    return k


def _fit0_gamma(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    check_shift(obs, loc, "gamma", True)
    big_w = obs.total
    s = sum_shifted(obs, loc)
    need_finite("gamma", obs, s)
    sl = sum_log(obs, loc, top=s)
    m, ml = s / big_w, sl / big_w
    k, theta = fixed(o, "shape"), fixed(o, "scale")
    if k is None and theta is None:
        spread = math.log(m) - ml  # > 0 unless every value is the same (Jensen)
        if not spread > 1e-15:
            need_spread(obs, "gamma")
        k = _mle.gamma_shape(spread)
    elif k is None:
        assert theta is not None
        k = _digamma_inv(ml - float(np.log(theta)))  # score in k with the scale given
    theta = m / k if theta is None else theta
    ll = (k - 1.0) * sl - s / theta - big_w * (k * np.log(theta) + special.gammaln(k))
    need_finite("gamma", obs, theta, ll)
    return {"shape": k, "scale": theta}, float(ll)


def _chunk_sum_exp(lz: np.ndarray, w: np.ndarray | None, k: float) -> float:
    out = 0.0
    for s in range(0, lz.size, CHUNK):
        e = np.exp(k * lz[s : s + CHUNK])
        out += float(e.sum() if w is None else dot(w[s : s + CHUNK], e))
    return out


def _fit0_weibull(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    check_shift(obs, loc, "weibull", True)
    need_spread(obs, "weibull")
    top = obs.hi - loc
    with np.errstate(divide="ignore"):
        lz = log_ratios(obs, loc, top)
    mean_lz, q = array_moments(lz, obs.w)
    big_w = obs.total
    sd_lz = float(np.sqrt(q / big_w))
    need_finite("weibull", obs, mean_lz, sd_lz)
    k = fixed(o, "shape")
    if k is None:
        k, s0 = _mle.weibull_shape(lz, obs.w, mean_lz, sd_lz)
    else:
        s0 = _chunk_sum_exp(lz, obs.w, k)
    scale = fixed(o, "scale")
    scale = top * (s0 / big_w) ** (1.0 / k) if scale is None else scale
    sum_pow = s0 * float(np.exp(k * np.log(top / scale)))  # sum(w (y / scale)^k)
    ll = (
        big_w * (np.log(k) - k * np.log(scale))
        + (k - 1.0) * (big_w * mean_lz + big_w * np.log(top))
        - sum_pow
    )
    return {"shape": k, "scale": scale}, float(ll)


def _fit0_pareto(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    check_shift(obs, loc, "pareto", True)
    ymin = obs.lo - loc
    xm = fixed(o, "xm")
    if xm is None:
        xm = ymin
    elif not 0 < xm <= ymin:
        raise MethodError(f"pareto: option xm={xm!r} must be in (0, smallest x - loc = {ymin!r}]")
    big_w = obs.total
    s = sum_log(obs, loc) - big_w * float(np.log(xm))  # sum(w log(y / xm))
    alpha = fixed(o, "alpha")
    if alpha is None:
        if not s > 0:
            raise MethodError("pareto cannot be fitted: every value equals xm (no spread above it)")
        alpha = big_w / s
    ll = big_w * np.log(alpha) - alpha * s - (s + big_w * np.log(xm))
    need_finite("pareto", obs, alpha, ll)
    return {"alpha": alpha, "xm": xm}, float(ll)


def _fit0_inverse_gaussian(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    check_shift(obs, loc, "inverse_gaussian", True)
    big_w = obs.total
    s = sum_shifted(obs, loc)
    mu = fixed(o, "mu")
    mu = s / big_w if mu is None else mu
    d = sum_inv_dev(obs, loc, mu)  # sum(w (y - mu)^2 / y)
    if d == 0:  # every value equal, or deviations too small to square in float64
        need_spread(obs, "inverse_gaussian")
        need_finite("inverse_gaussian", obs, math.inf)
    sl = sum_log(obs, loc, top=s)
    need_finite("inverse_gaussian", obs, mu, mu * mu, d, sl)
    lam = fixed(o, "lambda")
    if lam is None:
        if not d > 0:
            raise MethodError(
                "inverse_gaussian cannot be fitted: every value equals mu (the data have no spread)"
            )
        lam = big_w * mu * mu / d
    ll = 0.5 * big_w * (np.log(lam) - _LOG_2PI) - 1.5 * sl - lam * d / (2.0 * mu * mu)
    need_finite("inverse_gaussian", obs, lam, ll)
    return {"mu": mu, "lambda": lam}, float(ll)


def _fit0_rayleigh(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    check_shift(obs, loc, "rayleigh", True)
    scale = 1.0
    q = sum_sq(obs, loc)  # sum(w (y / scale)^2)
    if not 1e-280 < q < math.inf:  # squares out of range: rescale by a power of two
        scale = _pow2(obs.hi - loc)
        q = sum_sq(obs, loc, scale)
    big_w = obs.total
    sigma = fixed(o, "sigma")
    sigma = scale * math.sqrt(q / (2.0 * big_w)) if sigma is None else sigma
    sl = sum_log(obs, loc, top=scale * math.sqrt(q))
    ll = sl - 2.0 * big_w * np.log(sigma) - q / (2.0 * (sigma / scale) ** 2)
    need_finite("rayleigh", obs, q, sigma, ll)
    return {"sigma": sigma}, float(ll)


# --- counts -----------------------------------------------------------------------------------


def _counts(obs: Obs, name: str) -> float:
    """Check counts (whole numbers >= 0, at most 2**53); their weighted mean."""
    check_counts(obs.x, name)
    if obs.hi > _MAX_COUNT:
        refuse_outside(obs, obs.x > _MAX_COUNT, f"{name}: counts must be at most 2**53")
    return sum_shifted(obs) / obs.total


def _fit_poisson(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    m = _counts(obs, "poisson")
    lam = fixed(o, "lambda")
    if lam is None:
        if m <= 0:
            raise MethodError("poisson cannot be fitted: every value is 0")
        lam = m
    return {"lambda": lam}, None


def _fit_geometric(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    m = _counts(obs, "geometric")
    p = fixed(o, "p")
    if p is None:
        if m <= 0:
            raise MethodError("geometric cannot be fitted: every value is 0")
        p = 1.0 / (1.0 + m)
    return {"p": p}, None


def _fit_negative_binomial(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    m = _counts(obs, "negative_binomial")
    r = fixed(o, "r")
    if r is None:
        x, w = obs.x, obs.weights()
        v = float(dot(w, (x - m) ** 2)) / obs.total
        if not v > m:
            raise MethodError(
                f"negative_binomial needs variance > mean (over-dispersion); found variance "
                f"{v:.4g} <= mean {m:.4g}: use poisson or binomial"
            )
        r = _mle.negbin_r(x, w)
    if m <= 0:
        raise MethodError("negative_binomial cannot be fitted: every value is 0")
    return {"r": r, "p": r / (r + m)}, None


def _fit_binomial(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    n = o.get("n_trials")
    if isinstance(n, bool) or not isinstance(n, int | np.integer) or n < 1:
        raise MethodError(f"option 'n_trials' of binomial: expected an int >= 1, found {n!r}")
    m = _counts(obs, "binomial")
    if obs.hi > n:
        refuse_outside(obs, obs.x > n, f"binomial: every value must be at most n_trials={n}")
    p = fixed(o, "p")
    if p is None:
        p = m / n
        if not 0 < p < 1:
            raise MethodError(f"binomial cannot be fitted: every value is {obs.lo:g} (p = {p:g})")
    return {"n_trials": float(n), "p": p}, None


# ---------------------------------------------------------------------------------------------
# right-censored fits with a closed form or one-dimensional solve (``e`` = event weights)


def _cens_exponential(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    return {"scale": float(np.sum(w * y) / np.sum(e))}


def _cens_weibull(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    if np.ptp(y) == 0:
        raise MethodError(f"weibull cannot be fitted: all {y.size} values equal {float(y[0])!r}")
    k, scale = _mle.weibull_shape_scale(y, w, e)
    return {"shape": k, "scale": scale}


def _cens_rayleigh(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    return {"sigma": float(np.sqrt(np.sum(w * y * y) / (2.0 * np.sum(e))))}


def _cens_pareto(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    xm = fixed(o, "xm")
    if xm is None:
        xm = float(y[e > 0].min())
    s = float(np.sum(w * np.log(np.maximum(y / xm, 1.0))))
    if s <= 0:
        raise MethodError("pareto cannot be fitted: every value is at or below xm")
    return {"alpha": float(np.sum(e)) / s, "xm": xm}


# uncensored fitters of the families without a location option
FITTERS: dict[str, Fitter] = {
    "normal": _fit_normal,
    "gumbel": _fit_gumbel,
    "poisson": _fit_poisson,
    "negative_binomial": _fit_negative_binomial,
    "geometric": _fit_geometric,
    "binomial": _fit_binomial,
}
# uncensored fitters of positive families at a given location
FITTERS0: dict[str, Fitter0] = {
    "lognormal": _fit0_lognormal,
    "exponential": _fit0_exponential,
    "gamma": _fit0_gamma,
    "weibull": _fit0_weibull,
    "pareto": _fit0_pareto,
    "inverse_gaussian": _fit0_inverse_gaussian,
    "rayleigh": _fit0_rayleigh,
}
# parameters each fitter above takes as given when an option fixes them (others: numerically)
FIXABLE: dict[str, frozenset[str]] = {
    "normal": frozenset({"mu", "sigma"}),
    "gumbel": frozenset({"beta"}),
    "poisson": frozenset({"lambda"}),
    "negative_binomial": frozenset({"r"}),
    "geometric": frozenset({"p"}),
    "binomial": frozenset({"n_trials", "p"}),
    "lognormal": frozenset({"mu", "sigma"}),
    "exponential": frozenset({"scale"}),
    "gamma": frozenset({"shape", "scale"}),
    "weibull": frozenset({"shape"}),
    "pareto": frozenset({"alpha", "xm"}),
    "inverse_gaussian": frozenset({"mu", "lambda"}),
    "rayleigh": frozenset({"sigma"}),
}
# right-censored fitters with a closed form or a one-dimensional solve (location 0), and the
# parameters they take as given (with others fixed the censored fit is numerical)
CENSORED_FITTERS: dict[str, CensFitter] = {
    "exponential": _cens_exponential,
    "weibull": _cens_weibull,
    "rayleigh": _cens_rayleigh,
    "pareto": _cens_pareto,
}
CENSORED_FIXABLE: dict[str, frozenset[str]] = {
    "exponential": frozenset(),
    "weibull": frozenset(),
    "rayleigh": frozenset(),
    "pareto": frozenset({"xm"}),
}
