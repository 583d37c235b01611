"""Finite mixtures of one family (normal, lognormal, gamma, weibull) fitted by EM.

:func:`fit_mixture` fits ``f(x) = sum_j w_j f(x; theta_j)`` by the EM algorithm (Dempster, Laird &
Rubin 1977, JRSS B 39(1)) with frequency weights, from several starts: one from equal-weight
quantile groups and the rest k-means++-style from the ``rng`` given (each number of components
gets its own spawned stream). A start in which a component collapses (its spread on the working
scale reaches a floor, or its weight falls below ``min_weight``) is abandoned and another start
is drawn, so a degenerate, unbounded likelihood is never returned. The number of components is
chosen by BIC up to ``max_components`` unless given; every candidate's log-likelihood, AIC and
BIC are kept in the result.

BIC uses the total frequency weight as the number of observations:
``bic = n_params * log(sum w) - 2 loglik`` with ``n_params = 3 k - 1``.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from scipy import stats

from samplewright.core.errors import FitError, MethodError
from samplewright.core.randomness import SeedLike, make_rng

from ._mixture_em import EmRun, MixtureFamily, best_of_starts, working_scale
from ._numeric import check_probabilities, check_sample, solve_increasing

__all__ = [
    "MIXTURE_FAMILIES",
    "ComponentCountResult",
    "MixtureFamily",
    "MixtureResult",
    "fit_mixture",
]

MIXTURE_FAMILIES: tuple[MixtureFamily, ...] = ("normal", "lognormal", "gamma", "weibull")
# family -> (scipy.stats name, names of the two columns of MixtureResult.params)
_SCIPY: dict[str, tuple[str, tuple[str, str]]] = {
    "normal": ("norm", ("loc", "scale")),
    "lognormal": ("lognorm", ("s", "scale")),
    "gamma": ("gamma", ("a", "scale")),
    "weibull": ("weibull_min", ("c", "scale")),
}


@dataclass(frozen=True)
class ComponentCountResult:
    """The best fit found with one number of components.

    Attributes
    ----------
    n_components, n_params : int
        k and ``3 k - 1``.
    loglik, aic, bic : float
        Of the best start (nan when every start collapsed). When ``converged`` is False the
        log-likelihood is only a lower bound of the maximum, and this k is not chosen.
    converged : bool
        Whether the best start met the tolerance within ``max_iter``.
    n_iter : int
        EM iterations of the best start.
    n_collapsed : int
        Starts abandoned because a component collapsed (or a seed group was too small).
    """

    n_components: int
    n_params: int
    loglik: float
    aic: float
    bic: float
    converged: bool
    n_iter: int
    n_collapsed: int

    @property
    def usable(self) -> bool:
        return bool(np.isfinite(self.loglik) and self.converged)


@dataclass(frozen=True)
class MixtureResult:
    """A fitted finite mixture of one family.

    Attributes
    ----------
    family, scipy_name : str
        The family and its ``scipy.stats`` name.
    weights : numpy.ndarray
        Component weights (sum 1), components ordered by increasing mean.
    params : numpy.ndarray
        Shape (k, 2): per component the scipy parameters named in ``param_names``
        (normal ``loc, scale``; lognormal ``s, scale``; gamma ``a, scale``; weibull ``c, scale``).
    loglik, aic, bic : float
        Log-likelihood (with frequency weights) and information criteria.
    n_params : int
        ``3 k - 1``.
    n_obs : float
        Total frequency weight (the n of BIC).
    converged : bool
        Whether EM met the tolerance.
    n_iter : int
        EM iterations of the chosen start.
    by_n_components : tuple of ComponentCountResult
        Every number of components tried, in order.
    """

    family: MixtureFamily
    scipy_name: str
    param_names: tuple[str, str]
    weights: np.ndarray
    params: np.ndarray
    loglik: float
    n_params: int
    aic: float
    bic: float
    n_obs: float
    converged: bool
    n_iter: int
    by_n_components: tuple[ComponentCountResult, ...]

    @property
    def n_components(self) -> int:
        return int(self.weights.size)

    def component_params(self) -> list[dict[str, float]]:
        """Keyword arguments of the scipy distribution for each component."""
        names = self.param_names
        return [{names[0]: float(a), names[1]: float(b)} for a, b in self.params]

    def _call(self, method: str, x: np.ndarray) -> np.ndarray:
        """``scipy.stats.<family>.<method>`` of every component at every x, shape x.shape + (k,)."""
        dist = getattr(stats, self.scipy_name)
        a, b = self.params[:, 0], self.params[:, 1]
        xx = np.asarray(x, dtype=np.float64)[..., None]
        if self.family == "normal":
            return np.asarray(getattr(dist, method)(xx, loc=a, scale=b), dtype=np.float64)
        return np.asarray(getattr(dist, method)(xx, a, scale=b), dtype=np.float64)

    def pdf(self, x: Any) -> np.ndarray:
        """Mixture density."""
        return self._call("pdf", x) @ self.weights

    def cdf(self, x: Any) -> np.ndarray:
        """Mixture distribution function."""
        return self._call("cdf", x) @ self.weights

    @property
    def support(self) -> tuple[float, float]:
        return (-np.inf if self.family == "normal" else 0.0), np.inf

    @property
    def mean(self) -> float:
        dist = getattr(stats, self.scipy_name)
        return float(self._moments(dist)[0] @ self.weights)

    @property
    def var(self) -> float:
        dist = getattr(stats, self.scipy_name)
        m, v = self._moments(dist)
        mean = float(m @ self.weights)
        return float((v + m * m) @ self.weights - mean * mean)

    def _moments(self, dist: Any) -> tuple[np.ndarray, np.ndarray]:
        a, b = self.params[:, 0], self.params[:, 1]
        if self.family == "normal":
            return a.copy(), b * b
        m, v = dist.stats(a, scale=b, moments="mv")
        return np.asarray(m, dtype=np.float64), np.asarray(v, dtype=np.float64)

    def quantile(self, u: Any) -> np.ndarray:
        """Mixture quantile: bracketed between the components' quantiles at u, then safeguarded
        Newton steps on the mixture CDF."""
        uu = check_probabilities(u)
        flat = uu.ravel()
        lo, hi = self.support
        out = np.where(flat <= 0, lo, hi).astype(np.float64)
        inside = np.flatnonzero((flat > 0) & (flat < 1))
        if inside.size:
            comp = self._call("ppf", flat[inside])
            out[inside] = solve_increasing(
                self.cdf,
                self.pdf,
                flat[inside],
                comp.min(axis=-1),
                comp.max(axis=-1),
                xtol=1e-14,
            )
        return out.reshape(uu.shape)


def _check_options(
    n_components: Any, max_components: Any, n_starts: Any, tol: Any, max_iter: Any
) -> None:
    for name, value in (("max_components", max_components), ("n_starts", n_starts)):
        if isinstance(value, bool) or not isinstance(value, int | np.integer) or value < 1:
            raise MethodError(f"{name}: expected an integer >= 1, found {value!r}")
    if n_components is not None and (
        isinstance(n_components, bool)
        or not isinstance(n_components, int | np.integer)
        or n_components < 1
    ):
        raise MethodError(f"n_components: expected None or an integer >= 1, found {n_components!r}")
    if not (isinstance(tol, float | int) and 0 < tol < 1):
        raise MethodError(f"tol: expected a number in (0, 1), found {tol!r}")
    if isinstance(max_iter, bool) or not isinstance(max_iter, int | np.integer) or max_iter < 1:
        raise MethodError(f"max_iter: expected an integer >= 1, found {max_iter!r}")


def fit_mixture(
    values: Any,
    *,
    family: MixtureFamily,
    weights: Any = None,
    n_components: int | None = None,
    max_components: int = 3,
    n_starts: int = 5,
    tol: float = 1e-10,
    max_iter: int = 1000,
    min_weight: float = 0.01,
    min_spread: float = 1e-3,
    rng: SeedLike = None,
) -> MixtureResult:
    """Fit a finite mixture of ``family`` by EM; choose the number of components by BIC.

    Parameters
    ----------
    values : array_like
        Observations (> 0 for lognormal, gamma and weibull).
    family : {"normal", "lognormal", "gamma", "weibull"}
        Family of every component.
    weights : array_like, optional
        Frequency weights (an integer weight acts as repeated rows; zero weights drop the row).
    n_components : int, optional
        Fit exactly this many components; default: the BIC choice among 1..max_components.
    max_components : int
        Largest number of components tried by BIC (default 3).
    n_starts : int
        EM starts per number of components that must finish without collapsing (one from
        quantile groups, the rest k-means++-style from ``rng``); up to three times as many are
        drawn when starts collapse.
    tol, max_iter : float, int
        EM stops when the log-likelihood it would still gain (Aitken's estimate from the last
        two steps) is below ``tol * max(1, |loglik|)``; at most ``max_iter`` steps per start.
    min_weight : float
        A component whose weight falls below this share (or below 2 observations) collapses.
    min_spread : float
        Floor on a component's standard deviation on the working scale (x for normal, log x
        otherwise) as a share of the data's; reaching it counts as collapsing.
    rng : int, Generator, SeedSequence or None
        Source of the random starts.

    Raises
    ------
    MethodError
        Bad values, weights or options, or too few distinct values for the components asked.
    FitError
        No start converged without collapsing (for ``n_components``, or for every k tried).

    Examples
    --------
    >>> import numpy as np
    >>> g = np.random.default_rng(3)
    >>> x = np.concatenate([g.normal(0.0, 1.0, 300), g.normal(6.0, 1.0, 200)])
    >>> r = fit_mixture(x, family="normal", rng=1)
    >>> r.n_components, np.round(r.weights, 2).tolist()
    (2, [0.6, 0.4])
    """
    if family not in MIXTURE_FAMILIES:
        raise MethodError(
            f"family: expected one of {', '.join(MIXTURE_FAMILIES)}, found {family!r}"
        )
    _check_options(n_components, max_components, n_starts, tol, max_iter)
    for name, share in (("min_weight", min_weight), ("min_spread", min_spread)):
        if not (isinstance(share, float | int) and 0 < share < 1):
            raise MethodError(f"{name}: expected a number in (0, 1), found {share!r}")
    x, w = check_sample(values, weights, positive=family != "normal")
    y = working_scale(family, x)
    n_distinct = np.unique(x).size
    total = float(w.sum())
    sd = float(np.sqrt(w @ (y - (w @ y) / total) ** 2 / total))
    if n_distinct < 2 or sd == 0:
        raise MethodError(f"values: expected at least 2 distinct values, found {n_distinct}")
    if n_components is not None:
        if n_components > 1 and n_distinct < 3 * n_components:
            raise MethodError(
                f"values: a {n_components}-component mixture needs at least "
                f"{3 * n_components} distinct values, found {n_distinct}"
            )
        ks = [int(n_components)]
    else:
        ks = [k for k in range(1, int(max_components) + 1) if k == 1 or n_distinct >= 3 * k]
    streams = make_rng(rng).spawn(len(ks))
    rows: list[ComponentCountResult] = []
    fits: dict[int, EmRun] = {}
    for k, gen in zip(ks, streams, strict=True):
        run, collapsed = best_of_starts(
            family,
            x,
            w,
            k,
            gen,
            n_starts=int(n_starts),
            floor=min_spread * sd,
            min_weight=min_weight,
            tol=float(tol),
            max_iter=int(max_iter),
        )
        rows.append(_row(k, run, collapsed, total))
        if run is not None and run.converged:
            fits[k] = run
    usable = [row for row in rows if row.usable]
    if not usable:
        detail = "; ".join(
            f"k={row.n_components}: {row.n_collapsed} collapsed starts, "
            f"{'converged' if row.converged else 'not converged'}"
            for row in rows
        )
        raise FitError(f"{family} mixture: no start converged without collapsing ({detail})")
    best = min(usable, key=lambda row: row.bic)
    run = fits[best.n_components]
    scipy_name, names = _SCIPY[family]
    result = MixtureResult(
        family=family,
        scipy_name=scipy_name,
        param_names=names,
        weights=run.weights,
        params=run.params,
        loglik=best.loglik,
        n_params=best.n_params,
        aic=best.aic,
        bic=best.bic,
        n_obs=total,
        converged=True,
        n_iter=best.n_iter,
        by_n_components=tuple(rows),
    )
    order = np.argsort(result._moments(getattr(stats, scipy_name))[0], kind="stable")
    return replace(result, weights=run.weights[order], params=run.params[order])


def _row(k: int, run: EmRun | None, collapsed: int, total: float) -> ComponentCountResult:
    """The summary of the best start with k components (nan criteria when there is none)."""
    n_params = 3 * k - 1
    if run is None:
        return ComponentCountResult(k, n_params, np.nan, np.nan, np.nan, False, 0, collapsed)
    aic = 2.0 * n_params - 2.0 * run.loglik
    bic = n_params * np.log(total) - 2.0 * run.loglik
    return ComponentCountResult(
        k, n_params, run.loglik, aic, bic, run.converged, run.n_iter, collapsed
    )
