"""Distributions from expert judgement: PERT, triangular, metalog and named families.

* :func:`pert_parameters` turns (low, mode, high) into the beta shape parameters of a PERT
  distribution (Malcolm, Roseboom, Clark & Fazar 1959, Operations Research 7(5): 646-669):
  ``alpha = 1 + shape (mode - low) / (high - low)``, ``beta = 1 + shape (high - mode) / (high -
  low)``, so that the mean is ``(low + shape * mode + high) / (shape + 2)``.
* :func:`triangular_parameters` gives scipy's ``triang(c, loc, scale)`` through (low, mode, high).
* :func:`fit_metalog` (from :mod:`samplewright.fitting.metalog`) passes a metalog through elicited
  quantiles.
* :func:`fit_quantiles` fits a named family through elicited quantiles by least squares on the
  quantile function, ``sum_i (Q(p_i; theta) - x_i)^2`` scaled by the range of the values.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import stats

from samplewright.core.errors import MethodError

from ._numeric import check_probabilities
from .elicit_quantiles import QUANTILE_FAMILIES, QuantileFamily, QuantileFitResult, fit_quantiles
from .metalog import MetalogResult, fit_metalog

__all__ = [
    "QUANTILE_FAMILIES",
    "MetalogResult",
    "PertResult",
    "QuantileFamily",
    "QuantileFitResult",
    "TriangularResult",
    "fit_metalog",
    "fit_quantiles",
    "pert_parameters",
    "triangular_parameters",
]


def _number(value: Any, name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
        raise MethodError(f"{name}: expected a number, found {type(value).__name__}")
    v = float(value)
    if not np.isfinite(v):
        raise MethodError(f"{name}: expected a finite number, found {v}")
    return v


def _check_three_points(low: Any, mode: Any, high: Any) -> tuple[float, float, float]:
    lo, mo, hi = _number(low, "low"), _number(mode, "mode"), _number(high, "high")
    if not lo < hi:
        raise MethodError(f"low, high: expected low < high, found low={lo:g}, high={hi:g}")
    if not lo <= mo <= hi:
        raise MethodError(f"mode: expected a value from low={lo:g} to high={hi:g}, found {mo:g}")
    return lo, mo, hi


@dataclass(frozen=True)
class PertResult:
    """A PERT distribution: a beta on [low, high] with shape parameters ``alpha``, ``beta``.

    Attributes
    ----------
    low, mode, high, shape : float
        The elicited three points and the weight of the mode (4 in the classic PERT).
    alpha, beta : float
        Shape parameters of ``scipy.stats.beta(alpha, beta, loc=low, scale=high - low)``.
    mean, var : float
        Mean ``(low + shape * mode + high) / (shape + 2)`` and variance of that beta.
    """

    low: float
    mode: float
    high: float
    shape: float
    alpha: float
    beta: float
    mean: float
    var: float

    @property
    def support(self) -> tuple[float, float]:
        return self.low, self.high

    def _dist(self) -> Any:
        return stats.beta(self.alpha, self.beta, loc=self.low, scale=self.high - self.low)

    def cdf(self, x: Any) -> np.ndarray:
        """Distribution function."""
        return np.asarray(self._dist().cdf(x), dtype=np.float64)

    def pdf(self, x: Any) -> np.ndarray:
        """Density."""
        return np.asarray(self._dist().pdf(x), dtype=np.float64)

    def quantile(self, u: Any) -> np.ndarray:
        """Quantile function."""
        return np.asarray(self._dist().ppf(check_probabilities(u)), dtype=np.float64)


def pert_parameters(low: Any, mode: Any, high: Any, *, shape: float = 4.0) -> PertResult:
    """The PERT (modified beta) distribution through (low, mode, high).

    Parameters
    ----------
    low, mode, high : float
        Minimum, most likely and maximum value, ``low <= mode <= high`` and ``low < high``.
    shape : float
        Weight of the mode, > 0 (4 gives the classic PERT of Malcolm et al. 1959).

    Examples
    --------
    >>> r = pert_parameters(2.0, 5.0, 14.0)
    >>> round(r.alpha, 6), round(r.beta, 6), round(r.mean, 6)
    (2.0, 4.0, 6.0)
    """
    lo, mo, hi = _check_three_points(low, mode, high)
    k = _number(shape, "shape")
    if not k > 0:
        raise MethodError(f"shape: expected a number > 0, found {k:g}")
    width = hi - lo
    alpha = 1.0 + k * (mo - lo) / width
    beta = 1.0 + k * (hi - mo) / width
    total = alpha + beta
    var = alpha * beta / (total * total * (total + 1.0)) * width * width
    mean = lo + width * alpha / total
    return PertResult(lo, mo, hi, k, alpha, beta, mean, var)


@dataclass(frozen=True)
class TriangularResult:
    """A triangular distribution in scipy's ``triang(c, loc, scale)`` parameterisation.

    Attributes
    ----------
    low, mode, high : float
        The three points.
    c, loc, scale : float
        ``c = (mode - low) / (high - low)``, ``loc = low``, ``scale = high - low``.
    mean, var : float
        ``(low + mode + high) / 3`` and
        ``(low^2 + mode^2 + high^2 - low mode - low high - mode high) / 18``.
    """

    low: float
    mode: float
    high: float
    c: float
    loc: float
    scale: float
    mean: float
    var: float

    @property
    def support(self) -> tuple[float, float]:
        return self.low, self.high

    def _dist(self) -> Any:
        return stats.triang(self.c, loc=self.loc, scale=self.scale)

    def cdf(self, x: Any) -> np.ndarray:
        """Distribution function."""
        return np.asarray(self._dist().cdf(x), dtype=np.float64)

    def pdf(self, x: Any) -> np.ndarray:
        """Density."""
        return np.asarray(self._dist().pdf(x), dtype=np.float64)

    def quantile(self, u: Any) -> np.ndarray:
        """Quantile function."""
        return np.asarray(self._dist().ppf(check_probabilities(u)), dtype=np.float64)


def triangular_parameters(low: Any, mode: Any, high: Any) -> TriangularResult:
    """The triangular distribution through (low, mode, high).

    >>> r = triangular_parameters(1.0, 2.0, 5.0)
    >>> r.c, r.loc, r.scale, round(r.mean, 12)
    (0.25, 1.0, 4.0, 2.666666666667)
    """
    lo, mo, hi = _check_three_points(low, mode, high)
    var = (lo * lo + mo * mo + hi * hi - lo * mo - lo * hi - mo * hi) / 18.0
    return TriangularResult(lo, mo, hi, (mo - lo) / (hi - lo), lo, hi - lo, (lo + mo + hi) / 3, var)
