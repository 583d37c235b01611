"""Incomplete data in a check: the rows, the matching nonparametric estimate, like-with-like.

A candidate fitted to truncated data is a *ground-up* distribution (a parametric family also
describes values below the deductibles, by extrapolating its shape), while the nonparametric
estimate of the same rows describes only what the data can see. When every row is truncated,
the smallest truncation point ``t0`` is the lowest value any row could have shown, and the
product-limit estimate with entry times (or Turnbull's) estimates ``X`` *given* ``X > t0``. A
candidate is compared with it through its conditional distribution

    ``F_c(x) = (F(x) - F(t0)) / (1 - F(t0))`` for ``x >= t0`` (0 below),
    ``Q_c(u) = Q(F(t0) + u (1 - F(t0)))``,

(:class:`ConditionalSampler`), the same conditioning as
:func:`~samplewright.check.gof_incomplete.goodness_of_fit_incomplete` uses. When some rows are
not truncated the estimate is of ``X`` itself and nothing is conditioned. ``F(t0)``, the share of
a candidate below ``t0``, is mass the data never saw (:func:`share_below`).

The matching nonparametric estimate (:func:`reference_estimate`) is the product-limit estimate
with entry times (Kaplan–Meier; rows exact or right-censored) with its pointwise 95% band of the
log(−log) transform with Greenwood's variance (Kalbfleisch & Prentice 2002, §1.4; with entry
times the risk sets are those of the estimate), or Turnbull's estimate (any interval, grouped or
left-censored rows; no band). Its quantiles are those of the matching sampler (the generalised
inverse with the sampler's level tolerance), and ``NaN`` above the level the estimate reaches
(the largest rows censored: the data do not say where the rest lies).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from samplewright.check.report_model import ReferenceEstimate, SamplerLike
from samplewright.core.errors import MethodError
from samplewright.fitting.incomplete_sample import (
    IncompleteSample,
    incomplete_from_flags,
    incomplete_sample,
)

__all__ = [
    "ConditionalSampler",
    "conditioned",
    "describe_reference",
    "incomplete_rows",
    "is_incomplete",
    "nonparametric_points",
    "reference_distance",
    "reference_estimate",
    "reference_quantiles",
    "share_below",
    "smallest_truncation",
]

_Z95 = 1.959963984540054


def incomplete_rows(
    values: Any = None,
    *,
    censored: Any = None,
    truncation: Any = None,
    lower: Any = None,
    upper: Any = None,
    weights: Any = None,
) -> IncompleteSample:
    """Rows as an :class:`~samplewright.fitting.incomplete_sample.IncompleteSample`.

    Either ``values`` (with right-censoring flags ``censored``), or ``lower`` and ``upper``
    (interval rows), or an ``IncompleteSample`` as ``values`` alone; ``truncation`` (one lower
    truncation point or one per row) and ``weights`` apply to the first two forms.

    >>> incomplete_rows([3.0, 5.0], censored=[False, True], truncation=1.0).is_right.tolist()
    [False, True]
    """
    if isinstance(values, IncompleteSample):
        extras = _extras(censored, truncation, lower, upper, weights)
        given = [n for n, v in extras if v is not None]
        if given:
            raise MethodError(
                f"{given[0]}: not taken with an IncompleteSample (its rows carry it already)"
            )
        return values
    if lower is not None or upper is not None:
        if values is not None or censored is not None:
            which = "values" if values is not None else "censored"
            raise MethodError(f"{which}: give values (with censored) or lower and upper, not both")
        if lower is None or upper is None:
            raise MethodError("lower/upper: interval rows need both")
        return incomplete_sample(lower, upper, truncation=truncation, weights=weights)
    if values is None:
        raise MethodError("values: expected values (or lower and upper), found none")
    x = np.asarray(values, dtype=np.float64).reshape(-1)
    flags = np.zeros(x.size, dtype=bool) if censored is None else np.asarray(censored, dtype=bool)
    return incomplete_from_flags(x, flags, truncation=truncation, weights=weights)


def _extras(*values: Any) -> list[tuple[str, Any]]:
    return list(zip(("censored", "truncation", "lower", "upper", "weights"), values, strict=True))


def is_incomplete(sample: IncompleteSample) -> bool:
    """True when some row is censored or interval-valued, or truncated."""
    return bool(np.any(~sample.is_exact) or np.any(sample.is_truncated))


def smallest_truncation(sample: IncompleteSample) -> float | None:
    """``t0``: the smallest truncation point when every row is truncated, else None."""
    t = sample.truncation
    return float(t.min()) if t.size and np.all(t > -np.inf) else None


# --- the nonparametric estimate -----------------------------------------------------------------


def _product_limit_only(sample: IncompleteSample) -> bool:
    return bool(np.all(sample.is_exact | sample.is_right))


def nonparametric_points(
    sample: IncompleteSample,
) -> tuple[str, np.ndarray, np.ndarray, np.ndarray]:
    """Where the data determine the nonparametric CDF, and its value there.

    Returns ``(estimator, x, cdf, left)``: ``"product_limit"`` (rows exact or right-censored)
    or ``"turnbull"``; ``left[i]`` marks a value just below ``x[i]`` (the CDF's left limit, the
    value before a jump), otherwise the value at ``x[i]``. Product-limit: before and after each
    event time, and at the largest time. Turnbull: before each innermost interval and at its
    right end (finite ends only).
    """
    from samplewright.core.errors import FitError
    from samplewright.fitting.nonparametric_incomplete import (
        estimate_product_limit,
        estimate_turnbull,
    )

    if _product_limit_only(sample):
        r = estimate_product_limit(sample)
        ev = r.n_events > 0
        before = np.concatenate([[1.0], r.survival])[:-1][ev]
        x = np.concatenate([np.repeat(r.time[ev], 2), r.time[-1:]])
        c = np.concatenate(
            [np.column_stack([1.0 - before, 1.0 - r.survival[ev]]).ravel(), 1.0 - r.survival[-1:]]
        )
        left = np.concatenate([np.tile([True, False], int(ev.sum())), [False]])
        return "product_limit", x, c, left
    t = estimate_turnbull(sample, tol=1e-9)
    if not t.converged:
        raise FitError("turnbull: the EM did not settle; the distance cannot be computed")
    cum = np.cumsum(t.mass)
    prev = np.concatenate([[0.0], cum[:-1]])
    xs = np.concatenate([t.left, t.right])
    cs = np.concatenate([prev, cum])
    ls = np.concatenate([np.ones(t.left.size, bool), np.zeros(t.right.size, bool)])
    keep = np.isfinite(xs)
    order = np.lexsort((cs[keep], xs[keep]))
    return "turnbull", xs[keep][order], np.minimum(cs[keep][order], 1.0), ls[keep][order]


def _greenwood_band(
    surv: np.ndarray, at_risk: np.ndarray, events: np.ndarray, z: float
) -> tuple[np.ndarray, np.ndarray]:
    """Pointwise band of the CDF ``1 - S`` from the log(−log) transform (module docstring)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        green = np.cumsum(
            np.where(at_risk > events, events / (at_risk * (at_risk - events)), np.inf)
        )
        sigma = np.sqrt(green) / np.abs(np.log(surv))
        low_s = surv ** np.exp(z * sigma)
        high_s = surv ** np.exp(-z * sigma)
    ok = np.isfinite(sigma) & (surv > 0) & (surv < 1)
    low_s = np.where(ok, low_s, surv)
    high_s = np.where(ok, high_s, surv)
    return np.maximum.accumulate(1.0 - high_s), np.maximum.accumulate(1.0 - low_s)


