"""Count data: the empirical pmf sampler and the Poisson index-of-dispersion check.

* Method ``empirical_pmf`` stores the distinct non-negative integer values seen and their
  (frequency-weighted) shares; it never draws a count that was not observed. Draws, like those of
  :class:`~samplewright.distributions.empirical.EmpiricalSampler`, are float64 holding whole numbers.
* :func:`dispersion_check` is the classical index-of-dispersion test of a Poisson model (Fisher,
  1950, Biometrics 6; Cochran, 1954, Biometrics 10): with ``n`` counts of mean ``m`` and sample
  variance ``s²`` (divisor ``n - 1``), ``D = (n - 1) s² / m = Σ (x - m)² / m`` is approximately
  chi-square with ``n - 1`` degrees of freedom when the counts are Poisson. A large ``D`` (upper
  tail, ``p = P(χ²_{n-1} >= D) < alpha``) says the counts vary more than a Poisson allows: a
  fitted poisson is too narrow and will understate spread and tail risk (negative_binomial is
  the usual next step). ``D`` equals the Pearson chi-square of an intercept-only Poisson model.
  The chi-square approximation is poor when the mean is small (below about 1) and ``n`` is small.
* :func:`count_diagnostics` gives the ``diagnostics`` section for any fitted count sampler.

Frequency weights count as repeated observations: ``n`` is the total weight.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from scipy import stats

from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, _check_u
from samplewright.fitting.registry import EXTENSION_METHODS

__all__ = [
    "DEFAULT_ALPHA",
    "DispersionResult",
    "EmpiricalPmfSampler",
    "count_diagnostics",
    "dispersion_check",
    "fit_empirical_pmf",
]

DEFAULT_ALPHA = 0.05
_NAME = "empirical_pmf"


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


def _check_counts(values: Any, weights: Any, name: str) -> tuple[np.ndarray, np.ndarray | None]:
    x = np.asarray(values, dtype=np.float64)
    if x.ndim != 1:
        raise MethodError(f"{name}: counts must be 1-d, found {x.ndim} dimensions")
    if x.size == 0:
        raise MethodError(f"{name}: at least 1 count is needed, found 0")
    bad = np.flatnonzero(~np.isfinite(x) | (x < 0) | (x != np.floor(x)))
    if bad.size:
        i = int(bad[0])
        raise MethodError(
            f"{name}: counts must be non-negative integers; value {i + 1} is {float(x[i])!r}"
        )
    if weights is None:
        return x, None
    w = np.asarray(weights, dtype=np.float64)
    if w.shape != x.shape:
        raise MethodError(f"weights: expected {x.size} weights, found {w.size}")
    bad = np.flatnonzero(~(np.isfinite(w) & (w > 0)))
    if bad.size:
        i = int(bad[0])
        raise MethodError(f"weights: every weight must be finite and > 0; weight {i + 1} is {w[i]}")
    return x, w


def _tabulate(x: np.ndarray, w: np.ndarray | None) -> tuple[np.ndarray, np.ndarray, float]:
    """Distinct values, their shares (summing to 1) and the total weight."""
    values, inv = np.unique(x, return_inverse=True)
    tally = np.bincount(inv, weights=w, minlength=values.size).astype(np.float64)
    total = float(tally.sum())
    return values, tally / total, total


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
    x, w = _check_counts(counts, weights, "dispersion_check")
    return _from_table(*_tabulate(x, w), a)


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
    x, w = _check_counts(counts, weights, "count_diagnostics")
    return {"dispersion": _summary(*_tabulate(x, w), a)}


class EmpiricalPmfSampler(Sampler):
    """The observed counts' own pmf: distinct values and their shares.

    >>> s = fit_empirical_pmf([0, 2, 2, 5])
    >>> s.pmf([0, 1, 2]).tolist(), s.cdf(4.5).item(), s.quantile(0.5).item()
    ([0.25, 0.0, 0.5], 0.75, 2.0)
    """

    kind = "empirical_pmf"

    def __init__(self, values: Any, probs: Any, n_obs: float) -> None:
        self.values = np.asarray(values, dtype=np.float64).ravel()
        self.probs = np.asarray(probs, dtype=np.float64).ravel()
        if self.values.size == 0 or self.values.shape != self.probs.shape:
            raise MethodError(
                f"{_NAME}: values and probabilities must be equally long and non-empty, found "
                f"{self.values.size} and {self.probs.size}"
            )
        if np.any(np.diff(self.values) <= 0) or not np.all(self.probs > 0):
            raise MethodError(f"{_NAME}: values must increase and probabilities must be > 0")
        self._cum = np.cumsum(self.probs)
        self._cum[-1] = 1.0
        self.n_obs = float(n_obs)
        self.method = _NAME
        self.params = {"n_values": int(self.values.size), "n_obs": self.n_obs}

    @property
    def diagnostics(self) -> dict[str, Any]:
        """``{"dispersion": ...}`` at the default level, from the stored table."""
        return {"dispersion": _summary(self.values, self.probs, self.n_obs, DEFAULT_ALPHA)}

    def pmf(self, x: Any) -> np.ndarray:
        q = np.asarray(x, dtype=np.float64)
        idx = np.clip(np.searchsorted(self.values, q, side="left"), 0, self.values.size - 1)
        return np.where(self.values[idx] == q, self.probs[idx], 0.0)

    def cdf(self, x: Any) -> np.ndarray:
        idx = np.searchsorted(self.values, np.asarray(x, dtype=np.float64), side="right")
        return np.where(idx > 0, self._cum[np.maximum(idx - 1, 0)], 0.0)

    def quantile(self, u: Any) -> np.ndarray:
        idx = np.searchsorted(self._cum, _check_u(u), side="left")
        return self.values[np.minimum(idx, self.values.size - 1)]

    @property
    def mean(self) -> float:
        return float(np.dot(self.probs, self.values))

    @property
    def var(self) -> float:
        return float(np.dot(self.probs, (self.values - self.mean) ** 2))

    @property
    def support(self) -> tuple[float, float]:
        return float(self.values[0]), float(self.values[-1])

    def payload(self) -> dict[str, np.ndarray]:
        return {"value": self.values, "prob": self.probs}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        return cls(payload["value"], payload["prob"], described["params"]["n_obs"])


def fit_empirical_pmf(counts: Any, *, weights: Any = None) -> EmpiricalPmfSampler:
    """Empirical pmf of non-negative integer counts (frequency ``weights`` optional).

    Raises
    ------
    MethodError
        A value is negative, not a whole number or not finite (the message names the first), or
        a weight is not positive.
    """
    x, w = _check_counts(counts, weights, _NAME)
    return EmpiricalPmfSampler(*_tabulate(x, w))


def _fit_method(x: np.ndarray, weights: Any, censored: Any, **options: Any) -> EmpiricalPmfSampler:
    """The ``empirical_pmf`` entry of :data:`~samplewright.fitting.registry.EXTENSION_METHODS`."""
    if options:
        raise MethodError(f"unknown option {sorted(options)[0]!r} for method {_NAME!r}")
    if censored is not None and np.any(censored):
        raise MethodError(f"censored: method {_NAME!r} does not take censored counts")
    return fit_empirical_pmf(x, weights=weights)


EXTENSION_METHODS[_NAME] = _fit_method
