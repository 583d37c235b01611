"""Step CDFs and iid index draws: the shared core of the empirical, pmf and Kaplan–Meier kinds.

A step CDF puts mass on sorted atoms ``a[0] <= a[1] <= ...``; ``cum[i]`` is the CDF just after
``a[i]`` (non-decreasing, ``cum[-1]`` the total mass reached at the last atom). Three samplers are
such a CDF: the (weighted) empirical distribution, the empirical pmf of counts and the
Kaplan–Meier estimate; they and the smoothed sampler (which draws a row, then adds noise) share
the functions here.

One rule for which row a uniform ``u`` selects, everywhere: the **first** ``i`` with
``cum[i] >= u`` (the generalised inverse ``Q(u) = inf{x : F(x) >= u}``), so an index draw is
exactly the inverse transform of the step CDF. An unweighted draw of ``n`` equally likely rows is
``gen.integers(0, n, size)``, which is the same law drawn faster.

Exact levels. ``cum`` is computed in floating point (a cumulative sum of shares, a product of
survival factors), so a level the CDF reaches exactly, such as ``0.8`` for 8 of 10 equal rows,
may be stored one rounding below the probability it stands for (``0.7999999999999999``); compared
strictly, the level would select the next atom. The comparison is therefore
``cum[i] >= u - LEVEL_TOLERANCE`` with :data:`LEVEL_TOLERANCE` ``= 1e-12``: a level within 1e-12
above a step of the CDF counts as that step. 1e-12 is far above the rounding error of the sums
and products these samplers compute (about ``n * 1.1e-16`` for ``n`` terms at worst, and
``sqrt(n) * 1.1e-16`` typically) and far below any step ``1 / n`` of a sample of fewer than
1e12 rows; one tolerance for every table keeps a weighted table and its repeated rows in
agreement. Samplers that can also build ``cum`` so that integer frequency weights give exactly
the numbers of repeated rows (the cumulative *weights* are summed, which is exact for integers,
and divided by the total once).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.distributions.base import Size

__all__ = ["LEVEL_TOLERANCE", "draw_indices", "step_cdf", "step_index", "step_mass"]

# how far above a step of a step CDF a probability level may lie and still select it
LEVEL_TOLERANCE = 1e-12


def step_cdf(atoms: np.ndarray, cum: np.ndarray, x: Any) -> np.ndarray:
    """``F(x)``: ``cum`` at the last atom ``<= x`` (0 below the first).

    >>> step_cdf(np.array([1.0, 2.0, 4.0]), np.array([0.25, 0.75, 1.0]), [0.5, 2.0, 3.0]).tolist()
    [0.0, 0.75, 0.75]
    """
    idx = np.searchsorted(atoms, np.asarray(x, dtype=np.float64), side="right")
    return np.where(idx > 0, cum[np.maximum(idx - 1, 0)], 0.0)


def step_index(cum: np.ndarray, u: np.ndarray) -> np.ndarray:
    """The row each probability ``u`` selects: the first ``i`` with
    ``cum[i] >= u - LEVEL_TOLERANCE`` (clipped to the last row, for ``u`` above ``cum[-1]`` by
    rounding).

    >>> step_index(np.array([0.25, 0.75, 1.0]), np.array([0.0, 0.25, 0.26, 1.0])).tolist()
    [0, 0, 1, 2]
    >>> cum = np.cumsum(np.full(10, 0.1))  # cum[7] is 0.7999999999999999
    >>> step_index(cum, np.array([0.8, 0.9])).tolist()
    [7, 8]
    """
    level = np.asarray(u, dtype=np.float64) - LEVEL_TOLERANCE
    return np.minimum(np.searchsorted(cum, level, side="left"), cum.size - 1)


def step_mass(atoms: np.ndarray, cum: np.ndarray, x: Any) -> np.ndarray:
    """Mass at ``x``: the jump of the step CDF there (tied atoms summed; 0 off the atoms).

    >>> step_mass(np.array([1.0, 2.0, 2.0]), np.array([0.5, 0.75, 1.0]), [2.0, 3.0]).tolist()
    [0.5, 0.0]
    """
    q = np.asarray(x, dtype=np.float64)
    lo = np.searchsorted(atoms, q, side="left")
    hi = np.searchsorted(atoms, q, side="right")
    cum0 = np.concatenate([[0.0], cum])
    return cum0[hi] - cum0[lo]


def draw_indices(
    n: int, size: Size, gen: np.random.Generator, cum: np.ndarray | None = None
) -> np.ndarray:
    """iid row indices in ``0 .. n - 1``: equally likely, or by a step CDF ``cum``.

    Unweighted: ``gen.integers(0, n, size)``. Weighted: :func:`step_index` of
    ``gen.random(size)``, i.e. the inverse transform of the step CDF.

    >>> draw_indices(4, 5, np.random.default_rng(42)).tolist()
    [0, 3, 2, 1, 1]
    """
    if cum is None:
        return gen.integers(0, n, size)
    return step_index(cum, gen.random(size))
