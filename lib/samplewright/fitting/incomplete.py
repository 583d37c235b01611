"""Maximum-likelihood fits of parametric families to incomplete data.

:func:`fit_incomplete` maximises the likelihood of
:mod:`~samplewright.fitting.incomplete_likelihood` (exact, censored, interval and truncated
rows) over the families of
:mod:`~samplewright.fitting.incomplete_families` (L-BFGS-B then Nelder–Mead with a bounded budget,
on log-scaled or standardised parameters, :mod:`~samplewright.fitting.incomplete_optimise`) and
checks the answer: finite log-likelihood, every exact value inside the fitted support, no
parameter at the edge of its search box, and a mass above the smallest truncation point that the
data pin down (:mod:`~samplewright.fitting.incomplete_drift`). It refuses data for which the
maximum does not exist (see :func:`fit_incomplete`). :func:`refit_incomplete` is the quick
refit from nearby parameters that a bootstrap makes on every replicate.

Also exported here: the data model (:class:`IncompleteSample`, :func:`incomplete_sample`,
:func:`incomplete_from_flags`) and :func:`incomplete_loglik` for any continuous distribution.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from samplewright.core.errors import FitError, MethodError
from samplewright.fitting.incomplete_checks import (
    FAMILY_NAMES,
    check_information,
    check_support,
    settings,
    spec_for,
)
from samplewright.fitting.incomplete_drift import check_drift
from samplewright.fitting.incomplete_families import FamilySpec
from samplewright.fitting.incomplete_likelihood import RowLayout, incomplete_loglik, row_layout
from samplewright.fitting.incomplete_optimise import (
    Objective,
    at_edge,
    family_loglik,
    maximise,
    start_values,
)
from samplewright.fitting.incomplete_sample import (
    IncompleteSample,
    incomplete_from_flags,
    incomplete_sample,
)

__all__ = [
    "FAMILY_NAMES",
    "IncompleteFitResult",
    "IncompleteSample",
    "fit_incomplete",
    "incomplete_from_flags",
    "incomplete_loglik",
    "incomplete_sample",
    "refit_incomplete",
]

Params = dict[str, float]
_MIN_ABOVE_TRUNCATION = 1e-10  # a fit below this describes only what truncation hid


@dataclass(frozen=True)
class IncompleteFitResult:
    """A maximum-likelihood fit to incomplete data.

    Attributes
    ----------
    family : str
        Trade name of the family.
    params : dict
        Every parameter, fixed ones (``loc``, ``xm``, anything in ``fixed``) included.
    loglik : float
        Maximised log-likelihood (weighted, truncation terms included).
    n_params : int
        Number of estimated parameters.
    aic, bic : float
        ``2 k - 2 loglik`` and ``k log(n_obs) - 2 loglik`` with ``n_obs`` the sum of weights.
    converged : bool
        False when the iteration budget ran out (``params`` are then the best point found).
    n_iter : int
        Optimiser iterations used.
    n_exact, n_right, n_left, n_interval, n_truncated : int
        Rows of each kind (unweighted). Left-censored rows are those whose lower end is at or
        below the family's lower support end; truncated rows those whose truncation point is
        above it.
    n_obs : float
        Sum of the weights.
    mass_above_truncation : float
        Fitted ``P(X > t)`` at the smallest truncation point ``t`` above the family's lower
        end (1.0 when no row is truncated there): the share of the fitted distribution the
        data could show; the rest is extrapolated.
    """

    family: str
    params: Params
    loglik: float
    n_params: int
    aic: float
    bic: float
    converged: bool
    n_iter: int
    n_exact: int
    n_right: int
    n_left: int
    n_interval: int
    n_truncated: int
    n_obs: float
    mass_above_truncation: float = 1.0


# ---------------------------------------------------------------------------------------------
# fitting


def fit_incomplete(
    sample: IncompleteSample,
    dist_name: str,
    *,
    fixed: Mapping[str, float] | None = None,
    start: Mapping[str, float] | None = None,
    max_iter: int = 1000,
) -> IncompleteFitResult:
    """Maximum-likelihood fit of a family to incomplete data.

    Parameters
    ----------
    sample : IncompleteSample
        Checked rows (:func:`incomplete_sample`, :func:`incomplete_from_flags`).
    dist_name : str
        One of :data:`FAMILY_NAMES` (see :mod:`~samplewright.fitting.incomplete_families`).
    fixed : dict, optional
        Parameters held at given values: ``loc`` (default 0) and ``xm`` (pareto) are always
        fixed; any estimated parameter may be fixed too.
    start : dict, optional
        Starting values for estimated parameters (default: moment estimates from exact values,
        interval midpoints and censoring points).
    max_iter : int
        Budget of optimiser iterations (L-BFGS-B and Nelder–Mead share it).

    Raises
    ------
    MethodError
        Unknown family or parameter; data outside the support (an exact value at or below the
        lower end of a positive family, an upper end at or below it); data for which the
        likelihood has no maximum: no informative row, every informative row right-censored
        (or, for families that cannot concentrate anywhere, every one left-censored), no exact
        values and a point admitted by every row, all exact values equal and admitted by every
        censored row, a parameter ending at the edge of its search box; or a fit whose mass
        above the smallest truncation point the data cannot pin down (a location drifting
        below it; :mod:`~samplewright.fitting.incomplete_drift`).
    FitError
        The optimum has a non-finite log-likelihood or an exact value outside the fitted support.

    Examples
    --------
    >>> s = incomplete_from_flags([3.0, 5.0, 8.0, 10.0], [False, False, False, True],
    ...                           truncation=1.0)
    >>> r = fit_incomplete(s, "exponential")
    >>> round(r.params["scale"], 4)  # (2 + 4 + 7 + 9) / 3 uncensored
    7.3333
    """
    return _fit(sample, dist_name, fixed, start, max_iter, quick=False)


def refit_incomplete(
    sample: IncompleteSample,
    dist_name: str,
    start: Mapping[str, float],
    *,
    fixed: Mapping[str, float] | None = None,
    max_iter: int = 400,
) -> IncompleteFitResult:
    """Quick refit from nearby parameters, as a parametric bootstrap makes on each replicate.

    From ``start`` (the parameters of the original fit; those not estimated are ignored), with
    the quick search of :func:`~samplewright.fitting.incomplete_optimise.maximise` (Nelder–Mead
    alone, parameters within about 1e-6 of the full search's) and without the drift check of
    :func:`fit_incomplete` (a replicate is compared, not used); every other check is made.
    Arguments and errors as in :func:`fit_incomplete`.
    """
    spec = spec_for(dist_name)
    held = set(fixed or {})
    begin = {k: v for k, v in start.items() if k in spec.estimated and k not in held}
    return _fit(sample, dist_name, fixed, begin, max_iter, quick=True)


def _fit(
    sample: IncompleteSample,
    dist_name: str,
    fixed: Mapping[str, float] | None,
    start: Mapping[str, float] | None,
    max_iter: int,
    *,
    quick: bool,
) -> IncompleteFitResult:
    spec = spec_for(dist_name)
    if isinstance(max_iter, bool) or not isinstance(max_iter, int | np.integer) or max_iter < 10:
        raise MethodError(f"max_iter: expected an integer >= 10, found {max_iter!r}")
    fix = settings(spec, dist_name, sample, fixed)
    floor = spec.floor(fix)
    check_support(sample, dist_name, floor, spec.closed_floor)
    lay = row_layout(sample, floor)
    free = tuple(k for k in spec.estimated if k not in fix)
    if free:
        check_information(lay, spec, dist_name, floor)
        p0 = start_values(spec, dist_name, lay, fix, start)
        obj = Objective(spec, lay, fix, p0, free)
        theta, n_iter, converged = maximise(obj, int(max_iter), dist_name, quick=quick)
        at_edge(obj, theta, dist_name)
        params = obj.params(theta)
    else:
        params, n_iter, converged = dict(fix), 0, True
    ll = family_loglik(spec, lay, params)
    above = _check_answer(spec, dist_name, lay, params, ll)
    if free and not quick:
        check_drift(spec, dist_name, lay, fix, params, ll, int(max_iter))
    k = len(free)
    lo, hi, t = sample.lower, sample.upper, sample.truncation
    exact = lo == hi
    n_obs = float(sample.weights.sum())
    return IncompleteFitResult(
        family=dist_name,
        params={n: params[n] for n in spec.estimated + spec.settings},
        loglik=ll,
        n_params=k,
        aic=2.0 * k - 2.0 * ll,
        bic=k * float(np.log(n_obs)) - 2.0 * ll,
        converged=converged,
        n_iter=n_iter,
        n_exact=int(exact.sum()),
        n_right=int((~exact & (hi == np.inf)).sum()),
        n_left=int((~exact & (hi < np.inf) & (lo <= floor)).sum()),
        n_interval=int((~exact & (hi < np.inf) & (lo > floor)).sum()),
        n_truncated=int((t > floor).sum()),
        n_obs=n_obs,
        mass_above_truncation=above,
    )


def _check_answer(
    spec: FamilySpec, dist_name: str, lay: RowLayout, params: Params, ll: float
) -> float:
    """Refuse an impossible answer; return the mass above the smallest truncation point."""
    if not np.isfinite(ll):
        raise FitError(f"{dist_name}: the fitted parameters {params} give log-likelihood {ll}")
    kw = spec.kwargs(params)
    above = 1.0
    if lay.trunc.size:
        t = float(lay.trunc.min())
        above = float(np.exp(spec.dist.logsf(t, **kw)))
        if above < _MIN_ABOVE_TRUNCATION:
            raise MethodError(
                f"{dist_name}: the fit puts only {above:.3g} of its mass above the truncation "
                f"point {t!r} (the likelihood drifts that way without a maximum): the data "
                "cannot place the mass below it; fit a family to the excess over the "
                "truncation point (a positive family with loc at it) or fix a parameter"
            )
    lo, hi = spec.dist.support(**kw)
    if lay.x.size and (lay.x.min() < lo or lay.x.max() > hi):
        raise FitError(
            f"{dist_name}: the fitted support [{lo:g}, {hi:g}] does not hold every exact value "
            f"(range [{lay.x.min():g}, {lay.x.max():g}])"
        )
    return above
