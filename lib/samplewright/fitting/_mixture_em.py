"""The EM iteration behind :mod:`samplewright.fitting.mixtures` (one family, k components).

Component parameters are an array of shape (k, 2) in scipy's names: normal (loc, scale),
lognormal (s, scale), gamma (a, scale), weibull (c, scale). Seeds work on the family's working
scale (x for normal, log x for the others). M-steps maximise the expected complete-data
log-likelihood exactly: closed form for normal and lognormal; for gamma the scale is closed form
given the shape and the shape solves ``log a - digamma(a) = log(mean x) - mean(log x)`` (weighted by
the responsibilities) by Newton steps from Minka's (2002) start; for weibull the shape solves the
weighted score equation ``sum r x^c log x / sum r x^c - 1/c - mean(log x) = 0`` by Newton steps
from the previous shape, then the scale is closed form. Each Newton solve runs to convergence, so
the log-likelihood never decreases (Dempster, Laird & Rubin 1977).

A collapse guard keeps every likelihood finite: each component's spread on the working scale has
a floor, and a start in which a component reaches that floor or falls below the minimum weight is
abandoned (the caller tries the next start).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
from scipy import special

__all__ = [
    "EmRun",
    "MixtureFamily",
    "best_of_starts",
    "run_em",
    "seed_assignments",
    "start_from_groups",
    "working_scale",
]

MixtureFamily = Literal["normal", "lognormal", "gamma", "weibull"]
_HALF_LOG_2PI = 0.5 * np.log(2.0 * np.pi)
_NEWTON_STEPS = 50
_SHORT_RUN = 30  # EM steps from each start before only the best is continued


@dataclass(frozen=True)
class EmRun:
    """Outcome of one EM start (internal)."""

    weights: np.ndarray
    params: np.ndarray
    loglik: float
    n_iter: int
    converged: bool
    collapsed: bool


def working_scale(family: MixtureFamily, x: np.ndarray) -> np.ndarray:
    """The scale on which components are seeded and their spread is floored."""
    return x if family == "normal" else np.log(x)


def component_logpdf(
    family: MixtureFamily, x: np.ndarray, lx: np.ndarray, params: np.ndarray
) -> np.ndarray:
    """Log-density of each component at each point, shape (n, k); ``lx`` is ``log x``."""
    a, b = params[:, 0], params[:, 1]
    if family == "normal":
        z = (x[:, None] - a) / b
        return -0.5 * z * z - np.log(b) - _HALF_LOG_2PI
    if family == "lognormal":
        z = (lx[:, None] - np.log(b)) / a
        return -0.5 * z * z - np.log(a) - _HALF_LOG_2PI - lx[:, None]
    if family == "gamma":
        return (a - 1.0) * lx[:, None] - x[:, None] / b - a * np.log(b) - special.gammaln(a)
    lz = lx[:, None] - np.log(b)  # weibull
    return np.log(a) - np.log(b) + (a - 1.0) * lz - np.exp(a * lz)


def spread(family: MixtureFamily, params: np.ndarray) -> np.ndarray:
    """Each component's standard deviation on the working scale."""
    a = params[:, 0]
    if family in ("normal", "lognormal"):
        return a if family == "lognormal" else params[:, 1]
    if family == "gamma":
        return np.sqrt(special.zeta(2.0, a))
    return np.pi / (a * np.sqrt(6.0))  # weibull: sd of log x


def _gamma_cap(floor: float) -> float:
    """The gamma shape whose log-scale sd, sqrt(trigamma(a)), equals ``floor``."""
    a = 1.0 / floor**2 + 0.5  # trigamma(a) ~ 1/a + 1/(2 a^2)
    for _ in range(_NEWTON_STEPS):
        f = float(special.zeta(2.0, a)) - floor**2
        step = f / (-2.0 * float(special.zeta(3.0, a)))
        a = max(a - step, 0.5 * a)
        if abs(step) <= 1e-14 * a:
            break
    return a


def _gamma_shape(s: np.ndarray, a_max: float) -> np.ndarray:
    """Solve log a - digamma(a) = s (s > 0) by Newton steps from Minka's approximation."""
    s_floor = np.log(a_max) - special.digamma(a_max)
    small = s <= s_floor
    ss = np.where(small, 1.0, s)
    a = (3.0 - ss + np.sqrt((ss - 3.0) ** 2 + 24.0 * ss)) / (12.0 * ss)
    for _ in range(_NEWTON_STEPS):
        f = np.log(a) - special.digamma(a) - ss
        df = 1.0 / a - special.zeta(2.0, a)
        new = a - f / df
        new = np.where(new > 0, new, 0.5 * a)
        done = np.abs(new - a) <= 1e-13 * a
        a = new
        if np.all(done):
            break
    return np.where(small, a_max, np.minimum(a, a_max))


