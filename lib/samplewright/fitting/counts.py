"""Method ``empirical_pmf``: the observed counts' own pmf.

It stores the distinct non-negative integer values seen and their (frequency-weighted) shares
(:class:`~samplewright.distributions.empirical_pmf.EmpiricalPmfSampler`); it never draws a count
that was not observed. ``fit`` adds the Poisson index-of-dispersion check
(:mod:`samplewright.check.dispersion`) to its diagnostics, as it does for the count families.
Frequency weights count as repeated observations: ``n_obs`` is the total weight.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.core.checks import CheckedSample, check_counts
from samplewright.distributions.empirical_pmf import EmpiricalPmfSampler
from samplewright.fitting.api import fit

__all__ = ["fit_empirical_pmf", "fit_sample", "tabulate"]

_NAME = "empirical_pmf"


def tabulate(x: np.ndarray, w: np.ndarray | None) -> tuple[np.ndarray, np.ndarray, float]:
    """Distinct values, their shares (summing to 1) and the total weight.

    >>> tabulate(np.array([2.0, 0.0, 2.0, 5.0]), None)
    (array([0., 2., 5.]), array([0.25, 0.5 , 0.25]), 4.0)
    """
    values, inv = np.unique(x, return_inverse=True)
    tally = np.bincount(inv, weights=w, minlength=values.size).astype(np.float64)
    total = float(tally.sum())
    return values, tally / total, total


def fit_sample(sample: CheckedSample, method: str = _NAME, **options: Any) -> EmpiricalPmfSampler:
    """Catalog fitter of ``empirical_pmf``."""
    check_counts(sample.values, _NAME)
    return EmpiricalPmfSampler(*tabulate(sample.values, sample.weights))


def fit_empirical_pmf(counts: Any, *, weights: Any = None) -> EmpiricalPmfSampler:
    """Empirical pmf of non-negative integer counts: ``fit(counts, "empirical_pmf", ...)``.

    >>> s = fit_empirical_pmf([0, 2, 2, 5])
    >>> s.pmf([0, 1, 2]).tolist(), s.cdf(4.5).item(), s.quantile(0.5).item()
    ([0.25, 0.0, 0.5], 0.75, 2.0)

    Raises
    ------
    MethodError
        A value is negative, not a whole number or not finite (the message names the first), or
        a weight is negative.
    """
    out = fit(counts, _NAME, weights=weights)
    assert isinstance(out, EmpiricalPmfSampler)
    return out
