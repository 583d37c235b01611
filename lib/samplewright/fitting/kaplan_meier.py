"""Right-censored data without a family: the Kaplan–Meier (product-limit) sampler.

Method ``kaplan_meier`` turns values ``x`` with right-censoring flags (True where the true value
is only known to exceed ``x``) and optional frequency weights into a sampler. With distinct
values ``t_1 < ... < t_m``, ``d_j`` the (weighted) number of uncensored values at ``t_j`` and
``n_j`` the (weighted) number of values ``>= t_j`` (at risk), the survival estimate is

    S(t) = prod over t_j <= t of (1 - d_j / n_j)            (Kaplan & Meier, 1958, JASA 53)

A censored value tied with an event time counts as still at risk at that time (events first), as
in lifelines and scipy. ``S`` falls only at event times, so the sampler puts point masses
``S(t_j-) - S(t_j)`` there and its CDF is ``1 - S``. Without censoring this is exactly the
empirical distribution.

Mass beyond the data
--------------------
When the largest value ``t_max`` is censored, ``S(t_max) = S_last > 0`` and the estimate says
nothing about where that mass lies. Option ``tail`` chooses:

* ``"at_last"`` (default): an atom of mass ``S_last`` at ``t_max``, as if the largest value had
  been an event (Efron's 1967 redistribute-to-the-right convention for the last value). Draws
  never exceed the data; with heavy censoring this understates the upper tail.
* ``"exponential"``: beyond ``t_max`` the survival continues as
  ``S_last * exp(-rate * (t - t_max))``, with the constant-hazard rate estimated from the whole
  sample as ``rate = (weighted events) / (weighted total time at risk) = sum(w e) / sum(w x)``:
  the maximum-likelihood exponential rate for right-censored data. It needs non-negative
  values (time at risk is counted from 0) and is a whole-sample rate, not a local one: check it
  against what you know about late failures.

When ``S_last = 0`` (the largest value is an uncensored event) both rules give the same sampler.

The sampler is :class:`~samplewright.distributions.kaplan_meier.KaplanMeierSampler`; it holds no
randomness and draws by inverse transform of its step CDF.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.core.checks import CheckedSample, check_sample
from samplewright.core.errors import MethodError
from samplewright.distributions.choices import TAIL_RULES, TailRule
from samplewright.distributions.kaplan_meier import KaplanMeierSampler
from samplewright.fitting.api import fit

__all__ = ["SurvivalResult", "estimate_survival", "fit_kaplan_meier", "fit_sample"]

_NAME = "kaplan_meier"


@dataclass(frozen=True)
class SurvivalResult:
    """Product-limit table at each distinct value.

    Attributes
    ----------
    time : ndarray
        Distinct values, increasing.
    n_at_risk : ndarray
        Weight of values ``>= time``.
    n_events, n_censored : ndarray
        Weight of uncensored and of censored values equal to ``time``.
    survival : ndarray
        ``S(time)``, the estimate just after ``time``.
    """

    time: np.ndarray
    n_at_risk: np.ndarray
    n_events: np.ndarray
    n_censored: np.ndarray
    survival: np.ndarray


def _events(sample: CheckedSample) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Values, event indicators (True: observed) and weights of a checked sample."""
    event = np.ones(sample.n, dtype=bool) if sample.censored is None else ~sample.censored
    return sample.values, event, sample.weights_or_ones()


def estimate_survival(values: Any, censored: Any = None, *, weights: Any = None) -> SurvivalResult:
    """Kaplan–Meier table of right-censored values (frequency ``weights`` optional).

    Parameters
    ----------
    values : array_like
        1-d finite observations.
    censored : array_like of bool or 0/1, optional
        True (1) where the value is right-censored. Default: none censored.
    weights : array_like, optional
        Non-negative frequency weights, one per value (rows of weight 0 are dropped).

    Returns
    -------
    SurvivalResult

    Examples
    --------
    >>> r = estimate_survival([2.0, 3.0, 3.0, 5.0], [False, True, False, True])
    >>> r.time.tolist(), r.survival.tolist()
    ([2.0, 3.0, 5.0], [0.75, 0.5, 0.5])
    """
    sample = check_sample(values, weights, censored)
    return _table(*_events(sample))