def _weibull_shape(
    z: np.ndarray, r: np.ndarray, nk: np.ndarray, c: np.ndarray, c_max: float
) -> np.ndarray:
    """Solve the weighted weibull shape equation by Newton steps from the previous shape.

    ``z`` is log x shifted so that its maximum is 0 (x^c is then at most 1 and never overflows).
    """
    zbar = (r.T @ z) / nk
    for _ in range(_NEWTON_STEPS):
        u = r * np.exp(np.outer(z, c))
        b = u.sum(axis=0)
        m1 = (u.T @ z) / b
        m2 = (u.T @ (z * z)) / b
        g = m1 - 1.0 / c - zbar
        dg = m2 - m1 * m1 + 1.0 / (c * c)
        new = c - g / dg
        new = np.where(new > 0, new, 0.5 * c)
        new = np.minimum(new, c_max)
        done = np.abs(new - c) <= 1e-13 * c
        c = new
        if np.all(done):
            break
    return c


def m_step(
    family: MixtureFamily,
    x: np.ndarray,
    lx: np.ndarray,
    r: np.ndarray,
    nk: np.ndarray,
    params: np.ndarray,
    floor: float,
) -> np.ndarray:
    """Maximise the expected complete-data log-likelihood given responsibilities ``r`` (n, k)."""
    if family in ("normal", "lognormal"):
        y = x if family == "normal" else lx
        mu = (r.T @ y) / nk
        var = np.einsum("ik,ik->k", r, (y[:, None] - mu) ** 2) / nk
        sd = np.maximum(np.sqrt(var), floor)
        if family == "normal":
            return np.column_stack([mu, sd])
        return np.column_stack([sd, np.exp(mu)])
    if family == "gamma":
        m = (r.T @ x) / nk
        s = np.log(m) - (r.T @ lx) / nk
        a = _gamma_shape(s, _gamma_cap(floor))
        return np.column_stack([a, m / a])
    shift = lx.max()
    z = lx - shift
    c = _weibull_shape(z, r, nk, params[:, 0], np.pi / (np.sqrt(6.0) * floor))
    log_scale = shift + np.log((r * np.exp(np.outer(z, c))).sum(axis=0) / nk) / c
    return np.column_stack([c, np.exp(log_scale)])


def initial_params(
    family: MixtureFamily, x: np.ndarray, lx: np.ndarray, r: np.ndarray, floor: float
) -> np.ndarray:
    """Parameters from hard (or soft) group memberships ``r``: one M-step, weibull from moments."""
    nk = r.sum(axis=0)
    if family != "weibull":
        return m_step(family, x, lx, r, nk, np.empty((r.shape[1], 2)), floor)
    mean = (r.T @ lx) / nk
    sd = np.sqrt(np.einsum("ik,ik->k", r, (lx[:, None] - mean) ** 2) / nk)
    c0 = np.pi / (np.sqrt(6.0) * np.maximum(sd, floor))
    return m_step(family, x, lx, r, nk, np.column_stack([c0, np.exp(mean)]), floor)


def seed_assignments(
    y: np.ndarray, w: np.ndarray, k: int, rng: np.random.Generator | None
) -> np.ndarray:
    """Hard group memberships (n, k) on the working scale ``y``.

    Without ``rng``: k groups of equal weight between weighted quantiles. With ``rng``: centres
    chosen k-means++ style (each new centre drawn with probability proportional to weight times
    squared distance to the nearest chosen centre), refined by five weighted Lloyd steps.
    """
    n = y.size
    if rng is None:
        order = np.argsort(y, kind="stable")
        cum = np.cumsum(w[order]) / w.sum()
        group = np.empty(n, dtype=np.int64)
        group[order] = np.minimum((cum - 0.5 * w[order] / w.sum()) * k, k - 1).astype(np.int64)
    else:
        centres = [y[rng.choice(n, p=w / w.sum())]]
        for _ in range(1, k):
            d2 = np.min((y[:, None] - np.array(centres)) ** 2, axis=1) * w
            total = d2.sum()
            pick = rng.choice(n, p=d2 / total) if total > 0 else rng.choice(n)
            centres.append(y[pick])
        c = np.array(centres)
        for _ in range(5):
            group = np.argmin(np.abs(y[:, None] - c), axis=1)
            tally = np.bincount(group, weights=w, minlength=k)
            sums = np.bincount(group, weights=w * y, minlength=k)
            c = np.where(tally > 0, sums / np.where(tally > 0, tally, 1.0), c)
        group = np.argmin(np.abs(y[:, None] - c), axis=1)
    r = np.zeros((n, k))
    r[np.arange(n), group] = w
    return r


def _logsumexp_rows(logf: np.ndarray) -> np.ndarray:
    top = logf.max(axis=1)
    return top + np.log(np.exp(logf - top[:, None]).sum(axis=1))


def min_mass(total: float, k: int, min_weight: float) -> float:
    """Least weight a component may carry: ``min_weight`` of the total, and 2 observations."""
    return max(min_weight * total, 2.0 if total >= 4.0 * k else 0.0)


