"""Refusing fits that live below the truncation point: the data cannot place that mass.

Truncated data show a family only above the truncation points. Some families can shrink their
mass above the smallest truncation point ``t`` towards nothing while the shape they show above
``t`` tends to a limit (a normal, gumbel or logistic whose location runs to ``-inf``: the part
above ``t`` tends to an exponential). If the data fit that limit about as well as any proper
member, the likelihood cannot say how much mass lies below ``t``, and the fit is an
extrapolation, whatever its maximum says: a gumbel fitted to exponential excesses above a
deductible of 100 has a maximum that puts 2% of its mass above 100 and the rest, mostly
negative losses, below; its log-likelihood beats the limit by 0.001.

The check (:func:`check_drift`): with the family's drift parameter (location or scale, see
:mod:`~samplewright.fitting.incomplete_families`) set so that the mass above ``t`` is
``DRIFT_MASS`` = 1e-8 and every other free parameter re-maximised, the profile log-likelihood
``l_drift`` is compared with the fit's ``l``. When ``2 (l - l_drift)`` is below
``DRIFT_CHI2`` = 3.841 (the 95% point of chi-square with 1 degree of freedom, from memory;
Wilks' likelihood-ratio test of one constraint) the fit is refused: a 95% profile-likelihood
interval for the mass above ``t`` reaches (almost) 0. A mass above ``t`` at or below
``DRIFT_MASS`` is refused at once.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy import optimize

from samplewright.core.errors import MethodError
from samplewright.fitting.incomplete_families import FamilySpec
from samplewright.fitting.incomplete_fast import FAST
from samplewright.fitting.incomplete_likelihood import RowLayout
from samplewright.fitting.incomplete_optimise import Objective, family_loglik, maximise

__all__ = ["DRIFT_CHI2", "DRIFT_MASS", "check_drift", "mass_above"]

Params = dict[str, float]
DRIFT_MASS = 1e-8
DRIFT_CHI2 = 3.841458820694124  # chi-square(1) 95% point (scipy.stats.chi2.ppf(0.95, 1))
_LOG_TARGET = float(np.log(DRIFT_MASS))
_MAX_DOUBLINGS = 60
Solver = Callable[[Params], Params | None]


def mass_above(spec: FamilySpec, params: Params, t: float) -> float:
    """``P(X > t)`` under the family with ``params``."""
    return float(np.exp(spec.dist.logsf(t, **spec.kwargs(params))))


def _solver(spec: FamilySpec, t: float, step: float) -> Solver:
    """A function setting the drift parameter so that ``log S(t)`` is ``log DRIFT_MASS``.

    It searches from the parameter's current value (doubling steps towards the side where the
    target lies), then solves by Brent's method; None where no such value exists.
    """
    name, direction = spec.drift
    log_kind = spec.kinds[name] == "log"

    fast = FAST.get(spec.dist.name)
    logsf = spec.dist.logsf if fast is None else fast[2]
    at = np.array([t])

    def gap(p: Params, z: float) -> float:
        q = dict(p)
        q[name] = float(np.exp(z)) if log_kind else z
        with np.errstate(all="ignore"):
            return float(logsf(at, **spec.kwargs(q))[0]) - _LOG_TARGET

    def solve(p: Params) -> Params | None:
        a = float(np.log(p[name])) if log_kind else p[name]
        ga = gap(p, a)
        if np.isnan(ga):
            return None
        sign = direction if ga > 0 else -direction  # move towards gap 0
        width = 1.0 if log_kind else step
        for _ in range(_MAX_DOUBLINGS):
            b = a + sign * width
            gb = gap(p, b)
            if np.isnan(gb):
                return None
            if (gb <= 0) == (ga > 0):
                break
            a, ga, width = b, gb, 2.0 * width
        else:
            return None
        z = optimize.brentq(lambda v: gap(p, v), min(a, b), max(a, b), xtol=1e-12, rtol=1e-12)
        q = dict(p)
        q[name] = float(np.exp(z)) if log_kind else float(z)
        return q

    return solve


def check_drift(
    spec: FamilySpec,
    dist_name: str,
    lay: RowLayout,
    fixed: Params,
    params: Params,
    loglik: float,
    max_iter: int,
) -> None:
    """Refuse a fit whose mass above the smallest truncation point the data cannot pin down.

    Does nothing without truncation points above the family's lower end, or when the drift
    parameter is fixed. See the module docstring for the rule.
    """
    if lay.trunc.size == 0:
        return
    name = spec.drift[0]
    if name in fixed:
        return
    t = float(lay.trunc.min())
    above = mass_above(spec, params, t)
    head = f"{dist_name}: the fit puts"
    tail = (
        ": the data cannot place the mass below it; fit a family to the excess over the "
        "truncation point (a positive family with loc at it) or fix a parameter"
    )
    if not above > DRIFT_MASS:
        raise MethodError(
            f"{head} only {above:.3g} of its mass above the truncation point {t!r} (the "
            f"likelihood drifts that way without a maximum){tail}"
        )
    scale = next(params[k] for k in spec.estimated if spec.kinds[k] == "log")
    drifted = _profile(spec, lay, fixed, params, _solver(spec, t, scale), max_iter)
    if drifted is None or 2.0 * (loglik - drifted) >= DRIFT_CHI2:
        return
    raise MethodError(
        f"{head} {above:.3g} of its mass above the truncation point {t!r}, and one putting "
        f"{DRIFT_MASS:g} there is about as likely (log-likelihood lower by only "
        f"{loglik - drifted:.3g}, under {DRIFT_CHI2 / 2:.3g}){tail}"
    )


def _profile(
    spec: FamilySpec,
    lay: RowLayout,
    fixed: Params,
    params: Params,
    solve: Solver,
    max_iter: int,
) -> float | None:
    """Largest log-likelihood with the drift parameter solved, others re-maximised (or None)."""
    start = solve(params)
    if start is None:
        return None
    name = spec.drift[0]
    others = tuple(k for k in spec.estimated if k not in fixed and k != name)
    if not others:
        ll = family_loglik(spec, lay, start)
        return ll if np.isfinite(ll) else None
    hold = dict(fixed)
    hold[name] = start[name]
    obj = Objective(spec, lay, hold, start, others, complete=solve)
    try:
        theta, _, _ = maximise(obj, max_iter, "drift profile", quick=True)
    except MethodError:  # the start has zero likelihood: nothing to compare with
        return None
    value = obj(theta)
    return -value * obj.total if np.isfinite(value) else None
