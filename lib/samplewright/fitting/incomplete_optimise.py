"""The optimiser behind fits to incomplete data: transformed parameters, starts, two methods.

A fit maximises the mean log-likelihood of :mod:`~samplewright.fitting.incomplete_likelihood`
over the free parameters of one family of :mod:`~samplewright.fitting.incomplete_families`,
each on its own scale: positive parameters on the log scale, real ones (locations) in units of
the family's starting scale, the shape ``xi`` as it is. Every coordinate lives in a box around
the start (a factor ``e^23`` for positive parameters, a million spreads for locations,
``[-1, 20]`` for ``xi``); a maximum found at the edge of that box means the likelihood runs away
and is refused (:func:`at_edge`). :func:`maximise` runs L-BFGS-B, then Nelder–Mead from its
answer.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from scipy import optimize

from samplewright.core.errors import MethodError
from samplewright.fitting.incomplete_checks import XI_RANGE, number
from samplewright.fitting.incomplete_families import FamilySpec
from samplewright.fitting.incomplete_fast import FAST
from samplewright.fitting.incomplete_likelihood import RowLayout, layout_loglik

__all__ = ["Objective", "at_edge", "family_loglik", "maximise", "start_values"]

Params = dict[str, float]
_LOG_HALF_WIDTH = 23.0  # log-scaled parameters may move by a factor e^23 ~ 1e10 from the start
_REAL_HALF_WIDTH = 1e6  # standardised real parameters: a million spreads from the start
_PENALTY = 1e6  # objective value standing in for zero likelihood (mean log-lik is O(1))


def _pseudo_values(lay: RowLayout, floor: float) -> tuple[np.ndarray, np.ndarray]:
    """One value per row for starting values: exact values, interval midpoints, bounds."""
    left = lay.left if floor == -np.inf else 0.5 * (floor + lay.left)
    y = np.concatenate([lay.x, lay.right, 0.5 * (lay.lo + lay.hi), left])
    w = np.concatenate([lay.w_x, lay.w_right, lay.w_int, lay.w_left])
    return y, w


def start_values(
    spec: FamilySpec, dist_name: str, lay: RowLayout, fixed: Params, start: Mapping[str, Any] | None
) -> Params:
    """Starting values: the family's moment rule on pseudo-values, overridden by ``start``."""
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


def family_loglik(spec: FamilySpec, lay: RowLayout, p: Params) -> float:
    """Log-likelihood of the grouped rows under the family with parameters ``p``.

    Uses the formulas of :mod:`~samplewright.fitting.incomplete_fast` where the family has them
    (same values, without scipy.stats' per-call cost), scipy.stats otherwise.
    """
    kw = spec.kwargs(p)
    d = spec.dist
    fast = FAST.get(d.name)
    if fast is not None:
        lp, lc, ls = fast
        return layout_loglik(
            lay, lambda x: lp(x, **kw), lambda x: lc(x, **kw), lambda x: ls(x, **kw)
        )
    return layout_loglik(
        lay,
        lambda x: d.logpdf(x, **kw),
        lambda x: d.logcdf(x, **kw),
        lambda x: d.logsf(x, **kw),
    )


class Objective:
    """Negative mean log-likelihood on transformed parameters (0 at the start).

    ``complete`` (optional) fills in parameters that are not optimised but follow from the
    others (it returns None where they cannot be set, which counts as zero likelihood).
    """

    def __init__(
        self,
        spec: FamilySpec,
        lay: RowLayout,
        fixed: Params,
        p0: Params,
        free: tuple[str, ...],
        complete: Callable[[Params], Params | None] | None = None,
    ) -> None:
        self.spec, self.lay, self.fixed, self.free = spec, lay, fixed, free
        self.complete = complete
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
        """The parameters at transformed point ``theta`` (before ``complete``)."""
        p = dict(self.fixed)
        for k, c, s, v in zip(self.free, self.center, self.step, theta, strict=True):
            z = c + s * v
            p[k] = float(np.exp(z)) if self.spec.kinds[k] == "log" else float(z)
        return p

    def __call__(self, theta: np.ndarray) -> float:
        p: Params | None = self.params(theta)
        if self.complete is not None:
            p = self.complete(p)  # type: ignore[arg-type]
            if p is None:
                return np.inf
        ll = family_loglik(self.spec, self.lay, p)  # type: ignore[arg-type]
        return -ll / self.total if np.isfinite(ll) else np.inf


def at_edge(obj: Objective, theta: np.ndarray, dist_name: str) -> None:
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


def maximise(
    obj: Objective, max_iter: int, dist_name: str, *, quick: bool = False
) -> tuple[np.ndarray, int, bool]:
    """L-BFGS-B from the start, then Nelder–Mead from its answer.

    L-BFGS-B (numerical gradients) gets close in few evaluations; Nelder–Mead, which needs no
    gradient and tolerates zero likelihood, finishes the job and decides ``converged``. Both
    share the ``max_iter`` budget. ``quick`` (a refit from a nearby start, as in a bootstrap)
    runs Nelder–Mead alone, to a tolerance of 1e-6 in the transformed parameters (about 40
    evaluations for two parameters). L-BFGS-B is left out there on purpose: scipy's
    implementation calls the BLAS library on every step, and with a multi-threaded BLAS on a
    busy machine each step cost about 1 ms, more than the whole likelihood (measured with scipy
    1.17 and OpenBLAS 0.3.31 on 2 loaded cores: 24–38 ms per refit against 16–22 ms).
    """
    n = len(obj.free)
    theta = np.zeros(n)
    if not np.isfinite(obj(theta)):
        raise MethodError(
            f"{dist_name}: the starting values {obj.params(theta)} give the data zero "
            "likelihood; pass start={...}"
        )
    used = 0
    if not quick:
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
    simplex = np.vstack([theta, theta + (5e-2 if quick else 1e-2) * np.eye(n)])
    res = optimize.minimize(
        obj,
        theta,
        method="Nelder-Mead",
        bounds=obj.bounds,
        options={
            "maxiter": max(max_iter - used, 1),
            "xatol": 1e-6 if quick else 1e-10,
            "fatol": 1e-10 if quick else 1e-13,
            "initial_simplex": np.clip(simplex, obj.bounds.lb, obj.bounds.ub),
        },
    )
    return np.asarray(res.x), used + int(res.nit), bool(res.success)
