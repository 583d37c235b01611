"""The batched replicate engine of a parametric bootstrap: simulate, refit, evaluate.

A parametric bootstrap draws ``n_resamples`` replicate samples of ``size`` values from a fitted
model, refits the model to each and evaluates some statistics of the refit (goodness-of-fit
statistics, parameters, quantiles). :func:`parametric_replicates` does the bookkeeping once for
every such use: replicates are simulated in batches of at most ``batch`` values (bounding
memory), a batch is evaluated all at once where the caller offers a vectorised evaluation
(closed-form refits), else row by row, and a row whose refit fails is recorded as failed (its
statistics NaN) instead of stopping the run.

Randomness: one Generator (from ``rng``) simulates every batch in order, so the same seed and
``batch`` give the same replicates; what is simulated, and how, is the caller's ``simulate``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from samplewright.core.errors import FitError, MethodError
from samplewright.core.randomness import SeedLike, make_rng

__all__ = ["DEFAULT_BATCH", "ReplicatesResult", "parametric_replicates"]

DEFAULT_BATCH = 1 << 20  # replicate values held in memory at once

Simulate = Callable[[tuple[int, int], np.random.Generator], np.ndarray]
EvaluateBatch = Callable[[np.ndarray], "np.ndarray | None"]
EvaluateRow = Callable[[np.ndarray], np.ndarray]


@dataclass(frozen=True)
class ReplicatesResult:
    """Statistics of every replicate.

    Attributes
    ----------
    values : numpy.ndarray
        Shape ``(n_resamples, n_statistics)``; a row of NaN where the replicate's refit failed.
    n_failed : int
        Replicates whose refit failed.
    """

    values: np.ndarray
    n_failed: int


def parametric_replicates(
    simulate: Simulate,
    evaluate: EvaluateRow,
    *,
    size: int,
    n_resamples: int,
    n_statistics: int,
    rng: SeedLike = None,
    batch: int = DEFAULT_BATCH,
    evaluate_batch: EvaluateBatch | None = None,
    failures: tuple[type[Exception], ...] = (FitError, MethodError),
) -> ReplicatesResult:
    """Simulate ``n_resamples`` replicates of ``size`` values and evaluate each.

    Parameters
    ----------
    simulate : callable
        ``simulate((b, size), generator)`` returns ``b`` replicates as rows of an array.
    evaluate : callable
        One replicate (1-d) -> its ``n_statistics`` statistics; raising one of ``failures``
        marks the replicate failed.
    size : int
        Values per replicate.
    n_resamples : int
        Number of replicates.
    n_statistics : int
        Statistics per replicate.
    rng : None, int, SeedSequence or Generator
        Source of randomness.
    batch : int
        Largest number of replicate values simulated at once (at least one replicate a batch).
    evaluate_batch : callable, optional
        A whole batch ``(b, size)`` -> ``(b, n_statistics)`` at once, or None where it cannot
        (the rows are then evaluated one by one).
    failures : tuple of exception types
        What a failed refit raises.

    Returns
    -------
    ReplicatesResult

    Examples
    --------
    >>> out = parametric_replicates(
    ...     lambda shape, g: g.normal(0.0, 1.0, shape),
    ...     lambda row: np.array([row.mean()]),
    ...     size=50, n_resamples=4, n_statistics=1, rng=1)
    >>> out.values.shape, out.n_failed
    ((4, 1), 0)
    """
    gen = make_rng(rng)
    res = np.full((n_resamples, n_statistics), np.nan)
    rows = max(1, batch // size)
    failed = 0
    for start in range(0, n_resamples, rows):
        b = min(rows, n_resamples - start)
        sims = simulate((b, size), gen)
        whole = None if evaluate_batch is None else evaluate_batch(sims)
        if whole is not None:
            res[start : start + b] = whole
            continue
        for j in range(b):
            try:
                res[start + j] = evaluate(np.asarray(sims[j], dtype=np.float64))
            except failures:
                failed += 1
    return ReplicatesResult(res, failed)