def reference_estimate(sample: IncompleteSample, *, z: float = _Z95) -> ReferenceEstimate:
    """The nonparametric estimate matching the rows (module docstring), with its sampler.

    ``z`` is the standard normal quantile of the Kaplan–Meier band (default: 95%).
    """
    from samplewright.fitting.incomplete_samplers import product_limit_sampler, turnbull_sampler
    from samplewright.fitting.nonparametric_incomplete import (
        estimate_product_limit,
        estimate_turnbull,
    )

    if _product_limit_only(sample):
        r = estimate_product_limit(sample)
        ev = r.n_events > 0
        if not ev.any():
            raise MethodError("censored: every row is censored; no nonparametric estimate")
        surv = r.survival[ev]
        low, high = _greenwood_band(surv, r.n_at_risk[ev], r.n_events[ev], z)
        return ReferenceEstimate(
            "Kaplan–Meier",
            r.time[ev],
            1.0 - surv,
            low=low,
            high=high,
            sampler=product_limit_sampler(sample),
            reached=1.0 - float(r.mass_beyond),
        )
    t = estimate_turnbull(sample)
    x, p = np.asarray(t.x, dtype=np.float64), np.asarray(t.p, dtype=np.float64)
    return ReferenceEstimate(
        "Turnbull",
        x,
        p,
        kind="knots",
        sampler=turnbull_sampler(sample),
        reached=1.0 - float(t.mass_beyond),
    )


def describe_reference(sample: IncompleteSample) -> str:
    """The matching nonparametric estimate in words, e.g. "the Kaplan–Meier estimate with entry
    times, given X > 2000".

    >>> describe_reference(incomplete_rows([3.0, 5.0], censored=[False, True], truncation=1.0))
    'the Kaplan–Meier estimate with entry times, given X > 1'
    """
    t0 = smallest_truncation(sample)
    given = "" if t0 is None else f", given X > {t0:.6g}"
    if _product_limit_only(sample):
        entry = " with entry times" if np.any(sample.is_truncated) else ""
        return f"the Kaplan–Meier estimate{entry}{given}"
    return f"Turnbull's estimate{given}"


