"""Samplers from the nonparametric estimates of incomplete data, with a rule for what they miss.

:func:`product_limit_sampler` turns the product-limit estimate with delayed entry
(:func:`~samplewright.fitting.nonparametric_incomplete.estimate_product_limit`) into a
:class:`~samplewright.distributions.kaplan_meier.KaplanMeierSampler` (atoms at the event
times); :func:`turnbull_sampler` turns Turnbull's estimate
(:func:`~samplewright.fitting.nonparametric_incomplete.estimate_turnbull`) into a
:class:`~samplewright.distributions.piecewise.PiecewiseSampler` (mass spread uniformly over each
innermost interval, atoms at exact values), or a
:class:`~samplewright.distributions.spliced.SplicedSampler` when an exponential tail is added.

Mass the data cannot place
--------------------------
* **Inside an innermost interval** (Turnbull): spread uniformly over it (see
  :mod:`~samplewright.fitting.nonparametric_incomplete`).
* **Beyond the largest finite point** (the largest rows are right-censored, ``mass_beyond > 0``):
  option ``tail``, the same words as for ``kaplan_meier`` on right-censored data:
  ``"at_last"`` (default) puts it as an atom at that point (draws never exceed the data, which
  understates the upper tail when much is censored); ``"exponential"`` continues the survival as
  ``mass_beyond * exp(-rate * (x - last))`` beyond it, with ``rate`` the rate of the exponential
  fitted by maximum likelihood to all rows (location 0, the same truncation and censoring; for
  right-censored rows with entry times ``sum(events) / sum(time - max(entry, 0))``, the
  constant-hazard estimate). It needs values >= 0.
* **Below the first finite point** (left-censored rows written with ``lower = -inf``): refused;
  write such rows with the lower end of the quantity's range (0 for amounts and durations), and
  the mass is spread from there.
* **Below the smallest truncation point**: nothing is known there, and nothing is put there:
  with every row truncated, both samplers describe ``X`` given ``X > t_min`` (recorded as
  ``truncation_min`` in the diagnostics). Parametric fits, by contrast, describe the whole
  distribution, extrapolating below the truncation point by the family's shape.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.base import Sampler
from samplewright.distributions.choices import TAIL_RULES, TailRule
from samplewright.distributions.kaplan_meier import KaplanMeierSampler
from samplewright.distributions.piecewise import PiecewiseSampler
from samplewright.distributions.spliced import SplicedSampler
from samplewright.fitting.incomplete import fit_incomplete
from samplewright.fitting.incomplete_sample import IncompleteSample
from samplewright.fitting.nonparametric_incomplete import estimate_product_limit, estimate_turnbull

__all__ = ["product_limit_sampler", "tail_rate", "turnbull_sampler"]

_TINY = 1e-12  # masses below this are rounding (the EM's masses sum to 1 within it)


def _tail_rule(tail: Any, method: str) -> TailRule:
    if tail not in TAIL_RULES:
        raise MethodError(
            f"option 'tail' of {method}: expected one of {', '.join(TAIL_RULES)}, found {tail!r}"
        )
    return tail  # type: ignore[no-any-return]


def tail_rate(sample: IncompleteSample, method: str) -> float:
    """Rate of the exponential (location 0) fitted by maximum likelihood to every row.

    Raises a MethodError naming ``method`` and option ``tail`` when the exponential cannot be
    fitted (values below 0, no informative row).
    """
    try:
        return 1.0 / fit_incomplete(sample, "exponential").params["scale"]
    except MethodError as exc:
        raise MethodError(f"option 'tail'='exponential' of {method}: {exc}") from None


def _truncation_min(sample: IncompleteSample) -> float | None:
    t = sample.truncation
    return float(t.min()) if np.all(t > -np.inf) else None


def _counts(sample: IncompleteSample) -> dict[str, Any]:
    lo, hi, w = sample.lower, sample.upper, sample.weights
    exact, right = sample.is_exact, sample.is_right & ~sample.is_exact
    return {
        "n_rows": sample.n_rows,
        "n_exact": int(exact.sum()),
        "n_right": int(right.sum()),
        "n_left": int(sample.is_left.sum()),
        "n_interval": int((~exact & ~right & (lo > -np.inf) & (hi < np.inf)).sum()),
        "n_truncated": int(sample.is_truncated.sum()),
        "total_weight": float(w.sum()),
        "truncation_min": _truncation_min(sample),
    }


def product_limit_sampler(
    sample: IncompleteSample, *, tail: TailRule = "at_last"
) -> KaplanMeierSampler:
    """Kaplan–Meier sampler of exact and right-censored rows with delayed entry (truncation).

    Parameters
    ----------
    sample : IncompleteSample
        Exact and right-censored rows; ``truncation`` holds entry times.
    tail : {"at_last", "exponential"}
        Where the mass beyond the largest value goes (module docstring).

    Returns
    -------
    KaplanMeierSampler
        ``params`` hold the counts and the tail rule (as for method ``kaplan_meier``) plus
        ``truncation_min``; ``diagnostics["incomplete"]`` the row counts and ``mass_beyond``.

    Raises
    ------
    MethodError
        Interval or left-censored rows (use :func:`turnbull_sampler`), an event at its entry
        time, no event at all, or an exponential tail on values below 0.

    Examples
    --------
    >>> from samplewright.fitting.incomplete_sample import incomplete_from_flags
    >>> s = incomplete_from_flags([2.0, 3.0, 5.0], np.array([False, True, False]),
    ...                           truncation=[0.0, 0.0, 1.0])
    >>> product_limit_sampler(s).cdf([2.0, 5.0]).round(4).tolist()
    [0.3333, 1.0]
    """
    rule = _tail_rule(tail, "kaplan_meier")
    r = estimate_product_limit(sample)
    events = r.n_events > 0
    if not events.any():
        raise MethodError(
            "censored: every row is censored; kaplan_meier needs at least one observed value"
        )
    time, surv = r.time[events], r.survival[events].copy()
    last, s_last = float(r.time[-1]), float(r.mass_beyond)
    rate: float | None = None
    if rule == "exponential" and s_last > 0:
        rate = tail_rate(sample, "kaplan_meier")
    elif s_last > 0:
        if time[-1] != last:
            time, surv = np.append(time, last), np.append(surv, 0.0)
        else:
            surv[-1] = 0.0
    exact = sample.is_exact
    w = sample.weights
    params: dict[str, Any] = {
        "n_events": int(exact.sum()),
        "n_censored": int((~exact).sum()),
        "events_weight": float(w[exact].sum()),
        "censored_weight": float(w[~exact].sum()),
        "weighted": bool(np.any(w != 1.0)),
        "tail": rule,
        "tail_rate": rate,
        "last_value": last,
        "last_censored": bool(r.n_censored[-1] > 0),
        "survival_at_last": s_last,
        "truncation_min": _truncation_min(sample),
    }
    sampler = KaplanMeierSampler(time, surv, params)
    sampler.diagnostics["incomplete"] = {
        "estimator": "product_limit",
        **_counts(sample),
        "mass_beyond": s_last,
        "tail": rule,
        "tail_rate": rate,
    }
    return sampler


def turnbull_sampler(
    sample: IncompleteSample,
    *,
    tail: TailRule = "at_last",
    tol: float = 1e-10,
    max_iter: int = 100_000,
) -> Sampler:
    """Sampler of Turnbull's estimate: any mix of exact, censored, interval and truncated rows.

    Parameters
    ----------
    sample : IncompleteSample
        The rows.
    tail : {"at_last", "exponential"}
        Where the mass beyond the largest finite point goes (module docstring).
    tol, max_iter
        Passed to :func:`~samplewright.fitting.nonparametric_incomplete.estimate_turnbull`.

    Returns
    -------
    PiecewiseSampler or SplicedSampler
        Method ``"turnbull"``; a SplicedSampler (piecewise body, exponential tail with
        ``xi = 0``) only when ``tail="exponential"`` and some mass lies beyond the data.
        ``diagnostics["incomplete"]`` holds the row counts, ``mass_beyond``, the tail rule and
        the EM's iterations and log-likelihood.

    Raises
    ------
    MethodError
        Mass on an interval starting at ``-inf``, every row right-censored, an exponential tail
        on values below 0, or an event at its truncation point.
    FitError
        The EM did not settle within ``max_iter`` steps.

    Examples
    --------
    >>> from samplewright.fitting.incomplete_sample import incomplete_sample
    >>> s = incomplete_sample([0.0, 0.0, 2.0, 0.0], [1.0, 1.0, 3.0, 3.0])
    >>> turnbull_sampler(s).cdf([0.5, 1.0, 2.5]).round(4).tolist()
    [0.3333, 0.6667, 0.8333]
    """
    rule = _tail_rule(tail, "turnbull")
    r = estimate_turnbull(sample, tol=tol, max_iter=max_iter)
    if not r.converged:
        raise FitError(
            f"turnbull: the EM did not settle within max_iter={max_iter} steps (masses still "
            f"moving by more than tol={tol}); raise max_iter"
        )
    if r.mass_below > _TINY:
        raise MethodError(
            f"turnbull: {r.mass_below:.3g} of the mass lies on an interval starting at -inf "
            "(left-censored rows with lower=-inf), which the data cannot place; give those "
            "rows the lower end of the quantity's range (0 for amounts and durations)"
        )
    beyond = float(r.mass_beyond) if r.mass_beyond > _TINY else 0.0
    if beyond >= 1.0 - _TINY or r.x.size == 0:
        raise MethodError(
            "turnbull: all the mass lies beyond the largest finite point (every informative row "
            "is right-censored); nothing is left to estimate"
        )
    x, p = r.x.copy(), r.p.copy()
    p[0] = 0.0
    rate: float | None = None
    sampler: Sampler
    if beyond == 0.0:
        p[-1] = 1.0
        sampler = PiecewiseSampler(x, np.minimum(p / p[-1], 1.0), method="turnbull")
    elif rule == "at_last":
        sampler = PiecewiseSampler(np.append(x, x[-1]), np.append(p, 1.0), method="turnbull")
    else:
        rate = tail_rate(sample, "turnbull")
        body = p / p[-1]
        body[-1] = 1.0
        sampler = SplicedSampler(
            PiecewiseSampler(x, body, method="interpolated"),
            threshold=float(x[-1]),
            zeta=beyond,
            xi=0.0,
            sigma=1.0 / rate,
            method="turnbull",
        )
    sampler.diagnostics["incomplete"] = {
        "estimator": "turnbull",
        **_counts(sample),
        "mass_beyond": beyond,
        "tail": rule,
        "tail_rate": rate,
        "n_intervals": int(r.mass.size),
        "n_iter": int(r.n_iter),
        "loglik": float(r.loglik),
    }
    return sampler
