"""Parametric families: trade names, parameters, maximum-likelihood fits, fast generators.

Each family maps to one scipy.stats distribution in this module and nowhere else. Parameters use
the trade's names and are stored in artifacts exactly as listed here (fixed ones included, so a
parameter dict always freezes the distribution on its own):

==================  ==========================  ================================================
family              parameters                  meaning (scipy mapping)
==================  ==========================  ================================================
normal              mu, sigma                   mean, standard deviation (norm)
lognormal           mu, sigma, loc              mean and sd of log(x - loc) (lognorm)
exponential         scale, loc                  mean of x - loc; rate = 1/scale (expon)
gamma               shape, scale, loc           shape k, scale theta; mean k theta + loc (gamma)
weibull             shape, scale, loc           shape k, scale lambda (weibull_min)
gumbel              mu, beta                    mode, scale; for maxima (gumbel_r)
logistic            mu, s                       mean (= median), scale (logistic)
loglogistic         alpha, beta, loc            scale (= median of x - loc), shape (fisk)
pareto              alpha, xm, loc              tail index, minimum of x - loc (pareto)
generalized_pareto  xi, sigma, loc              shape, scale, threshold (genpareto, c = xi)
gev                 mu, sigma, xi               location, scale, shape (genextreme, c = -xi)
beta                alpha, beta, lower, upper   shapes on [lower, upper] (beta)
uniform             lower, upper                bounds (uniform)
triangular          lower, mode, upper          bounds and mode (triang)
inverse_gaussian    mu, lambda, loc             mean of x - loc, shape (invgauss)
student_t           mu, sigma, nu               location, scale, degrees of freedom (t)
rayleigh            sigma, loc                  scale (rayleigh)
poisson             lambda                      mean (poisson)
negative_binomial   r, p                        failures before the r-th success (nbinom)
geometric           p                           failures before the first success (geom, loc -1)
binomial            n_trials, p                 successes in n_trials trials (binom)
==================  ==========================  ================================================

``gev`` stores the extreme-value convention's ``xi`` (xi > 0: heavy upper tail, Fréchet type;
xi < 0: bounded above, Weibull type); scipy's ``genextreme`` uses ``c = -xi``. The discrete
families count from 0, so ``geometric`` is ``negative_binomial`` with ``r = 1``.

Options (anything else is refused with a MethodError naming it; see :data:`FIT_OPTIONS`):

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
size used by BIC is ``sum(w)``. Right-censored values (``censored=`` a boolean array, True where
the value is a lower bound on the true one) contribute ``w * log S(x)`` instead; censoring is
available for every continuous family except uniform and triangular, with ``loc`` fixed.

Shape limits: gev and generalized_pareto are fitted with ``xi >= -1`` (below it the likelihood
is unbounded); student_t with ``nu <= 1e8`` (a larger ``nu`` is a normal fit).

Every fit is checked: the log-likelihood must be finite and the fitted support must contain every

uncensored value (scipy's generic optimiser can silently return a location above the smallest
value). Closed-form estimates are used where they exist; the rest use :mod:`._mle`.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import special, stats

from samplewright.core.errors import FitError, MethodError
from samplewright.fitting import optimise as _mle
from samplewright.fitting.optimise import Kind, wmean

__all__ = ["FAMILIES", "FIT_OPTIONS", "Family", "FitOutcome", "fit_family", "get_family", "loglik"]

Params = dict[str, float]
Fitter = Callable[[np.ndarray, np.ndarray, Mapping[str, Any]], Params]
CensFitter = Callable[[np.ndarray, np.ndarray, np.ndarray, Mapping[str, Any]], Params]


@dataclass(frozen=True)
class FitOutcome:
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


class _Scipy:
    """How a family maps to scipy: the distribution and its keyword arguments for given params.

    Calling it freezes the distribution (``dist(**kwargs(p))``); :meth:`Family.bound` uses the
    parts to call scipy's unfrozen methods instead.
    """

    __slots__ = ("dist", "kwargs")

    def __init__(self, dist: Any, kwargs: Callable[[Params], dict[str, Any]]) -> None:
        self.dist = dist
        self.kwargs = kwargs

    def __call__(self, p: Params) -> Any:
        return self.dist(**self.kwargs(p))


class _Bound:
    """A scipy distribution with its parameters bound but not frozen.

    Each method is the frozen distribution's: ``dist.method(x, **kwargs)``, the very call a
    frozen distribution makes, so the numbers are the same. Freezing builds a new distribution
    instance (with its docstrings), about half a millisecond, which dominated refits in loops.
    """

    __slots__ = ("dist", "kw")

    def __init__(self, dist: Any, kw: dict[str, Any]) -> None:
        self.dist = dist
        self.kw = kw

    def cdf(self, x: Any) -> Any:
        return self.dist.cdf(x, **self.kw)

    def sf(self, x: Any) -> Any:
        return self.dist.sf(x, **self.kw)

    def ppf(self, q: Any) -> Any:
        return self.dist.ppf(q, **self.kw)

    def pdf(self, x: Any) -> Any:
        return self.dist.pdf(x, **self.kw)

    def logpdf(self, x: Any) -> Any:
        return self.dist.logpdf(x, **self.kw)

    def logsf(self, x: Any) -> Any:
        return self.dist.logsf(x, **self.kw)

    def pmf(self, k: Any) -> Any:
        return self.dist.pmf(k, **self.kw)

    def logpmf(self, k: Any) -> Any:
        return self.dist.logpmf(k, **self.kw)

    def support(self) -> Any:
        return self.dist.support(**self.kw)


@dataclass(frozen=True)
class Family:
    """One parametric family: how to freeze it in scipy, fit it, and draw from it fast."""

    name: str
    param_names: tuple[str, ...]
    positive: bool
    discrete: bool
    min_obs: int
    _freeze: Callable[[Params], Any]
    _fit: Fitter
    _draw: Callable[[Params, int | tuple[int, ...], np.random.Generator], np.ndarray] | None = None
    _kinds: Mapping[str, Kind] = field(default_factory=dict)
    _fixed: Callable[[Mapping[str, Any]], frozenset[str]] = lambda o: frozenset()
    _fit_censored: CensFitter | None = None
    _valid: Callable[[Params], bool] = lambda p: True

    def frozen(self, params: Mapping[str, float]) -> Any:
        """The scipy frozen distribution for these parameters."""
        return self._freeze(dict(params))

    def bound(self, params: Mapping[str, float]) -> Any:
        """The distribution for these parameters for repeated evaluation, without freezing.

        Offers ``cdf``, ``sf``, ``ppf``, ``pdf``, ``logpdf``, ``logsf``, ``pmf``, ``logpmf`` and
        ``support`` with the same results as :meth:`frozen`'s (scipy's unfrozen methods with the
        parameters passed explicitly); a family registered without that mapping gets
        :meth:`frozen`.
        """
        f = self._freeze
        if isinstance(f, _Scipy):
            return _Bound(f.dist, f.kwargs(dict(params)))
        return self.frozen(params)

    def draw(
        self, params: Mapping[str, float], size: int | tuple[int, ...], rng: np.random.Generator
    ) -> np.ndarray:
        """Draws by the family's native numpy generator, else by inverse transform.

        Discrete families return integers.
        """
        if self._draw is not None:
            return self._draw(dict(params), size, rng)
        return np.asarray(self.frozen(params).ppf(rng.random(size)))

    def fit(
        self,
        x: np.ndarray,
        w: np.ndarray | None = None,
        *,
        censored: np.ndarray | None = None,
        **options: Any,
    ) -> FitOutcome:
        """Maximum-likelihood fit with the checks described in the module docstring."""
        return fit_family(self.name, x, w, censored=censored, **options)

    @property
    def censorable(self) -> bool:
        """Whether right-censored fits are offered."""
        return not self.discrete and self.name not in {"uniform", "triangular"}


# ---------------------------------------------------------------------------------------------
# option and data helpers


def _number(options: Mapping[str, Any], key: str, name: str, default: float | None) -> float | None:
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


def _loc(options: Mapping[str, Any], name: str, free_ok: bool) -> float | str:
    if free_ok and options.get("loc") == "free":
        return "free"
    v = options.get("loc", 0.0)
    if isinstance(v, str):
        want = "a number or 'free'" if free_ok else "a number"
        raise MethodError(f"option 'loc' of {name}: expected {want}, found {v!r}")
    return float(_number(options, "loc", name, 0.0))  # type: ignore[arg-type]


def _above(x: np.ndarray, loc: float, name: str, strict: bool) -> np.ndarray:
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


def _need_spread(x: np.ndarray, name: str) -> None:
    if np.ptp(x) == 0:
        raise MethodError(f"{name} cannot be fitted: all {x.size} values equal {float(x[0])!r}")


def _bounds(
    x: np.ndarray, options: Mapping[str, Any], name: str, default: tuple[float | None, float | None]
) -> tuple[float | None, float | None]:
    lo = _number(options, "lower", name, default[0])
    hi = _number(options, "upper", name, default[1])
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


def _counts(x: np.ndarray, name: str) -> None:
    if np.any(x < 0) or np.any(x != np.floor(x)):
        bad = x[(x < 0) | (x != np.floor(x))]
        raise MethodError(f"{name} needs non-negative integer values; found {float(bad[0])!r}")


def _frozen_loglik(family: Family) -> Callable[[np.ndarray, np.ndarray], Callable[[Params], float]]:
    def make(y: np.ndarray, w: np.ndarray) -> Callable[[Params], float]:
        total = float(np.sum(w))
        return lambda p: float(np.sum(w * family.frozen(p).logpdf(y))) / total

    return make


# ---------------------------------------------------------------------------------------------
# fits at location 0 (``y`` already shifted); the wrapper below adds ``loc``


def _fit0_lognormal(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    ly = np.log(y)
    _need_spread(ly, "lognormal")
    mu = wmean(ly, w)
    return {"mu": mu, "sigma": float(np.sqrt(wmean((ly - mu) ** 2, w)))}


def _fit0_exponential(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    scale = wmean(y, w)
    if scale <= 0:
        raise MethodError("exponential cannot be fitted: every value equals the location")
    return {"scale": scale}


def _fit0_gamma(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    _need_spread(y, "gamma")
    m = wmean(y, w)
    k = _mle.gamma_shape(float(np.log(m) - wmean(np.log(y), w)))
    return {"shape": k, "scale": m / k}


def _fit0_weibull(y: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    _need_spread(y, "weibull")
    k, scale = _mle.weibull_shape_scale(y, w, w)
    return {"shape": k, "scale": scale}


def _logistic_logpdf(z: np.ndarray, mu: float, s: float) -> np.ndarray:
    t = (z - mu) / s
    return -np.log(s) - t - 2.0 * np.logaddexp(0.0, -t)


def _fit_logistic(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    _need_spread(x, "logistic")
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
    xm = _number(o, "xm", "pareto", None)
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
    _need_spread(y, "generalized_pareto")
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
    _need_spread(y, "inverse_gaussian")
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
    _need_spread(x, "normal")
    mu = wmean(x, w)
    return {"mu": mu, "sigma": float(np.sqrt(wmean((x - mu) ** 2, w)))}


def _fit_gumbel(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    _need_spread(x, "gumbel")
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
    _need_spread(x, "gev")
    mu, beta = _mle.gumbel_fit(x, w)
    total = float(np.sum(w))

    def ll(p: Params) -> float:
        return float(np.sum(w * _gev_logpdf(x, p["mu"], p["sigma"], p["xi"]))) / total

    kinds: dict[str, Kind] = {"mu": ("real", "sigma"), "sigma": ("log",), "xi": ("real", 1.0)}
    starts = [{"mu": mu, "sigma": beta, "xi": xi} for xi in (0.0, 0.2, -0.2)]
    return _mle.best_of(ll, starts, ("mu", "sigma", "xi"), kinds, label="gev")


def _fit_beta(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    lo, hi = _bounds(x, o, "beta", (0.0, 1.0))
    assert lo is not None and hi is not None
    u = (x - lo) / (hi - lo)
    if np.any((u <= 0) | (u >= 1)):
        raise MethodError(f"beta needs every value strictly inside ({lo:g}, {hi:g})")
    _need_spread(u, "beta")
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
    lo, hi = _bounds(x, o, "uniform", (None, None))
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
    _need_spread(x, "triangular")
    lo, hi = _bounds(x, o, "triangular", (None, None))
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
    _need_spread(x, "student_t")
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
    _counts(x, "poisson")
    lam = wmean(x, w)
    if lam <= 0:
        raise MethodError("poisson cannot be fitted: every value is 0")
    return {"lambda": lam}


def _fit_geometric(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    _counts(x, "geometric")
    m = wmean(x, w)
    if m <= 0:
        raise MethodError("geometric cannot be fitted: every value is 0")
    return {"p": 1.0 / (1.0 + m)}


def _fit_negative_binomial(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
    _counts(x, "negative_binomial")
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
    _counts(x, "binomial")
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
    _need_spread(y, "weibull")
    k, scale = _mle.weibull_shape_scale(y, w, e)
    return {"shape": k, "scale": scale}


def _cens_rayleigh(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    return {"sigma": float(np.sqrt(np.sum(w * y * y) / (2.0 * np.sum(e))))}


def _cens_pareto(y: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
    xm = _number(o, "xm", "pareto", None)
    if xm is None:
        xm = float(y[e > 0].min())
    s = float(np.sum(w * np.log(np.maximum(y / xm, 1.0))))
    if s <= 0:
        raise MethodError("pareto cannot be fitted: every value is at or below xm")
    return {"alpha": float(np.sum(e)) / s, "xm": xm}


# ---------------------------------------------------------------------------------------------
# registry

FAMILIES: dict[str, Family] = {}
# Options each family's fit accepts (anything else is rejected with a message naming it).
FIT_OPTIONS: dict[str, frozenset[str]] = {}
# Positive families whose location may be estimated, and the shape that must exceed 1 then.
_FREE_LOC: dict[str, str | None] = {
    "lognormal": None,
    "exponential": None,
    "gamma": "shape",
    "weibull": "shape",
    "loglogistic": "beta",
    "inverse_gaussian": None,
    "rayleigh": None,
}


def _register(family: Family, options: tuple[str, ...] = ()) -> None:
    FAMILIES[family.name] = family
    FIT_OPTIONS[family.name] = frozenset(options)


def _positive_fit(name: str, fit0: Fitter, strict: bool) -> Fitter:
    def fit(x: np.ndarray, w: np.ndarray, o: Mapping[str, Any]) -> Params:
        loc = _loc(o, name, name in _FREE_LOC)
        if loc != "free":
            p = fit0(_above(x, float(loc), name, strict), w, o)
            p["loc"] = float(loc)
            return p
        if name == "exponential":  # closed form: loc = min(x), scale = mean - min
            p = _fit0_exponential(x - x.min(), w, o)
            p["loc"] = float(x.min())
            return p
        fam = FAMILIES[name]

        def inner(y: np.ndarray, wy: np.ndarray) -> tuple[Params, float]:
            p = fit0(y, wy, o)
            p["loc"] = 0.0
            return p, loglik(fam, p, y, wy)

        return _mle.profile_threshold(inner, x, w, label=name, shape=_FREE_LOC[name])

    return fit


def _positive_cens(name: str, fit0: CensFitter, strict: bool) -> CensFitter:
    def fit(x: np.ndarray, w: np.ndarray, e: np.ndarray, o: Mapping[str, Any]) -> Params:
        loc = float(_loc(o, name, False))
        p = fit0(_above(x, loc, name, strict), w, e, o)
        p["loc"] = loc
        return p

    return fit


def _fixed_loc(o: Mapping[str, Any]) -> frozenset[str]:
    return frozenset() if o.get("loc") == "free" else frozenset({"loc"})


def _positive(
    name: str,
    params: tuple[str, ...],
    fit0: Fitter,
    freeze: Callable[[Params], Any],
    draw: Callable[[Params, Any, np.random.Generator], np.ndarray] | None,
    kinds: Mapping[str, Kind],
    *,
    strict: bool = True,
    min_obs: int = 2,
    cens: CensFitter | None = None,
    options: tuple[str, ...] = ("loc",),
    valid: Callable[[Params], bool] = lambda p: True,
) -> None:
    _register(
        Family(
            name,
            params,
            positive=True,
            discrete=False,
            min_obs=min_obs,
            _freeze=freeze,
            _fit=_positive_fit(name, fit0, strict),
            _draw=draw,
            _kinds=kinds,
            _fixed=_fixed_loc,
            _fit_censored=None if cens is None else _positive_cens(name, cens, strict),
            _valid=valid,
        ),
        options,
    )


def _gpd_draw(p: Params, size: Any, rng: np.random.Generator) -> np.ndarray:
    e = rng.standard_exponential(size)
    if p["xi"] == 0:
        return p["loc"] + p["sigma"] * e
    return p["loc"] + p["sigma"] * np.expm1(p["xi"] * e) / p["xi"]


def _gev_draw(p: Params, size: Any, rng: np.random.Generator) -> np.ndarray:
    le = np.log(rng.standard_exponential(size))
    if p["xi"] == 0:
        return p["mu"] - p["sigma"] * le
    return p["mu"] + p["sigma"] * np.expm1(-p["xi"] * le) / p["xi"]


_LOG: Kind = ("log",)

_register(
    Family(
        "normal",
        ("mu", "sigma"),
        positive=False,
        discrete=False,
        min_obs=2,
        _freeze=_Scipy(stats.norm, lambda p: dict(loc=p["mu"], scale=p["sigma"])),
        _fit=_fit_normal,
        _draw=lambda p, size, rng: rng.normal(p["mu"], p["sigma"], size),
        _kinds={"mu": ("real", "sigma"), "sigma": _LOG},
    )
)
_positive(
    "lognormal",
    ("mu", "sigma", "loc"),
    _fit0_lognormal,
    _Scipy(stats.lognorm, lambda p: dict(s=p["sigma"], loc=p["loc"], scale=np.exp(p["mu"]))),
    # exp of a scaled standard normal: same law as rng.lognormal, about 30 % faster
    lambda p, size, rng: np.exp(rng.standard_normal(size) * p["sigma"] + p["mu"]) + p["loc"],
    {"mu": ("real", "sigma"), "sigma": _LOG},
)
_positive(
    "exponential",
    ("scale", "loc"),
    _fit0_exponential,
    _Scipy(stats.expon, lambda p: dict(loc=p["loc"], scale=p["scale"])),
    lambda p, size, rng: rng.exponential(p["scale"], size) + p["loc"],
    {"scale": _LOG},
    strict=False,
    min_obs=1,
    cens=_cens_exponential,
)
_positive(
    "gamma",
    ("shape", "scale", "loc"),
    _fit0_gamma,
    _Scipy(stats.gamma, lambda p: dict(a=p["shape"], loc=p["loc"], scale=p["scale"])),
    lambda p, size, rng: rng.gamma(p["shape"], p["scale"], size) + p["loc"],
    {"shape": _LOG, "scale": _LOG},
)
_positive(
    "weibull",
    ("shape", "scale", "loc"),
    _fit0_weibull,
    _Scipy(stats.weibull_min, lambda p: dict(c=p["shape"], loc=p["loc"], scale=p["scale"])),
    lambda p, size, rng: p["scale"] * rng.weibull(p["shape"], size) + p["loc"],
    {"shape": _LOG, "scale": _LOG},
    cens=_cens_weibull,
)
_register(
    Family(
        "gumbel",
        ("mu", "beta"),
        positive=False,
        discrete=False,
        min_obs=2,
        _freeze=_Scipy(stats.gumbel_r, lambda p: dict(loc=p["mu"], scale=p["beta"])),
        _fit=_fit_gumbel,
        _draw=lambda p, size, rng: rng.gumbel(p["mu"], p["beta"], size),
        _kinds={"mu": ("real", "beta"), "beta": _LOG},
    )
)
_register(
    Family(
        "logistic",
        ("mu", "s"),
        positive=False,
        discrete=False,
        min_obs=2,
        _freeze=_Scipy(stats.logistic, lambda p: dict(loc=p["mu"], scale=p["s"])),
        _fit=_fit_logistic,
        _draw=lambda p, size, rng: rng.logistic(p["mu"], p["s"], size),
        _kinds={"mu": ("real", "s"), "s": _LOG},
    )
)
_positive(
    "loglogistic",
    ("alpha", "beta", "loc"),
    _fit0_loglogistic,
    _Scipy(stats.fisk, lambda p: dict(c=p["beta"], loc=p["loc"], scale=p["alpha"])),
    lambda p, size, rng: p["alpha"] * np.exp(rng.logistic(0.0, 1.0 / p["beta"], size)) + p["loc"],
    {"alpha": _LOG, "beta": _LOG},
)
_positive(
    "pareto",
    ("alpha", "xm", "loc"),
    _fit0_pareto,
    _Scipy(stats.pareto, lambda p: dict(b=p["alpha"], loc=p["loc"], scale=p["xm"])),
    lambda p, size, rng: p["xm"] * (rng.pareto(p["alpha"], size) + 1.0) + p["loc"],
    {"alpha": _LOG},
    cens=_cens_pareto,
    options=("loc", "xm"),
)
_positive(
    "generalized_pareto",
    ("xi", "sigma", "loc"),
    _fit0_gpd,
    _Scipy(stats.genpareto, lambda p: dict(c=p["xi"], loc=p["loc"], scale=p["sigma"])),
    _gpd_draw,
    {"xi": ("real", 1.0), "sigma": _LOG},
    strict=False,
    valid=lambda p: p["xi"] >= -1.0,
)

_register(
    Family(
        "gev",
        ("mu", "sigma", "xi"),
        positive=False,
        discrete=False,
        min_obs=3,
        _freeze=_Scipy(stats.genextreme, lambda p: dict(c=-p["xi"], loc=p["mu"], scale=p["sigma"])),
        _fit=_fit_gev,
        _draw=_gev_draw,
        _valid=lambda p: p["xi"] >= -1.0,
        _kinds={"mu": ("real", "sigma"), "sigma": _LOG, "xi": ("real", 1.0)},
    )
)
_register(
    Family(
        "beta",
        ("alpha", "beta", "lower", "upper"),
        positive=False,
        discrete=False,
        min_obs=2,
        _freeze=_Scipy(
            stats.beta,
            lambda p: dict(
                a=p["alpha"], b=p["beta"], loc=p["lower"], scale=p["upper"] - p["lower"]
            ),
        ),
        _fit=_fit_beta,
        _draw=lambda p, size, rng: (
            p["lower"] + (p["upper"] - p["lower"]) * rng.beta(p["alpha"], p["beta"], size)
        ),
        _kinds={"alpha": _LOG, "beta": _LOG},
        _fixed=lambda o: frozenset({"lower", "upper"}),
    ),
    ("lower", "upper"),
)
_register(
    Family(
        "uniform",
        ("lower", "upper"),
        positive=False,
        discrete=False,
        min_obs=2,
        _freeze=_Scipy(
            stats.uniform, lambda p: dict(loc=p["lower"], scale=p["upper"] - p["lower"])
        ),
        _fit=_fit_uniform,
        _draw=lambda p, size, rng: rng.uniform(p["lower"], p["upper"], size),
        _fixed=lambda o: frozenset(k for k in ("lower", "upper") if k in o),
    ),
    ("lower", "upper"),
)
_register(
    Family(
        "triangular",
        ("lower", "mode", "upper"),
        positive=False,
        discrete=False,
        min_obs=3,
        _freeze=_Scipy(
            stats.triang,
            lambda p: dict(
                c=(p["mode"] - p["lower"]) / (p["upper"] - p["lower"]),
                loc=p["lower"],
                scale=p["upper"] - p["lower"],
            ),
        ),
        _fit=_fit_triangular,
        _draw=lambda p, size, rng: rng.triangular(p["lower"], p["mode"], p["upper"], size),
        _fixed=lambda o: frozenset(k for k in ("lower", "upper") if k in o),
    ),
    ("lower", "upper"),
)
_positive(
    "inverse_gaussian",
    ("mu", "lambda", "loc"),
    _fit0_inverse_gaussian,
    _Scipy(
        stats.invgauss, lambda p: dict(mu=p["mu"] / p["lambda"], loc=p["loc"], scale=p["lambda"])
    ),
    lambda p, size, rng: rng.wald(p["mu"], p["lambda"], size) + p["loc"],
    {"mu": _LOG, "lambda": _LOG},
)
_register(
    Family(
        "student_t",
        ("mu", "sigma", "nu"),
        positive=False,
        discrete=False,
        min_obs=3,
        _freeze=_Scipy(stats.t, lambda p: dict(df=p["nu"], loc=p["mu"], scale=p["sigma"])),
        _fit=_fit_student_t,
        _draw=lambda p, size, rng: p["mu"] + p["sigma"] * rng.standard_t(p["nu"], size),
        _kinds={"mu": ("real", "sigma"), "sigma": _LOG, "nu": _LOG},
        _valid=lambda p: p["nu"] <= 1e8,  # beyond, the fit is a normal one: stop there
    )
)
_positive(
    "rayleigh",
    ("sigma", "loc"),
    _fit0_rayleigh,
    _Scipy(stats.rayleigh, lambda p: dict(loc=p["loc"], scale=p["sigma"])),
    lambda p, size, rng: rng.rayleigh(p["sigma"], size) + p["loc"],
    {"sigma": _LOG},
    strict=False,
    min_obs=1,
    cens=_cens_rayleigh,
)
_register(
    Family(
        "poisson",
        ("lambda",),
        positive=False,
        discrete=True,
        min_obs=1,
        _freeze=_Scipy(stats.poisson, lambda p: dict(mu=p["lambda"])),
        _fit=_fit_poisson,
        _draw=lambda p, size, rng: rng.poisson(p["lambda"], size),
    )
)
_register(
    Family(
        "negative_binomial",
        ("r", "p"),
        positive=False,
        discrete=True,
        min_obs=2,
        _freeze=_Scipy(stats.nbinom, lambda p: dict(n=p["r"], p=p["p"])),
        _fit=_fit_negative_binomial,
        _draw=lambda p, size, rng: rng.negative_binomial(p["r"], p["p"], size),
    )
)
_register(
    Family(
        "geometric",
        ("p",),
        positive=False,
        discrete=True,
        min_obs=1,
        _freeze=_Scipy(stats.geom, lambda p: dict(p=p["p"], loc=-1)),
        _fit=_fit_geometric,
        _draw=lambda p, size, rng: rng.geometric(p["p"], size) - 1,
    )
)
_register(
    Family(
        "binomial",
        ("n_trials", "p"),
        positive=False,
        discrete=True,
        min_obs=1,
        _freeze=_Scipy(stats.binom, lambda p: dict(n=int(p["n_trials"]), p=p["p"])),
        _fit=_fit_binomial,
        _draw=lambda p, size, rng: rng.binomial(int(p["n_trials"]), p["p"], size),
        _fixed=lambda o: frozenset({"n_trials"}),
    ),
    ("n_trials",),
)


def get_family(name: str) -> Family:
    """The family registered under ``name``; unknown names raise a MethodError listing them."""
    try:
        return FAMILIES[name]
    except (KeyError, TypeError):
        raise MethodError(
            f"unknown family {name!r}; expected one of: {', '.join(sorted(FAMILIES))}"
        ) from None


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


def _fit_censored_generic(
    family: Family, x: np.ndarray, w: np.ndarray, c: np.ndarray, options: Mapping[str, Any]
) -> Params:
    """Maximise the censored likelihood from the fit that treats every value as observed."""
    try:
        start = family._fit(x, w, options)
    except (FitError, MethodError):  # e.g. many values censored at one time: start from events
        start = family._fit(x[~c], w[~c], options)
    start = {k: float(start[k]) for k in family.param_names}
    free = [k for k in family.param_names if k not in family._fixed(options)]
    total = float(np.sum(w))

    def mean_loglik(p: Params) -> float:
        return loglik(family, p, x, w, c) / total if family._valid(p) else -np.inf

    return _mle.maximise_params(
        mean_loglik,
        start,
        free,
        family._kinds,
        label=f"{family.name} (censored)",
    )


def _check_options(name: str, options: Mapping[str, Any]) -> None:
    allowed = FIT_OPTIONS[name]
    unknown = sorted(set(options) - allowed)
    if unknown:
        raise MethodError(
            f"unknown option {unknown[0]!r} for {name} (allowed: "
            f"{', '.join(sorted(allowed)) or 'none'})"
        )


def fit_family(
    name: str,
    x: np.ndarray,
    w: np.ndarray | None = None,
    *,
    censored: np.ndarray | None = None,
    **options: Any,
) -> FitOutcome:
    """Maximum-likelihood fit of family ``name`` to values ``x`` (frequency weights ``w``).

    Parameters
    ----------
    name : str
        A key of :data:`FAMILIES`.
    x : array_like
        1-d finite values.
    w : array_like, optional
        Non-negative frequency weights (default 1); values of weight 0 are ignored.
    censored : array_like of bool, optional
        True where ``x`` is right-censored (the true value is larger). Continuous families only.
    **options
        Family options, see :data:`FIT_OPTIONS` and the module docstring.

    Returns
    -------
    FitOutcome
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
    _check_options(name, options)
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 1:
        raise MethodError(f"values: expected a 1-d array, found {x.ndim} dimensions")
    if not np.all(np.isfinite(x)):
        raise MethodError(
            f"values: every value must be finite, found {int(np.sum(~np.isfinite(x)))} not"
        )
    w = np.ones_like(x) if w is None else np.asarray(w, dtype=np.float64)
    if w.shape != x.shape:
        raise MethodError(f"weights: expected {x.size} weights, found {w.size}")
    if not np.all(np.isfinite(w) & (w >= 0)):
        raise MethodError(
            "weights: expected finite non-negative weights, found a negative or non-finite one"
        )
    c = None
    if censored is not None:
        c = np.asarray(censored)
        if c.dtype != np.bool_ or c.shape != x.shape:
            raise MethodError(
                f"censored: expected a boolean array of {x.size} flags, found "
                f"dtype {c.dtype} with shape {c.shape}"
            )
    keep = w > 0
    if not keep.all():
        x, w = x[keep], w[keep]
        c = None if c is None else c[keep]
    if x.size < family.min_obs:
        raise MethodError(f"{name} needs at least {family.min_obs} values, found {x.size}")
    if c is not None and not c.any():
        c = None
    if c is None:
        params = family._fit(x, w, options)
    else:
        if not family.censorable:
            raise MethodError(f"censored: {name} does not offer right-censored fits")
        if options.get("loc") == "free":
            raise MethodError(
                f"censored: {name} with loc='free' is not offered; pass loc as a number"
            )
        e = np.where(c, 0.0, w)
        if not e.sum() > 0:
            raise MethodError("censored: every value is censored; at least one must be observed")
        if family._fit_censored is not None:
            params = family._fit_censored(x, w, e, options)
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
    n_params = len(family.param_names) - len(family._fixed(options))
    return FitOutcome(name, params, ll, n_params, float(np.sum(w)))
