"""Named families through elicited quantiles, by least squares on the quantile function.

Given levels ``p_i``, values ``x_i`` and a family, :func:`fit_quantiles` minimises
``sum_i ((Q(p_i; theta) - x_i) / (max x - min x))^2``. Location-scale families (normal, logistic,
gumbel) and the exponential are linear in their parameters, so the least-squares answer is closed
form. For the others the scale is profiled out in closed form (the best scale for given shapes is
a one-line regression through the origin), the shapes are started from the best point of a
log-spaced grid (and, for lognormal, weibull and loglogistic, from the straight line their
quantiles follow on a log scale), and Levenberg-Marquardt polishes all free parameters.

Positive families keep their location fixed at ``lower`` (default 0); the beta family needs both
``lower`` and ``upper``, which fix its location and scale.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from scipy import optimize, special, stats

from samplewright.core.errors import FitError, MethodError

from ._numeric import check_elicited_points, check_probabilities

__all__ = ["QUANTILE_FAMILIES", "QuantileFamily", "QuantileFitResult", "fit_quantiles"]

QuantileFamily = Literal[
    "normal",
    "logistic",
    "gumbel",
    "exponential",
    "lognormal",
    "gamma",
    "weibull",
    "loglogistic",
    "beta",
]
# The trade's family names -> scipy.stats continuous distributions (one place for this mapping).
QUANTILE_FAMILIES: dict[str, str] = {
    "normal": "norm",
    "logistic": "logistic",
    "gumbel": "gumbel_r",
    "exponential": "expon",
    "lognormal": "lognorm",
    "gamma": "gamma",
    "weibull": "weibull_min",
    "loglogistic": "fisk",
    "beta": "beta",
}
_LOCATION_SCALE = frozenset({"normal", "logistic", "gumbel"})
_BOUNDED = frozenset({"beta"})
# straight lines on a log scale: log(x - lower) = log(scale) + slope(shape) * h(p)
_LOG_LINEAR = {
    "lognormal": (stats.norm.ppf, lambda slope: slope),
    "weibull": (lambda p: np.log(-np.log1p(-p)), lambda slope: 1.0 / slope),
    "loglogistic": (special.logit, lambda slope: 1.0 / slope),
}
_GRID_1D = np.linspace(np.log(1e-2), np.log(1e5), 241)
_GRID_2D = np.linspace(np.log(1e-2), np.log(1e3), 51)


@dataclass(frozen=True)
class QuantileFitResult:
    """A named family fitted through elicited quantiles.

    Attributes
    ----------
    family, scipy_name : str
        The family's name and the ``scipy.stats`` distribution it maps to.
    params : dict
        Keyword arguments of that scipy distribution (shapes, ``loc``, ``scale``).
    n_free : int
        Number of parameters fitted (the rest are fixed by the family or the bounds).
    probabilities, values : numpy.ndarray
        The elicited points, sorted by probability.
    fitted : numpy.ndarray
        ``Q(p_i)`` of the fitted distribution.
    misses, relative_misses : numpy.ndarray
        ``Q(p_i) - x_i`` and that divided by ``|x_i|`` (nan where ``x_i = 0``).
    """

    family: str
    scipy_name: str
    params: dict[str, float]
    n_free: int
    probabilities: np.ndarray
    values: np.ndarray
    fitted: np.ndarray
    misses: np.ndarray
    relative_misses: np.ndarray

    def _dist(self) -> Any:
        return getattr(stats, self.scipy_name)(**self.params)

    @property
    def support(self) -> tuple[float, float]:
        lo, hi = self._dist().support()
        return float(lo), float(hi)

    @property
    def mean(self) -> float:
        return float(self._dist().mean())

    @property
    def var(self) -> float:
        return float(self._dist().var())

    def cdf(self, x: Any) -> np.ndarray:
        """Distribution function."""
        return np.asarray(self._dist().cdf(x), dtype=np.float64)

    def pdf(self, x: Any) -> np.ndarray:
        """Density."""
        return np.asarray(self._dist().pdf(x), dtype=np.float64)

    def quantile(self, u: Any) -> np.ndarray:
        """Quantile function."""
        return np.asarray(self._dist().ppf(check_probabilities(u)), dtype=np.float64)


def _shape_names(scipy_name: str) -> list[str]:
    shapes = getattr(stats, scipy_name).shapes
    return [] if not shapes else [s.strip() for s in shapes.split(",")]


def _check_bounds(family: str, x: np.ndarray, lower: Any, upper: Any) -> tuple[float, float]:
    if family in _LOCATION_SCALE:
        if lower is not None or upper is not None:
            raise MethodError(f"lower, upper: family {family!r} takes no bounds, found some")
        return -np.inf, np.inf
    if family in _BOUNDED:
        if lower is None or upper is None:
            raise MethodError(f"lower, upper: family {family!r} needs both bounds, found None")
    elif upper is not None:
        raise MethodError(f"upper: family {family!r} takes only a lower bound, found {upper!r}")
    lo = 0.0 if lower is None else float(lower)
    hi = np.inf if upper is None else float(upper)
    if not (np.isfinite(lo) and lo < hi):
        raise MethodError(f"lower, upper: expected finite lower < upper, found {lo} and {hi}")
    if not np.all(x > lo):
        raise MethodError(f"values: expected every value > lower={lo:g}, found {x.min():g}")
    if not np.all(x < hi):
        raise MethodError(f"values: expected every value < upper={hi:g}, found {x.max():g}")
    return lo, hi


def fit_quantiles(
    probabilities: Any,
    values: Any,
    *,
    family: QuantileFamily,
    lower: float | None = None,
    upper: float | None = None,
) -> QuantileFitResult:
    """Fit ``family`` through elicited quantiles by scaled least squares.

    Parameters
    ----------
    probabilities, values : array_like
        Levels in (0, 1) and the values at them (values increase with the level).
    family : str
        A key of :data:`QUANTILE_FAMILIES`.
    lower, upper : float, optional
        Positive families: fixed location ``lower`` (default 0). Beta: both bounds (required).

    Raises
    ------
    MethodError
        Unknown family, bad points or bounds, or fewer points than free parameters.
    FitError
        The least-squares polish did not converge.

    Examples
    --------
    >>> r = fit_quantiles([0.05, 0.5, 0.95], [10.0, 20.0, 30.0], family="normal")
    >>> round(r.params["loc"], 9), round(r.params["scale"], 6)
    (20.0, 6.079568)
    """
    if family not in QUANTILE_FAMILIES:
        raise MethodError(
            f"family: expected one of {', '.join(sorted(QUANTILE_FAMILIES))}, found {family!r}"
        )
    p, x = check_elicited_points(probabilities, values, min_points=1)
    lo, hi = _check_bounds(family, x, lower, upper)
    scipy_name = QUANTILE_FAMILIES[family]
    dist = getattr(stats, scipy_name)
    names = _shape_names(scipy_name)
    n_free = len(names) + (0 if family in _BOUNDED else 1) + (family in _LOCATION_SCALE)
    if p.size < n_free:
        raise MethodError(
            f"probabilities: family {family!r} has {n_free} free parameters and needs at least "
            f"{n_free} points, found {p.size}"
        )
    spread = float(x[-1] - x[0])

    if not names:  # location-scale families and the exponential: linear least squares
        z = dist.ppf(p)
        if family in _LOCATION_SCALE:
            (loc, scale), *_ = np.linalg.lstsq(np.column_stack([np.ones_like(z), z]), x)
        else:
            loc, scale = lo, float(z @ (x - lo) / (z @ z))
        params = {"loc": float(loc), "scale": float(scale)}
    else:
        params = _fit_shapes(dist, family, names, p, x, lo, hi, spread)
    fitted = np.asarray(dist.ppf(p, **params), dtype=np.float64)
    misses = fitted - x
    with np.errstate(divide="ignore", invalid="ignore"):
        relative = np.where(x != 0, misses / np.abs(x), np.nan)
    return QuantileFitResult(family, scipy_name, params, n_free, p, x, fitted, misses, relative)


def _fit_shapes(
    dist: Any,
    family: str,
    names: list[str],
    p: np.ndarray,
    x: np.ndarray,
    lo: float,
    hi: float,
    spread: float,
) -> dict[str, float]:
    """Shapes (and the scale unless fixed by bounds) by grid start and Levenberg-Marquardt."""
    bounded = family in _BOUNDED
    width = hi - lo
    xs = x - lo

    if len(names) == 1:
        grid = _GRID_1D[:, None]
    else:
        grid = np.stack(np.meshgrid(_GRID_2D, _GRID_2D, indexing="ij"), axis=-1).reshape(-1, 2)
    if family in _LOG_LINEAR:
        transform, to_shape = _LOG_LINEAR[family]
        h = np.asarray(transform(p), dtype=np.float64)
        slope = float(np.polyfit(h, np.log(xs), 1)[0])
        grid = np.vstack([grid, [[np.log(to_shape(slope))]]])
    with np.errstate(all="ignore"):  # extreme grid shapes overflow; they score inf
        shapes = np.exp(grid)
        z = np.asarray(dist.ppf(p[None, :], *(shapes[:, [i]] for i in range(len(names)))))
        scales = np.full(grid.shape[0], width) if bounded else (z @ xs) / np.sum(z * z, axis=1)
        r = (scales[:, None] * z - xs) / spread
        scores = np.sum(r * r, axis=1)
    scores[~(np.isfinite(scores) & (scales > 0))] = np.inf
    i_best = int(np.argmin(scores))
    if not np.isfinite(scores[i_best]):
        raise FitError(f"family {family!r}: no starting shape gives finite quantiles")
    start = grid[i_best] if bounded else np.append(grid[i_best], np.log(scales[i_best]))

    def residuals(theta: np.ndarray) -> np.ndarray:
        k = len(names)
        scale = width if bounded else np.exp(theta[k])
        z = np.asarray(dist.ppf(p, *np.exp(theta[:k])), dtype=np.float64)
        return np.asarray((scale * z - xs) / spread, dtype=np.float64)

    fit = optimize.least_squares(  # at least as many points as parameters: LM applies
        residuals, start, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=5000
    )
    if fit.status <= 0 or not np.all(np.isfinite(fit.x)):
        raise FitError(f"family {family!r}: least squares did not converge ({fit.message})")
    theta = fit.x
    params = {name: float(np.exp(theta[i])) for i, name in enumerate(names)}
    params["loc"] = lo
    params["scale"] = width if bounded else float(np.exp(theta[len(names)]))
    return params
