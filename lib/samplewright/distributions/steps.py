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
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.distributions.base import Size

__all__ = ["draw_indices", "step_cdf", "step_index", "step_mass"]


def step_cdf(atoms: np.ndarray, cum: np.ndarray, x: Any) -> np.ndarray:
    """``F(x)``: ``cum`` at the last atom ``<= x`` (0 below the first).

    >>> step_cdf(np.array([1.0, 2.0, 4.0]), np.array([0.25, 0.75, 1.0]), [0.5, 2.0, 3.0]).tolist()
    [0.0, 0.75, 0.75]
    """
    idx = np.searchsorted(atoms, np.asarray(x, dtype=np.float64), side="right")
    return np.where(idx > 0, cum[np.maximum(idx - 1, 0)], 0.0)


def step_index(cum: np.ndarray, u: np.ndarray) -> np.ndarray:
    """The row each probability ``u`` selects: the first ``i`` with ``cum[i] >= u`` (clipped
    to the last row, for ``u`` above ``cum[-1]`` by rounding).

    >>> step_index(np.array([0.25, 0.75, 1.0]), np.array([0.0, 0.25, 0.26, 1.0])).tolist()
    [0, 0, 1, 2]
    """
    return np.minimum(np.searchsorted(cum, u, side="left"), cum.size - 1)


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