def reference_quantiles(reference: ReferenceEstimate, u: Any) -> np.ndarray:
    """The estimate's quantiles at ``u`` (NaN above the level it reaches; module docstring)."""
    from samplewright.check.report_numbers import step_quantile
    from samplewright.distributions.steps import LEVEL_TOLERANCE

    uu = np.asarray(u, dtype=np.float64)
    if reference.sampler is not None:
        q = np.asarray(reference.sampler.quantile(uu), dtype=np.float64)
    else:
        q = step_quantile(reference.x, reference.cdf, uu)
    reached = reference.reached if reference.reached is not None else float(reference.cdf[-1])
    return np.where(uu <= reached + LEVEL_TOLERANCE, q, np.nan)


# --- conditioning -------------------------------------------------------------------------------


class ConditionalSampler:
    """A sampler's distribution given ``X > t0`` (module docstring); a report's ``SamplerLike``.

    >>> from samplewright.distributions.parametric import ParametricSampler
    >>> e = ParametricSampler("exponential", {"scale": 2.0, "loc": 0.0})
    >>> c = ConditionalSampler(e, 3.0)  # memoryless: 3 + the same exponential
    >>> [round(float(v), 6) for v in (c.quantile(0.5), 3.0 + e.quantile(0.5), c.mean)]
    [4.386294, 4.386294, 5.0]
    """

    def __init__(self, base: SamplerLike, t0: float) -> None:
        self.base = base
        self.t0 = float(t0)
        self.method = base.method
        self.params = base.params
        self.share_below = float(np.asarray(base.cdf(self.t0)))
        self._above = 1.0 - self.share_below
        if not self._above > 0.0:
            raise MethodError(
                f"{base.method}: puts no probability above {self.t0:.6g}, the smallest "
                "truncation point; it cannot be compared with the data"
            )

    def cdf(self, x: Any) -> np.ndarray:
        f = np.asarray(self.base.cdf(x), dtype=np.float64)
        out = (f - self.share_below) / self._above
        return np.where(np.asarray(x, dtype=np.float64) >= self.t0, np.clip(out, 0.0, 1.0), 0.0)

    def quantile(self, u: Any) -> np.ndarray:
        uu = np.asarray(u, dtype=np.float64)
        # a level below 1 stays below 1 (F(t0) + u (1 - F(t0)) may round up to 1)
        level = np.where(
            uu < 1.0,
            np.minimum(self.share_below + uu * self._above, np.nextafter(1.0, 0.0)),
            1.0,
        )
        return np.maximum(np.asarray(self.base.quantile(level), dtype=np.float64), self.t0)

    def pdf(self, x: Any) -> np.ndarray:
        xx = np.asarray(x, dtype=np.float64)
        d = np.asarray(self.base.pdf(xx), dtype=np.float64)  # type: ignore[attr-defined]
        return np.where(xx > self.t0, d / self._above, 0.0)

    def pmf(self, x: Any) -> np.ndarray:
        xx = np.asarray(x, dtype=np.float64)
        m = np.asarray(self.base.pmf(xx), dtype=np.float64)  # type: ignore[attr-defined]
        return np.where(xx > self.t0, m / self._above, 0.0)

    def _moment(self, power: int) -> float:
        from samplewright.check.report_numbers import quantile_integral

        return quantile_integral(lambda u: self.quantile(u) ** power, 0.0)

    @property
    def mean(self) -> float:
        return self._moment(1) if math.isfinite(float(self.base.mean)) else math.inf

    @property
    def var(self) -> float:
        if not math.isfinite(float(self.base.var)):
            return math.inf
        m = self.mean
        return max(self._moment(2) - m * m, 0.0)

    @property
    def support(self) -> tuple[float, float]:
        lo, hi = self.base.support
        return max(float(lo), self.t0), float(hi)


def conditioned(sampler: SamplerLike, t0: float | None) -> SamplerLike:
    """``sampler`` given ``X > t0`` (itself when ``t0`` is None or it has nothing below)."""
    if t0 is None or float(np.asarray(sampler.cdf(float(t0)))) == 0.0:
        return sampler
    return ConditionalSampler(sampler, t0)


def share_below(sampler: SamplerLike, t0: float | None) -> float:
    """``F(t0)``: the candidate's probability at or below ``t0`` (0 without truncation)."""
    return 0.0 if t0 is None else float(np.asarray(sampler.cdf(float(t0))))


def reference_distance(sample: IncompleteSample, sampler: SamplerLike) -> float:
    """``sup |F_np - F_c|`` where the data determine ``F_np`` (:func:`nonparametric_points`),
    ``F_c`` the sampler given ``X > t0`` when every row is truncated. Without censoring and
    truncation it is the Kolmogorov–Smirnov distance."""
    _, x, c, left = nonparametric_points(sample)
    if x.size == 0:
        return 0.0
    cond = conditioned(sampler, smallest_truncation(sample))
    at = np.where(left, np.nextafter(x, -np.inf), x)
    f = np.asarray(cond.cdf(at), dtype=np.float64)
    return float(np.max(np.abs(c - f)))
