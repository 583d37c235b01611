"""The batched replicate engine of a parametric bootstrap: simulate, refit, evaluate.

A parametric bootstrap draws ``n_resamples`` replicate samples of ``size`` values from a fitted
model, refits the model to each and evaluates some statistics of the refit (goodness-of-fit
statistics, parameters, quantiles). :func:`parametric_replicates` does the bookkeeping once for
every such use: replicates are simulated in batches of at most ``batch`` values (bounding
memory), a batch is evaluated all at once where the caller offers a vectorised evaluation
(batched refits, :mod:`samplewright.fitting.batch_fits`), else row by row, and a row whose refit
fails is recorded as failed (its statistics NaN) instead of stopping the run.

A vectorised evaluation may decline single rows by answering NaN for them; those rows are then
evaluated one by one like any other, so a refit that fails is recorded the same way whichever
path the row took.

Randomness: one Generator (from ``rng``) simulates every batch in order, on the calling thread,
so the same seed and ``batch`` give the same replicates whatever the number of ``workers``; what
is simulated, and how, is the caller's ``simulate``. With ``workers > 1`` batches are evaluated
in that many threads while the next batch is simulated (numpy and scipy's array functions
release the GIL): the evaluation callables must not share mutable state.
"""

from __future__ import annotations

import math
import os
from collections import deque
from collections.abc import Callable
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from samplewright.core.errors import FitError, MethodError
from samplewright.core.randomness import SeedLike, make_rng

__all__ = ["DEFAULT_BATCH", "MIN_BATCHES", "ReplicatesResult", "parametric_replicates"]

DEFAULT_BATCH = 1 << 20  # replicate values held in memory at once
MIN_BATCHES = 4  # replicates are split into at least this many batches (when there are enough)

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
    n_batched : int
        Replicates evaluated by the vectorised evaluation (the others row by row).
    """

    values: np.ndarray
    n_failed: int
    n_batched: int = 0


def _rows_per_batch(size: int, n_resamples: int, batch: int) -> int:
    """Replicates a batch: at most ``batch`` values, and at least :data:`MIN_BATCHES` batches
    when there are that many replicates (so that workers have batches to share)."""
    return max(1, min(batch // size, math.ceil(n_resamples / MIN_BATCHES)))


def _evaluate(
    sims: np.ndarray,
    out: np.ndarray,
    evaluate: EvaluateRow,
    evaluate_batch: EvaluateBatch | None,
    failures: tuple[type[Exception], ...],
) -> tuple[int, int]:
    """Fill ``out`` (rows of this batch) and return (failed, evaluated by the batch path)."""
    whole = None if evaluate_batch is None else evaluate_batch(sims)
    if whole is None:
        todo = np.arange(sims.shape[0])
        batched = 0
    else:
        whole = np.asarray(whole, dtype=np.float64)
        out[:] = whole
        todo = np.flatnonzero(np.isnan(whole).any(axis=1))  # declined rows
        batched = sims.shape[0] - todo.size
    failed = 0
    for j in todo:
        try:
            out[j] = evaluate(np.asarray(sims[j], dtype=np.float64))
        except failures:
            out[j] = np.nan
            failed += 1
    return failed, batched


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
    workers: int | None = None,
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
        Largest number of replicate values simulated at once (at least one replicate a batch);
        replicates are also split into at least :data:`MIN_BATCHES` batches when there are
        that many.
    evaluate_batch : callable, optional
        A whole batch ``(b, size)`` -> ``(b, n_statistics)`` at once, or None where it cannot
        (the rows are then evaluated one by one). A row with a NaN in its answer is declined:
        it is evaluated by ``evaluate``.
    failures : tuple of exception types
        What a failed refit raises.
    workers : int, optional
        Threads evaluating batches while the next one is simulated; default 2 (1 on a single
        core) when ``evaluate_batch`` is given, else 1 (a row loop holds the GIL). The results
        do not depend on it.

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
    rows = _rows_per_batch(size, n_resamples, batch)
    if workers is None:
        workers = min(2, os.cpu_count() or 1) if evaluate_batch is not None else 1
    failed = batched = 0
    if workers <= 1:
        for start in range(0, n_resamples, rows):
            b = min(rows, n_resamples - start)
            f, k = _evaluate(
                simulate((b, size), gen), res[start : start + b], evaluate, evaluate_batch, failures
            )
            failed, batched = failed + f, batched + k
        return ReplicatesResult(res, failed, batched)
    pending: deque[Future[tuple[int, int]]] = deque()
    with ThreadPoolExecutor(max_workers=workers) as pool:
        try:
            for start in range(0, n_resamples, rows):
                b = min(rows, n_resamples - start)
                sims = simulate((b, size), gen)
                pending.append(
                    pool.submit(
                        _evaluate, sims, res[start : start + b], evaluate, evaluate_batch, failures
                    )
                )
                while len(pending) > workers:  # bound the batches held in memory
                    f, k = pending.popleft().result()
                    failed, batched = failed + f, batched + k
            while pending:
                f, k = pending.popleft().result()
                failed, batched = failed + f, batched + k
        finally:
            for fut in pending:
                fut.cancel()
    return ReplicatesResult(res, failed, batched)
