"""The acceleration ``a`` of BCa intervals, without the O(n^2) jackknife.

Efron (1987, JASA 82:171-185) estimates ``a`` from the jackknife: with ``d_i = mean(t) - t_(i)``
the differences of the leave-one-out estimates, ``a = sum d**3 / (6 (sum d**2)**1.5)``. Here:

* ``mean``, ``std`` and ``exceedance`` get their leave-one-out estimates in closed form, O(n):
  the same ``a`` as the literal jackknife (``scipy.stats.bootstrap``'s) up to rounding;
* ``quantile`` and ``tail_mean`` use a grouped jackknife (Efron & Narasimhan 2020, JCGS
  29(3):608-619): the rows are split at random into ``m = 100`` groups (fewer for n < 200, at
  least 2 rows each), each group is left out in turn, and ``a`` uses the ``m`` delete-group
  estimates in the same formula, averaged over 20 random groupings. Leaving out a single row moves
  a sample quantile only between neighbouring order statistics (for even n the leave-one-out
  median takes two values), which makes the ordinary jackknife's ``a`` meaningless; leaving out a
  group of rows does not. Each delete-group estimate is found from the ranks of the group's rows
  in the sorted sample, so the whole estimate costs one sort;
* a callable statistic gets the ordinary jackknife for n <= 2000 and the grouped one above
  (m = 100 groups, 20 groupings), evaluated in batches of bounded memory;
* with frequency weights, ``a = sum p U**3 / (6 sqrt(m) (sum p U**2)**1.5)`` from the
  statistic's empirical influence values ``U`` under the weighted empirical distribution
  (probabilities ``p = w / sum(w)``, ``m = round(sum(w))`` units a resample; derivation: the
  skewness of the linear approximation of the statistic under multinomial resampling of ``m``
  units). For the mean with whole-number weights this is exactly the jackknife of the rows
  repeated; for quantiles it is the smooth value the repeated rows' jackknife cannot give.

When the estimates do not vary (constant data), ``a = 0``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator

import numpy as np

from samplewright.resample.schemes import BATCH_ELEMENTS
from samplewright.resample.statistics import NamedStatistic, evaluate, order_index

__all__ = ["N_GROUPINGS", "N_GROUPS", "PLAIN_JACKKNIFE_MAX_N", "acceleration"]

N_GROUPS = 100
N_GROUPINGS = 20
PLAIN_JACKKNIFE_MAX_N = 2000


def acceleration(
    values: np.ndarray,
    statistic: NamedStatistic | Callable[..., np.ndarray],
    *,
    weights: np.ndarray | None,
    gen: np.random.Generator,
    n_units: int | None = None,
) -> float:
    """The BCa acceleration of ``statistic`` on ``values`` (checked 1-d finite, n >= 2).

    ``weights`` (normalised to sum 1) come with ``n_units``, the size of a resample (default
    ``n``). ``gen`` is used only by the grouped jackknife (to draw the random groups).
    """
    if isinstance(statistic, NamedStatistic):
        if weights is not None:
            m = values.size if n_units is None else n_units
            return _from_influence(statistic.influence(values, weights), weights, m)
        if statistic.name in ("quantile", "tail_mean"):
            return _grouped_order_statistic(statistic, values, gen)
        return _from_deletions(_leave_one_out(statistic, values))
    if values.size <= PLAIN_JACKKNIFE_MAX_N:
        return _from_deletions(np.concatenate(list(_plain_jackknife(statistic, values))))
    return _grouped_callable(statistic, values, gen)


def _from_deletions(theta: np.ndarray) -> float:
    """``a`` from leave-one-out (or leave-group-out) estimates ``theta``."""
    d = theta.mean() - theta
    ss = float(d @ d)
    scale = float(np.max(np.abs(theta))) if theta.size else 0.0
    if ss == 0.0 or math.sqrt(ss) <= 64 * np.finfo(float).eps * scale * math.sqrt(theta.size):
        return 0.0
    return float(np.sum(d**3) / (6.0 * ss**1.5))


def _from_influence(u: np.ndarray, p: np.ndarray, n_units: int) -> float:
    """``a`` from influence values ``u`` (weighted mean 0) under probabilities ``p``."""
    m2 = float(p @ (u * u))
    if m2 <= (64 * np.finfo(float).eps * float(np.max(np.abs(u)))) ** 2:
        return 0.0
    return float((p @ u**3) / (6.0 * math.sqrt(n_units) * m2**1.5))


def _leave_one_out(stat: NamedStatistic, x: np.ndarray) -> np.ndarray:
    """Closed-form leave-one-out estimates of mean, std and exceedance."""
    n = x.size
    if stat.name == "mean":
        # centred first: only the differences matter and they keep full precision
        return -(x - x.mean()) / (n - 1)
    if stat.name == "exceedance":
        above = (x > stat.parameter).astype(np.float64)
        return (above.sum() - above) / (n - 1)
    d = x - x.mean()
    ss = float(d @ d)
    # removing x_i moves the mean by -d_i/(n-1) and the sum of squares by -d_i**2 n/(n-1)
    return np.sqrt(np.maximum(ss - d * d * (n / (n - 1)), 0.0) / (n - 1))


def _n_groups(n: int, limit: int) -> int:
    return max(2, min(limit, n // 2))


def _groupings(n: int, n_groups: int, gen: np.random.Generator) -> Iterator[list[np.ndarray]]:
    """Random partitions of ``range(n)`` into ``n_groups`` groups, as blocks of equal size."""
    size, extra = divmod(n, n_groups)
    for _ in range(N_GROUPINGS):
        perm = gen.permutation(n)
        cut = extra * (size + 1)
        blocks = [perm[:cut].reshape(extra, size + 1), perm[cut:].reshape(n_groups - extra, size)]
        yield [b for b in blocks if b.size]


def _grouped_order_statistic(
    stat: NamedStatistic, x: np.ndarray, gen: np.random.Generator
) -> float:
    """Grouped-jackknife ``a`` of a quantile or tail mean, from ranks in the sorted sample."""
    n, p = x.size, stat.parameter
    ys = np.sort(x)
    # suffix[k] = ys[k] + ... + ys[n-1], summed from the top for accuracy; suffix[n] = 0
    suffix = np.append(np.cumsum(ys[::-1])[::-1], 0.0)
    total = 0.0
    # a random partition of the rows is a random partition of their ranks
    for blocks in _groupings(n, _n_groups(n, N_GROUPS), gen):
        theta = []
        for block in blocks:
            ranks = np.sort(block, axis=1)
            g = ranks.shape[1]
            kept = n - g
            j = order_index(kept, p)
            # r = rank of the j-th kept value: j plus the left-out ranks before it
            r = j + np.count_nonzero(ranks - np.arange(g) <= j, axis=1)
            if stat.name == "quantile":
                theta.append(ys[r])
                continue
            left_out_above = np.where(ranks > r[:, None], ys[ranks], 0.0).sum(axis=1)
            beyond = suffix[r + 1] - left_out_above
            theta.append(((j + 1 - kept * p) * ys[r] + beyond) / (kept * (1 - p)))
        total += _from_deletions(np.concatenate(theta))
    return total / N_GROUPINGS


def _rows_per_chunk(n: int) -> int:
    return max(1, BATCH_ELEMENTS // max(n, 1))


def _plain_jackknife(statistic: Callable[..., np.ndarray], x: np.ndarray) -> Iterator[np.ndarray]:
    """Leave-one-out estimates of a callable, a bounded number of rows at a time."""
    n = x.size
    keep = np.arange(n - 1)
    step = _rows_per_chunk(n)
    for start in range(0, n, step):
        left_out = np.arange(start, min(start + step, n))
        idx = keep + (keep >= left_out[:, None])
        yield evaluate(statistic, x[idx])


def _grouped_callable(
    statistic: Callable[..., np.ndarray], x: np.ndarray, gen: np.random.Generator
) -> float:
    """Grouped-jackknife ``a`` of a callable statistic."""
    n = x.size
    step = _rows_per_chunk(n)
    total = 0.0
    for blocks in _groupings(n, _n_groups(n, N_GROUPS), gen):
        theta = []
        for block in blocks:
            g = block.shape[1]
            for start in range(0, block.shape[0], step):
                rows = block[start : start + step]
                keep = np.ones((rows.shape[0], n), dtype=bool)
                keep[np.arange(rows.shape[0])[:, None], rows] = False
                idx = np.nonzero(keep)[1].reshape(rows.shape[0], n - g)
                theta.append(evaluate(statistic, x[idx]))
        total += _from_deletions(np.concatenate(theta))
    return total / N_GROUPINGS
