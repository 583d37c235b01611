"""Goodness of fit on incomplete data: a bootstrap that reproduces truncation and censoring.

Statistic. ``D = sup |F_np(x) - F_c(x)|``, the largest distance between the nonparametric
estimate ``F_np`` (the product-limit estimate with entry times when every row is exact or
right-censored, Turnbull's estimate otherwise) and the fitted CDF conditional on what every row
passed, ``F_c(x) = 1 - S(x) / S(t0)``, with ``t0`` the smallest truncation point when every row
is truncated (else no conditioning). ``F_np`` is compared only where the data determine it: at
the ends of the innermost intervals (at an exact value both just before and at it, below the
last finite end); inside an innermost interval it could be anything, so the model is not
faulted there. Without censoring and truncation ``D`` is the Kolmogorov–Smirnov statistic.

p-value. The parameters were estimated, so ``D`` has no table; a parametric bootstrap makes one
by redoing what produced the data (``B = n_resamples`` times): every unit (a row of integer
weight ``k`` is ``k`` units; a row of fractional weight is one unit keeping its weight) is drawn
from the fitted family *conditional on exceeding its row's truncation point*
(``X = S^-1(S(t) V)``, ``V`` uniform), then censored the way its row was:

* a draw above its row's censoring point is right-censored there: a right-censored row's own
  value; for an exact row ``censor_at[i]`` (default ``+inf``: never; pass the policy limits
  when every row had one); none for an interval or left-censored row;
* otherwise an exact row's draw is recorded exactly; when the data hold interval or
  left-censored rows (an inspection scheme), every other row's draw is recorded as the cell
  ``(g_k, g_k+1]`` that holds it, of the grid of all finite ends of those rows and of the
  right-censored rows (below the grid: left-censored, from the smallest lower end if it lies
  below the grid, else from ``-inf``; above it: right-censored at the largest point). With
  common bins (grouped data) this is exactly the data's scheme (pass ``inspection`` when some
  bins held no count and are missing from the rows); with inspection times of each row's own
  it is an approximation.

Each replicate is refitted (:func:`~samplewright.fitting.incomplete.refit_incomplete`, from the
fitted parameters) and its ``D*`` computed against its own nonparametric estimate. Replicates
whose refit fails (refused or not converged) are **left out** and counted in ``n_failed``, with
their messages: ``p = (1 + #{D* >= D}) / (1 + n_ok)`` over the ``n_ok`` successful refits
(NaN if none). Counting failures as exceedances would floor ``p`` at ``n_failed / (B + 1)``;
leaving them out assumes they are unrelated to the fit's quality: check ``n_failed``.
Randomness comes only from ``rng``; the same seed gives the same p-value.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.check.incomplete_reference import (
    incomplete_rows,
    nonparametric_points,
    smallest_truncation,
)
from samplewright.core.errors import FitError, MethodError
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.fitting.incomplete import (
    IncompleteSample,
    fit_incomplete,
    incomplete_sample,
    refit_incomplete,
)
from samplewright.fitting.incomplete_families import SPECS
from samplewright.fitting.interval_api import incomplete_fixed

__all__ = ["IncompleteGofResult", "goodness_of_fit_incomplete", "incomplete_distance"]

_MAX_MESSAGES = 5  # distinct failure messages kept


@dataclass(frozen=True)
class IncompleteGofResult:
    """A family's fit to incomplete data, its distance to the nonparametric estimate, a p-value.

    Attributes
    ----------
    family, params, loglik, aic, bic, n_params
        The maximum-likelihood fit to the data.
    statistic : float
        ``D`` of the data (module docstring).
    pvalue : float
        ``(1 + #{D* >= D}) / (1 + n_ok)`` over successful refits; NaN if none succeeded.
    n_resamples : int
        Replicates drawn.
    n_failed : int
        Replicates whose refit failed (left out of the p-value).
    failures : tuple of str
        Up to five distinct messages of those failures.
    null_distribution : ndarray
        ``D*`` of the successful replicates, in the order drawn.
    estimator : str
        ``"product_limit"`` or ``"turnbull"``.
    conditioned_on : float or None
        ``t0``, the smallest truncation point, when every row is truncated.
    x, cdf_nonparametric, cdf_model : ndarray
        The points where ``D`` compares, the nonparametric CDF there and the fitted
        conditional CDF there (for plots and check summaries).
    replicate_params : tuple of dict
        The parameters refitted to each successful replicate, in the order of
        ``null_distribution``: a parametric bootstrap of the fit (e.g. for intervals of its
        quantiles).
    """

    family: str
    params: dict[str, float]
    loglik: float
    aic: float
    bic: float
    n_params: int
    statistic: float
    pvalue: float
    n_resamples: int
    n_failed: int
    failures: tuple[str, ...]
    null_distribution: np.ndarray
    estimator: str
    conditioned_on: float | None
    x: np.ndarray
    cdf_nonparametric: np.ndarray
    cdf_model: np.ndarray
    replicate_params: tuple[dict[str, float], ...] = ()


# ---------------------------------------------------------------------------------------------
# the statistic


def _conditioning(sample: IncompleteSample) -> float | None:
    return smallest_truncation(sample)


def _model_cdf(family: str, params: dict[str, float], x: np.ndarray, t0: float | None) -> Any:
    spec = SPECS[family]
    kw = spec.kwargs(params)
    with np.errstate(divide="ignore", invalid="ignore"):
        ls = spec.dist.logsf(x, **kw)
        if t0 is not None:
            ls = ls - spec.dist.logsf(t0, **kw)
    return -np.expm1(np.minimum(ls, 0.0))


def incomplete_distance(
    sample: IncompleteSample, family: str, params: dict[str, float]
) -> tuple[float, str, np.ndarray, np.ndarray, np.ndarray]:
    """``D`` of the rows against ``family(params)`` (module docstring).

    Returns ``(D, estimator, x, cdf_nonparametric, cdf_model)``.
    """
    name, x, c, _ = nonparametric_points(sample)
    f = _model_cdf(family, params, x, _conditioning(sample))
    d = float(np.max(np.abs(c - f))) if x.size else 0.0
    return d, name, x, c, f


# ---------------------------------------------------------------------------------------------
# the mechanism


@dataclass(frozen=True)
class _Mechanism:
    """How each unit of a replicate is drawn and recorded (built once from the data)."""

    trunc: np.ndarray  # per unit
    weight: np.ndarray  # per unit
    cap: np.ndarray  # right-censoring point per unit (+inf: never), for exact/right units
    binned: np.ndarray  # unit recorded on the grid
    grid: np.ndarray  # sorted finite ends of interval/left rows
    grid_floor: float  # lower end of a draw below the grid


def _mechanism(sample: IncompleteSample, censor_at: Any, inspection: Any) -> _Mechanism:
    n = sample.n_rows
    lo, hi, w = sample.lower, sample.upper, sample.weights
    exact, right = sample.is_exact, sample.is_right & ~sample.is_exact
    binned = ~exact & ~right
    if censor_at is None:
        cap = np.where(right, lo, np.inf)
    else:
        try:
            cap = np.array(censor_at, dtype=np.float64).reshape(-1)
        except (TypeError, ValueError):
            raise MethodError("censor_at: expected numbers, found values that are not") from None
        if cap.size != n:
            raise MethodError(f"censor_at: expected {n} values (one per row), found {cap.size}")
        bad = right & (cap != lo)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise MethodError(
                f"censor_at: row {i} is right-censored at {float(lo[i])!r} but censor_at gives "
                f"{float(cap[i])!r}; a censored row's censoring point is its value"
            )
        bad = exact & ~(cap >= lo)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise MethodError(
                f"censor_at: row {i} is observed exactly at {float(lo[i])!r}, above its "
                f"censoring point {float(cap[i])!r} (it would have been censored)"
            )
    if binned.any():  # an inspection scheme: right-censored rows are its last inspections
        cap = np.where(binned, np.inf, cap)
        binned = ~exact
    eff = sample.effective_lower
    ends = np.concatenate([eff[binned & np.isfinite(eff)], hi[binned & np.isfinite(hi)]])
    grid = np.unique(ends)
    if inspection is not None:
        grid = _inspection(inspection, grid)
    floor = float(lo[binned].min()) if binned.any() else -np.inf
    if grid.size and floor >= grid[0]:  # the rows start at the grid: below it is (-inf, g0]
        floor = -np.inf
    whole = bool(np.all(w == np.round(w)))
    reps = w.astype(np.int64) if whole else np.ones(n, dtype=np.int64)
    unit_w = np.ones(int(reps.sum())) if whole else w.copy()
    return _Mechanism(
        trunc=np.repeat(sample.truncation, reps),
        weight=unit_w,
        cap=np.repeat(cap, reps),
        binned=np.repeat(binned, reps),
        grid=grid,
        grid_floor=floor,
    )


def _inspection(points: Any, ends: np.ndarray) -> np.ndarray:
    """The given inspection points, checked: finite, and holding every finite end of the rows."""
    try:
        g = np.unique(np.asarray(points, dtype=np.float64).reshape(-1))
    except (TypeError, ValueError):
        raise MethodError("inspection: expected numbers, found values that are not") from None
    if g.size == 0 or not np.all(np.isfinite(g)):
        raise MethodError("inspection: expected finite inspection points, found none or inf/nan")
    missing = np.setdiff1d(ends, g)
    if missing.size:
        raise MethodError(
            f"inspection: the rows have interval end {float(missing[0])!r} that is not an "
            f"inspection point ({missing.size} such ends)"
        )
    return g


def _replicate(
    mech: _Mechanism, family: str, params: dict[str, float], gen: np.random.Generator
) -> IncompleteSample:
    spec = SPECS[family]
    kw = spec.kwargs(params)
    v = gen.random(mech.trunc.size)
    v[v == 0.0] = 0.5  # isf(0) is the upper end of the support; probability 2**-53
    x = np.asarray(spec.dist.isf(spec.dist.sf(mech.trunc, **kw) * v, **kw), dtype=np.float64)
    lower, upper = x.copy(), x.copy()
    if mech.binned.any():
        g = mech.grid
        k = np.searchsorted(g, x[mech.binned], side="left")  # x in (g[k-1], g[k]]
        gl = np.concatenate([[mech.grid_floor], g])
        gu = np.concatenate([g, [np.inf]])
        lower[mech.binned], upper[mech.binned] = gl[k], gu[k]
    cut = x > mech.cap
    lower[cut], upper[cut] = mech.cap[cut], np.inf
    t = mech.trunc
    # a draw above the grid of a row truncated beyond it: censored at its truncation point
    lower = np.where((upper == np.inf) & (lower < t), t, lower)
    rows = np.column_stack([lower, upper, t])
    keys, inverse = np.unique(rows, axis=0, return_inverse=True)
    w = np.bincount(inverse.ravel(), weights=mech.weight, minlength=keys.shape[0])
    return incomplete_sample(keys[:, 0], keys[:, 1], truncation=keys[:, 2], weights=w)


# ---------------------------------------------------------------------------------------------
# the test


def goodness_of_fit_incomplete(
    values: Any,
    family: str,
    *,
    censored: Any = None,
    truncation: Any = None,
    lower: Any = None,
    upper: Any = None,
    weights: Any = None,
    n_resamples: int = 99,
    rng: SeedLike = None,
    censor_at: Any = None,
    inspection: Any = None,
    **options: Any,
) -> IncompleteGofResult:
    """Fit ``family`` to incomplete rows and test it by a bootstrap that redoes the mechanism.

    Parameters
    ----------
    values : array_like, IncompleteSample or None
        One value per row (with ``censored`` flags: the censoring point where True), or the
        rows already checked (:func:`~samplewright.fitting.incomplete.incomplete_sample`), or
        None with ``lower`` and ``upper``.
    family : str
        A family of :data:`~samplewright.fitting.interval_api.INCOMPLETE_FAMILIES`.
    n_resamples : int
        Bootstrap replicates (``>= 0``; 0 gives the statistic with a NaN p-value).
    censored : array_like of bool, optional
        Right-censoring flags of ``values`` (True: the true value exceeds it).
    truncation : float or array_like, optional
        Lower truncation point (deductible, entry time), one or per row; ``-inf`` for none.
    lower, upper : array_like, optional
        Interval rows instead of ``values`` (``lower == upper`` exact, ``upper = inf``
        right-censored, ``lower = -inf`` left-censored; grouped data with ``weights`` as counts).
    weights : array_like, optional
        Frequency weights.
    rng : None, int, SeedSequence or Generator
        Source of the replicates.
    censor_at : array_like, optional
        Right-censoring point of every row (``+inf``: none), e.g. the policy limits; used for
        exact rows (a right-censored row is censored at its own value). Default: exact rows are
        never censored.
    inspection : array_like, optional
        The inspection points (bin edges) of interval and grouped rows, when some bins are
        missing from the data (groups with no count): the grid replicates are recorded on.
        Must hold every finite interval end of the rows. Default: those ends.
    **options
        Family options (``loc``, ``xm``), as for fitting.

    Returns
    -------
    IncompleteGofResult

    Raises
    ------
    MethodError
        Bad rows, options or ``censor_at``, or data the family cannot be fitted to.

    Examples
    --------
    >>> x = np.random.default_rng(5).exponential(10.0, 200) + 2.0
    >>> r = goodness_of_fit_incomplete(np.minimum(x, 30.0), "exponential", censored=x > 30.0,
    ...                                truncation=2.0, n_resamples=19, rng=1,
    ...                                censor_at=np.full(200, 30.0))
    >>> r.estimator, r.n_failed, 0.0 < r.pvalue <= 1.0, r.conditioned_on
    ('product_limit', 0, True, 2.0)
    """
    sample = incomplete_rows(
        values, censored=censored, truncation=truncation, lower=lower, upper=upper, weights=weights
    )
    fixed = incomplete_fixed(family, options)
    if isinstance(n_resamples, bool) or not isinstance(n_resamples, int) or n_resamples < 0:
        raise MethodError(f"n_resamples: expected an integer >= 0, found {n_resamples!r}")
    mech = _mechanism(sample, censor_at, inspection)
    fit = fit_incomplete(sample, family, fixed=fixed)
    if not fit.converged:
        raise FitError(f"{family}: the optimiser did not converge on the data")
    d, name, x, c, f = incomplete_distance(sample, family, fit.params)
    gen = make_rng(rng)
    null: list[float] = []
    refits: list[dict[str, float]] = []
    messages: list[str] = []
    n_failed = 0
    for _ in range(n_resamples):
        rep = _replicate(mech, family, fit.params, gen)
        try:
            r = refit_incomplete(rep, family, fit.params, fixed=fixed)
            if not r.converged:
                raise FitError(f"{family}: the refit did not converge")
            null.append(incomplete_distance(rep, family, r.params)[0])
            refits.append(dict(r.params))
        except (FitError, MethodError) as err:
            n_failed += 1
            if len(messages) < _MAX_MESSAGES and str(err) not in messages:
                messages.append(str(err))
    dist = np.array(null)
    p = (1.0 + float(np.sum(dist >= d))) / (1.0 + dist.size) if dist.size else float("nan")
    return IncompleteGofResult(
        family=family,
        params=dict(fit.params),
        loglik=fit.loglik,
        aic=fit.aic,
        bic=fit.bic,
        n_params=fit.n_params,
        statistic=d,
        pvalue=p,
        n_resamples=n_resamples,
        n_failed=n_failed,
        failures=tuple(messages),
        null_distribution=dist,
        estimator=name,
        conditioned_on=_conditioning(sample),
        x=x,
        cdf_nonparametric=c,
        cdf_model=f,
        replicate_params=tuple(refits),
    )
