"""Maximum-likelihood fits of parametric families to incomplete data.

:func:`fit_incomplete` maximises the likelihood of :mod:`~samplewright.fitting.incomplete_likelihood`
(exact, censored, interval and truncated rows) over the families of
:mod:`~samplewright.fitting.incomplete_families` (L-BFGS-B then Nelder–Mead with a bounded budget,
on log-scaled or standardised parameters) and checks the answer: finite log-likelihood, every
exact value inside the fitted support, no parameter at the edge of its search box, a mass above
the smallest truncation point that is not vanishingly small. It refuses data for which the
maximum does not exist (see :func:`fit_incomplete`).

Also exported here: the data model (:class:`IncompleteSample`, :func:`incomplete_sample`,
:func:`incomplete_from_flags`) and :func:`incomplete_loglik` for any continuous distribution.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import optimize

from samplewright.core.errors import FitError, MethodError
from samplewright.fitting.incomplete_checks import (
    FAMILY_NAMES,
    XI_RANGE,
    check_information,
    check_support,
    number,
    settings,
    spec_for,
)
from samplewright.fitting.incomplete_families import FamilySpec
from samplewright.fitting.incomplete_likelihood import (
    RowLayout,
    incomplete_loglik,
    layout_loglik,
    row_layout,
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
]

Params = dict[str, float]
_LOG_HALF_WIDTH = 23.0  # log-scaled parameters may move by a factor e^23 ~ 1e10 from the start
_REAL_HALF_WIDTH = 1e6  # standardised real parameters: a million spreads from the start
_PENALTY = 1e6  # objective value standing in for zero likelihood (mean log-lik is O(1))
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


# ---------------------------------------------------------------------------------------------
# fitting


def _pseudo_values(lay: RowLayout, floor: float) -> tuple[np.ndarray, np.ndarray]:
    """One value per row for starting values: exact values, interval midpoints, bounds."""
    left = lay.left if floor == -np.inf else 0.5 * (floor + lay.left)
    y = np.concatenate([lay.x, lay.right, 0.5 * (lay.lo + lay.hi), left])
    w = np.concatenate([lay.w_x, lay.w_right, lay.w_int, lay.w_left])
    return y, w


def _start(
    spec: FamilySpec, dist_name: str, lay: RowLayout, fixed: Params, start: Mapping[str, Any] | None
) -> Params:
    y, w = _pseudo_values(lay, spec.floor(fixed))
    if spec.positive:
        y = y - fixed["loc"]
        top = float(np.max(y))
        y = np.maximum(y, 1e-3 * top)  # keep pseudo-values inside the support
    p0 = spec.start(y, w, fixed)
    for k, v in (start or {}).items():
        if k not in spec.estimated or k in fixed:
            free = tuple(n for n in spec.estimated if n not in fixed)
            raise MethodError(f"start: {dist_name} estimates {free}, found {k!r}")
        p0[k] = number(v, f"start[{k!r}] of {dist_name}")
        if spec.kinds[k] == "log" and not p0[k] > 0:
            raise MethodError(f"start[{k!r}] of {dist_name}: expected a value > 0")
        if spec.kinds[k] == "xi" and not XI_RANGE[0] <= p0[k] <= XI_RANGE[1]:
            raise MethodError(f"start['xi'] of {dist_name}: expected a value in {XI_RANGE}")
    return p0


def _family_loglik(spec: FamilySpec, lay: RowLayout, p: Params) -> float:
    kw = spec.kwargs(p)
    d = spec.dist
    return layout_loglik(
        lay,
        lambda x: d.logpdf(x, **kw),
        lambda x: d.logcdf(x, **kw),
        lambda x: d.logsf(x, **kw),
    )


class _Objective:
    """Negative mean log-likelihood on transformed parameters (0 at the start)."""

    def __init__(
        self, spec: FamilySpec, lay: RowLayout, fixed: Params, p0: Params, free: tuple[str, ...]
    ) -> None:
        self.spec, self.lay, self.fixed, self.free = spec, lay, fixed, free
        self.center = np.array([np.log(p0[k]) if spec.kinds[k] == "log" else p0[k] for k in free])
        # a real parameter (a location) moves in units of the family's starting scale
        scale = next(p0[k] for k in spec.estimated if spec.kinds[k] == "log")
        self.step = np.array([scale if spec.kinds[k] == "real" else 1.0 for k in free])
        self.total = float(
            sum(a.sum() for a in (lay.w_x, lay.w_right, lay.w_left, lay.w_int)) or 1.0
        )
        lo: list[float] = []
        hi: list[float] = []
        for k, c in zip(free, self.center, strict=True):
            kind = spec.kinds[k]
            if kind == "log":
                lo.append(-_LOG_HALF_WIDTH)
                hi.append(_LOG_HALF_WIDTH)
            elif kind == "real":
                lo.append(-_REAL_HALF_WIDTH)
                hi.append(_REAL_HALF_WIDTH)
            else:
                lo.append(XI_RANGE[0] - c)
                hi.append(XI_RANGE[1] - c)
        self.bounds = optimize.Bounds(np.array(lo), np.array(hi))

    def params(self, theta: np.ndarray) -> Params:
        p = dict(self.fixed)
        for k, c, s, v in zip(self.free, self.center, self.step, theta, strict=True):
            z = c + s * v
            p[k] = float(np.exp(z)) if self.spec.kinds[k] == "log" else float(z)
        return p

    def __call__(self, theta: np.ndarray) -> float:
        ll = _family_loglik(self.spec, self.lay, self.params(theta))
        return -ll / self.total if np.isfinite(ll) else np.inf


def _at_edge(obj: _Objective, theta: np.ndarray, dist_name: str) -> None:
    """Refuse a maximum found at the edge of the search box (the likelihood runs away)."""
    lo, hi = obj.bounds.lb, obj.bounds.ub
    margin = 0.02 * (hi - lo)
    for j, k in enumerate(obj.free):
        kind = obj.spec.kinds[k]
        low = theta[j] - lo[j] < margin[j] and kind != "xi"  # xi = -1 is a valid answer
        high = hi[j] - theta[j] < margin[j]
        if low or high:
            where = ("0" if kind == "log" else "-inf") if low else "+inf"
            raise MethodError(
                f"{dist_name}: the likelihood keeps rising as {k} -> {where} (stopped at "
                f"{obj.params(theta)[k]:.6g}): these data do not pin the family down; fix "
                "a parameter or use another family"
            )


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
        censored row, a parameter ending at the edge of its search box, or a fit that puts less
        than 1e-10 of its mass above the smallest truncation point (a location drifting below
        it).
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
        p0 = _start(spec, dist_name, lay, fix, start)
        obj = _Objective(spec, lay, fix, p0, free)
        theta, n_iter, converged = _maximise(obj, int(max_iter), dist_name)
        _at_edge(obj, theta, dist_name)
        params = obj.params(theta)
    else:
        params, n_iter, converged = dict(fix), 0, True
    ll = _family_loglik(spec, lay, params)
    _check_answer(spec, dist_name, lay, params, ll)
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
    )


def _maximise(obj: _Objective, max_iter: int, dist_name: str) -> tuple[np.ndarray, int, bool]:
    """L-BFGS-B from the start, then Nelder–Mead from its answer.

    L-BFGS-B (numerical gradients) gets close in few evaluations; Nelder–Mead, which needs no
    gradient and tolerates zero likelihood, finishes the job and decides ``converged``. Both
    share the ``max_iter`` budget.
    """
    n = len(obj.free)
    theta = np.zeros(n)
    if not np.isfinite(obj(theta)):
        raise MethodError(
            f"{dist_name}: the starting values {obj.params(theta)} give the data zero "
            "likelihood; pass start={...}"
        )
    res = optimize.minimize(
        lambda th: min(obj(th), _PENALTY),  # L-BFGS-B needs finite values
        theta,
        method="L-BFGS-B",
        bounds=obj.bounds,
        options={"maxiter": max(max_iter // 2, 1), "ftol": 1e-15, "gtol": 1e-9},
    )
    used = int(res.nit)
    if np.isfinite(obj(res.x)) and obj(res.x) <= obj(theta):
        theta = np.asarray(res.x)
    simplex = np.vstack([theta, theta + 1e-2 * np.eye(n)])
    res = optimize.minimize(
        obj,
        theta,
        method="Nelder-Mead",
        bounds=obj.bounds,
        options={
            "maxiter": max(max_iter - used, 1),
            "xatol": 1e-10,
            "fatol": 1e-13,
            "initial_simplex": np.clip(simplex, obj.bounds.lb, obj.bounds.ub),
        },
    )
    return np.asarray(res.x), used + int(res.nit), bool(res.success)


def _check_answer(
    spec: FamilySpec, dist_name: str, lay: RowLayout, params: Params, ll: float
) -> None:
    if not np.isfinite(ll):
        raise FitError(f"{dist_name}: the fitted parameters {params} give log-likelihood {ll}")
    kw = spec.kwargs(params)
    if lay.trunc.size:
        t = float(lay.trunc.min())
        above = float(np.exp(spec.dist.logsf(t, **kw)))
        if above < _MIN_ABOVE_TRUNCATION:
            raise MethodError(
                f"{dist_name}: the fit puts only {above:.3g} of its mass above the truncation "
                f"point {t!r}, so it describes almost nothing the data could show (the "
                "likelihood drifts that way without a maximum); fix a parameter, or fit the "
                "excess over the truncation point (fixed loc)"
            )
    lo, hi = spec.dist.support(**kw)
    if lay.x.size and (lay.x.min() < lo or lay.x.max() > hi):
        raise FitError(
            f"{dist_name}: the fitted support [{lo:g}, {hi:g}] does not hold every exact value "
            f"(range [{lay.x.min():g}, {lay.x.max():g}])"
        )
