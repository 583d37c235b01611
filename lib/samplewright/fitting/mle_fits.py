"""Maximum-likelihood estimates, family by family (the table that uses them is in :mod:`.mle`).

Fitters take checked values ``x`` (or ``y = x - loc`` for positive families, the location added
by the caller), frequency weights ``w`` and the options, and return the parameters. Closed forms
are used where they exist (normal, lognormal, exponential, inverse gaussian, rayleigh, pareto,
poisson, geometric, binomial); gamma, weibull, gumbel and negative binomial solve one score
equation (:mod:`.optimise`); the rest maximise the likelihood numerically. The right-censored
fitters at the end take event weights ``e`` (``w`` where the value is observed, 0 where censored).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from scipy import special

from samplewright.core.checks import check_counts
from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.families import Params
from samplewright.fitting import optimise as _mle
from samplewright.fitting.optimise import Kind, wmean

__all__ = [
    "CENSORED_FITTERS",
    "CensFitter",
    "FITTERS",
    "Fitter",
    "bounds_option",
    "loc_option",
    "need_spread",
    "number_option",
    "shifted",
]

Fitter = Callable[[np.ndarray, np.ndarray, Mapping[str, Any]], Params]
CensFitter = Callable[[np.ndarray, np.ndarray, np.ndarray, Mapping[str, Any]], Params]


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
    if free_ok and options.get("loc") == "free":
        return "free"
    v = options.get("loc", 0.0)
    if isinstance(v, str):
        want = "a number or 'free'" if free_ok else "a number"
        raise MethodError(f"option 'loc' of {name}: expected {want}, found {v!r}")
    return float(number_option(options, "loc", name, 0.0))  # type: ignore[arg-type]


def shifted(x: np.ndarray, loc: float, name: str, strict: bool) -> np.ndarray:
    """``x - loc``, refused unless every value is above ``loc`` (or at it, unless ``strict``)."""
    y = x - loc
    bad = (y <= 0) if strict else (y < 0)
    if bad.any():
        rel = ">" if strict else ">="
        nbad = int(bad.sum())
        raise MethodError(
            f"{name} needs every value {rel} {loc:g} (its location); found {nbad} "
            f"value{'s' if nbad > 1 else ''} outside, smallest {float(x.min())!r}"
        )
    return y


def need_spread(x: np.ndarray, name: str) -> None:
    """Refuse values that are all equal."""
    if np.ptp(x) == 0:
        raise MethodError(f"{name} cannot be fitted: all {x.size} values equal {float(x[0])!r}")


def bounds_option(
    x: np.ndarray, options: Mapping[str, Any], name: str, default: tuple[float | None, float | None]
) -> tuple[float | None, float | None]:
    """Options ``lower`` and ``upper`` (``default`` when absent), checked against the data."""
    lo = number_option(options, "lower", name, default[0])
    hi = number_option(options, "upper", name, default[1])
    if lo is not None and hi is not None and not lo < hi:
        raise MethodError(f"options of {name}: expected lower < upper, found {lo!r} >= {hi!r}")
    if lo is not None and x.min() < lo:
        raise MethodError(
            f"{name}: option lower={lo!r} is above the smallest value {float(x.min())!r}"
        )
    if hi is not None and x.max() > hi:
        raise MethodError(
            f"{name}: option upper={hi!r} is below the largest value {float(x.max())!r}"
        )
    return lo, hi


# ---------------------------------------------------------------------------------------------
# fits at location 0 (``y`` already shifted); :mod:`.mle` adds ``loc``


def _fit0_lognormal(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    ly = np.log(y)
    need_spread(ly, "lognormal")
    mu = wmean(ly, w)
    return {"mu": mu, "sigma": float(np.sqrt(wmean((ly - mu) ** 2, w)))}


def _fit0_exponential(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    scale = wmean(y, w)
    if scale <= 0:
        raise MethodError("exponential cannot be fitted: every value equals the location")
    return {"scale": scale}


def _fit0_gamma(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(y, "gamma")
    m = wmean(y, w)
    k = _mle.gamma_shape(float(np.log(m) - wmean(np.log(y), w)))
    return {"shape": k, "scale": m / k}


def _fit0_weibull(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(y, "weibull")
    k, scale = _mle.weibull_shape_scale(y, w, w)
    return {"shape": k, "scale": scale}


def _logistic_logpdf(z: np.ndarray, mu: float, s: float) -> np.ndarray:
    t = (z - mu) / s
    return -np.log(s) - t - 2.0 * np.logaddexp(0.0, -t)


def _fit_logistic(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(x, "logistic")
    m = wmean(x, w)
    start = {"mu": m, "s": float(np.sqrt(wmean((x - m) ** 2, w))) * np.sqrt(3.0) / np.pi}
    total = float(np.sum(w))
    return _mle.maximise_params(
        lambda p: float(np.sum(w * _logistic_logpdf(x, p["mu"], p["s"]))) / total,
        start,
        ("mu", "s"),
        {"mu": ("real", "s"), "s": ("log",)},
        label="logistic",
    )


def _fit0_loglogistic(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    # log(y) is logistic(log alpha, 1/beta); the Jacobian term does not depend on the parameters.
    p = _fit_logistic(np.log(y), w, o)
    return {"alpha": float(np.exp(p["mu"])), "beta": 1.0 / p["s"]}


def _fit0_pareto(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    xm = number_option(o, "xm", "pareto", None)
    if xm is None:
        xm = float(y.min())
    elif not 0 < xm <= y.min():
        raise MethodError(
            f"pareto: option xm={xm!r} must be in (0, smallest x - loc = {float(y.min())!r}]"
        )
    s = float(np.sum(w * np.log(y / xm)))
    if s <= 0:
        raise MethodError("pareto cannot be fitted: every value equals xm")
    return {"alpha": float(np.sum(w)) / s, "xm": xm}


def _gpd_logpdf(y: np.ndarray, xi: float, sigma: float) -> np.ndarray:
    if xi < -1.0:  # the likelihood is unbounded below xi = -1
        return np.full(y.shape, -np.inf)
    if abs(xi) < 1e-12:
        return -np.log(sigma) - y / sigma
    t = xi * y / sigma
    out = -np.log(sigma) - (1.0 + 1.0 / xi) * np.log1p(np.maximum(t, -1.0))
    return np.where(t > -1.0, out, -np.inf)


def _fit0_gpd(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(y, "generalized_pareto")
    m, v = wmean(y, w), wmean((y - wmean(y, w)) ** 2, w)
    total = float(np.sum(w))
    starts = [{"xi": 0.0, "sigma": m}]
    xi0, s0 = 0.5 * (1.0 - m * m / v), 0.5 * m * (m * m / v + 1.0)
    if xi0 >= 0 or s0 / -xi0 > y.max():
        starts.append({"xi": xi0, "sigma": s0})
    kinds: dict[str, Kind] = {"xi": ("real", 1.0), "sigma": ("log",)}
    return _mle.best_of(
        lambda p: float(np.sum(w * _gpd_logpdf(y, p["xi"], p["sigma"]))) / total,
        starts,
        ("xi", "sigma"),
        kinds,
        label="generalized_pareto",
    )


def _fit0_inverse_gaussian(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(y, "inverse_gaussian")
    mu = wmean(y, w)
    inv = wmean(1.0 / y, w) - 1.0 / mu
    if inv <= 0:  # pragma: no cover - positive by Jensen when the values differ
        raise FitError("inverse_gaussian: mean(1/x) - 1/mean(x) is not positive")
    return {"mu": mu, "lambda": 1.0 / inv}


def _fit0_rayleigh(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    s2 = float(np.sum(w * y * y)) / (2.0 * float(np.sum(w)))
    if s2 <= 0:
        raise MethodError("rayleigh cannot be fitted: every value equals the location")
    return {"sigma": float(np.sqrt(s2))}


# --- families without a location option ------------------------------------------------------


def _fit_normal(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(x, "normal")
    mu = wmean(x, w)
    return {"mu": mu, "sigma": float(np.sqrt(wmean((x - mu) ** 2, w)))}


def _fit_gumbel(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(x, "gumbel")
    mu, beta = _mle.gumbel_fit(x, w)
    return {"mu": mu, "beta": beta}


def _gev_logpdf(x: np.ndarray, mu: float, sigma: float, xi: float) -> np.ndarray:
    if xi < -1.0:  # the likelihood is unbounded below xi = -1 (Smith, 1985)
        return np.full(x.shape, -np.inf)
    z = (x - mu) / sigma
    if abs(xi) < 1e-9:
        return -np.log(sigma) - z - np.exp(-z)
    t = 1.0 + xi * z
    lt = np.log(np.where(t > 0, t, 1.0))
    out = -np.log(sigma) - (1.0 + 1.0 / xi) * lt - np.exp(-lt / xi)
    return np.where(t > 0, out, -np.inf)


def _fit_gev(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(x, "gev")
    mu, beta = _mle.gumbel_fit(x, w)
    total = float(np.sum(w))

    def ll(p: Params) -> float:
        return float(np.sum(w * _gev_logpdf(x, p["mu"], p["sigma"], p["xi"]))) / total

    kinds: dict[str, Kind] = {"mu": ("real", "sigma"), "sigma": ("log",), "xi": ("real", 1.0)}
    starts = [{"mu": mu, "sigma": beta, "xi": xi} for xi in (0.0, 0.2, -0.2)]
    return _mle.best_of(ll, starts, ("mu", "sigma", "xi"), kinds, label="gev")


def _fit_beta(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    lo, hi = bounds_option(x, o, "beta", (0.0, 1.0))
    assert lo is not None and hi is not None
    u = (x - lo) / (hi - lo)
    if np.any((u <= 0) | (u >= 1)):
        raise MethodError(f"beta needs every value strictly inside ({lo:g}, {hi:g})")
    need_spread(u, "beta")
    m = wmean(u, w)
    common = m * (1.0 - m) / wmean((u - m) ** 2, w) - 1.0
    a0, b0 = (m * common, (1.0 - m) * common) if common > 0 else (1.0, 1.0)
    lu, l1u, total = np.log(u), np.log1p(-u), float(np.sum(w))
    su, s1u = float(np.sum(w * lu)) / total, float(np.sum(w * l1u)) / total
    p = _mle.maximise_params(
        lambda p: (
            (p["alpha"] - 1) * su + (p["beta"] - 1) * s1u - special.betaln(p["alpha"], p["beta"])
        ),
        {"alpha": a0, "beta": b0},
        ("alpha", "beta"),
        {"alpha": ("log",), "beta": ("log",)},
        label="beta",
    )
    return {"alpha": p["alpha"], "beta": p["beta"], "lower": lo, "upper": hi}


def _fit_uniform(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    lo, hi = bounds_option(x, o, "uniform", (None, None))
    lo = float(x.min()) if lo is None else lo
    if hi is None:
        hi = float(x.max())
        while lo + (hi - lo) < x.max():  # scipy's support is loc + scale: keep the top inside
            hi = float(np.nextafter(hi, np.inf))
    if not lo < hi:
        raise MethodError(f"uniform cannot be fitted: all {x.size} values equal {lo!r}")
    return {"lower": lo, "upper": hi}


def _triangular_mode(xs: np.ndarray, ws: np.ndarray, a: float, b: float) -> tuple[float, float]:
    """Best mode for bounds (a, b) over {a, sorted values, b} (Oliver, 1972) and its mean loglik."""
    with np.errstate(divide="ignore", invalid="ignore"):
        la, lb = np.log(xs - a), np.log(b - xs)
        cand = np.concatenate([[a], xs, [b]])
        k = np.concatenate([[0.0], np.cumsum(ws)])  # weight at or left of each candidate
        total = k[-1]
        k = np.concatenate([k, [total]])
        left = np.concatenate([[0.0], np.cumsum(ws * la), [np.sum(ws * la)]])
        right = np.concatenate([[np.sum(ws * lb)], np.sum(ws * lb) - np.cumsum(ws * lb), [0.0]])
        ll = (
            total * (np.log(2.0) - np.log(b - a))
            + left
            + right
            - np.where(k > 0, k * np.log(cand - a), 0.0)
            - np.where(total - k > 0, (total - k) * np.log(b - cand), 0.0)
        )
    ll = np.where(np.isnan(ll), -np.inf, ll)
    j = int(np.argmax(ll))
    return float(cand[j]), float(ll[j]) / total


def _fit_triangular(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(x, "triangular")
    lo, hi = bounds_option(x, o, "triangular", (None, None))
    order = np.argsort(x, kind="stable")
    xs, ws = x[order], w[order]
    xmin, xmax, spread = float(xs[0]), float(xs[-1]), float(xs[-1] - xs[0])
    free = [n for n, v in (("lower", lo), ("upper", hi)) if v is None]

    def ends(p: Params) -> tuple[float, float]:
        a = lo if lo is not None else xmin - spread * p["lower"]
        b = hi if hi is not None else xmax + spread * p["upper"]
        return a, b

    start = {"lower": 0.05, "upper": 0.05}
    if free:
        best = _mle.maximise_params(
            lambda p: _triangular_mode(xs, ws, *ends(p))[1],
            start,
            free,
            {"lower": ("log",), "upper": ("log",)},
            label="triangular",
        )
    else:
        best = start
    a, b = ends(best)
    c, ll = _triangular_mode(xs, ws, a, b)
    if not np.isfinite(ll):
        raise FitError(f"triangular: no mode gives a finite likelihood on [{a!r}, {b!r}]")
    return {"lower": a, "mode": c, "upper": b}


def _student_logpdf(x: np.ndarray, mu: float, sigma: float, nu: float) -> np.ndarray:
    z = (x - mu) / sigma
    return (
        special.gammaln((nu + 1) / 2)
        - special.gammaln(nu / 2)
        - 0.5 * np.log(nu * np.pi)
        - np.log(sigma)
        - (nu + 1) / 2 * np.log1p(z * z / nu)
    )


def _fit_student_t(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(x, "student_t")
    total = float(np.sum(w))
    med = float(np.median(x))
    mad = 1.4826 * float(np.median(np.abs(x - med)))
    sigma0 = mad if mad > 0 else float(np.sqrt(wmean((x - wmean(x, w)) ** 2, w)))

    def ll(p: Params) -> float:
        if p["nu"] > 1e8:
            return -np.inf
        return float(np.sum(w * _student_logpdf(x, p["mu"], p["sigma"], p["nu"]))) / total

    kinds: dict[str, Kind] = {"mu": ("real", "sigma"), "sigma": ("log",), "nu": ("log",)}
    starts = [{"mu": med, "sigma": sigma0, "nu": nu} for nu in (1.5, 5.0, 30.0)]
    return _mle.best_of(ll, starts, ("mu", "sigma", "nu"), kinds, label="student_t")


# --- discrete ---------------------------------------------------------------------------------


def _fit_poisson(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    check_counts(x, "poisson")
    lam = wmean(x, w)
    if lam <= 0:
        raise MethodError("poisson cannot be fitted: every value is 0")
    return {"lambda": lam}


def _fit_geometric(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    check_counts(x, "geometric")
    m = wmean(x, w)
    if m <= 0:
        raise MethodError("geometric cannot be fitted: every value is 0")
    return {"p": 1.0 / (1.0 + m)}


def _fit_negative_binomial(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    check_counts(x, "negative_binomial")
    m = wmean(x, w)
    v = wmean((x - m) ** 2, w)
    if not v > m:
        raise MethodError(
            f"negative_binomial needs variance > mean (over-dispersion); found variance {v:.4g} "
            f"<= mean {m:.4g}: use poisson or binomial"
        )
    r = _mle.negbin_r(x, w)
    return {"r": r, "p": r / (r + m)}


def _fit_binomial(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    n = o.get("n_trials")
    if isinstance(n, bool) or not isinstance(n, int | np.integer) or n < 1:
        raise MethodError(f"option 'n_trials' of binomial: expected an int >= 1, found {n!r}")
    check_counts(x, "binomial")
    if x.max() > n:
        raise MethodError(f"binomial: a value {float(x.max())!r} exceeds option n_trials={n}")
    p = wmean(x, w) / n
    if not 0 < p < 1:
        raise MethodError(f"binomial cannot be fitted: every value is {x[0]:g} (p = {p:g})")
    return {"n_trials": float(n), "p": p}


# ---------------------------------------------------------------------------------------------
# right-censored fits with a closed form or one-dimensional solve (``e`` = event weights)


def _cens_exponential(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    return {"scale": float(np.sum(w * y) / np.sum(e))}


def _cens_weibull(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    need_spread(y, "weibull")
    k, scale = _mle.weibull_shape_scale(y, w, e)
    return {"shape": k, "scale": scale}


def _cens_rayleigh(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    return {"sigma": float(np.sqrt(np.sum(w * y * y) / (2.0 * np.sum(e))))}


def _cens_pareto(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    xm = number_option(o, "xm", "pareto", None)
    if xm is None:
        xm = float(y[e > 0].min())
    s = float(np.sum(w * np.log(np.maximum(y / xm, 1.0))))
    if s <= 0:
        raise MethodError("pareto cannot be fitted: every value is at or below xm")
    return {"alpha": float(np.sum(e)) / s, "xm": xm}


# uncensored fitters by family; positive families' fitters work at location 0 (see module doc)
FITTERS: dict[str, Fitter] = {
    "normal": _fit_normal,
    "lognormal": _fit0_lognormal,
    "exponential": _fit0_exponential,
    "gamma": _fit0_gamma,
    "weibull": _fit0_weibull,
    "gumbel": _fit_gumbel,
    "logistic": _fit_logistic,
    "loglogistic": _fit0_loglogistic,
    "pareto": _fit0_pareto,
    "generalized_pareto": _fit0_gpd,
    "gev": _fit_gev,
    "beta": _fit_beta,
    "uniform": _fit_uniform,
    "triangular": _fit_triangular,
    "inverse_gaussian": _fit0_inverse_gaussian,
    "student_t": _fit_student_t,
    "rayleigh": _fit0_rayleigh,
    "poisson": _fit_poisson,
    "negative_binomial": _fit_negative_binomial,
    "geometric": _fit_geometric,
    "binomial": _fit_binomial,
}
# right-censored fitters with a closed form or a one-dimensional solve (location 0)
CENSORED_FITTERS: dict[str, CensFitter] = {
    "exponential": _cens_exponential,
    "weibull": _cens_weibull,
    "rayleigh": _cens_rayleigh,
    "pareto": _cens_pareto,
}
