"""The nonparametric methods: ``empirical`` and ``interpolated``.

* ``empirical``: the data's own (weighted) distribution; exact ECDF, no value beyond the data.
* ``interpolated``: a continuous piecewise-linear CDF through the sorted data. The i-th smallest
  of n values (i = 1..n) gets plotting position ``p = (i - 1) / (n - 1)``, so the CDF is 0 at the
  minimum and 1 at the maximum and no draw falls outside [min, max]. Its quantile function is the
  "linear" sample quantile (Hyndman & Fan type 7, numpy's default). Tied values become a vertical
  step (an atom) carrying their share of the mass. Weights are not supported.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.core.checks import CheckedSample
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.piecewise import PiecewiseSampler

__all__ = ["fit_empirical", "fit_interpolated", "interpolated"]


def interpolated(values: np.ndarray) -> PiecewiseSampler:
    """The interpolated sampler of at least 2 checked values (positions ``(i - 1) / (n - 1)``).

    >>> interpolated(np.array([3.0, 1.0, 2.0])).quantile([0.25, 0.5]).tolist()
    [1.5, 2.0]
    """
    xs = np.sort(values)
    p = np.arange(xs.size, dtype=np.float64) / (xs.size - 1)
    return PiecewiseSampler(xs, p, method="interpolated")


def fit_empirical(sample: CheckedSample, method: str, **options: Any) -> EmpiricalSampler:
    """Catalog fitter of ``empirical``."""
    return EmpiricalSampler(sample.values, sample.weights)


def fit_interpolated(sample: CheckedSample, method: str, **options: Any) -> PiecewiseSampler:
    """Catalog fitter of ``interpolated``."""
    return interpolated(sample.values)
