"""Optimiser helpers behind the maximum-likelihood fits of :mod:`samplewright.fitting.mle`.

Three tools cover every family that has no closed-form maximum-likelihood estimate:

- :func:`maximise` runs Nelder–Mead on an unconstrained parameterisation and restarts it from its
  own answer until a restart gains nothing (a stalled simplex is the usual failure of a single
  run); the answer is accepted only when two runs agree and the log-likelihood is finite. At
  most 12 runs and 1,000 evaluations per free parameter in all: every fit ends in bounded time.
- :func:`profile_threshold` estimates the location (threshold) of a positive family by a
  one-dimensional search over ``log(min(x) - loc)``, with the other parameters fitted exactly at
  each trial location. It looks for an *interior* maximum: for these families the likelihood grows
  without bound as ``loc`` approaches ``min(x)`` whenever the fitted shape is below 1.
- one-dimensional score solvers for gamma, weibull (also right-censored), gumbel and negative
  binomial shape parameters, each with a cap on its steps.

Every objective is a *mean* log-likelihood (divided by the total weight), so tolerances do not
depend on the sample size.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence

import numpy as np
from scipy import optimize, special

from samplewright.core.errors import FitError, MethodError
from samplewright.fitting.mle_sums import CHUNK, dot

Params = dict[str, float]
# How a free parameter maps to the optimiser's unconstrained coordinate v:
#   ("log",)        p = p0 * exp(v)                 (positive parameters)
#   ("real", ref)   p = p0 + v * ref                (ref: a number, or the name of a start param)
Kind = tuple[str, ...] | tuple[str, str | float]

_FTOL = 1e-12  # change in mean log-likelihood below which two Nelder–Mead runs agree


def wmean(v: np.ndarray, w: np.ndarray) -> float:
    """Weighted mean."""
    return float(np.sum(w * v) / np.sum(w))


def maximise(
    objective: Callable[[np.ndarray], float],
    start: np.ndarray,
    *,
    label: str,
    step: float = 0.1,
    max_runs: int = 12,
    max_evals: int = 1000,
) -> tuple[np.ndarray, float]:
    """Maximise ``objective`` (a mean log-likelihood; -inf outside the domain) from ``start``.

    Returns the maximiser and the maximum. Raises FitError when the start is infeasible, or when
    the runs keep improving after ``max_runs`` restarts or ``max_evals`` evaluations per free
    parameter in all (the bound that keeps every fit finite in time).
    """
    budget = max_evals * max(int(np.size(start)), 1)
    used = 0

    def nll(v: np.ndarray) -> float:
        nonlocal used
        used += 1
        with np.errstate(all="ignore"):
            val = objective(v)
        return -val if np.isfinite(val) else np.inf

    best_v = np.asarray(start, dtype=np.float64)
    best_f = nll(best_v)
    if not np.isfinite(best_f):
        raise FitError(f"{label}: the starting values give a non-finite log-likelihood")
    d = best_v.size
    for run in range(max_runs):
        left = budget - used
        if left <= d + 1:
            break
        h = step if run == 0 else step / 4.0
        simplex = np.vstack([best_v, best_v + h * np.eye(d)])
        res = optimize.minimize(
            nll,
            best_v,
            method="Nelder-Mead",
            options={
                "initial_simplex": simplex,
                "xatol": 1e-8,
                "fatol": 1e-13,
                "maxiter": min(2000 * d, left),
                "maxfev": left,
                "adaptive": d > 2,
            },
        )
        gain = best_f - float(res.fun)
        if gain > 0:
            best_v, best_f = np.asarray(res.x, dtype=np.float64), float(res.fun)
        if run > 0 and gain <= _FTOL:
            return best_v, -best_f
    raise FitError(
        f"{label}: the optimiser did not converge within {max_runs} restarts and {budget} "
        "evaluations"
    )


def pack(
    start: Mapping[str, float], free: Sequence[str], kinds: Mapping[str, Kind]
) -> Callable[[np.ndarray], Params]:
    """A map from the unconstrained vector to a full parameter dict, centred on ``start``."""
    refs: list[tuple[str, float]] = []
    for name in free:
        kind = kinds[name]
        if kind[0] == "log":
            refs.append(("log", 0.0))
        else:
            ref = kind[1]
            refs.append(("real", float(start[ref]) if isinstance(ref, str) else float(ref)))
    base = dict(start)

    def unpack(v: np.ndarray) -> Params:
        p = dict(base)
        for (how, ref), name, vi in zip(refs, free, v, strict=True):
            p[name] = base[name] * float(np.exp(vi)) if how == "log" else base[name] + vi * ref
        return p

    return unpack


def maximise_params(
    mean_loglik: Callable[[Params], float],
    start: Params,
    free: Sequence[str],
    kinds: Mapping[str, Kind],
    *,
    label: str,
) -> Params:
    """Maximise ``mean_loglik`` over the ``free`` parameters, the others held at ``start``."""
    unpack = pack(start, free, kinds)
    v, _ = maximise(lambda v: mean_loglik(unpack(v)), np.zeros(len(free)), label=label)
    return unpack(v)


def best_of(
    mean_loglik: Callable[[Params], float],
    starts: Sequence[Params],
    free: Sequence[str],
    kinds: Mapping[str, Kind],
    *,
    label: str,
) -> Params:
    """:func:`maximise_params` from several starts; the best answer wins.

    Starts with a non-finite log-likelihood and runs that fail are skipped; FitError when every
    one fails (with the last reason).
    """
    best: Params | None = None
    best_ll = -np.inf
    reason = "no feasible starting values"
    for start in starts:
        with np.errstate(all="ignore"):
            if not np.isfinite(mean_loglik(start)):
                continue
        try:
            p = maximise_params(mean_loglik, start, free, kinds, label=label)
        except FitError as err:
            reason = str(err)
            continue
        with np.errstate(all="ignore"):
            ll = mean_loglik(p)
        if ll > best_ll:
            best, best_ll = p, ll
    if best is None:
        raise FitError(reason if reason.startswith(label) else f"{label}: {reason}")
    return best


# ---------------------------------------------------------------------------------------------
# free location (threshold) of positive families


def profile_threshold(
    inner: Callable[[float], tuple[Params, float]],
    xmin: float,
    xmax: float,
    *,
    label: str,
    shape: str | None,
    n_grid: int = 48,
) -> Params:
    """Fit ``loc`` of a positive family by profiling the likelihood over ``log(min(x) - loc)``.

    ``inner(loc)`` fits the family with that location (to ``x - loc > 0``) and returns its
    parameters and log-likelihood. The search takes the highest *interior* local maximum on a
    grid from ``1e-8`` to ``1e3`` times the data range below ``min(x)`` and refines it with a
    bounded Brent search. MethodError when there is none, when it is not above the profile at
    the grid point nearest ``min(x)`` (the likelihood then grows towards the unbounded limit),
    or when ``shape`` (the name of a shape parameter) ends at or below 1, where the likelihood
    is unbounded as ``loc`` approaches ``min(x)``.
    """
    spread = xmax - xmin
    if spread == 0:
        raise MethodError(f"{label} with loc='free': all values equal {xmin!r}")
    if not np.isfinite(spread):
        raise MethodError(f"{label} with loc='free': the values' spread overflows float64")

    def profile(t: float) -> tuple[Params, float]:
        loc = xmin - spread * float(np.exp(t))
        try:
            with np.errstate(all="ignore"):
                p, ll = inner(loc)
        except (FitError, MethodError):
            return {}, -np.inf
        return p, (ll if np.isfinite(ll) else -np.inf)

    ts = np.linspace(np.log(1e-8), np.log(1e3), n_grid)
    vals = np.array([profile(t)[1] for t in ts])
    interior = [
        i
        for i in range(1, n_grid - 1)
        if np.isfinite(vals[i]) and vals[i] >= vals[i - 1] and vals[i] >= vals[i + 1]
    ]
    if not interior:
        raise MethodError(
            f"{label} with loc='free': the likelihood has no interior maximum over the location "
            f"below min(x) = {xmin!r}; pass loc as a number"
        )
    i = max(interior, key=lambda j: vals[j])
    if not vals[i] > vals[0]:
        raise MethodError(
            f"{label} with loc='free': the likelihood keeps growing as loc approaches "
            f"min(x) = {xmin!r} (no regular maximum); pass loc as a number"
        )

    res = optimize.minimize_scalar(
        lambda t: -profile(t)[1],
        bounds=(ts[i - 1], ts[i + 1]),
        method="bounded",
        options={"xatol": 1e-10},
    )
    t_best = float(res.x) if -float(res.fun) >= vals[i] else float(ts[i])
    params, _ = profile(t_best)
    if not params:  # pragma: no cover - the grid point itself was feasible
        params, _ = profile(float(ts[i]))
    if shape is not None and params[shape] <= 1.0:
        raise MethodError(
            f"{label} with loc='free': fitted {shape} {params[shape]:.3g} <= 1, where the "
            f"likelihood is unbounded as loc approaches min(x); pass loc as a number"
        )
    return params


# ---------------------------------------------------------------------------------------------
# one-dimensional score equations


def gamma_shape(s: float) -> float:
    """Solve ``log k - digamma(k) = s`` (s > 0) by Newton from Minka's (2002) start."""
    if not s > 0:
        raise FitError(f"gamma: shape equation needs log(mean) - mean(log) > 0, found {s!r}")
    k = (3.0 - s + np.sqrt((s - 3.0) ** 2 + 24.0 * s)) / (12.0 * s)
    best_k, best_f = k, np.inf
    for _ in range(100):
        f = np.log(k) - special.digamma(k) - s
        if abs(f) < best_f:
            best_k, best_f = k, abs(f)
        # trigamma: special.polygamma(1, k) is 1.0 * gamma(2.0) * zeta(2, k) = zeta(2, k)
        # exactly, through a slower Python wrapper
        df = 1.0 / k - special.zeta(2.0, k)
        k_new = k - f / df
        if k_new <= 0:
            k_new = k / 2.0
        if abs(k_new - k) <= 1e-14 * k:
            return float(k_new)
        k = k_new
    # For large k, s is tiny and rounding stops the last digits from settling: take the best.
    if best_f <= 1e-9 * s:
        return float(best_k)
    raise FitError("gamma: shape equation did not converge")  # pragma: no cover


