"""Point masses and zero-inflated counts.

* Hurdle / point mass: :func:`split_point_mass` separates the share ``p0`` of the data sitting at
  one value (default 0) from the rest, to which a continuous severity is then fitted.
  :func:`point_mass_cdf` and :func:`point_mass_quantile` compose "atom at a + continuous part"
  for an atom anywhere: below, at the edge of, or inside the continuous support.
* Zero-inflated Poisson and negative binomial (Lambert 1992, Technometrics 34(1): 1-14), without
  covariates: ``P(0) = pi + (1 - pi) f(0)``, ``P(k) = (1 - pi) f(k)`` for k > 0, where ``f`` is
  ``scipy.stats.poisson(mu)`` or ``scipy.stats.nbinom(n, p)`` (mean ``n (1 - p) / p``).

With an intercept only, the zero-inflated likelihood factors exactly like a hurdle model's: the
positive counts follow ``f`` truncated at zero, and ``pi`` then matches the share of zeros. So
:func:`fit_zero_inflated` maximises the zero-truncated likelihood of the positive counts directly
(Poisson: one equation ``mu / (1 - exp(-mu)) = mean of the positives``, solved by safeguarded
Newton; negative binomial: L-BFGS-B over ``(log n, log mean)`` with the analytic gradient) and sets
``pi = 1 - (share of positives) / (1 - f(0))``. When that ``pi`` would be negative (fewer zeros
than ``f`` predicts) the maximum over ``pi >= 0`` is at ``pi = 0``, the plain model, which is then
fitted instead and flagged.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from scipy import stats

from samplewright.core.errors import MethodError

from ._count_fits import fit_plain_nb, fit_truncated_nb, fit_truncated_poisson
from ._numeric import check_probabilities, check_sample

__all__ = [
    "COUNT_FAMILIES",
    "CountFamily",
    "PointMassResult",
    "ZeroInflatedResult",
    "fit_zero_inflated",
    "point_mass_cdf",
    "point_mass_quantile",
    "split_point_mass",
]

CountFamily = Literal["poisson", "negative_binomial"]
COUNT_FAMILIES: tuple[CountFamily, ...] = ("poisson", "negative_binomial")
ArrayFn = Callable[[np.ndarray], np.ndarray]


# ---------------------------------------------------------------------------------------------
# point mass + continuous part


@dataclass(frozen=True)
class PointMassResult:
    """Data split into a point mass and the rest.

    Attributes
    ----------
    at : float
        Where the point mass sits.
    p0 : float
        Its probability: the (weighted) share of the data equal to ``at``.
    values, weights : numpy.ndarray
        The rest of the data and its frequency weights, for the continuous fit.
    n_at, n_total : float
        Weight at the atom and in total.
    """

    at: float
    p0: float
    values: np.ndarray
    weights: np.ndarray
    n_at: float
    n_total: float


def split_point_mass(values: Any, *, at: float = 0.0, weights: Any = None) -> PointMassResult:
    """Separate the values equal to ``at`` (the point mass) from the rest.

    >>> r = split_point_mass([0.0, 0.0, 2.5, 4.0, 0.0, 7.5])
    >>> r.p0, r.values.tolist()
    (0.5, [2.5, 4.0, 7.5])
    """
    if isinstance(at, bool) or not isinstance(at, int | float | np.number) or not np.isfinite(at):
        raise MethodError(f"at: expected a finite number, found {at!r}")
    x, w = check_sample(values, weights)
    hit = x == at
    rest = ~hit
    if not np.any(rest):
        raise MethodError(
            f"values: every value equals at={at:g}; a continuous part needs other values"
        )
    total = float(w.sum())
    n_at = float(w[hit].sum())
    return PointMassResult(float(at), n_at / total, x[rest], w[rest], n_at, total)


def _check_atom(at: float, p0: float) -> None:
    if not np.isfinite(at):
        raise MethodError(f"at: expected a finite number, found {at!r}")
    if not 0.0 <= p0 <= 1.0:
        raise MethodError(f"p0: expected a probability in [0, 1], found {p0!r}")


def point_mass_cdf(x: Any, *, at: float, p0: float, cdf: ArrayFn) -> np.ndarray:
    """``F(x) = p0 [x >= at] + (1 - p0) G(x)`` for a continuous distribution function ``G``."""
    _check_atom(at, p0)
    xx = np.asarray(x, dtype=np.float64)
    return p0 * (xx >= at) + (1.0 - p0) * np.asarray(cdf(xx), dtype=np.float64)


def point_mass_quantile(
    u: Any, *, at: float, p0: float, cdf: ArrayFn, quantile: ArrayFn
) -> np.ndarray:
    """Generalised inverse ``Q(u) = inf{x : F(x) >= u}`` of :func:`point_mass_cdf`.

    With ``g = (1 - p0) G(at)`` (the continuous mass below the atom), levels up to ``g`` fall
    below the atom, levels in ``(g, g + p0]`` on it, and higher ones above it. An atom below or
    at the lower edge of the continuous support has ``g = 0``; above the upper edge ``g = 1 - p0``.
    ``Q(0)`` is the lower end of the whole support.

    >>> from scipy import stats
    >>> q = point_mass_quantile([0.1, 0.3, 0.9], at=0.0, p0=0.4, cdf=stats.norm.cdf,
    ...                         quantile=stats.norm.ppf)
    >>> q.round(6).tolist()
    [-0.967422, 0.0, 0.967422]
    """
    _check_atom(at, p0)
    uu = check_probabilities(u)
    flat = uu.ravel()
    below = (1.0 - p0) * float(np.asarray(cdf(np.array([at])))[0])
    out = np.full(flat.shape, float(at))
    if p0 < 1.0:
        low = (flat <= below) & (flat > 0)
        high = flat > below + p0
        out[low] = quantile(flat[low] / (1.0 - p0))
        out[high] = quantile(np.minimum((flat[high] - p0) / (1.0 - p0), 1.0))
        zero = flat == 0
        if np.any(zero):
            start = float(np.asarray(quantile(np.array([0.0])))[0])
            out[zero] = min(start, at) if p0 > 0 else start
    return out.reshape(uu.shape)


# ---------------------------------------------------------------------------------------------
# zero-inflated counts


@dataclass(frozen=True)
class ZeroInflatedResult:
    """A zero-inflated Poisson or negative binomial fitted by maximum likelihood.

    Attributes
    ----------
    family : {"poisson", "negative_binomial"}
        The count family ``f``.
    scipy_name : str
        ``"poisson"`` or ``"nbinom"``.
    pi : float
        Zero-inflation share: ``P(0) = pi + (1 - pi) f(0)``.
    params : dict
        Keyword arguments of ``f`` in scipy: ``{"mu": ...}`` or ``{"n": ..., "p": ...}``.
    loglik, aic, bic : float
        Log-likelihood (frequency-weighted) and criteria; BIC's n is the total weight.
    n_params : int
        2 (Poisson) or 3 (negative binomial); ``pi`` counts even when it is 0.
    n_obs, n_zeros : float
        Total weight and weight of the zero counts.
    pi_at_bound : bool
        True when the zero-truncated fit would need ``pi < 0`` and the plain model (pi = 0)
        was fitted instead.
    n_iter : int
        Iterations of the solver that fitted ``f``.
    """

    family: CountFamily
    scipy_name: str
    pi: float
    params: dict[str, float]
    loglik: float
    n_params: int
    aic: float
    bic: float
    n_obs: float
    n_zeros: float
    pi_at_bound: bool
    n_iter: int

    def _dist(self) -> Any:
        return getattr(stats, self.scipy_name)(**self.params)

    @property
    def support(self) -> tuple[float, float]:
        return 0.0, np.inf

    @property
    def mean(self) -> float:
        return (1.0 - self.pi) * float(self._dist().mean())

    @property
    def var(self) -> float:
        m, v = (float(s) for s in self._dist().stats(moments="mv"))
        mean = (1.0 - self.pi) * m
        return (1.0 - self.pi) * (v + m * m) - mean * mean

    def pmf(self, k: Any) -> np.ndarray:
        """Probability of each count k."""
        kk = np.asarray(k, dtype=np.float64)
        return self.pi * (kk == 0) + (1.0 - self.pi) * np.asarray(self._dist().pmf(kk))

    def cdf(self, k: Any) -> np.ndarray:
        """P(K <= k)."""
        kk = np.asarray(k, dtype=np.float64)
        return self.pi * (kk >= 0) + (1.0 - self.pi) * np.asarray(self._dist().cdf(kk))

    def quantile(self, u: Any) -> np.ndarray:
        """Smallest count k with P(K <= k) >= u."""
        uu = check_probabilities(u)
        inner = np.clip((uu - self.pi) / (1.0 - self.pi), 0.0, 1.0)
        zero_mass = self.pi + (1.0 - self.pi) * float(self._dist().pmf(0))
        out = np.asarray(self._dist().ppf(inner), dtype=np.float64)
        out = np.where(uu <= zero_mass, 0.0, np.maximum(out, 1.0))
        return np.where(uu >= 1.0, np.inf, out)


def _loglik(values: np.ndarray, tally: np.ndarray, pi: float, logf: np.ndarray) -> float:
    """Zero-inflated log-likelihood of a table (values, tally) given log f at the values."""
    zero = values == 0
    ll = float(tally[~zero] @ (np.log1p(-pi) + logf[~zero])) if pi < 1 else -np.inf
    if np.any(zero):
        p_zero = pi + (1.0 - pi) * float(np.exp(logf[zero][0]))
        ll += float(tally[zero].sum()) * float(np.log(p_zero))
    return ll


def fit_zero_inflated(
    counts: Any,
    *,
    family: CountFamily,
    weights: Any = None,
    max_iter: int = 500,
) -> ZeroInflatedResult:
    """Fit a zero-inflated Poisson or negative binomial (no covariates) by maximum likelihood.

    Parameters
    ----------
    counts : array_like
        Non-negative integer counts, with some zeros and some positive counts.
    family : {"poisson", "negative_binomial"}
        The count distribution inflated at zero.
    weights : array_like, optional
        Frequency weights.
    max_iter : int
        Iteration bound of the solver.

    Raises
    ------
    MethodError
        Bad counts, weights or options; no positive counts; for the negative binomial, positive
        counts no more dispersed than a Poisson's (n would run to infinity).
    FitError
        The solver did not converge within ``max_iter``.

    Examples
    --------
    >>> r = fit_zero_inflated([0, 0, 0, 0, 1, 2, 2, 3, 4, 0], family="poisson")
    >>> round(r.pi, 4), round(r.params["mu"], 4)
    (0.4309, 2.1086)
    """
    if family not in COUNT_FAMILIES:
        raise MethodError(f"family: expected one of {', '.join(COUNT_FAMILIES)}, found {family!r}")
    if isinstance(max_iter, bool) or not isinstance(max_iter, int) or max_iter < 1:
        raise MethodError(f"max_iter: expected an integer >= 1, found {max_iter!r}")
    x, w = check_sample(counts, weights, name="counts", integer=True)
    values, inv = np.unique(x, return_inverse=True)
    tally = np.bincount(inv, weights=w).astype(np.float64)
    total = float(tally.sum())
    n_zeros = float(tally[values == 0].sum())
    pos = values > 0
    if not np.any(pos):
        raise MethodError("counts: every count is 0; a zero-inflated model needs positive counts")
    y, t = values[pos], tally[pos]
    share_pos = float(t.sum()) / total
    mean_pos = float(t @ y / t.sum())
    if family == "poisson":
        params, f0, n_iter = fit_truncated_poisson(mean_pos, max_iter)
    else:
        params, f0, n_iter = fit_truncated_nb(y, t, mean_pos, max_iter)
    pi = 1.0 - share_pos / (1.0 - f0) if f0 < 1.0 else -np.inf
    at_bound = pi < 0
    if at_bound:
        pi = 0.0
        mean_all = float(tally @ values / total)
        if family == "poisson":
            params, n_iter = {"mu": mean_all}, 0
        else:
            params, n_iter = fit_plain_nb(values, tally, mean_all, max_iter)
    scipy_name = "poisson" if family == "poisson" else "nbinom"
    logf = np.asarray(getattr(stats, scipy_name).logpmf(values, **params), dtype=np.float64)
    loglik = _loglik(values, tally, pi, logf)
    k = 2 if family == "poisson" else 3
    return ZeroInflatedResult(
        family=family,
        scipy_name=scipy_name,
        pi=float(pi),
        params=params,
        loglik=loglik,
        n_params=k,
        aic=2.0 * k - 2.0 * loglik,
        bic=k * np.log(total) - 2.0 * loglik,
        n_obs=total,
        n_zeros=n_zeros,
        pi_at_bound=bool(at_bound),
        n_iter=n_iter,
    )
