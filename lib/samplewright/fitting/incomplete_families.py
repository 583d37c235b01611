"""Families offered for incomplete data: trade names mapped to scipy.stats, with starting values.

Parameter names are those of :mod:`samplewright.distributions.families`, so a fitted parameter
dict means the same thing everywhere:

==================  ====================  ========================================================
family              estimated             scipy mapping (fixed settings)
==================  ====================  ========================================================
normal              mu, sigma             norm(loc=mu, scale=sigma)
lognormal           mu, sigma             lognorm(s=sigma, scale=exp(mu), loc=loc)
exponential         scale                 expon(scale=scale, loc=loc)
gamma               shape, scale          gamma(a=shape, scale=scale, loc=loc)
weibull             shape, scale          weibull_min(c=shape, scale=scale, loc=loc)
loglogistic         alpha, beta           fisk(c=beta, scale=alpha, loc=loc)
pareto              alpha                 pareto(b=alpha, scale=xm, loc=loc); S = (xm/(x-loc))^alpha
lomax               alpha, scale          lomax(c=alpha, scale=scale, loc=loc);
                                          S = (scale/(x-loc+scale))^alpha (Pareto type II)
gumbel              mu, beta              gumbel_r(loc=mu, scale=beta)
logistic            mu, s                 logistic(loc=mu, scale=s)
generalized_pareto  xi, sigma             genpareto(c=xi, scale=sigma, loc=loc), xi >= -1
inverse_gaussian    mu, lambda            invgauss(mu=mu/lambda, scale=lambda, loc=loc)
rayleigh            sigma                 rayleigh(scale=sigma, loc=loc)
student_t           mu, sigma, nu         t(df=nu, loc=mu, scale=sigma)
gev                 mu, sigma, xi         genextreme(c=-xi, loc=mu, scale=sigma), xi >= -1
==================  ====================  ========================================================

``loc`` (positive families) is never estimated: it is 0 unless given in ``fixed``. ``pareto`` is
the single-parameter (type I) Pareto: ``xm`` is fixed too, by default the smallest exact value,
finite lower end or truncation point above ``loc`` (the maximum-likelihood ``xm`` when no row is
left-censored; with a truncation point at or above ``xm`` on every row, ``xm`` cancels out of the
likelihood). ``lomax`` is the two-parameter Pareto of loss modelling, the usual choice for
losses above a deductible; it is the generalized Pareto with ``xi = 1 / alpha`` and
``sigma = scale / alpha`` (``loc`` the same), and the package's families name it that way.

Each family also names its *drift* parameter: the location or scale (for ``pareto`` the tail
index) that moves the family's mass below a truncation point when pushed one way, the others
held. The check against fits that live below the truncation point
(:mod:`~samplewright.fitting.incomplete_drift`) moves along it.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from scipy import stats

__all__ = ["SPECS", "FamilySpec"]

Params = dict[str, float]
Kind = Literal["log", "real", "xi"]
_EULER = 0.5772156649015329


@dataclass(frozen=True)
class FamilySpec:
    """How one family is fitted to incomplete data.

    Attributes
    ----------
    dist : scipy.stats.rv_continuous
        The unfrozen scipy distribution.
    estimated : tuple of str
        Parameters estimated unless fixed, in optimiser order.
    kinds : dict
        Per estimated parameter: ``"log"`` (positive, optimised on the log scale), ``"real"`` or
        ``"xi"`` (a shape kept in ``[-1, 20]``; the lower end is a valid answer).
    settings : tuple of str
        Parameters that are only ever fixed (``loc``, ``xm``); see :func:`default_settings`.
    kwargs : callable
        Parameters -> scipy keyword arguments.
    positive : bool
        Support starts at ``loc`` (``loc + xm`` for pareto).
    closed_floor : bool
        The density is positive at the lower end of the support, so an exact value may equal it.
    concentrates : bool
        Some parameter limit puts all mass at any chosen point (a scale going to 0 around a free
        location, or a shape going to infinity), which makes some data sets unbounded or
        degenerate; the others can only push mass to their lower end or to infinity.
    start : callable
        ``(y, w, fixed) -> starting values``, from pseudo-values ``y`` (already minus ``loc``
        for positive families) with weights ``w``.
    drift : tuple of (str, int)
        The drift parameter and the direction (``-1`` or ``+1``) in which moving it lowers the
        mass above any point of the support.
    """

    dist: Any
    estimated: tuple[str, ...]
    kinds: dict[str, Kind]
    settings: tuple[str, ...]
    kwargs: Callable[[Params], dict[str, float]]
    positive: bool
    closed_floor: bool
    concentrates: bool
    start: Callable[[np.ndarray, np.ndarray, Params], Params]
    drift: tuple[str, int]

    def floor(self, p: Params) -> float:
        """Lower end of the support for these (fixed) settings."""
        if not self.positive:
            return -np.inf
        return p["loc"] + p.get("xm", 0.0)


def _moments(y: np.ndarray, w: np.ndarray) -> tuple[float, float]:
    """Weighted mean and standard deviation, the latter never 0."""
    m = float(np.average(y, weights=w))
    sd = float(np.sqrt(np.average((y - m) ** 2, weights=w)))
    if not sd > 0:
        sd = 0.1 * abs(m) if m != 0 else 1.0
    return m, sd


def _log_moments(y: np.ndarray, w: np.ndarray) -> tuple[float, float]:
    return _moments(np.log(y), w)


def _start_normal(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _moments(y, w)
    return {"mu": m, "sigma": sd}


def _start_lognormal(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _log_moments(y, w)
    return {"mu": m, "sigma": sd}


def _start_exponential(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    return {"scale": _moments(y, w)[0]}


def _start_gamma(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _moments(y, w)
    return {"shape": (m / sd) ** 2, "scale": sd * sd / m}


def _start_weibull(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _log_moments(y, w)
    k = np.pi / np.sqrt(6.0) / sd  # sd of log X is pi / (k sqrt 6)
    return {"shape": k, "scale": float(np.exp(m + _EULER / k))}


def _start_loglogistic(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _log_moments(y, w)
    return {"alpha": float(np.exp(m)), "beta": np.pi / (np.sqrt(3.0) * sd)}


def _start_pareto(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    s = float(np.sum(w * np.log(y / f["xm"])))
    return {"alpha": float(np.sum(w)) / s if s > 0 else 1.0}


def _start_lomax(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _moments(y, w)
    v = sd * sd
    a = 2.0 * v / (v - m * m) if v > 1.1 * m * m else 20.0  # var/mean^2 = a/(a-2) for a > 2
    return {"alpha": a, "scale": m * (a - 1.0)}


def _start_gumbel(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _moments(y, w)
    beta = sd * np.sqrt(6.0) / np.pi
    return {"mu": m - _EULER * beta, "beta": beta}


def _start_logistic(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _moments(y, w)
    return {"mu": m, "s": sd * np.sqrt(3.0) / np.pi}


def _start_gpd(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _moments(y, w)
    r = m * m / (sd * sd)
    xi = float(np.clip(0.5 * (1.0 - r), -0.5, 0.9))  # moment estimates, kept in a safe range
    sigma = m * (1.0 - xi)
    if xi < 0:  # the support must reach beyond the data
        sigma = max(sigma, -xi * float(np.max(y)) * 1.01)
    return {"xi": xi, "sigma": sigma}


def _start_invgauss(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _moments(y, w)
    return {"mu": m, "lambda": m**3 / (sd * sd)}


def _start_student_t(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    m, sd = _moments(y, w)
    return {"mu": m, "sigma": sd, "nu": 10.0}


def _start_gev(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    g = _start_gumbel(y, w, f)
    return {"mu": g["mu"], "sigma": g["beta"], "xi": 0.0}


def _start_rayleigh(y: np.ndarray, w: np.ndarray, f: Params) -> Params:
    return {"sigma": float(np.sqrt(np.average(y * y, weights=w) / 2.0))}


def _spec(
    dist: Any,
    kinds: dict[str, Kind],
    kwargs: Callable[[Params], dict[str, float]],
    start: Callable[[np.ndarray, np.ndarray, Params], Params],
    drift: tuple[str, int],
    *,
    positive: bool = True,
    closed_floor: bool = False,
    concentrates: bool = True,
    settings: tuple[str, ...] | None = None,
) -> FamilySpec:
    if settings is None:
        settings = ("loc",) if positive else ()
    return FamilySpec(
        dist=dist,
        estimated=tuple(kinds),
        kinds=kinds,
        settings=settings,
        kwargs=kwargs,
        positive=positive,
        closed_floor=closed_floor,
        concentrates=concentrates,
        start=start,
        drift=drift,
    )


SPECS: dict[str, FamilySpec] = {
    "normal": _spec(
        stats.norm,
        {"mu": "real", "sigma": "log"},
        lambda p: {"loc": p["mu"], "scale": p["sigma"]},
        _start_normal,
        ("mu", -1),
        positive=False,
    ),
    "lognormal": _spec(
        stats.lognorm,
        {"mu": "real", "sigma": "log"},
        lambda p: {"s": p["sigma"], "scale": float(np.exp(p["mu"])), "loc": p["loc"]},
        _start_lognormal,
        ("mu", -1),
    ),
    "exponential": _spec(
        stats.expon,
        {"scale": "log"},
        lambda p: {"scale": p["scale"], "loc": p["loc"]},
        _start_exponential,
        ("scale", -1),
        closed_floor=True,
        concentrates=False,
    ),
    "gamma": _spec(
        stats.gamma,
        {"shape": "log", "scale": "log"},
        lambda p: {"a": p["shape"], "scale": p["scale"], "loc": p["loc"]},
        _start_gamma,
        ("scale", -1),
    ),
    "weibull": _spec(
        stats.weibull_min,
        {"shape": "log", "scale": "log"},
        lambda p: {"c": p["shape"], "scale": p["scale"], "loc": p["loc"]},
        _start_weibull,
        ("scale", -1),
    ),
    "loglogistic": _spec(
        stats.fisk,
        {"alpha": "log", "beta": "log"},
        lambda p: {"c": p["beta"], "scale": p["alpha"], "loc": p["loc"]},
        _start_loglogistic,
        ("alpha", -1),
    ),
    "pareto": _spec(
        stats.pareto,
        {"alpha": "log"},
        lambda p: {"b": p["alpha"], "scale": p["xm"], "loc": p["loc"]},
        _start_pareto,
        ("alpha", 1),
        closed_floor=True,
        concentrates=False,
        settings=("loc", "xm"),
    ),
    "lomax": _spec(
        stats.lomax,
        {"alpha": "log", "scale": "log"},
        lambda p: {"c": p["alpha"], "scale": p["scale"], "loc": p["loc"]},
        _start_lomax,
        ("scale", -1),
        closed_floor=True,
        concentrates=False,
    ),
    "gumbel": _spec(
        stats.gumbel_r,
        {"mu": "real", "beta": "log"},
        lambda p: {"loc": p["mu"], "scale": p["beta"]},
        _start_gumbel,
        ("mu", -1),
        positive=False,
    ),
    "logistic": _spec(
        stats.logistic,
        {"mu": "real", "s": "log"},
        lambda p: {"loc": p["mu"], "scale": p["s"]},
        _start_logistic,
        ("mu", -1),
        positive=False,
    ),
    "generalized_pareto": _spec(
        stats.genpareto,
        {"xi": "xi", "sigma": "log"},
        lambda p: {"c": p["xi"], "scale": p["sigma"], "loc": p["loc"]},
        _start_gpd,
        ("sigma", -1),
        closed_floor=True,
        concentrates=False,
    ),
    "inverse_gaussian": _spec(
        stats.invgauss,
        {"mu": "log", "lambda": "log"},
        lambda p: {"mu": p["mu"] / p["lambda"], "scale": p["lambda"], "loc": p["loc"]},
        _start_invgauss,
        ("mu", -1),
    ),
    "rayleigh": _spec(
        stats.rayleigh,
        {"sigma": "log"},
        lambda p: {"scale": p["sigma"], "loc": p["loc"]},
        _start_rayleigh,
        ("sigma", -1),
        concentrates=False,
    ),
    "student_t": _spec(
        stats.t,
        {"mu": "real", "sigma": "log", "nu": "log"},
        lambda p: {"df": p["nu"], "loc": p["mu"], "scale": p["sigma"]},
        _start_student_t,
        ("mu", -1),
        positive=False,
    ),
    "gev": _spec(
        stats.genextreme,
        {"mu": "real", "sigma": "log", "xi": "xi"},
        lambda p: {"c": -p["xi"], "loc": p["mu"], "scale": p["sigma"]},
        _start_gev,
        ("mu", -1),
        positive=False,
    ),
}