def _weibull_sums(lz: np.ndarray, w: np.ndarray | None, k: float) -> tuple[float, float, float]:
    """``sum(w e^{k lz} lz^j)`` for j = 0, 1, 2, in chunks (``lz <= 0``: nothing overflows)."""
    s0 = s1 = s2 = 0.0
    for s in range(0, lz.size, CHUNK):
        lc = lz[s : s + CHUNK]
        e = np.exp(k * lc)
        if w is not None:
            e *= w[s : s + CHUNK]
        s0 += float(e.sum())
        e *= lc
        s1 += float(e.sum())
        s2 += float(dot(e, lc))
    return s0, s1, s2


def weibull_shape(
    lz: np.ndarray, w: np.ndarray | None, mean_lz: float, sd_lz: float
) -> tuple[float, float]:
    """Weibull MLE shape (location 0) from ``lz = log(y / max y)``; returns ``(k, S0)``.

    Solves ``1/k + mean_lz - sum(w y^k lz) / sum(w y^k) = 0`` where ``mean_lz`` is the mean of
    ``lz`` over the events (event weights ``e`` with total ``r``; ``e = w`` without censoring)
    and ``S0 = sum(w e^{k lz})``, so that ``scale = max(y) * (S0 / r)^(1/k)``. The score decreases
    in ``k`` (its slope is ``-1/k^2`` minus a weighted variance), so Newton's method is kept
    inside the bracket the signs give, bisecting when a step leaves it; it starts from the
    uncensored relation ``sd(log y) = pi / (k sqrt 6)``. At most 200 steps; FitError beyond a
    shape of 1e8 (values nearly constant).
    """
    k = float(np.pi / (np.sqrt(6.0) * sd_lz)) if sd_lz > 0 else 1.0
    if not np.isfinite(k) or k <= 0:
        k = 1.0
    lo, hi = 0.0, np.inf
    for _ in range(200):
        s0, s1, s2 = _weibull_sums(lz, w, k)
        m1 = s1 / s0
        score = 1.0 / k + mean_lz - m1
        if score == 0:
            return k, s0
        slope = -1.0 / (k * k) - max(s2 / s0 - m1 * m1, 0.0)
        if score > 0:
            lo = k
        else:
            hi = k
        k_new = k - score / slope
        if not lo < k_new < hi:
            k_new = 0.5 * (lo + hi) if np.isfinite(hi) else 2.0 * k
        if k_new > 1e8:
            raise FitError("weibull: shape equation has no root below 1e8 (values nearly constant)")
        if abs(k_new - k) <= 1e-14 * k:
            return k_new, _weibull_sums(lz, w, k_new)[0]
        k = k_new
    raise FitError("weibull: shape equation did not converge in 200 steps")  # pragma: no cover


