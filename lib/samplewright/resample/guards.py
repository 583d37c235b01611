"""Guards for bootstrap intervals of tail statistics: warn when too few values lie beyond the level.

A bootstrap resample only ever repeats values already seen, so the bootstrap distribution of a
statistic that depends on the few largest values (``quantile:0.99``, ``tail_mean:0.99``) or on
a rare event (``exceedance:<v>``) cannot reach beyond the sample: with 60 values,
``quantile:0.99`` is the sample maximum in most resamples and the interval's top end is the
sample maximum itself. Bickel & Freedman (1981, "Some asymptotic theory for the bootstrap",
Ann. Statist. 9:1196-1217) gave the sample maximum as a case where the bootstrap fails (from
memory); Bickel & Sakov ("On the choice of m in the m out of n bootstrap and its application to
confidence bounds for extreme percentiles", 2005 preprint, later in Statistica Sinica) start from
that failure for extreme percentiles.

The guard counts the observations beyond the statistic's level -- in the nearer tail for
``quantile:p`` (``min`` of the counts below and above the p-quantile's position), above the
level for ``tail_mean:p``, and ``min`` of the counts above and not above ``v`` for
``exceedance:v`` (units of frequency weight count one each). When that count is below
:data:`MIN_TAIL_COUNTS` (10 for ``quantile`` and ``exceedance``, 30 for ``tail_mean``) the
interval is still computed, but a :class:`SparseTailWarning` is raised and its message kept in
the result's ``warnings``.

The thresholds come from a coverage simulation (script ``docs/studies/interval_coverage.py``,
output beside it): exponential, lognormal and Lomax (tail index 3) parents, levels 0.9
and 0.99, k = n (1 - p) from 1 to 30 observations beyond the level, 400 samples per cell,
999 resamples each. Coverage of nominal 95% intervals, mean over the six parent-level
cells (worst cell in brackets):

=============  ==========  ===========  ===========  ===========  ===========  ===========
statistic      method      k = 1        k = 3        k = 5        k = 10       k = 30
=============  ==========  ===========  ===========  ===========  ===========  ===========
quantile       percentile  0.64 (0.60)  0.81 (0.79)  0.88 (0.86)  0.93 (0.92)  0.94 (0.91)
quantile       bca         0.62 (0.58)  0.94 (0.94)  0.93 (0.90)  0.94 (0.92)  0.94 (0.93)
exceedance     percentile  0.63 (0.60)  0.87 (0.79)  0.90 (0.86)  0.94 (0.93)  0.94 (0.92)
tail_mean      percentile  0.28 (0.23)  0.63 (0.57)  0.73 (0.69)  0.82 (0.80)  0.90 (0.88)
tail_mean      bca         0.24 (0.21)  0.60 (0.55)  0.77 (0.73)  0.87 (0.83)  0.92 (0.90)
=============  ==========  ===========  ===========  ===========  ===========  ===========

Quantiles and exceedances settle at 0.93-0.95 from about 7 observations beyond the level; the
tail mean, which averages the few largest values, needs about 30. (``basic`` intervals of
quantiles stayed near 0.85 even at 30: prefer ``percentile`` or ``bca`` for them.) At n = 60,
``quantile:0.99`` covered about 42% and the tail mean less. Below the thresholds an interval from
the data alone is not worth its nominal level: parametric replicates
(``samplewright.fit_replicates`` with ``kind="parametric"``) or a fitted tail (``spliced``)
extrapolate where the data cannot.

``exceedance:v`` with no value above ``v`` (or every value above it) is refused: every resample
gives the same share, so the "interval" ``[0, 0]`` says nothing; the error quotes the exact
(Clopper-Pearson) bound for zero events, ``1 - (alpha/2)**(1/n)``.

Interval ends are clipped to the statistic's range: ``exceedance`` to ``[0, 1]``; ``std`` to
``[0, inf)``; ``mean``, ``quantile`` and ``tail_mean`` to ``[0, inf)`` when every value is >= 0
(data that are all non-negative measure a non-negative quantity). Only the ``basic`` interval
(``2 t - q``) can leave the range; percentile and BCa ends are values of the bootstrap
distribution and never need it.
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.resample.statistics import NamedStatistic, order_index

__all__ = [
    "MIN_TAIL_COUNTS",
    "SparseTailWarning",
    "clip_interval",
    "refuse_constant_exceedance",
    "tail_count",
    "tail_warning",
]

# fewest observations beyond the level for an interval worth its level (module docstring)
MIN_TAIL_COUNTS: dict[str, int] = {"quantile": 10, "exceedance": 10, "tail_mean": 30}


class SparseTailWarning(UserWarning):
    """Too few observations lie beyond a tail statistic's level for a trustworthy interval."""


