"""Maximum-likelihood fit of student_t (location mu, scale sigma, degrees of freedom nu).

For a given ``nu`` the maximum over ``(mu, sigma)`` is found by the EM algorithm of the t as a
scale mixture of normals (Liu & Rubin, 1995, ECME), in the parameter-expanded form that divides
the scale update by ``sum(w u)`` instead of ``sum(w)`` (Kent, Tyler & Vardi, 1994; Liu, Rubin &
Wu, 1998: the same fixed point, reached in far fewer steps):

    u_i = (nu + 1) / (nu + ((x_i - mu) / sigma)**2)
    mu <- sum(w u x) / sum(w u),   sigma**2 <- sum(w u (x - mu)**2) / sum(w u)

``nu`` then maximises this profile likelihood: a grid of 25 points over ``log nu`` walked down
from :data:`NU_MAX` towards :data:`NU_MIN` until three points past the best (the low end, where
EM is slowest, is reached only when the data ask for it), refined by a bounded Brent search
around the best point. With ``k`` of ``n`` values at one point the likelihood is unbounded as
sigma shrinks onto it when ``nu < k / (n - k)``, so the grid stops at twice that. The
degrees of freedom are capped at ``NU_MAX = 1e8``: near-normal data (sample kurtosis at or below
3) have their likelihood increase towards the normal limit, and the fit stops at the cap, where
the t and the normal differ by about ``n (kurtosis - 3) / (4 nu)`` in log-likelihood, below any
meaningful difference. Each EM run stops after :data:`MAX_STEPS` steps, so the fit takes bounded
time (milliseconds at n = 1000). Values are standardised first (see
:func:`~samplewright.fitting.mle_sums.standardised`). Fixed ``mu``, ``sigma`` or ``nu``
(options) are held at their values.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from scipy import optimize, special

from samplewright.fitting.mle_fits import Fitted, fixed, need_spread
from samplewright.fitting.mle_sums import Obs, dot, standardised

__all__ = ["MAX_STEPS", "NU_MAX", "NU_MIN", "fit_student_t", "student_t_loglik"]

NU_MIN = 1e-2
NU_MAX = 1e8
MAX_STEPS = 2000
_TOL = 1e-12  # EM stops when mu and sigma move less than this (relative to sigma)
_GRID = 25  # points of the grid over log nu


def student_t_loglik(z: np.ndarray, w: np.ndarray, mu: float, sigma: float, nu: float) -> float:
    """``sum(w log t_nu((z - mu) / sigma) / sigma)`` (scipy's formula for the constant)."""
    d = (z - mu) / sigma
    const = np.log(special.poch(0.5 * nu, 0.5)) - 0.5 * (np.log(nu) + np.log(np.pi))
    return float(
        np.sum(w) * (const - np.log(sigma)) - 0.5 * (nu + 1.0) * dot(w, np.log1p(d * d / nu))
    )


def _em(
    z: np.ndarray,
    w: np.ndarray,
    nu: float,
    mu: float,
    sigma: float,
    fix_mu: bool,
    fix_sigma: bool,
    tol: float = _TOL,
    max_steps: int = MAX_STEPS,
) -> tuple[float, float]:
    """The (mu, sigma) maximising the likelihood for this ``nu`` (EM from the given values)."""
    if fix_mu and fix_sigma:
        return mu, sigma
    for _ in range(max_steps):
        d = (z - mu) / sigma
        d *= d
        d += nu
        u = np.divide(nu + 1.0, d, out=d)
        u *= w
        swu = float(u.sum())
        mu_new = mu if fix_mu else dot(u, z) / swu
        if fix_sigma:
            sigma_new = sigma
        else:
            r = z - mu_new
            r *= r
            sigma_new = float(np.sqrt(dot(u, r) / swu))
        done = abs(mu_new - mu) <= tol * sigma and abs(sigma_new - sigma) <= tol * sigma
        mu, sigma = mu_new, sigma_new
        if done or not sigma > 1e-12:
            break
    return mu, sigma


def _nu_floor(z: np.ndarray, w: np.ndarray) -> float:
    """Lowest ``nu`` searched: with ``k`` of the total weight ``W`` at one value, the likelihood
    grows without bound as sigma shrinks onto that value when ``nu < k / (W - k)`` (the other
    values' densities fall like ``sigma**nu``); the search starts at twice that, or NU_MIN."""
    _, inv = np.unique(z, return_inverse=True)
    k = float(np.bincount(inv, weights=w).max())
    total = float(w.sum())
    return max(NU_MIN, 2.0 * k / (total - k)) if total > k else NU_MAX


def fit_student_t(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    """student_t by EM over (mu, sigma) and a profile search over nu (module docstring)."""
    need_spread(obs, "student_t")
    zobs, c, h = standardised(obs)
    z, w = zobs.x, zobs.weights()
    mu_f, sigma_f, nu_f = fixed(o, "mu"), fixed(o, "sigma"), fixed(o, "nu")
    fix_mu, fix_sigma = mu_f is not None, sigma_f is not None
    mu0 = float(np.median(z)) if mu_f is None else (mu_f - c) / h
    if sigma_f is None:
        mad = 1.4826 * float(np.median(np.abs(z - mu0)))
        sigma0 = mad if mad > 0 else float(np.sqrt(dot(w, (z - mu0) ** 2) / zobs.total))
    else:
        sigma0 = sigma_f / h
    state = {"mu": mu0, "sigma": sigma0}

    def profile(t: float, tol: float, steps: int) -> float:
        nu = float(np.exp(t))
        mu, sigma = _em(z, w, nu, state["mu"], state["sigma"], fix_mu, fix_sigma, tol, steps)
        # a scale collapsing onto one value: the likelihood's unbounded limit, not a maximum
        ll = student_t_loglik(z, w, mu, sigma, nu) if sigma > 1e-12 else -np.inf
        if np.isfinite(ll):
            state["mu"], state["sigma"] = mu, sigma  # warm start for the next nu
        return ll if np.isfinite(ll) else -np.inf

    if nu_f is None:
        # from the normal end down; past the best point the profile is followed 3 points more
        ts = np.linspace(np.log(NU_MAX), np.log(_nu_floor(z, w)), _GRID)
        vals = np.full(ts.size, -np.inf)
        best = 0
        for i, t in enumerate(ts):
            vals[i] = profile(float(t), 1e-9, 300)
            if vals[i] > vals[best]:
                best = i
            elif i - best >= 3:
                break
        t_best = float(ts[best])
        if 0 < best < ts.size - 1:
            lo, hi = float(ts[best + 1]), float(ts[best - 1])
            res = optimize.minimize_scalar(
                lambda t: -profile(t, 1e-11, MAX_STEPS),
                bounds=(lo, hi),
                method="bounded",
                options={"xatol": 1e-8},
            )
            if np.isfinite(res.fun) and -float(res.fun) >= vals[best]:
                t_best = float(res.x)
        nu = min(max(float(np.exp(t_best)), NU_MIN), NU_MAX)
    else:
        nu = nu_f
    mu, sigma = _em(z, w, nu, state["mu"], state["sigma"], fix_mu, fix_sigma)
    return {
        "mu": c + h * mu if mu_f is None else mu_f,
        "sigma": h * sigma if sigma_f is None else sigma_f,
        "nu": nu,
    }, None