def weibull_shape_scale(y: np.ndarray, w: np.ndarray, e: np.ndarray) -> tuple[float, float]:
    """Weibull MLE (location 0) with weights ``w`` and event weights ``e`` (``e = w`` uncensored).

    Values are divided by ``max(y)`` first (the equation is scale free) so that ``y^k`` cannot
    overflow; see :func:`weibull_shape`.
    """
    top = float(y.max())
    with np.errstate(divide="ignore"):
        lz = np.log(y / top)
    if not np.all(np.isfinite(lz)):
        raise FitError("weibull: values span more than float64's range below their maximum")
    r = float(np.sum(e))
    mean_lz = float(dot(e, lz)) / r
    sd = float(np.sqrt(dot(e, (lz - mean_lz) ** 2) / r))
    k, s0 = weibull_shape(lz, w, mean_lz, sd)
    return k, top * (s0 / r) ** (1.0 / k)


def gumbel_fit(x: np.ndarray, w: np.ndarray) -> tuple[float, float]:
    """Gumbel (maxima) MLE: ``beta = mean(x) - sum(w x e^{-x/beta}) / sum(w e^{-x/beta})``.

    Works on ``z = (x - c) / h`` with ``c`` the mid-range and ``h`` the half range (the fit is
    location and scale equivariant), so nothing overflows whatever the values' magnitude; the
    root is bracketed in at most about 330 halvings and solved by Brent's method.
    """
    lo, hi = float(x.min()), float(x.max())
    c, h = 0.5 * lo + 0.5 * hi, 0.5 * hi - 0.5 * lo
    if not h > 0:
        raise FitError("gumbel: the values do not vary")
    z = (x - c) / h
    wt = float(np.sum(w))
    shift = float(dot(w, z)) / wt
    z -= shift  # now mean 0, |z| <= 2
    lw = np.log(w)

    def g(beta: float) -> float:
        a = lw - z / beta
        q = np.exp(a - a.max())
        return float(-dot(q, z) / np.sum(q) - beta)

    b_lo, b_hi = 1e-3, 4.0  # g(4) < 0 since -sum(q z)/sum(q) <= max z <= 2
    with np.errstate(over="ignore", under="ignore"):
        while g(b_lo) < 0:
            b_lo /= 10.0
            if b_lo < 1e-300:
                raise FitError("gumbel: scale equation has no positive root")
        beta = float(
            optimize.brentq(g, b_lo, b_hi, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=500)
        )
        a = lw - z / beta
    amax = float(a.max())
    mu_z = -beta * (amax + float(np.log(np.sum(np.exp(a - amax)))) - float(np.log(wt)))
    return c + h * (mu_z + shift), h * beta


