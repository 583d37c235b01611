"""Maximum-likelihood fits without a closed form: logistic, log-logistic, generalized Pareto,
gev and beta (student_t in :mod:`.mle_student_t`, the bounded families in :mod:`.mle_bounded`).

Each maximises its own log-likelihood (mean per unit weight) over the parameters no option
fixes, with the optimiser of :mod:`.optimise` (Nelder–Mead restarted until it settles, with a
cap on evaluations). The location-scale families are fitted to standardised values
``z = (x - c) / h`` in [-1, 1] (:func:`~samplewright.fitting.mle_sums.standardised`) and mapped
back, so values of any magnitude work; the generalized Pareto is fitted to ``y / max(y)``.
Fitters return ``(params, None)``: :mod:`.mle` computes the log-likelihood of the result.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from scipy import special

from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.families import Params
from samplewright.fitting import optimise as _mle
from samplewright.fitting.mle_fits import Fitted, check_shift, fixed, need_spread, number_option
from samplewright.fitting.mle_sums import Obs, dot, refuse_outside, standardised
from samplewright.fitting.optimise import Kind

__all__ = [
    "bounds_option",
    "fit0_generalized_pareto",
    "fit0_loglogistic",
    "fit_beta",
    "fit_gev",
    "fit_logistic",
]


def bounds_option(
    obs: Obs, o: Mapping[str, Any], name: str, default: tuple[float | None, float | None]
) -> tuple[float | None, float | None]:
    """Options ``lower``/``upper`` (numbers; ``default`` when absent), checked against the data."""
    lo = number_option(o, "lower", name, default[0])
    hi = number_option(o, "upper", name, default[1])
    if lo is not None and hi is not None and not lo < hi:
        raise MethodError(f"options of {name}: expected lower < upper, found {lo!r} >= {hi!r}")
    if lo is not None and obs.lo < lo:
        i = int(np.argmin(obs.x)) + 1
        raise MethodError(
            f"{name}: option lower={lo!r} is above the smallest value {obs.lo!r} (value {i})"
        )
    if hi is not None and obs.hi > hi:
        i = int(np.argmax(obs.x)) + 1
        raise MethodError(
            f"{name}: option upper={hi!r} is below the largest value {obs.hi!r} (value {i})"
        )
    return lo, hi


def _fit_free(
    mean_ll: Callable[[Params], float],
    starts: list[Params],
    kinds: Mapping[str, Kind],
    label: str,
) -> Params:
    """Maximise over the parameters in ``kinds`` from the best of ``starts`` (none: the start)."""
    if not kinds:
        return dict(starts[0])
    return _mle.best_of(mean_ll, starts, tuple(kinds), kinds, label=label)


# --- logistic and log-logistic ----------------------------------------------------------------


def _logistic_logpdf(z: np.ndarray, mu: float, s: float) -> np.ndarray:
    t = (z - mu) / s
    return -np.log(s) - t - 2.0 * np.logaddexp(0.0, -t)


def _logistic_z(zobs: Obs, mu: float | None, s: float | None, label: str) -> Params:
    """Logistic fit to standardised values with ``mu``/``s`` given in their units (or None)."""
    z, w = zobs.x, zobs.weights()
    total = zobs.total
    m = float(dot(w, z)) / total
    sd = float(np.sqrt(dot(w, (z - m) ** 2) / total))
    start = {"mu": m if mu is None else mu, "s": sd * np.sqrt(3.0) / np.pi if s is None else s}
    kinds: dict[str, Kind] = {}
    if mu is None:
        kinds["mu"] = ("real", "s")
    if s is None:
        kinds["s"] = ("log",)
    return _fit_free(
        lambda p: float(dot(w, _logistic_logpdf(z, p["mu"], p["s"]))) / total,
        [start],
        kinds,
        label,
    )


def fit_logistic(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    """Logistic (mu, s) on standardised values."""
    need_spread(obs, "logistic")
    zobs, c, h = standardised(obs)
    mu, s = fixed(o, "mu"), fixed(o, "s")
    p = _logistic_z(
        zobs, None if mu is None else (mu - c) / h, None if s is None else s / h, "logistic"
    )
    return {"mu": c + h * p["mu"] if mu is None else mu, "s": h * p["s"] if s is None else s}, None


def fit0_loglogistic(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    """log(x - loc) is logistic(log alpha, 1/beta); the Jacobian does not involve parameters."""
    check_shift(obs, loc, "loglogistic", True)
    need_spread(obs, "loglogistic")
    lobs = Obs(np.log(obs.x - loc), obs.w)
    need_spread(lobs, "loglogistic")
    zobs, c, h = standardised(lobs)
    alpha, beta = fixed(o, "alpha"), fixed(o, "beta")
    mu = None if alpha is None else (float(np.log(alpha)) - c) / h
    s = None if beta is None else 1.0 / (beta * h)
    p = _logistic_z(zobs, mu, s, "loglogistic")
    return {
        "alpha": float(np.exp(c + h * p["mu"])) if alpha is None else alpha,
        "beta": 1.0 / (h * p["s"]) if beta is None else beta,
    }, None


# --- generalized Pareto -----------------------------------------------------------------------


def _gpd_logpdf(y: np.ndarray, xi: float, sigma: float) -> np.ndarray:
    if xi < -1.0:  # the likelihood is unbounded below xi = -1
        return np.full(y.shape, -np.inf)
    if abs(xi) < 1e-12:
        return -np.log(sigma) - y / sigma
    t = xi * y / sigma
    out = -np.log(sigma) - (1.0 + 1.0 / xi) * np.log1p(np.maximum(t, -1.0))
    return np.where(t > -1.0, out, -np.inf)


def fit0_generalized_pareto(obs: Obs, loc: float, o: Mapping[str, Any]) -> Fitted:
    """Generalized Pareto above ``loc`` (xi >= -1), fitted to ``(x - loc) / max(x - loc)``."""
    check_shift(obs, loc, "generalized_pareto", False)
    need_spread(obs, "generalized_pareto")
    top = obs.hi - loc
    y = (obs.x - loc) / top
    w, total = obs.weights(), obs.total
    xi_f, sigma_f = fixed(o, "xi"), fixed(o, "sigma")
    m = float(dot(w, y)) / total
    v = float(dot(w, (y - m) ** 2)) / total
    starts = [{"xi": 0.0, "sigma": m}]
    if v > 0:  # the method-of-moments start
        xi0, s0 = 0.5 * (1.0 - m * m / v), 0.5 * m * (m * m / v + 1.0)
        if xi0 >= 0 or s0 / -xi0 > 1.0:
            starts.append({"xi": xi0, "sigma": s0})
    if xi_f is not None:  # a feasible scale for the given shape: above -xi * max(y) if xi < 0
        starts = [{"xi": xi_f, "sigma": max(m, -xi_f * 1.01)}]
    if sigma_f is not None:
        starts = [{**st, "sigma": sigma_f / top} for st in starts]
    kinds: dict[str, Kind] = {}
    if xi_f is None:
        kinds["xi"] = ("real", 1.0)
    if sigma_f is None:
        kinds["sigma"] = ("log",)
    p = _fit_free(
        lambda p: float(dot(w, _gpd_logpdf(y, p["xi"], p["sigma"]))) / total,
        starts,
        kinds,
        "generalized_pareto",
    )
    return {"xi": p["xi"], "sigma": top * p["sigma"] if sigma_f is None else sigma_f}, None


# --- generalized extreme value ----------------------------------------------------------------

_CORNER_TOL = 1e-9  # mean log-likelihood within which the xi = -1 edge is taken as the optimum


def _gev_logpdf(x: np.ndarray, mu: float, sigma: float, xi: float) -> np.ndarray:
    if xi < -1.0:  # the likelihood is unbounded below xi = -1 (Smith, 1985)
        return np.full(x.shape, -np.inf)
    z = (x - mu) / sigma
    if abs(xi) < 1e-9:
        return -np.log(sigma) - z - np.exp(-z)
    t = 1.0 + xi * z
    if xi == -1.0:  # density exp(-t) / sigma, positive at the upper end t = 0 too
        return np.where(t >= 0, -np.log(sigma) - t, -np.inf)
    lt = np.log(np.where(t > 0, t, 1.0))
    out = -np.log(sigma) - (1.0 + 1.0 / xi) * lt - np.exp(-lt / xi)
    return np.where(t > 0, out, -np.inf)


def fit_gev(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    """GEV (mu, sigma, xi >= -1) on standardised values, from gumbel starts."""
    need_spread(obs, "gev")
    zobs, c, h = standardised(obs)
    z, w, total = zobs.x, zobs.weights(), zobs.total
    mu_f, sigma_f, xi_f = fixed(o, "mu"), fixed(o, "sigma"), fixed(o, "xi")
    mu0, beta0 = _mle.gumbel_fit(z, w)
    given = {
        k: v
        for k, v in (
            ("mu", None if mu_f is None else (mu_f - c) / h),
            ("sigma", None if sigma_f is None else sigma_f / h),
            ("xi", xi_f),
        )
        if v is not None
    }

    def ll(p: Params) -> float:
        return float(dot(w, _gev_logpdf(z, p["mu"], p["sigma"], p["xi"]))) / total

    starts = []
    for xi in (0.0, 0.2, -0.2):
        st = {"mu": mu0, "sigma": beta0, "xi": xi, **given}
        for _ in range(40):  # widen the scale until every value is inside the support
            with np.errstate(all="ignore"):
                if np.isfinite(ll(st)) or "sigma" in given:
                    break
            st["sigma"] *= 2.0
        starts.append(st)
    kinds: dict[str, Kind] = {
        k: v
        for k, v in (("mu", ("real", "sigma")), ("sigma", ("log",)), ("xi", ("real", 1.0)))
        if k not in given
    }
    p = _fit_free(ll, starts, kinds, "gev")
    if not given:
        p = _gev_corner(z, w, total, p, ll)
    out = {
        "mu": c + h * p["mu"] if mu_f is None else mu_f,
        "sigma": h * p["sigma"] if sigma_f is None else sigma_f,
        "xi": p["xi"],
    }
    if out["xi"] == -1.0 and mu_f is None:  # keep max(x) inside the support after rounding
        out["mu"] = _below_top(out["mu"], out["sigma"], obs.hi)
    return out, None


def _below_top(mu: float, sigma: float, top: float) -> float:
    """``mu`` raised by a few ulps until ``(top - mu) / sigma <= 1`` holds in floating point
    (with xi = -1 the support ends at ``mu + sigma``, and ``top`` must stay inside)."""
    for _ in range(64):
        if (top - mu) / sigma <= 1.0:
            break
        mu = float(np.nextafter(mu, np.inf))
    return mu


def _gev_corner(
    z: np.ndarray, w: np.ndarray, total: float, p: Params, ll: Callable[[Params], float]
) -> Params:
    """The better of ``p`` and the best fit with xi = -1, which an optimiser can only approach.

    With xi = -1 the density is ``exp(-(U - x) / sigma) / sigma`` below the upper end ``U``, so
    the best such fit has ``U = max(z)`` and ``sigma`` the mean distance to it; it wins when
    many values tie at the maximum (the likelihood's largest value is then on that edge), or
    when ``p`` is within :data:`_CORNER_TOL` of it (mean log-likelihood).
    """
    top = float(z.max())
    s_top = float(dot(w, top - z)) / total
    if not s_top > 0:
        return p
    corner = {"mu": _below_top(top - s_top, s_top, top), "sigma": s_top, "xi": -1.0}
    with np.errstate(all="ignore"):  # an optimiser next to the edge is within rounding of it
        return corner if ll(corner) >= ll(p) - _CORNER_TOL else p


# --- beta on [lower, upper] -------------------------------------------------------------------


def fit_beta(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    """Beta shapes on the fixed interval [lower, upper] (default [0, 1])."""
    lo, hi = bounds_option(obs, o, "beta", (0.0, 1.0))
    assert lo is not None and hi is not None
    if not np.isfinite(hi - lo):
        raise MethodError(f"beta: the interval [{lo!r}, {hi!r}] is too wide for float64")
    u = (obs.x - lo) / (hi - lo)
    bad = (u <= 0) | (u >= 1)
    if bad.any():
        refuse_outside(obs, bad, f"beta needs every value strictly inside ({lo!r}, {hi!r})")
    need_spread(obs, "beta")
    w, total = obs.weights(), obs.total
    m = float(dot(w, u)) / total
    v = float(dot(w, (u - m) ** 2)) / total
    common = m * (1.0 - m) / v - 1.0 if v > 0 else 0.0
    a0, b0 = (m * common, (1.0 - m) * common) if common > 0 else (1.0, 1.0)
    su = float(dot(w, np.log(u))) / total
    s1u = float(dot(w, np.log1p(-u))) / total
    a_f, b_f = fixed(o, "alpha"), fixed(o, "beta")
    start = {"alpha": a0 if a_f is None else a_f, "beta": b0 if b_f is None else b_f}
    kinds: dict[str, Kind] = {k: ("log",) for k, v in (("alpha", a_f), ("beta", b_f)) if v is None}
    p = _fit_free(
        lambda p: (
            (p["alpha"] - 1) * su + (p["beta"] - 1) * s1u - special.betaln(p["alpha"], p["beta"])
        ),
        [start],
        kinds,
        "beta",
    )
    if not (np.isfinite(p["alpha"]) and np.isfinite(p["beta"])):  # pragma: no cover
        raise FitError(f"beta: the fit reached non-finite shapes {p}")
    return {"alpha": p["alpha"], "beta": p["beta"], "lower": lo, "upper": hi}, None
