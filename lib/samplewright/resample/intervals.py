"""Bootstrap confidence intervals: percentile, basic and BCa, in bounded memory.

:func:`bootstrap_interval` draws ``n_resamples`` resamples through an index scheme
(:mod:`samplewright.resample.schemes`), evaluates the statistic on a batch of resamples at a time
and turns the bootstrap distribution into an interval:

* ``percentile``: the ``alpha`` and ``1 - alpha`` quantiles of the distribution;
* ``basic``: ``2 t - q(1 - alpha)``, ``2 t - q(alpha)`` (the "reverse percentile" interval);
* ``bca``: the quantiles at ``Phi(z0 + (z0 + z) / (1 - a (z0 + z)))`` for ``z = +-z_alpha``,
  with the bias correction ``z0 = Phi^-1(share of the distribution below t, ties counted half)``
  and the acceleration ``a`` of :mod:`samplewright.resample.acceleration` (Efron & Tibshirani
  1993, *An Introduction to the Bootstrap*, ch. 14).

Quantiles of the bootstrap distribution are numpy's default linear interpolation and ``z0``
counts ties as half, as ``scipy.stats.bootstrap`` (1.17) does, so on the same resamples the
intervals are the same. Unweighted ``iid`` resamples with an integer seed are even the same
resamples as scipy's (both draw ``rng.integers(0, n, (batch, n))``).

Weights are frequency weights, as everywhere in samplewright (``fit``, ``fit_replicates``, the
CLI's ``--weights``): a row of weight 3 is three observations. A resample draws
``m = round(sum(weights))`` units, a multinomial count per row
(:meth:`~samplewright.resample.schemes.IIDScheme.count_batches`), and the statistic is evaluated
on the counts, so whole-number weights give the bootstrap of the rows repeated
(``np.repeat(values, weights)``) in O(n) per resample however large the counts are. Fractional
weights keep the rule (the resample has the rounded total size); rows of weight 0 are dropped.
A callable statistic sees each resample as its units, so it needs whole-number weights.

Tail statistics from few observations beyond their level get a
:class:`~samplewright.resample.guards.SparseTailWarning`, kept in the result's ``warnings``;
``exceedance:v`` with no value above ``v`` (or all) is refused; interval ends are clipped to the
statistic's range (:mod:`samplewright.resample.guards`).

BCa needs independent resamples: with a block scheme use ``percentile`` or ``basic`` (a
MethodError says so). The bootstrap distribution is kept in the result (8 bytes a resample);
everything else is bounded by the batch, about 2**23 values when ``batch`` is None (one array of
indices and one reused array of values): ``n = 1e6`` rows with 9,999 BCa resamples of the mean
peaked at 245 MB (process RSS). Time at that size goes to drawing the 1e10 indices and gathering
the values (355 s, about 35 ns a value, on two cores shared with other jobs), not to the
interval: BCa's acceleration is O(n). A terminal shows the progress of the resamples
(:mod:`samplewright.core.progress`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from scipy.special import ndtr, ndtri

from samplewright.core.errors import InputDataError, MethodError
from samplewright.core.progress import progress
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.resample.acceleration import acceleration
from samplewright.resample.block_length import optimal_block_length, resolve_block_length
from samplewright.resample.guards import clip_interval, refuse_constant_exceedance, tail_warning
from samplewright.resample.schemes import (
    SCHEMES,
    IIDScheme,
    SchemeName,
    check_count,
    check_values,
    make_scheme,
)
from samplewright.resample.statistics import NamedStatistic, evaluate, parse_statistic

__all__ = [
    "METHODS",
    "BootstrapIntervalResult",
    "IntervalMethod",
    "bias_correction",
    "bootstrap_distribution",
    "bootstrap_interval",
    "check_level",
    "interval_from_distribution",
]

IntervalMethod = Literal["percentile", "basic", "bca"]
METHODS: tuple[IntervalMethod, ...] = ("percentile", "basic", "bca")


@dataclass(frozen=True)
class BootstrapIntervalResult:
    """A bootstrap confidence interval and what it was made from.

    Attributes
    ----------
    estimate : float
        The statistic on the data (with the weights, when given).
    low, high : float
        The interval's ends.
    standard_error : float
        Standard deviation of the bootstrap distribution (``ddof=1``).
    method : {"percentile", "basic", "bca"}
        How the interval was formed.
    confidence_level : float
        Two-sided confidence level.
    n_resamples : int
        Number of resamples.
    scheme : {"iid", "moving", "circular", "stationary"}
        The index scheme.
    block_length : float or None
        The block length used (resolved from ``"auto"``), None for ``iid``.
    statistic : str
        The statistic's name, or the callable's ``__name__``.
    bias_correction : float or None
        BCa's ``z0``; None for other methods.
    acceleration : float or None
        BCa's ``a``; None for other methods.
    bootstrap_distribution : numpy.ndarray
        The statistic on every resample, in drawing order.
    warnings : tuple of str
        Why the interval may mislead (each also raised as a
        :class:`~samplewright.resample.guards.SparseTailWarning`); empty when nothing was found.
    """

    estimate: float
    low: float
    high: float
    standard_error: float
    method: IntervalMethod
    confidence_level: float
    n_resamples: int
    scheme: SchemeName
    block_length: float | None
    statistic: str
    bias_correction: float | None
    acceleration: float | None
    bootstrap_distribution: np.ndarray
    warnings: tuple[str, ...] = ()


def bootstrap_interval(
    values: Any,
    statistic: str | Callable[..., Any],
    *,
    method: IntervalMethod = "bca",
    confidence_level: float = 0.95,
    n_resamples: int = 9999,
    scheme: SchemeName = "iid",
    block_length: float | Literal["auto"] | None = None,
    weights: Any = None,
    batch: int | None = None,
    rng: SeedLike = None,
) -> BootstrapIntervalResult:
    """Bootstrap confidence interval of a statistic of one sample.

    Parameters
    ----------
    values : array_like
        One-dimensional finite values (at least 2), in time order for block schemes.
    statistic : str or callable
        A name from :mod:`samplewright.resample.statistics` (``"mean"``, ``"std"``,
        ``"quantile:<p>"``, ``"tail_mean:<p>"``, ``"exceedance:<value>"``) or a vectorised
        callable ``f(sample, axis=-1)`` returning one value per row of a ``(batch, n)`` array.
    method : {"percentile", "basic", "bca"}
        Interval type; ``bca`` needs ``scheme="iid"``.
    confidence_level : float
        Two-sided level, strictly between 0 and 1.
    n_resamples : int
        Number of resamples (at least 2).
    scheme : {"iid", "moving", "circular", "stationary"}
        Index scheme; block schemes keep runs of consecutive rows.
    block_length : float, "auto" or None
        Block length of a block scheme (None for ``iid``); ``"auto"`` takes
        :func:`~samplewright.resample.block_length.optimal_block_length` (its stationary value
        for ``stationary``, its circular value rounded for ``moving`` and ``circular``).
    weights : array_like, optional
        Frequency weights (>= 0, one per value) for ``iid``: a row of weight 3 is three
        observations; a resample draws ``round(sum(weights))`` units. A callable statistic
        needs whole-number weights.
    batch : int, optional
        Resamples evaluated at once; None keeps about 2**23 values per batch.
    rng : None, int, SeedSequence or Generator
        Source of randomness.

    Returns
    -------
    BootstrapIntervalResult

    Warns
    -----
    SparseTailWarning
        Fewer than :data:`~samplewright.resample.guards.MIN_TAIL_COUNTS` observations lie beyond
        a tail statistic's level (the message is also in the result's ``warnings``).

    Examples
    --------
    >>> x = [94.0, 197.0, 16.0, 38.0, 99.0, 141.0, 23.0]
    >>> r = bootstrap_interval(x, "mean", n_resamples=2000, rng=1)
    >>> round(r.estimate, 2), r.method, r.low < r.estimate < r.high
    (86.86, 'bca', True)
    """
    if method not in METHODS:
        raise MethodError(f"method: expected one of {', '.join(METHODS)}, found {method!r}")
    level = check_level(confidence_level)
    n_resamples = check_count(n_resamples, "n_resamples")
    if n_resamples < 2:
        raise MethodError(f"n_resamples: expected at least 2, found {n_resamples}")
    if batch is not None:
        check_count(batch, "batch")
    stat, label = _resolve_statistic(statistic)
    named = stat if isinstance(stat, NamedStatistic) else None
    if scheme not in SCHEMES:
        raise MethodError(f"scheme: expected one of {', '.join(SCHEMES)}, found {scheme!r}")
    if method == "bca" and scheme != "iid":
        raise MethodError(
            f"method: 'bca' needs independent resamples (scheme='iid'), found scheme={scheme!r};"
            " use method='percentile' or 'basic' with block schemes"
        )
    x = check_values(values)
    if weights is not None and scheme == "iid":
        x, weights = _positive_rows(x, weights, whole=named is None)
    if isinstance(block_length, str):
        if block_length != "auto":
            raise MethodError(f"block_length: expected a number or 'auto', found {block_length!r}")
        if scheme == "iid":
            raise MethodError("block_length: scheme 'iid' takes none, found 'auto'")
        block_length = resolve_block_length(optimal_block_length(x), scheme)
    sch = make_scheme(x, scheme=scheme, block_length=block_length, weights=weights)
    w = sch.weights  # None also for weights that are all 1
    gen = make_rng(rng)
    if named is not None:
        refuse_constant_exceedance(named, x, w, level)
        estimate = named.estimate(x, w)
        units = x
    else:
        units = x if w is None else np.repeat(x, w.astype(np.int64))
        estimate = float(evaluate(stat, units[None, :])[0])
    dist = bootstrap_distribution(sch, stat, n_resamples, rng=gen, batch=batch)
    bad = np.count_nonzero(~np.isfinite(dist))
    if bad or not math.isfinite(estimate):
        raise MethodError(
            f"statistic: expected finite values, found {bad} non-finite of {n_resamples}"
            f" resamples (estimate {estimate})"
        )

    z0 = a = None
    if method == "bca":
        z0 = bias_correction(dist, estimate)
        p = None if w is None or named is None else w / w.sum()
        a = acceleration(units, stat, weights=p, gen=gen, n_units=sch.n_units)
    low, high = interval_from_distribution(
        dist, estimate, method=method, confidence_level=level, acceleration=a
    )
    low, high = clip_interval(named, x, low, high)
    message = None if named is None else tail_warning(named, x, w, high)
    return BootstrapIntervalResult(
        estimate=estimate,
        low=low,
        high=high,
        standard_error=float(np.std(dist, ddof=1)),
        method=method,
        confidence_level=level,
        n_resamples=n_resamples,
        scheme=scheme,
        block_length=sch.block_length,
        statistic=label,
        bias_correction=z0,
        acceleration=a,
        bootstrap_distribution=dist,
        warnings=() if message is None else (message,),
    )


def bootstrap_distribution(
    scheme: IIDScheme,
    statistic: Callable[..., Any],
    n_resamples: int,
    *,
    rng: SeedLike = None,
    batch: int | None = None,
) -> np.ndarray:
    """The statistic on ``n_resamples`` resamples drawn by ``scheme``, one batch at a time.

    ``statistic`` is vectorised (``f(sample, axis=-1)``, e.g. a :class:`NamedStatistic`); only
    one ``(batch, n)`` array of indices and one of values exist at a time (the values array is
    reused from batch to batch). With frequency weights a named statistic is evaluated on the
    rows' counts (:meth:`NamedStatistic.weighted`), a callable on the units.

    >>> sch = make_scheme([1.0, 2.0, 3.0, 4.0])
    >>> bootstrap_distribution(sch, np.mean, 3, rng=0).tolist()
    [3.0, 1.25, 3.0]
    """
    dist = np.empty(check_count(n_resamples, "n_resamples"))
    gen = make_rng(rng)
    done = 0
    with progress(dist.size, "resamples") as line:
        if scheme.weights is not None and isinstance(statistic, NamedStatistic):
            for counts in scheme.count_batches(dist.size, gen, batch=batch):
                dist[done : done + counts.shape[0]] = statistic.weighted(scheme.values, counts)
                done += counts.shape[0]
                line.update(done)
            return dist
        buffer: np.ndarray | None = None
        for idx in scheme.index_batches(dist.size, gen, batch=batch):
            if buffer is None:
                buffer = np.empty(idx.shape)
            # into a reused array: no fresh 64 MB to fault in per batch; 'wrap' skips the
            # bounds-checked copy numpy makes for out= (the indices are in range by construction)
            sample = np.take(scheme.values, idx, out=buffer[: idx.shape[0]], mode="wrap")
            if isinstance(statistic, NamedStatistic):
                dist[done : done + idx.shape[0]] = statistic.evaluate_inplace(sample)
            else:
                dist[done : done + idx.shape[0]] = evaluate(statistic, sample)
            done += idx.shape[0]
            line.update(done)
    return dist


def bias_correction(distribution: Any, estimate: float) -> float:
    """BCa's ``z0``: ``Phi^-1`` of the share of the distribution below the estimate (ties half).

    >>> bias_correction([1.0, 2.0, 3.0, 4.0], 2.5)
    0.0
    """
    d = np.asarray(distribution, dtype=np.float64)
    share = (np.count_nonzero(d < estimate) + np.count_nonzero(d <= estimate)) / (2 * d.size)
    return float(ndtri(share))


def interval_from_distribution(
    distribution: Any,
    estimate: float,
    *,
    method: IntervalMethod = "percentile",
    confidence_level: float = 0.95,
    acceleration: float | None = None,
) -> tuple[float, float]:
    """The interval ``(low, high)`` a bootstrap distribution gives, by scipy's conventions.

    ``acceleration`` is needed for ``bca`` only (0 gives the bias-corrected interval).

    >>> interval_from_distribution(np.arange(101.0), 50.0, confidence_level=0.5)
    (25.0, 75.0)
    >>> interval_from_distribution(np.arange(101.0), 40.0, method="basic", confidence_level=0.5)
    (5.0, 55.0)
    """
    if method not in METHODS:
        raise MethodError(f"method: expected one of {', '.join(METHODS)}, found {method!r}")
    level = check_level(confidence_level)
    d = np.asarray(distribution, dtype=np.float64)
    alpha = (1.0 - level) / 2.0
    levels = np.array([alpha, 1.0 - alpha])
    if method == "bca":
        if acceleration is None:
            raise MethodError("acceleration: method 'bca' needs it, found None")
        z0 = bias_correction(d, estimate)
        z = ndtri(levels)
        with np.errstate(invalid="ignore", divide="ignore"):
            stretch = 1.0 - acceleration * (z0 + z)
            levels = ndtr(z0 + (z0 + z) / stretch)
        if not (np.all(np.isfinite(levels)) and np.all(stretch > 0)):
            below = np.count_nonzero(d < estimate)
            raise MethodError(
                f"method: 'bca' is undefined here ({below} of {d.size} bootstrap values below"
                f" the estimate, z0 = {z0}, a = {acceleration}); use method='percentile'"
            )
    low, high = np.quantile(d, levels)
    if method == "basic":
        low, high = 2.0 * estimate - high, 2.0 * estimate - low
    return float(low), float(high)


def check_level(confidence_level: Any) -> float:
    """``confidence_level`` as a float strictly between 0 and 1, or a MethodError."""
    if isinstance(confidence_level, bool) or not isinstance(
        confidence_level, int | float | np.floating
    ):
        raise MethodError(
            f"confidence_level: expected a number in (0, 1), found {confidence_level!r}"
        )
    level = float(confidence_level)
    if not 0.0 < level < 1.0:
        raise MethodError(
            f"confidence_level: expected a number in (0, 1), found {confidence_level!r}"
        )
    return level


def _positive_rows(x: np.ndarray, weights: Any, *, whole: bool) -> tuple[np.ndarray, np.ndarray]:
    """Values and frequency weights without the rows of weight 0 (as ``fit`` drops them);
    ``whole`` demands whole-number weights (a callable statistic sees units)."""
    try:
        w = np.asarray(weights, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputDataError("weights: expected numbers, found non-numeric entries") from None
    if w.shape != x.shape:
        raise InputDataError(
            f"weights: expected {x.size} weights (one per value), found shape {w.shape}"
        )
    bad = np.flatnonzero(~(np.isfinite(w) & (w >= 0)))
    if bad.size:
        raise InputDataError(
            f"weights: expected finite numbers >= 0, found {bad.size} others"
            f" (first at position {bad[0]}: {w[bad[0]]})"
        )
    if whole and not np.all(w == np.round(w)):
        i = int(np.flatnonzero(w != np.round(w))[0])
        raise MethodError(
            "weights: a callable statistic sees each resample as its units, so frequency weights"
            f" must be whole numbers; weight at position {i} is {w[i]!r}"
        )
    keep = w > 0
    if np.count_nonzero(keep) < 2:
        raise InputDataError(
            f"weights: expected at least 2 rows of positive weight, found {np.count_nonzero(keep)}"
        )
    return x[keep], w[keep]


def _resolve_statistic(statistic: Any) -> tuple[NamedStatistic | Callable[..., Any], str]:
    if isinstance(statistic, str):
        named = parse_statistic(statistic)
        return named, named.text
    if callable(statistic):
        return statistic, str(getattr(statistic, "__name__", type(statistic).__name__))
    raise MethodError(
        "statistic: expected a callable or a name (mean, std, quantile:<p>, tail_mean:<p>,"
        f" exceedance:<value>), found {type(statistic).__name__}"
    )
