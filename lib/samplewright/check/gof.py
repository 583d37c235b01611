"""Goodness of fit of a fitted family, with parametric-bootstrap p-values.

Statistics (keys of every ``statistics`` / ``pvalues`` dict, in this order):

- ``ks``: Kolmogorov–Smirnov ``D = sup |F_n(x) - F(x)|``;
- ``ad``: Anderson–Darling ``A² = N ∫ (F_n - F)² / (F (1 - F)) dF``;
- ``cvm``: Cramér–von Mises ``W² = N ∫ (F_n - F)² dF``;

with ``F`` the fitted CDF, ``F_n`` the (frequency-weighted) empirical CDF and ``N`` the total
weight. For continuous families the integrals are evaluated exactly for a step ``F_n``, so tied
values and weights are handled; without ties and weights they equal the textbook sums. Values
whose fitted CDF is exactly 0 or 1 (a bound fitted at the smallest or largest value) are moved
``1e-12`` inside; every bootstrap replicate gets the same treatment.

For discrete families ``D`` is the supremum over the integers of ``|F_n - F|`` (both are step
functions) and ``A²``, ``W²`` are the discrete versions of Choulakian, Lockhart & Stephens
(1994, Canadian Journal of Statistics 22): ``W² = N Σ_k Z_k² p_k`` and
``A² = N Σ_k Z_k² p_k / (F(k)(1 - F(k)))`` with ``Z_k = F_n(k) - F(k)``, ``p_k`` the fitted
probability of ``k``, summed over the integers where ``F`` rises from 1e-12 to 1 - 1e-12 and
over the data's range.

p-values come from a parametric bootstrap that refits the family to every replicate (the
parameters were estimated, so classical tables do not apply): ``B`` replicates of size
``round(N)`` are drawn from the fitted family, refitted with the same options, and
``p = (1 + #{T* >= T}) / (1 + B_ok)`` over the ``B_ok = B - n_failed`` replicates whose refit
succeeded. A failed refit (the fit refused the replicate, or its statistics are not finite) is
reported in ``n_failed`` and left out: counting it as exceeding would floor the p-value at
``n_failed / (B + 1)`` whatever the data say. The null distribution is then the one of the
replicates that can be refitted, which is the right one when failures are rare; when more than
:data:`MAX_FAILED_SHARE` (10%) of the refits fail, ``reliable`` is False and the p-values should
not be trusted (a 3-parameter family near its boundary, a negative binomial on near-Poisson
counts); with every refit failed they are NaN.

Recorded values (a recording resolution ``h``, :mod:`samplewright.check.resolution`): continuous
data written down to a grid (whole hours, cents) have ties, and a continuous family would be
rejected for them alone. With ``resolution="detect"`` (the default) the grid is found from the
data and every replicate of a continuous family is rounded to it
(:func:`~samplewright.check.resolution.snap_to_grid`, kept inside the fitted support) before it
is refitted and tested, exactly as the data were, so the null distribution is honest for
recorded data. The fit itself treats the recorded values as exact. Replicates of discrete
families are never rounded. Replicates of normal, and of lognormal, exponential, gamma, weibull,
inverse_gaussian and rayleigh with a fixed location, are refitted for a whole batch at once
(:mod:`samplewright.fitting.batch_fits`; a replicate it declines gets the checked refit); the
others one by one (the replicate engine is
:func:`samplewright.resample.replicates.parametric_replicates`). Randomness comes only from
the ``rng`` argument (a numpy Generator or anything
:func:`~samplewright.core.randomness.make_rng` accepts); the same seed and ``batch`` give the
same p-values.
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal, get_args

import numpy as np

from samplewright.check.resolution import recording_resolution, snap_to_grid
from samplewright.core.checks import check_sample
from samplewright.core.errors import MethodError
from samplewright.core.randomness import SeedLike
from samplewright.distributions.families import Family, get_family
from samplewright.fitting.batch_fits import refit_cdf_rows, sorted_replicate_rows
from samplewright.fitting.catalog import CATALOG
from samplewright.fitting.mle import FamilyFitResult, fit_family
from samplewright.resample.replicates import DEFAULT_BATCH, parametric_replicates

__all__ = [
    "GoodnessOfFitResult",
    "MAX_FAILED_SHARE",
    "Resolution",
    "STATISTICS",
    "Statistic",
    "check_count",
    "edf_statistics",
    "goodness_of_fit",
]

# EDF statistics, in the order of every statistics / pvalues dict
Statistic = Literal["ks", "ad", "cvm"]
STATISTICS: tuple[Statistic, ...] = get_args(Statistic)
_EPS = 1e-12
# share of failed refits above which bootstrap p-values are flagged unreliable
MAX_FAILED_SHARE = 0.10
# a recording resolution: found from the data ("detect"), given, or none (None)
Resolution = float | Literal["detect"] | None


@dataclass(frozen=True)
class GoodnessOfFitResult:
    """Fit of one family with its EDF statistics and parametric-bootstrap p-values.

    Attributes
    ----------
    family, params, loglik, aic, bic
        The maximum-likelihood fit to the data.
    statistics : dict
        ``ks``, ``ad``, ``cvm`` of the data against the fitted CDF.
    pvalues : dict
        Same keys: bootstrap p-values ``(1 + #{T* >= T}) / (1 + n_resamples - n_failed)`` over
        the replicates whose refit succeeded (NaN when none did).
    n_resamples : int
        Number of bootstrap replicates drawn.
    n_failed : int
        Replicates whose refit failed (left out of the p-values).
    n_params : int
        Number of estimated parameters.
    reliable : bool
        At most :data:`MAX_FAILED_SHARE` of the refits failed.
    resolution : float or None
        The grid the replicates were rounded to (None: not rounded).
    """

    family: str
    params: dict[str, float]
    statistics: dict[str, float]
    pvalues: dict[str, float]
    n_resamples: int
    loglik: float
    aic: float
    bic: float
    n_failed: int = 0
    n_params: int = 0
    reliable: bool = True
    resolution: float | None = None


# ---------------------------------------------------------------------------------------------
# statistics


@functools.lru_cache(maxsize=16)
def _rank_terms(n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """``i / n``, ``(i - 1) / n``, ``2 i - 1`` and ``(2 i - 1) / (2 n)`` for ``i = 1 .. n``.

    Read-only, computed once per size (the bootstrap evaluates one size many times).
    """
    i = np.arange(1, n + 1)
    terms = (i / n, (i - 1) / n, 2 * i - 1, (2 * i - 1) / (2.0 * n))
    for t in terms:
        t.flags.writeable = False
    return terms


def _sorted_stats(u: np.ndarray) -> np.ndarray:
    """KS, AD and CvM for rows of sorted CDF values ``u`` (shape (b, n), no weights).

    With ``d = u - (2i - 1) / 2n``: ``KS = max(max(-d), max(d)) + 1 / 2n`` and
    ``CvM = 1 / 12n + sum(d^2)``; AD pairs ``log(1 - u_i)`` with the weight ``2(n - i) + 1``
    instead of reversing ``u`` (the same sum; the bootstrap's hot loop, so computed in place).
    """
    n = u.shape[-1]
    u = np.clip(u, _EPS, 1.0 - _EPS)
    _, _, odd, mid = _rank_terms(n)
    d = u - mid
    ks = np.maximum(-d.min(axis=-1), d.max(axis=-1)) + 0.5 / n
    cvm = 1.0 / (12 * n) + np.einsum("...i,...i->...", d, d)
    np.log(u, out=d)
    d *= odd
    np.subtract(1.0, u, out=u)  # exact for u >= 1/2, else off by <= 2^-53: log1p not needed
    np.log(u, out=u)
    u *= odd[::-1]
    d += u
    ad = -n - d.sum(axis=-1) / n
    return np.stack([ks, ad, cvm], axis=-1)


def _step_stats(u: np.ndarray, cw: np.ndarray) -> np.ndarray:
    """KS, AD, CvM of distinct sorted values: CDF ``u``, weights ``cw`` (exact integrals)."""
    total = float(np.sum(cw))
    u = np.clip(u, _EPS, 1.0 - _EPS)
    c = np.cumsum(cw) / total
    c_left = np.concatenate([[0.0], c[:-1]])
    ks = float(max(np.max(np.abs(c - u)), np.max(np.abs(c_left - u))))
    cm, a, b = c[:-1], u[:-1], u[1:]
    ad = total * float(
        -1.0
        - np.log1p(-u[0])
        - np.log(u[-1])
        + np.sum(cm**2 * np.log(b / a) + (1 - cm) ** 2 * (np.log1p(-a) - np.log1p(-b)))
    )
    cvm = total * float(
        u[0] ** 3 / 3 + (1 - u[-1]) ** 3 / 3 + np.sum(((cm - a) ** 3 - (cm - b) ** 3) / 3)
    )
    return np.array([ks, ad, cvm])


def _discrete_stats(x: np.ndarray, w: np.ndarray, dist: Any) -> np.ndarray:
    """KS, AD, CvM of integer data against a discrete scipy distribution (see module notes)."""
    lo = int(min(x.min(), dist.ppf(_EPS)))
    hi = int(max(x.max(), dist.ppf(1.0 - _EPS)))
    k = np.arange(lo, hi + 1)
    total = float(np.sum(w))
    fn = np.cumsum(np.bincount((x - lo).astype(np.int64), weights=w, minlength=k.size)) / total
    h = dist.cdf(k)
    p = dist.pmf(k)
    z = fn - h
    ks = float(np.max(np.abs(z)))
    hh = h * (1.0 - h)
    keep = hh > _EPS
    ad = total * float(np.sum(z[keep] ** 2 * p[keep] / hh[keep]))
    cvm = total * float(np.sum(z * z * p))
    return np.array([ks, ad, cvm])


def _data_stats(
    family: Family, params: Mapping[str, float], x: np.ndarray, w: np.ndarray
) -> np.ndarray:
    dist = family.bound(params)
    if family.discrete:
        return _discrete_stats(x, w, dist)
    vals, inv = np.unique(x, return_inverse=True)
    return _step_stats(np.asarray(dist.cdf(vals), dtype=np.float64), np.bincount(inv, weights=w))


def edf_statistics(
    values: Any, family: str, params: Mapping[str, float], *, weights: Any = None
) -> dict[str, float]:
    """EDF statistics ``ks``, ``ad``, ``cvm`` of ``values`` against ``family(params)``.

    No p-values: the parameters are taken as given. See :func:`goodness_of_fit`.

    >>> s = edf_statistics([0.1, 0.5, 0.9], "uniform", {"lower": 0.0, "upper": 1.0})
    >>> round(s["ks"], 6), round(s["cvm"], 6)
    (0.233333, 0.036667)
    """
    fam = get_family(family)
    sample = check_sample(values, weights, what=family)
    x, w = sample.values, sample.weights_or_ones()
    return dict(zip(STATISTICS, (float(v) for v in _data_stats(fam, params, x, w)), strict=True))


# ---------------------------------------------------------------------------------------------
# bootstrap


def _closed_form_u(name: str, sims: np.ndarray, options: Mapping[str, Any]) -> np.ndarray | None:
    """Fitted CDF values of each replicate row, sorted, refitted for the whole batch at once
    (rows of NaN where the batch refit declines: the checked refit decides), or None."""
    return refit_cdf_rows(name, sims, options=options)


def _bootstrap(
    family: Family,
    out: FamilyFitResult,
    m: int,
    n_resamples: int,
    batch: int,
    rng: SeedLike,
    options: Mapping[str, Any],
    resolution: float | None = None,
) -> tuple[np.ndarray, int]:
    """Statistics of ``n_resamples`` replicates of ``m`` values from the fit ``out`` (rows of NaN
    where the refit failed) and the number of failed refits; replicates are rounded to
    ``resolution`` when one is given."""
    ones = np.ones(m)
    lower, upper = (float(e) for e in family.bound(out.params).support())

    def simulate(shape: tuple[int, int], gen: np.random.Generator) -> np.ndarray:
        if resolution is None:  # drawn already sorted where offered (not for rounded ones)
            rows = sorted_replicate_rows(family.name, out.params, shape, options=options, rng=gen)
            if rows is not None:
                return rows
        sims = family.draw(out.params, shape, gen)
        if resolution is None:
            return sims
        return snap_to_grid(sims, resolution, lower, upper)

    def closed_form(sims: np.ndarray) -> np.ndarray | None:
        u = None if family.discrete else _closed_form_u(family.name, sims, options)
        if u is None:
            return None
        with np.errstate(all="ignore"):
            return _sorted_stats(u)  # rows come sorted

    def refit(row: np.ndarray) -> np.ndarray:
        fit = fit_family(family.name, row, **options)
        dist = family.bound(fit.params)
        if family.discrete:
            return _discrete_stats(row, ones, dist)
        cdf = np.asarray(dist.cdf(np.sort(row)), dtype=np.float64)
        return _sorted_stats(cdf[None, :])[0]

    reps = parametric_replicates(
        simulate,
        refit,
        size=m,
        n_resamples=n_resamples,
        n_statistics=len(STATISTICS),
        rng=rng,
        batch=batch,
        evaluate_batch=closed_form,
    )
    return reps.values, reps.n_failed


def check_count(value: Any, name: str, least: int) -> int:
    """``value`` as an int >= ``least``; MethodError naming ``name`` otherwise."""
    if isinstance(value, bool) or not isinstance(value, int | np.integer) or value < least:
        raise MethodError(f"{name}: expected an int >= {least}, found {value!r}")
    return int(value)


def goodness_of_fit(
    values: Any,
    family: str,
    *,
    n_resamples: int = 199,
    rng: SeedLike = None,
    weights: Any = None,
    batch: int | None = None,
    resolution: Resolution = "detect",
    **fit_options: Any,
) -> GoodnessOfFitResult:
    """Fit ``family`` to ``values`` and test the fit by a parametric bootstrap.

    Parameters
    ----------
    values : array_like
        1-d finite data.
    family : str
        A family name (see :mod:`samplewright.distributions.families`).
    n_resamples : int, default 199
        Bootstrap replicates ``B``; the smallest attainable p-value is ``1 / (B + 1)``.
    rng : None, int, SeedSequence or Generator
        Source of randomness; pass a seed for reproducible p-values.
    weights : array_like, optional
        Frequency weights; replicates then have ``round(sum(weights))`` values.
    batch : int, optional
        Largest number of replicate values held in memory at once (default 2**20).
    resolution : "detect", float or None
        Grid the data were recorded on, to which every replicate of a continuous family is
        rounded (module docstring): ``"detect"`` (default) finds it from the data
        (:func:`~samplewright.check.resolution.recording_resolution`), a positive number gives
        it, None turns rounding off.
    **fit_options
        Options of the family's fit (e.g. ``loc``), used for the data and every replicate.

    Returns
    -------
    GoodnessOfFitResult

    Examples
    --------
    >>> x = np.random.default_rng(1).normal(10.0, 2.0, 50)
    >>> res = goodness_of_fit(x, "normal", n_resamples=99, rng=2)
    >>> sorted(res.pvalues) == sorted(STATISTICS), 0.01 <= res.pvalues["ad"] <= 1.0
    (True, True)
    """
    fam = get_family(family)
    sample = check_sample(values, weights, what=family)
    x, w = sample.values, sample.weights_or_ones()
    n_resamples = check_count(n_resamples, "n_resamples", 1)
    batch = DEFAULT_BATCH if batch is None else check_count(batch, "batch", 1)
    out = fit_family(family, x, w, **fit_options)
    observed = _data_stats(fam, out.params, x, w)
    m = int(round(float(np.sum(w))))
    min_obs = CATALOG[family].min_obs
    if m < min_obs:
        raise MethodError(f"weights: replicates would have {m} values; {family} needs {min_obs}")
    step = None if fam.discrete else _resolution(resolution, x, w)
    null, _ = _bootstrap(fam, out, m, n_resamples, batch, rng, fit_options, step)
    # a row with a non-finite statistic is a failed refit (its row is NaN)
    ok = np.all(np.isfinite(null), axis=1)
    n_ok = int(np.count_nonzero(ok))
    failed = n_resamples - n_ok
    # T* >= T up to rounding (a replicate equal to the data must count)
    exceed = np.sum(null[ok] >= observed * (1.0 - 1e-12), axis=0)
    pvalues = (1.0 + exceed) / (1.0 + n_ok) if n_ok else np.full(len(STATISTICS), np.nan)
    return GoodnessOfFitResult(
        family=family,
        params=dict(out.params),
        statistics=dict(zip(STATISTICS, map(float, observed), strict=True)),
        pvalues=dict(zip(STATISTICS, map(float, pvalues), strict=True)),
        n_resamples=n_resamples,
        loglik=out.loglik,
        aic=out.aic,
        bic=out.bic,
        n_failed=failed,
        n_params=out.n_params,
        reliable=n_ok > 0 and failed <= MAX_FAILED_SHARE * n_resamples,
        resolution=step,
    )


def _resolution(resolution: Any, x: np.ndarray, w: np.ndarray) -> float | None:
    """The grid replicates are rounded to: detected, given (checked) or None."""
    if resolution is None:
        return None
    if isinstance(resolution, str) and resolution == "detect":
        return recording_resolution(x, w).step
    if (
        isinstance(resolution, bool)
        or not isinstance(resolution, int | float | np.number)
        or not np.isfinite(resolution)
        or not resolution > 0
    ):
        raise MethodError(
            f"resolution: expected 'detect', a positive number or None, found {resolution!r}"
        )
    return float(resolution)