def negbin_r(x: np.ndarray, w: np.ndarray) -> float:
    """Negative binomial size ``r`` solving ``sum w [psi(x+r) - psi(r)] = N log(1 + m/r)``.

    The root exists when the weighted variance (divisor N) exceeds the mean (Anscombe, 1950);
    the caller checks that. Solved by Brent's method on ``log r``.
    """
    vals, inv = np.unique(x, return_inverse=True)
    cw = np.bincount(inv, weights=w)
    n = float(np.sum(cw))
    m = float(np.sum(cw * vals)) / n
    var = float(np.sum(cw * (vals - m) ** 2)) / n

    def score(t: float) -> float:
        r = float(np.exp(t))
        return float(
            np.sum(cw * (special.digamma(vals + r) - special.digamma(r))) - n * np.log1p(m / r)
        )

    t0 = float(np.log(m * m / (var - m)))
    if not np.isfinite(t0):
        raise FitError(f"negative_binomial: no starting size from mean {m!r}, variance {var!r}")
    lo, hi = t0 - 1.0, t0 + 1.0
    while score(lo) < 0:
        lo -= 2.0
        if lo < np.log(1e-12):
            raise FitError("negative_binomial: size equation has no root above 1e-12")
    while score(hi) > 0:
        hi += 2.0
        if hi > np.log(1e12):
            raise MethodError(
                "negative_binomial: no finite size r below 1e12 (data are nearly Poisson); "
                "use poisson"
            )
    return float(np.exp(optimize.brentq(score, lo, hi, xtol=1e-13, rtol=1e-13, maxiter=500)))