def _table(x: np.ndarray, event: np.ndarray, w: np.ndarray) -> SurvivalResult:
    time, inv = np.unique(x, return_inverse=True)
    d = np.bincount(inv, weights=w * event, minlength=time.size)
    c = np.bincount(inv, weights=w * ~event, minlength=time.size)
    at_risk = np.cumsum((d + c)[::-1])[::-1]  # weight at or after each time
    if not np.any(c > 0):
        # No censoring: S is the share still to come, exactly as in the empirical distribution.
        after = np.append(at_risk[1:], 0.0)
        survival = after / at_risk[0]
    else:
        survival = np.cumprod(1.0 - d / at_risk)
    return SurvivalResult(time, at_risk, d, c, survival)


def fit_sample(sample: CheckedSample, method: str = _NAME, **options: Any) -> KaplanMeierSampler:
    """Catalog fitter of ``kaplan_meier`` (option ``tail``, module docstring)."""
    tail = options.get("tail", "at_last")
    if tail not in TAIL_RULES:
        raise MethodError(
            f"option 'tail' of {_NAME}: expected one of {', '.join(TAIL_RULES)}, found {tail!r}"
        )
    x, event, w = _events(sample)
    if not np.any(event):
        raise MethodError(
            f"censored: every value is censored; {_NAME} needs at least one uncensored value"
        )
    table = _table(x, event, w)
    last = float(table.time[-1])
    s_last = float(table.survival[-1])
    keep = table.n_events > 0
    time, surv = table.time[keep], table.survival[keep].copy()
    rate: float | None = None
    if tail == "exponential":
        if x.min() < 0:
            raise MethodError(
                f"option 'tail'='exponential' of {_NAME} needs non-negative values (time at "
                f"risk counts from 0); found {float(x.min())!r}"
            )
        exposure = float(np.sum(w * x))
        if not exposure > 0:
            raise MethodError(
                f"option 'tail'='exponential' of {_NAME} needs a positive total time at risk; "
                "every value is 0"
            )
        rate = float(np.sum(w * event)) / exposure
    elif s_last > 0:
        if time[-1] != last:
            time = np.append(time, last)
            surv = np.append(surv, 0.0)
        else:
            surv[-1] = 0.0
    weighted = sample.weights is not None
    params: dict[str, Any] = {
        "n_events": int(np.count_nonzero(event)),
        "n_censored": int(np.count_nonzero(~event)),
    }
    if weighted:
        params["events_weight"] = float(np.sum(w * event))
        params["censored_weight"] = float(np.sum(w * ~event))
    params.update(
        {
            "weighted": weighted,
            "tail": tail,
            "tail_rate": rate,
            "last_value": last,
            "last_censored": bool(table.n_censored[-1] > 0),
            "survival_at_last": s_last,
        }
    )
    return KaplanMeierSampler(time, surv, params)


def fit_kaplan_meier(
    values: Any,
    censored: Any = None,
    *,
    weights: Any = None,
    tail: TailRule = "at_last",
) -> KaplanMeierSampler:
    """Kaplan–Meier sampler of right-censored values: ``fit(values, "kaplan_meier", ...)``.

    Parameters
    ----------
    values : array_like
        1-d finite observations.
    censored : array_like of bool or 0/1, optional
        True (1) where the value is right-censored. Default: none censored (the empirical
        distribution).
    weights : array_like, optional
        Non-negative frequency weights, one per value (rows of weight 0 are dropped).
    tail : {"at_last", "exponential"}
        Where the survival left after the largest value goes (module docstring).

    Returns
    -------
    KaplanMeierSampler
        Its ``diagnostics`` hold the counts, ``S`` at the largest value and the tail rule.

    Examples
    --------
    >>> s = fit_kaplan_meier([4.0, 6.0, 9.0], [False, False, True], tail="exponential")
    >>> s.params["survival_at_last"], s.params["tail_rate"], s.support
    (0.33333333333333337, 0.10526315789473684, (4.0, inf))
    """
    out = fit(values, _NAME, weights=weights, censored=censored, tail=tail)
    assert isinstance(out, KaplanMeierSampler)
    return out