def start_from_groups(
    family: MixtureFamily,
    x: np.ndarray,
    w: np.ndarray,
    r0: np.ndarray,
    *,
    floor: float,
    min_weight: float,
) -> tuple[np.ndarray, np.ndarray] | None:
    """Weights and parameters from group memberships, or None if a group is too small."""
    nk = r0.sum(axis=0)
    total = w.sum()
    if np.any(nk < min_mass(total, r0.shape[1], min_weight)):
        return None
    lx = np.log(x) if family != "normal" else np.zeros_like(x)
    return nk / total, initial_params(family, x, lx, r0, floor)


def _settled(gain: float, previous: float, tol: float) -> bool:
    """Aitken-based stopping rule (Bohning et al. 1994; McLachlan & Peel 2000, section 2.11).

    EM converges linearly, so successive gains shrink by a ratio c; the gain still to come is
    about ``gain * c / (1 - c)``. Stop when that is below ``tol``, or when a step gains nothing.
    """
    if gain <= 0:
        return True
    if not np.isfinite(previous):
        return False
    ratio = gain / previous
    return 0 < ratio < 1 and gain * ratio / (1.0 - ratio) <= tol


def run_em(
    family: MixtureFamily,
    x: np.ndarray,
    w: np.ndarray,
    weights: np.ndarray,
    params: np.ndarray,
    *,
    floor: float,
    min_weight: float,
    tol: float,
    max_iter: int,
    n_done: int = 0,
) -> EmRun:
    """EM from ``weights``, ``params`` until the log-likelihood still to gain (Aitken estimate)
    is below ``tol * max(1, |loglik|)``, a component collapses, or ``max_iter`` steps."""
    lx = np.log(x) if family != "normal" else np.zeros_like(x)
    k = weights.size
    least = min_mass(w.sum(), k, min_weight)
    old = -np.inf
    gain = np.inf
    for it in range(n_done + 1, n_done + max_iter + 1):
        if np.any(spread(family, params) <= floor * (1.0 + 1e-9)):
            return EmRun(weights, params, -np.inf, it, False, True)
        logf = component_logpdf(family, x, lx, params) + np.log(weights)
        row = _logsumexp_rows(logf)
        loglik = float(w @ row)
        if not np.isfinite(loglik):
            return EmRun(weights, params, -np.inf, it, False, True)
        if _settled(loglik - old, gain, tol * max(1.0, abs(loglik))):
            return EmRun(weights, params, loglik, it, True, False)
        gain, old = loglik - old, loglik
        r = np.exp(logf - row[:, None]) * w[:, None]
        nk = r.sum(axis=0)
        if np.any(nk < least):
            return EmRun(weights, params, -np.inf, it, False, True)
        weights = nk / nk.sum()
        params = m_step(family, x, lx, r, nk, params, floor)
    logf = component_logpdf(family, x, lx, params) + np.log(weights)
    loglik = float(w @ _logsumexp_rows(logf))
    return EmRun(weights, params, loglik, n_done + max_iter, False, False)


def best_of_starts(
    family: MixtureFamily,
    x: np.ndarray,
    w: np.ndarray,
    k: int,
    gen: np.random.Generator,
    *,
    n_starts: int,
    floor: float,
    min_weight: float,
    tol: float,
    max_iter: int,
) -> tuple[EmRun | None, int]:
    """Short EM runs from up to ``n_starts`` starts, then the best continued to convergence.

    This is the "short runs" strategy of Biernacki, Celeux & Govaert (2003, Computational
    Statistics & Data Analysis 41: 561-575): a few EM steps from each start, then only the most
    promising ones (in order of log-likelihood) are run to the end. The first start is the
    quantile split, the others k-means++ seeds from ``gen``; collapsed starts are replaced by new
    ones, up to three times ``n_starts`` in all. Returns the best run (None if every start
    collapsed) and the number of collapsed starts.
    """
    y = working_scale(family, x)
    wanted = 1 if k == 1 else n_starts

    def em(weights: np.ndarray, params: np.ndarray, steps: int, done: int = 0) -> EmRun:
        return run_em(
            family,
            x,
            w,
            weights,
            params,
            floor=floor,
            min_weight=min_weight,
            tol=tol,
            max_iter=steps,
            n_done=done,
        )

    short: list[EmRun] = []
    collapsed = attempts = 0
    while len(short) < wanted and attempts < 3 * wanted:
        r0 = seed_assignments(y, w, k, None if attempts == 0 else gen)
        attempts += 1
        start = start_from_groups(family, x, w, r0, floor=floor, min_weight=min_weight)
        run = None if start is None else em(*start, min(_SHORT_RUN, max_iter))
        if run is None or run.collapsed:
            collapsed += 1
        else:
            short.append(run)
    for run in sorted(short, key=lambda r: -r.loglik):
        if not run.converged:
            run = em(run.weights, run.params, max_iter - run.n_iter, run.n_iter)
        if not run.collapsed:
            return run, collapsed
        collapsed += 1
    return None, collapsed
