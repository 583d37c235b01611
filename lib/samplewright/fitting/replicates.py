"""Parameter uncertainty: refit a method on replicates of the data (:func:`fit_replicates`).

Two kinds of replicate, both refitted by ``fit`` with the same method and options:

* ``nonparametric``: a bootstrap resample of the rows, each row with its censoring flag.
  Unweighted data: ``n`` rows drawn independently and uniformly (the resamples
  :func:`samplewright.resample.intervals.bootstrap_interval` and ``scipy.stats.bootstrap`` draw
  from the same seed). Weighted data: the weights are frequency weights, so a resample draws
  ``m = round(sum(w))`` units, unit of row ``i`` with probability ``w_i / sum(w)``; a row's new
  weight is how often it was drawn (times ``sum(w) / m``, which is 1 for whole-number weights).
  Whole-number weights thus behave exactly like the rows repeated. The counts are those of
  :meth:`samplewright.resample.schemes.IIDScheme.count_batches`, the draws ``bootstrap_interval``
  makes for weighted data from the same seed. Weights that are all 1 are no weights.
* ``parametric``: a sample simulated from the point fit, as large as the data (``n`` values, or
  ``sum(w)`` for whole-number frequency weights; other weights are refused). Censoring is
  reproduced where it was observed: a row censored at ``c`` gives ``min(y, c)``, censored when
  ``y > c``; rows observed exactly have no known censoring time and stay uncensored.

A replicate whose refit fails (a :class:`~samplewright.core.errors.SamplewrightError`, an
arithmetic or linear-algebra error) is not stored but recorded, with its message, in the
ensemble's ``failures`` and counted in ``params["n_failed"]``; warnings a refit raises are
recorded (the first per replicate) instead of being printed once per replicate. The point fit
is made first, by ``fit`` itself, so bad input or options fail at once and warnings of the point
fit reach the caller.

Randomness: one stream from ``rng`` makes every replicate in order; the same ``rng`` gives the
same ensemble (in a pipeline, pass ``stream_rng(root_seed, dataset, "replicates")``).

A terminal shows the progress of the replicate fits (:mod:`samplewright.core.progress`); logs
get nothing.
"""

from __future__ import annotations

import warnings as _warnings
from collections.abc import Iterator
from typing import Any

import numpy as np

from samplewright.core.checks import CheckedSample
from samplewright.core.errors import FitError, MethodError, SamplewrightError
from samplewright.core.progress import progress
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.distributions.base import Sampler
from samplewright.distributions.ensemble import REPLICATIONS, EnsembleSampler, Replication
from samplewright.fitting.api import fit
from samplewright.fitting.registry import check_options, check_sample_for
from samplewright.resample.schemes import IIDScheme

__all__ = ["FIT_FAILURES", "fit_replicates"]

# what a failed replicate fit raises (recorded, not propagated)
FIT_FAILURES: tuple[type[BaseException], ...] = (
    SamplewrightError,
    ArithmeticError,
    np.linalg.LinAlgError,
)
Rows = tuple[np.ndarray, np.ndarray | None, np.ndarray | None]


