"""Maximum-likelihood solvers behind :func:`samplewright.fitting.zero_modified.fit_zero_inflated`.

Each fits the count family ``f`` on its own: zero-truncated Poisson and negative binomial to the
positive counts (the zero-inflated likelihood without covariates factors into these and the share
of zeros), and the plain negative binomial for the boundary ``pi = 0``. Negative binomials use
scipy's ``nbinom(n, p)`` with ``p = n / (n + mean)``.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy import optimize, special

from samplewright.core.errors import FitError, MethodError

from ._numeric import solve_increasing

__all__ = ["fit_plain_nb", "fit_truncated_nb", "fit_truncated_poisson"]

_MAX_N = 1e10  # upper bound of the negative binomial n searched
# n above POISSON_LIKE * mean changes the variance mean (1 + mean / n) by under 1e-6: a Poisson
_POISSON_LIKE = 1e6


def _nb_logpmf(y: np.ndarray, n: float, mean: float) -> np.ndarray:
    """log nbinom.pmf(y; n, p = n / (n + mean)), accurate for large n (the Poisson limit).

    ``lgamma(y + n) - lgamma(n)`` is taken as ``lgamma(y) - betaln(n, y)`` for y > 0, and
    ``n log p`` as ``-n log1p(mean / n)``, so nothing cancels when n is large.
    """
    yy = np.maximum(y, 1.0)
    rising = np.where(y > 0, special.gammaln(yy) - special.betaln(n, yy), 0.0)
    log_q = np.log(mean) - np.log(n + mean)
    return rising - special.gammaln(y + 1) - n * np.log1p(mean / n) + y * log_q


def _truncated_nb(y: np.ndarray, t: np.ndarray, start: np.ndarray, max_iter: int) -> Any:
    """Minimise the negative zero-truncated NB log-likelihood over (log n, log mean)."""

    def objective(theta: np.ndarray) -> tuple[float, np.ndarray]:
        n, mean = np.exp(theta)
        log_p = -np.log1p(mean / n)
        logf = _nb_logpmf(y, n, mean)
        p0 = np.exp(n * log_p)
        log_trunc = np.log(-np.expm1(n * log_p))
        value = -(t @ logf - t.sum() * log_trunc)
        # scores of log f(y), and of log(1 - f(0)) via d(n log p)
        d_mean = y / mean - (n + y) / (n + mean)
        d_n = special.digamma(y + n) - special.digamma(n) + log_p + 1.0 - (n + y) / (n + mean)
        odds = p0 / (-np.expm1(n * log_p))
        dz_n = log_p + mean / (n + mean)
        dz_mean = -n / (n + mean)
        g_n = t @ d_n + t.sum() * odds * dz_n
        g_mean = t @ d_mean + t.sum() * odds * dz_mean
        return float(value), -np.array([n * g_n, mean * g_mean])

    bounds = [(np.log(1e-8), np.log(_MAX_N)), (np.log(1e-10), np.log(1e10))]
    return optimize.minimize(
        objective,
        start,
        jac=True,
        method="L-BFGS-B",
        bounds=bounds,
        options={"maxiter": max_iter, "ftol": 1e-15, "gtol": 1e-10},
    )


def fit_truncated_poisson(mean_pos: float, max_iter: int) -> tuple[dict[str, float], float, int]:
    """mu solving mu / (1 - exp(-mu)) = mean of the positive counts (which is >= 1)."""
    if mean_pos <= 1.0:  # every positive count is 1: the truncated MLE is mu -> 0
        return {"mu": 0.0}, 1.0, 0
    target = np.array([mean_pos])

    def ratio(mu: np.ndarray) -> np.ndarray:
        return mu / -np.expm1(-mu)

    def d_ratio(mu: np.ndarray) -> np.ndarray:
        e = -np.expm1(-mu)
        return (e - mu * np.exp(-mu)) / (e * e)

    # mu < ratio(mu) < mu + 1, so the root lies in [mean_pos - 1, mean_pos]
    lo = np.array([max(mean_pos - 1.0, 1e-300)])
    mu = float(solve_increasing(ratio, d_ratio, target, lo, target, max_iter=max_iter)[0])
    return {"mu": mu}, float(np.exp(-mu)), 1


def fit_truncated_nb(
    y: np.ndarray, t: np.ndarray, mean_pos: float, max_iter: int
) -> tuple[dict[str, float], float, int]:
    """Zero-truncated NB fit of the positive counts ``y`` with weights ``t``.

    First a score test at the Poisson limit (alpha = 1/n = 0, mean at the zero-truncated
    Poisson fit): with ``mu`` that fit, the alpha-score of the truncated NB2 log-likelihood is
    ``sum t ((y - mu)^2 - y) / 2 + sum(t) mu^2 exp(-mu) / (2 (1 - exp(-mu)))``. When it is not
    positive the likelihood rises towards the Poisson (n -> infinity) and no finite n exists.
    """
    mu = fit_truncated_poisson(mean_pos, max_iter)[0]["mu"]
    score = 0.5 * float(t @ ((y - mu) ** 2 - y))
    if mu > 0:
        score += 0.5 * float(t.sum()) * mu * mu * np.exp(-mu) / -np.expm1(-mu)
    if score <= 0:
        raise MethodError(
            "counts: the positive counts are no more dispersed than a zero-truncated Poisson's "
            "(negative binomial n runs to infinity); use family='poisson'"
        )
    var_pos = float(t @ (y - mean_pos) ** 2 / t.sum())
    n0 = mean_pos**2 / (var_pos - mean_pos) if var_pos > mean_pos else 10.0 * mean_pos
    fit = _truncated_nb(y, t, np.log([n0, mean_pos]), max_iter)
    settled = np.max(np.abs(fit.jac)) <= 1e-6 * max(1.0, abs(float(fit.fun)))
    if not (fit.success or settled):
        raise FitError(f"zero-inflated negative binomial: the fit did not converge ({fit.message})")
    n, mean = np.exp(fit.x)
    if n >= _POISSON_LIKE * max(mean, 1.0):
        raise MethodError(
            "counts: the positive counts are barely more dispersed than a zero-truncated "
            f"Poisson's (negative binomial n = {n:.3g}); use family='poisson'"
        )
    p = n / (n + mean)
    return {"n": float(n), "p": float(p)}, float(p**n), int(fit.nit)


def fit_plain_nb(
    values: np.ndarray, tally: np.ndarray, mean_all: float, max_iter: int
) -> tuple[dict[str, float], int]:
    """Negative binomial MLE: the mean is the sample mean; n maximises the profile likelihood."""
    var_all = float(tally @ (values - mean_all) ** 2 / tally.sum())
    if var_all <= mean_all:
        raise MethodError(
            f"counts: variance {var_all:.4g} <= mean {mean_all:.4g}: not over-dispersed, so a "
            "negative binomial cannot fit; use family='poisson'"
        )

    def negative(log_n: float) -> float:
        return -float(tally @ _nb_logpmf(values, float(np.exp(log_n)), mean_all))

    n0 = mean_all**2 / (var_all - mean_all)
    fit = optimize.minimize_scalar(
        negative,
        bounds=(np.log(n0) - 10.0, min(np.log(n0) + 10.0, np.log(_MAX_N))),
        method="bounded",
        options={"xatol": 1e-12, "maxiter": max_iter},
    )
    if not fit.success:
        raise FitError(f"negative binomial: the fit did not converge ({fit.message})")
    n = float(np.exp(fit.x))
    return {"n": n, "p": n / (n + mean_all)}, int(fit.nfev)