def tail_count(stat: NamedStatistic, values: np.ndarray, weights: np.ndarray | None) -> int | None:
    """Observations beyond the level of ``stat`` (see the module docstring); None when the
    statistic has no tail (``mean``, ``std``). Frequency weights count as units."""
    if stat.name in ("mean", "std"):
        return None
    units = _units(values, weights)
    if stat.name == "exceedance":
        above = _units(values, weights, values > stat.parameter)
        return min(above, units - above)
    j = order_index(units, stat.parameter)
    above = units - j - 1
    return above if stat.name == "tail_mean" else min(j, above)


def _units(values: np.ndarray, weights: np.ndarray | None, rows: np.ndarray | None = None) -> int:
    """Observations (rows, or rounded units of frequency weight) among ``rows`` (default all)."""
    if weights is None:
        return int(values.size if rows is None else np.count_nonzero(rows))
    return round(float(weights.sum() if rows is None else weights[rows].sum()))


def refuse_constant_exceedance(
    stat: NamedStatistic, values: np.ndarray, weights: np.ndarray | None, confidence_level: float
) -> None:
    """Raise a MethodError when no value, or every value, exceeds ``exceedance:v``'s threshold."""
    if stat.name != "exceedance":
        return
    above = values > stat.parameter
    if above.any() and not above.all():
        return
    units = _units(values, weights)
    bound = 1.0 - ((1.0 - confidence_level) / 2.0) ** (1.0 / units)
    side, limit = ("no", f"<= {bound:.4g}") if not above.any() else ("every", f">= {1 - bound:.4g}")
    raise MethodError(
        f"statistic: {stat.text!r} has {side} value above {stat.parameter:g} among n = {units}, so"
        f" every resample gives the same share and the bootstrap interval is a single point; the"
        f" exact (Clopper-Pearson) {confidence_level:g} bound for it is {limit}; choose a"
        " threshold inside the data or use samplewright.fit_replicates(kind='parametric')"
    )


def tail_warning(
    stat: NamedStatistic,
    values: np.ndarray,
    weights: np.ndarray | None,
    high: float,
) -> str | None:
    """Warn (a :class:`SparseTailWarning`) when too few observations lie beyond the level;
    return the message, or None when the count is enough or the statistic has no tail."""
    count = tail_count(stat, values, weights)
    if count is None or count >= MIN_TAIL_COUNTS[stat.name]:
        return None
    units = _units(values, weights)
    at_max = (
        "; its top end is the sample maximum"
        if stat.name != "exceedance" and high >= float(values.max())
        else ""
    )
    message = (
        f"{stat.text}: only {count} of n = {units} observations lie beyond the level (fewer than"
        f" {MIN_TAIL_COUNTS[stat.name]}), so the bootstrap cannot see the tail and the interval"
        f" is too narrow{at_max}; use parametric replicates (samplewright.fit_replicates) or a"
        " fitted tail for this figure"
    )
    warnings.warn(message, SparseTailWarning, stacklevel=3)
    return message


def clip_interval(
    stat: NamedStatistic | None, values: np.ndarray, low: float, high: float
) -> tuple[float, float]:
    """``(low, high)`` clipped to the range of ``stat`` (see the module docstring)."""
    if stat is None:
        return low, high
    lower, upper = -math.inf, math.inf
    if stat.name == "exceedance":
        lower, upper = 0.0, 1.0
    elif stat.name == "std" or float(values.min()) >= 0.0:
        lower = 0.0
    return min(max(low, lower), upper), min(max(high, lower), upper)
