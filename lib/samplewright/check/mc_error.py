"""Monte Carlo error of a statistic of simulated draws: its precision, and the draws needed.

The draws of a simulation are independent, so each named statistic (see
:mod:`samplewright.resample.statistics`) has a standard error from its large-sample theory:

* ``mean``: ``s / sqrt(n)`` (central limit theorem), interval ``estimate +- z se``;
* ``std`` (plug-in, divisor n): delta method, ``se = sqrt((m4 - m2**2) / n) / (2 sd)`` with the
  central sample moments ``m2``, ``m4`` (``sd / sqrt(2 n)`` for normal draws);
* ``quantile:<p>``: the distribution-free order-statistic interval ``[x_(l), x_(u)]``: the
  number of draws at or below the true quantile is Binomial(n, p), so ``l`` and ``u`` are chosen
  from binomial quantiles to cover with probability at least the confidence level for any
  continuous distribution; ``se = (x_(u) - x_(l)) / (2 z)``;
* ``tail_mean:<p>`` (expected shortfall beyond the p-quantile ``q``): its influence function
  ``q + (x - q)_+ / (1 - p) - ES`` gives ``se = sd((x - q)_+) / ((1 - p) sqrt(n))``, the usual
  asymptotic variance ``(Var(X | X > q) + p (ES - q)**2) / (n (1 - p))``; interval
  ``estimate +- z se``; at least 10 draws beyond ``q`` are required;
* ``exceedance:<v>``: binomial, ``se = sqrt(P (1 - P) / n)``, exact Clopper-Pearson interval.

``z`` is the standard normal quantile of ``(1 + confidence_level) / 2``. With
``target_relative_error`` (the wanted ``standard_error / |estimate|``) the result also tells how
many draws reach it: ``ceil(n (se / (target |estimate|))**2)``, since every standard error above
shrinks as ``1 / sqrt(n)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import stats
from scipy.special import ndtri

from samplewright.core.errors import MethodError
from samplewright.resample.intervals import check_level
from samplewright.resample.schemes import check_values
from samplewright.resample.statistics import NamedStatistic, order_index, parse_statistic

__all__ = ["MIN_TAIL_DRAWS", "MonteCarloErrorResult", "mc_error"]

# fewest draws beyond the quantile for a tail-mean error (common practice, no source)
MIN_TAIL_DRAWS = 10


@dataclass(frozen=True)
class MonteCarloErrorResult:
    """Precision of a statistic of Monte Carlo draws.

    Attributes
    ----------
    estimate : float
        The statistic of the draws.
    standard_error : float
        Its Monte Carlo standard error.
    low, high : float
        Confidence interval for the value the statistic converges to.
    n_draws : int
        Number of draws.
    n_draws_needed : int or None
        Draws needed for ``standard_error / |estimate|`` to reach ``target_relative_error``;
        None when no target was given.
    statistic : str
        The statistic's name.
    confidence_level : float
        Level of the interval.
    """

    estimate: float
    standard_error: float
    low: float
    high: float
    n_draws: int
    n_draws_needed: int | None
    statistic: str
    confidence_level: float


def mc_error(
    draws: Any,
    statistic: str,
    *,
    confidence_level: float = 0.95,
    target_relative_error: float | None = None,
) -> MonteCarloErrorResult:
    """Monte Carlo standard error and interval of a named statistic of independent draws.

    Parameters
    ----------
    draws : array_like
        One-dimensional finite draws (at least 2).
    statistic : str
        ``"mean"``, ``"std"``, ``"quantile:<p>"`` (0 < p < 1), ``"tail_mean:<p>"`` or
        ``"exceedance:<value>"``.
    confidence_level : float
        Level of the interval, strictly between 0 and 1.
    target_relative_error : float, optional
        Wanted ``standard_error / |estimate|``; fills ``n_draws_needed``.

    Returns
    -------
    MonteCarloErrorResult

    Examples
    --------
    >>> x = np.random.default_rng(0).normal(10.0, 2.0, 10_000)
    >>> r = mc_error(x, "mean", target_relative_error=0.001)
    >>> round(r.standard_error, 3), r.n_draws_needed
    (0.02, 39750)
    """
    x = check_values(draws, "draws")
    level = check_level(confidence_level)
    stat = parse_statistic(statistic)
    n = x.size
    z = float(ndtri(0.5 + level / 2.0))
    estimate = stat.estimate(x)
    if stat.name == "quantile":
        low, high = _order_statistic_interval(x, stat, level)
        se = (high - low) / (2.0 * z)
    elif stat.name == "exceedance":
        k = int(np.count_nonzero(x > stat.parameter))
        se = math.sqrt(estimate * (1.0 - estimate) / n)
        tail = (1.0 - level) / 2.0
        low = float(stats.beta.ppf(tail, k, n - k + 1)) if k > 0 else 0.0
        high = float(stats.beta.ppf(1.0 - tail, k + 1, n - k)) if k < n else 1.0
    else:
        se = _smooth_standard_error(x, stat, estimate)
        low, high = estimate - z * se, estimate + z * se
    return MonteCarloErrorResult(
        estimate=estimate,
        standard_error=float(se),
        low=float(low),
        high=float(high),
        n_draws=n,
        n_draws_needed=_draws_needed(n, se, estimate, target_relative_error),
        statistic=stat.text,
        confidence_level=level,
    )


def _smooth_standard_error(x: np.ndarray, stat: NamedStatistic, estimate: float) -> float:
    n = x.size
    if stat.name == "mean":
        return float(np.std(x, ddof=1) / math.sqrt(n))
    if stat.name == "std":
        d = x - x.mean()
        m2 = float(np.mean(d * d))
        m4 = float(np.mean(d**4))
        return 0.0 if m2 == 0.0 else math.sqrt(max(m4 - m2 * m2, 0.0) / n) / (2.0 * math.sqrt(m2))
    p = stat.parameter
    j = order_index(n, p)
    part = np.partition(x, j)
    beyond = n - j - 1
    if beyond < MIN_TAIL_DRAWS:
        raise MethodError(
            f"draws: {stat.text} needs at least {MIN_TAIL_DRAWS} draws beyond the {p}-quantile"
            f" for its error, found {beyond} (of {n}); draw about"
            f" {math.ceil((MIN_TAIL_DRAWS + 1) / (1 - p))} or more"
        )
    excess = np.maximum(x - part[j], 0.0)
    return float(np.std(excess, ddof=1) / ((1.0 - p) * math.sqrt(n)))


def _order_statistic_interval(
    x: np.ndarray, stat: NamedStatistic, level: float
) -> tuple[float, float]:
    """Distribution-free interval ``[x_(l), x_(u)]`` for the p-quantile (0-based ranks)."""
    n, p = x.size, stat.parameter
    tail = (1.0 - level) / 2.0
    if not 0.0 < p < 1.0:
        raise MethodError(
            f"statistic: {stat.text} has no distribution-free interval; use 0 < p < 1"
        )
    fewest = math.ceil(max(math.log(tail) / math.log(p), math.log(tail) / math.log1p(-p)))
    binom = stats.binom(n, p)
    # lower: largest k with P(B <= k) <= tail; upper: smallest k with P(B <= k) >= 1 - tail
    k_lo = int(binom.ppf(tail))
    if binom.cdf(k_lo) > tail:
        k_lo -= 1
    k_hi = int(binom.ppf(1.0 - tail))
    if k_lo < 0 or k_hi > n - 1:
        raise MethodError(
            f"draws: {n} draws are too few for a distribution-free {level:.0%} interval of the"
            f" {p}-quantile; at least {fewest} are needed"
        )
    part = np.partition(x, [k_lo, k_hi])
    return float(part[k_lo]), float(part[k_hi])


def _draws_needed(n: int, se: float, estimate: float, target: float | None) -> int | None:
    if target is None:
        return None
    if isinstance(target, bool) or not isinstance(target, int | float | np.floating):
        raise MethodError(f"target_relative_error: expected a number > 0, found {target!r}")
    if not (math.isfinite(target) and target > 0):
        raise MethodError(f"target_relative_error: expected a number > 0, found {target!r}")
    if estimate == 0.0:
        raise MethodError(
            "target_relative_error: a relative error needs an estimate other than 0, found 0"
        )
    return max(1, math.ceil(n * (se / (target * abs(estimate))) ** 2))