def fit_replicates(
    values: Any,
    method: str,
    *,
    n_replicates: int = 200,
    kind: Replication = "nonparametric",
    weights: Any = None,
    censored: Any = None,
    rng: SeedLike = None,
    **options: Any,
) -> EnsembleSampler:
    """Fit ``method`` to the data and to ``n_replicates`` replicates of them, as one ensemble.

    Parameters
    ----------
    values : array_like
        1-d finite observations.
    method : str
        A method ``fit`` knows (a family, ``empirical``, ``spliced``, ``kaplan_meier``, ...).
    n_replicates : int
        Replicate fits to attempt (at least 2).
    kind : {"nonparametric", "parametric"}
        Resample the rows, or simulate from the point fit (see the module docstring).
    weights, censored : array_like, optional
        Frequency weights and right-censoring flags, as ``fit`` takes them (where the method
        supports them).
    rng : None, int, SeedSequence or Generator
        Source of randomness.
    **options
        The method's options, used for the point fit and every replicate.

    Returns
    -------
    EnsembleSampler
        The successful replicates, the point fit (``point``) and the record of failures.

    Raises
    ------
    MethodError
        Bad input, an unknown method or option, or weights a parametric replicate cannot use.
    FitError
        Fewer than two replicate fits succeeded.

    Examples
    --------
    >>> x = [3.1, 4.7, 2.2, 8.9, 5.0, 6.3, 3.8, 4.1]
    >>> ens = fit_replicates(x, "lognormal", n_replicates=50, rng=7)
    >>> ens.n_replicates, ens.params["replication"], ens.draw_nested(4, 3, rng=1).shape
    (50, 'nonparametric', (4, 3))
    """
    if isinstance(n_replicates, bool) or not isinstance(n_replicates, int | np.integer):
        raise MethodError(f"n_replicates: expected an int >= 2, found {n_replicates!r}")
    if n_replicates < 2:
        raise MethodError(f"n_replicates: expected an int >= 2, found {n_replicates!r}")
    if kind not in REPLICATIONS:
        raise MethodError(f"kind: expected one of {', '.join(REPLICATIONS)}, found {kind!r}")
    spec = check_options(method, options)
    sample = check_sample_for(spec, values, weights, censored)
    point = fit(sample.values, method, weights=sample.weights, censored=sample.censored, **options)
    gen = make_rng(rng)
    rows = (
        _resampled(sample, int(n_replicates), gen)
        if kind == "nonparametric"
        else _simulated(point, sample, int(n_replicates), gen)
    )
    reps: list[Sampler] = []
    failures: list[dict[str, Any]] = []
    warned: list[dict[str, Any]] = []
    with progress(int(n_replicates), "replicate fits") as line:
        for attempt, (x, w, c) in enumerate(rows):
            line.update(attempt)
            with _warnings.catch_warnings(record=True) as caught:
                _warnings.simplefilter("always")
                try:
                    rep = fit(x, method, weights=w, censored=c, **options)
                except FIT_FAILURES as exc:
                    failures.append({"attempt": attempt, "message": f"{type(exc).__name__}: {exc}"})
                    continue
            if caught:
                warned.append({"attempt": attempt, "message": str(caught[0].message)})
            reps.append(rep)
        line.update(int(n_replicates))
    if len(reps) < 2:
        first = failures[0]["message"] if failures else "none"
        raise FitError(
            f"{method}: {len(reps)} of {n_replicates} replicate fits succeeded, at least 2 are "
            f"needed (first failure: {first})"
        )
    record = {
        "replication": kind,
        "n_requested": int(n_replicates),
        "n_failed": len(failures),
        "n_warned": len(warned),
    }
    return EnsembleSampler(
        reps,
        method=method,
        replication=kind,
        point=point,
        n_requested=int(n_replicates),
        failures=failures,
        warnings=warned,
        diagnostics={**point.diagnostics, "replicates": record},
    )


def _resampled(sample: CheckedSample, n_rep: int, gen: np.random.Generator) -> Iterator[Rows]:
    """Bootstrap resamples of the rows (values, weights, flags), one per replicate."""
    x, w, c = sample.values, sample.weights, sample.censored
    if sample.n < 2:
        raise MethodError(f"values: nonparametric replicates need at least 2 rows, found {x.size}")
    scheme = IIDScheme(x, weights=w)  # frequency weights; weights that are all 1 are none
    if scheme.weights is None:
        for batch in scheme.index_batches(n_rep, gen):
            for idx in batch:
                yield x[idx], None, None if c is None else c[idx]
        return
    scale = float(scheme.weights.sum()) / scheme.n_units
    for batch in scheme.count_batches(n_rep, gen):
        for counts in batch:
            keep = counts > 0
            yield x[keep], counts[keep] * scale, None if c is None else c[keep]


def _simulated(
    point: Sampler, sample: CheckedSample, n_rep: int, gen: np.random.Generator
) -> Iterator[Rows]:
    """Samples simulated from the point fit, censored where the data were."""
    x, w, c = sample.values, sample.weights, sample.censored
    rows = np.arange(x.size)
    if w is not None:
        whole = w == np.round(w)
        if not whole.all():
            i = int(np.flatnonzero(~whole)[0])
            raise MethodError(
                "weights: parametric replicates simulate one value per unit of frequency weight,"
                f" so weights must be whole numbers; weight {i + 1} is {float(w[i])!r}"
            )
        rows = np.repeat(rows, w.astype(np.int64))
    limit = None if c is None else np.where(c[rows], x[rows], np.inf)
    for _ in range(n_rep):
        y = np.asarray(point.draw(rows.size, rng=gen), dtype=np.float64)
        if limit is None:
            yield y, None, None
        else:
            yield np.minimum(y, limit), None, y > limit
