"""The Poisson index-of-dispersion check of counts, and the diagnostics of count samplers.

* :func:`dispersion_check` is the classical index-of-dispersion test of a Poisson model (Fisher,
  1950, Biometrics 6; Cochran, 1954, Biometrics 10): with ``n`` counts of mean ``m`` and sample
  variance ``s²`` (divisor ``n - 1``), ``D = (n - 1) s² / m = Σ (x - m)² / m`` is approximately
  chi-square with ``n - 1`` degrees of freedom when the counts are Poisson. A large ``D`` (upper
  tail, ``p = P(χ²_{n-1} >= D) < alpha``) says the counts vary more than a Poisson allows: a
  fitted poisson is too narrow and will understate spread and tail risk (negative_binomial is
  the usual next step). ``D`` equals the Pearson chi-square of an intercept-only Poisson model.
  The chi-square approximation is poor when the mean is small (below about 1) and ``n`` is small.
* :func:`count_diagnostics` gives the ``diagnostics`` section of any sampler fitted to counts;
  the catalog names it for the count families and ``empirical_pmf``, so ``fit`` adds it.

Frequency weights count as repeated observations: ``n`` is the total weight.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from scipy import stats

from samplewright.core.checks import CheckedSample, check_counts, check_sample
from samplewright.core.errors import MethodError
from samplewright.fitting.counts import tabulate

__all__ = ["DEFAULT_ALPHA", "DispersionResult", "count_diagnostics", "dispersion_check"]

DEFAULT_ALPHA = 0.05


@dataclass(frozen=True)
class DispersionResult:
    """Poisson index-of-dispersion test of a set of counts.

    Attributes
    ----------
    n_obs : float
        Number of counts (total frequency weight).
    mean, variance : float
        Sample mean and sample variance (divisor ``n_obs - 1``).
    index : float
        ``variance / mean``; 1 for a Poisson, above 1 when over-dispersed.
    statistic : float
        ``(n_obs - 1) * variance / mean``, approximately chi-square(``df``) under a Poisson.
    df : float
        ``n_obs - 1``.
    pvalue : float
        Upper-tail probability ``P(chi2(df) >= statistic)``.
    alpha : float
        Level used for ``overdispersed``.
    overdispersed : bool
        ``pvalue < alpha``: a Poisson is too narrow for these counts.
    message : str
        One line saying what the result means.
    """

    n_obs: float
    mean: float
    variance: float
    index: float
    statistic: float
    df: float
    pvalue: float
    alpha: float
    overdispersed: bool
    message: str

    def as_dict(self) -> dict[str, Any]:
        """Plain-JSON form, as stored in artifact diagnostics."""
        return asdict(self)


def _counts(counts: Any, weights: Any, what: str) -> CheckedSample:
    sample = check_sample(counts, weights, what=what)
    check_counts(sample.values, what)
    return sample


def _check_alpha(alpha: Any) -> float:
    if isinstance(alpha, bool) or not isinstance(alpha, int | float) or not 0 < alpha < 1:
        raise MethodError(f"alpha: expected a number strictly between 0 and 1, found {alpha!r}")
    return float(alpha)


def _from_table(values: np.ndarray, probs: np.ndarray, n: float, alpha: float) -> DispersionResult:
    """The test from a pmf table; the sampler's diagnostics and dispersion_check share it."""
    if not n >= 2:
        raise MethodError(f"dispersion_check: at least 2 counts are needed, found {n:g}")
    mean = float(np.dot(probs, values))
    if not mean > 0:
        raise MethodError("dispersion_check: every count is 0, so the dispersion is undefined")
    var_n = float(np.dot(probs, (values - mean) ** 2))  # divisor n
    variance = var_n * n / (n - 1.0)
    statistic = n * var_n / mean
    df = n - 1.0
    pvalue = float(stats.chi2.sf(statistic, df))
    lower = float(stats.chi2.cdf(statistic, df))
    index = variance / mean
    head = f"index of dispersion {index:.4g} (variance {variance:.4g}, mean {mean:.4g}, n {n:g})"
    if pvalue < alpha:
        text = (
            f"{head}: over-dispersed (p = {pvalue:.3g} < {alpha:g}); a poisson is too narrow, "
            "consider negative_binomial"
        )
    elif lower < alpha:
        text = (
            f"{head}: under-dispersed (lower-tail p = {lower:.3g} < {alpha:g}); a poisson is "
            "too wide, consider binomial"
        )
    else:
        text = f"{head}: consistent with a poisson (p = {pvalue:.3g})"
    return DispersionResult(
        n_obs=n,
        mean=mean,
        variance=variance,
        index=index,
        statistic=statistic,
        df=df,
        pvalue=pvalue,
        alpha=alpha,
        overdispersed=pvalue < alpha,
        message=text,
    )


def dispersion_check(
    counts: Any, *, weights: Any = None, alpha: float = DEFAULT_ALPHA
) -> DispersionResult:
    """Poisson index-of-dispersion test (upper tail: is a Poisson too narrow?).

    Parameters
    ----------
    counts : array_like
        1-d non-negative integers, at least 2 of them (total weight >= 2), not all 0.
    weights : array_like, optional
        Positive frequency weights, one per count.
    alpha : float
        Level for ``overdispersed`` (default 0.05).

    Returns
    -------
    DispersionResult

    Examples
    --------
    >>> r = dispersion_check([0, 0, 0, 1, 2, 9])
    >>> round(r.index, 3), round(r.statistic, 2), r.overdispersed
    (6.2, 31.0, True)
    """
    a = _check_alpha(alpha)
    sample = _counts(counts, weights, "dispersion_check")
    return _from_table(*tabulate(sample.values, sample.weights), a)


def _summary(values: np.ndarray, probs: np.ndarray, n: float, alpha: float) -> dict[str, Any]:
    try:
        return _from_table(values, probs, n, alpha).as_dict()
    except MethodError as exc:
        keys = DispersionResult.__dataclass_fields__
        out: dict[str, Any] = dict.fromkeys(keys)
        out.update(n_obs=n, alpha=alpha, overdispersed=False, message=f"not tested: {exc}")
        return out


def count_diagnostics(
    counts: Any, weights: Any = None, *, alpha: float = DEFAULT_ALPHA
) -> dict[str, Any]:
    """Diagnostics section ``{"dispersion": {...}}`` for a sampler fitted to counts.

    Unlike :func:`dispersion_check` it does not raise when the test is undefined (fewer than 2
    counts, or all 0): the numbers are then ``None`` and ``message`` says why.

    >>> d = count_diagnostics([3, 4, 2, 5, 4])["dispersion"]
    >>> d["overdispersed"], round(d["index"], 3)
    (False, 0.361)
    """
    a = _check_alpha(alpha)
    sample = _counts(counts, weights, "count_diagnostics")
    return {"dispersion": _summary(*tabulate(sample.values, sample.weights), a)}
