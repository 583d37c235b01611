"""The numbers a check report shows, derived once from its input (:func:`derive_numbers`).

Definitions used throughout:

- quantile: the generalised inverse ``Q(u) = inf{x : F(x) >= u}``, for the data (``numpy.quantile``
  with ``method="inverted_cdf"``, Hyndman & Fan 1996 definition 1; for incomplete data the
  nonparametric estimate's own sampler) and for every sampler alike, so an empirical sampler's row
  equals the data's row and a Kaplan–Meier candidate's row the Kaplan–Meier estimate's; a level
  within :data:`~samplewright.distributions.steps.LEVEL_TOLERANCE` above a step selects that step,
  as the samplers do;
- given above ``t0``: when every row of the data is truncated, ``t0`` the smallest truncation
  point, the data show ``X`` given ``X > t0`` only; each candidate is then compared with them
  through its conditional distribution
  (:class:`~samplewright.check.incomplete_reference.ConditionalSampler`), and its ground-up
  figures (what a simulation draws) are kept apart, with ``F(t0)``, the share the data never saw;
- tail mean at level ``p``: ``(1 / (1 - p)) ∫_p^1 Q(u) du``, the mean of the worst ``1 - p``
  share (expected shortfall, Acerbi & Tasche 2002); for data it is exact, for a sampler it is a
  midpoint rule on ``u = 1 - (1 - p) r^4`` (infinite when the sampler's mean is);
- confidence band of an empirical CDF: the Dvoretzky–Kiefer–Wolfowitz band with Massart's
  constant, half-width ``sqrt(log(2 / alpha) / (2 n))`` (Kish's effective ``n`` with weights).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from samplewright.check.report_model import (
    Candidate,
    CheckReportInput,
    ConfidenceInterval,
    ReportWarning,
    SamplerLike,
)

__all__ = [
    "CandidateNumbersResult",
    "DriftNumbersResult",
    "ReportNumbersResult",
    "derive_numbers",
    "dkw_half_width",
    "effective_n",
    "failed_refits_message",
    "is_discrete",
    "ks_between",
    "quantile_integral",
    "rank_correlation",
    "sampler_tail_mean",
    "step_quantile",
    "step_tail_mean",
    "truncation_warnings",
]

_POOR_FIT_P = 0.01


def dkw_half_width(n: float, alpha: float = 0.05) -> float:
    """Half-width of the DKW band around an empirical CDF of ``n`` values, ``1 - alpha`` level.

    >>> round(dkw_half_width(100, 0.05), 4)
    0.1358
    """
    return math.sqrt(math.log(2.0 / alpha) / (2.0 * n))


def effective_n(weights: np.ndarray | None, n: int) -> float:
    """Kish's effective sample size ``(sum w)^2 / sum w^2`` (``n`` without weights)."""
    if weights is None:
        return float(n)
    return float(np.sum(weights) ** 2 / np.sum(weights**2))


def step_quantile(x: Any, cdf: Any, u: Any) -> np.ndarray:
    """Generalised inverse of a step CDF (``cdf[i]`` from ``x[i]`` on); NaN where never reached.

    A level within ``LEVEL_TOLERANCE`` above a step selects it, as the step samplers do
    (:mod:`samplewright.distributions.steps`).

    >>> step_quantile([1.0, 2.0, 3.0], np.cumsum([0.1] * 3) / 0.3, [0.5, 2 / 3, 1.0]).tolist()
    [2.0, 2.0, 3.0]
    """
    from samplewright.distributions.steps import LEVEL_TOLERANCE

    x, f = np.asarray(x, dtype=np.float64), np.asarray(cdf, dtype=np.float64)
    u = np.asarray(u, dtype=np.float64)
    idx = np.searchsorted(f, u - LEVEL_TOLERANCE, side="left")
    return np.where(idx < x.size, x[np.minimum(idx, x.size - 1)], np.nan)


def step_tail_mean(values: Any, level: float, weights: Any = None) -> float:
    """Exact ``(1/(1-p)) ∫_p^1 Q(u) du`` for the (weighted) empirical distribution of ``values``.

    >>> step_tail_mean([1.0, 2.0, 3.0, 4.0], 0.5)
    3.5
    """
    x = np.asarray(values, dtype=np.float64)
    order = np.argsort(x, kind="stable")
    x = x[order]
    w = np.ones_like(x) if weights is None else np.asarray(weights, dtype=np.float64)[order]
    cum = np.cumsum(w) / np.sum(w)
    prev = np.concatenate([[0.0], cum[:-1]])
    overlap = np.clip(cum, level, 1.0) - np.clip(prev, level, 1.0)
    return float(np.dot(overlap, x) / (1.0 - level))


def sampler_tail_mean(sampler: SamplerLike, level: float, *, n_cells: int = 1 << 14) -> float:
    """Mean of the worst ``1 - level`` share of a sampler, ``(1/(1-p)) ∫_p^1 Q(u) du``.

    Midpoint rule on ``u = 1 - (1 - p) r^4``, which keeps heavy tails integrable; ``u`` is held
    below 1 so that an unbounded quantile function stays finite. Infinite when the mean is.
    """
    if not np.isfinite(sampler.mean):
        return math.inf
    return quantile_integral(sampler.quantile, level, n_cells=n_cells)


def quantile_integral(quantile: Any, level: float, *, n_cells: int = 1 << 14) -> float:
    """``(1/(1-p)) ∫_p^1 g(u) du`` of a function ``g`` of the level (e.g. a quantile function),
    by the midpoint rule on ``u = 1 - (1 - p) r^4`` with ``u`` held below 1."""
    r = (np.arange(n_cells) + 0.5) / n_cells
    u = np.minimum(1.0 - (1.0 - level) * r**4, np.nextafter(1.0, 0.0))
    q = np.asarray(quantile(u), dtype=np.float64)
    return float(np.mean(q * 4.0 * r**3))


def is_discrete(sampler: SamplerLike) -> bool:
    """True when the sampler has no density (a count family or an empirical pmf)."""
    pdf = getattr(sampler, "pdf", None)
    if pdf is None:
        return True
    try:
        pdf(np.asarray([float(np.asarray(sampler.quantile(0.5)))]))
    except AttributeError:
        return True
    return False


def rank_correlation(table: Any, given: Any = None) -> np.ndarray:
    """Spearman's rank correlation matrix of the columns of ``table`` (``given`` if not None).

    Pearson correlation of average ranks, as ``scipy.stats.spearmanr`` defines it.
    """
    if given is not None:
        return np.asarray(given, dtype=np.float64)
    from scipy.stats import rankdata

    ranks = rankdata(np.asarray(table, dtype=np.float64), axis=0)
    return np.atleast_2d(np.corrcoef(ranks, rowvar=False))


def ks_between(a: SamplerLike, b: SamplerLike, *, n_grid: int = 4001) -> float:
    """``sup |F_a - F_b|`` evaluated at 4,001 quantiles of each sampler and just below them.

    Exact at the jumps of step CDFs finer than the grid; otherwise within about 1/4000.
    """
    u = np.linspace(0.0, 1.0, n_grid)[1:-1]
    pts = np.concatenate([np.asarray(a.quantile(u)), np.asarray(b.quantile(u))])
    pts = np.unique(pts[np.isfinite(pts)])
    below = np.nextafter(pts, -np.inf)
    gaps = [np.abs(np.asarray(a.cdf(p)) - np.asarray(b.cdf(p))) for p in (pts, below)]
    return float(max(np.max(g) for g in gaps))


@dataclass(frozen=True)
class CandidateNumbersResult:
    """Key quantiles and tail mean of one candidate (or of the data's reference row).

    ``computed`` is True where the numbers were derived here rather than given.
    """

    label: str
    quantiles: dict[float, float]
    tail_mean: float
    quantile_intervals: dict[float, ConfidenceInterval]
    tail_mean_interval: ConfidenceInterval | None
    computed: bool


@dataclass(frozen=True)
class DriftNumbersResult:
    """What moved between the previous selection and the selected candidate."""

    ks_distance: float
    threshold: float
    flagged: bool
    quantile_shifts: dict[float, tuple[float, float]]  # probability -> (old, new)
    mean: tuple[float, float]
    tail_mean: tuple[float, float]


@dataclass(frozen=True)
class ReportNumbersResult:
    """All numbers a report shows, derived once.

    ``candidates`` and ``spread`` are the ground-up figures (what a simulation draws).
    ``given_above`` is ``t0`` when every row of the data is truncated; then ``conditional`` holds
    each candidate's figures given ``X > t0`` (what the data row is compared with),
    ``conditional_spread`` their spread, and ``share_below`` each candidate's ``F(t0)``.
    """

    candidates: tuple[CandidateNumbersResult, ...]
    data_row: CandidateNumbersResult | None
    spread: dict[float | str, tuple[float, float]]  # probability or "tail_mean" -> (min, max)
    drift: DriftNumbersResult | None
    warnings: tuple[tuple[ReportWarning, bool], ...]  # (warning, found by the report)
    given_above: float | None = None
    conditional: tuple[CandidateNumbersResult, ...] = ()
    conditional_spread: dict[float | str, tuple[float, float]] = field(default_factory=dict)
    share_below: dict[str, float] = field(default_factory=dict)


def _candidate_numbers(
    c: Candidate, probs: Sequence[float], level: float
) -> CandidateNumbersResult:
    given = dict(c.quantiles or {})
    missing = [p for p in probs if p not in given]
    computed = bool(missing) or c.tail_mean is None
    if missing:
        q = np.asarray(c.sampler.quantile(np.asarray(missing)), dtype=np.float64)
        given.update(zip(missing, (float(v) for v in q), strict=True))
    tail = c.tail_mean if c.tail_mean is not None else sampler_tail_mean(c.sampler, level)
    return CandidateNumbersResult(
        label=c.label,
        quantiles={p: given[p] for p in probs},
        tail_mean=float(tail),
        quantile_intervals=dict(c.quantile_intervals),
        tail_mean_interval=c.tail_mean_interval,
        computed=computed,
    )


def _conditional_numbers(
    c: Candidate, t0: float, probs: Sequence[float], level: float
) -> CandidateNumbersResult:
    from samplewright.check.incomplete_reference import conditioned

    s = conditioned(c.sampler, t0)
    q = np.asarray(s.quantile(np.asarray(probs)), dtype=np.float64)
    return CandidateNumbersResult(
        label=c.label,
        quantiles={float(p): float(v) for p, v in zip(probs, q, strict=True)},
        tail_mean=sampler_tail_mean(s, level),
        quantile_intervals={},
        tail_mean_interval=None,
        computed=True,
    )


def _data_numbers(report: CheckReportInput) -> CandidateNumbersResult | None:
    from samplewright.check.incomplete_reference import reference_quantiles

    probs, level = np.asarray(report.probabilities), report.tail_level
    data, ref = report.data, report.reference
    if ref is not None and (ref.kind == "step" or ref.sampler is not None):
        q = reference_quantiles(ref, probs)
        reached = ref.reached if ref.reached is not None else float(ref.cdf[-1])
        if reached < 1.0 - 1e-12:
            tail = math.nan  # the data do not say where the mass beyond the largest value lies
        elif ref.sampler is not None:
            tail = sampler_tail_mean(ref.sampler, level)
        else:
            tail = step_tail_mean(ref.x, level, np.diff(np.concatenate([[0.0], ref.cdf])))
        label = f"{ref.label} (nonparametric)"
    elif data is not None and not data.is_incomplete:
        q = np.quantile(data.values, probs, method="inverted_cdf", weights=data.weights)
        tail = step_tail_mean(data.values, level, data.weights)
        label = "data"
    else:
        return None
    return CandidateNumbersResult(
        label=label,
        quantiles={float(p): float(v) for p, v in zip(probs, q, strict=True)},
        tail_mean=tail,
        quantile_intervals={},
        tail_mean_interval=None,
        computed=True,
    )


def _drift_numbers(report: CheckReportInput) -> DriftNumbersResult | None:
    d, new = report.drift, report.selected_candidate
    if d is None or new is None:
        return None
    old_s, new_s = d.previous, new.sampler
    ks = d.ks_distance if d.ks_distance is not None else ks_between(old_s, new_s)
    probs = np.asarray(report.probabilities)
    old_q = np.asarray(old_s.quantile(probs), dtype=np.float64)
    new_q = np.asarray(new_s.quantile(probs), dtype=np.float64)
    level = report.tail_level
    return DriftNumbersResult(
        ks_distance=float(ks),
        threshold=d.threshold,
        flagged=bool(d.flagged) if d.flagged is not None else bool(ks > d.threshold),
        quantile_shifts={
            float(p): (float(a), float(b)) for p, a, b in zip(probs, old_q, new_q, strict=True)
        },
        mean=(float(old_s.mean), float(new_s.mean)),
        tail_mean=(sampler_tail_mean(old_s, level), sampler_tail_mean(new_s, level)),
    )


def failed_refits_message(label: str, n_failed: int, n_replicates: int | None) -> str:
    """What failed bootstrap refits mean for a candidate's p-values (as the tests treat them:
    left out, :mod:`samplewright.check.gof`)."""
    from samplewright.check.gof import MAX_FAILED_SHARE

    if not n_replicates:
        return f"{label}: {n_failed} bootstrap refits failed and were left out of its p-values"
    text = (
        f"{label}: {n_failed} of {n_replicates} bootstrap refits failed; they are left out of its "
        f"p-values (computed over the {n_replicates - n_failed} that succeeded), which assumes "
        "the failures are unrelated to how well the model fits"
    )
    if n_failed > MAX_FAILED_SHARE * n_replicates:
        text += f"; more than {MAX_FAILED_SHARE:.0%} failed, so those p-values are unreliable"
    return text


def truncation_warnings(
    labels: Sequence[str], samplers: Sequence[SamplerLike], t0: float | None, units: str = ""
) -> list[ReportWarning]:
    """Warnings about what lies below ``t0``, the smallest truncation point: the share of each
    candidate there (mass the data never saw), or that a candidate puts nothing there."""
    if t0 is None:
        return []
    unit = f" {units}" if units else ""
    out = []
    for label, s in zip(labels, samplers, strict=True):
        share = float(np.asarray(s.cdf(t0)))
        if share > 0.0:
            out.append(
                ReportWarning(
                    "support_beyond_data",
                    f"{label} puts {share:.1%} of its draws at or below {t0:.6g}{unit}, the "
                    "smallest truncation point: the data never saw that range (it is the "
                    "family's extrapolation); below it only the ground-up figures apply",
                )
            )
        else:
            out.append(
                ReportWarning(
                    "other",
                    f"{label} describes only values above {t0:.6g}{unit}, the smallest "
                    "truncation point: a simulation drawing from it never draws below it",
                )
            )
    return out


def _derived_warnings(
    report: CheckReportInput, drift: DriftNumbersResult | None
) -> list[ReportWarning]:
    """Warnings the report finds itself, for kinds the input did not already warn about."""
    given = {w.kind for w in report.warnings}
    said = {w.message for w in report.warnings}
    found: list[ReportWarning] = []
    chosen = report.selected_candidate
    if chosen is not None and "poor_fit" not in given:
        bad = [f for f in chosen.fit_checks if f.p_value is not None and f.p_value <= _POOR_FIT_P]
        if bad:
            tests = ", ".join(f"{f.statistic} (p = {f.p_value:.3g})" for f in bad)
            found.append(
                ReportWarning(
                    "poor_fit",
                    f"the selected sampler {chosen.label} fails {tests}: a bootstrap p-value at "
                    f"or below {_POOR_FIT_P:g}",
                )
            )
    if "failed_refits" not in given:
        for c in report.candidates:
            failed = [f for f in c.fit_checks if f.n_failed]
            if failed:
                f = max(failed, key=lambda f: f.n_failed)
                found.append(
                    ReportWarning(
                        "failed_refits", failed_refits_message(c.label, f.n_failed, f.n_replicates)
                    )
                )
    data = report.data
    if data is not None and data.n_incomplete and "censoring_share" not in given:
        share = data.n_incomplete / data.values.size
        found.append(
            ReportWarning(
                "censoring_share",
                f"{data.n_incomplete} of {data.values.size} rows ({share:.0%}) are not observed "
                "exactly (censored or interval-valued)",
            )
        )
    t0 = data.conditioned_on if data is not None else None
    labels = [c.label for c in report.candidates]
    samplers = [c.sampler for c in report.candidates]
    found += [
        w for w in truncation_warnings(labels, samplers, t0, report.units) if w.message not in said
    ]
    if drift is not None and drift.flagged and "drift" not in given:
        found.append(
            ReportWarning(
                "drift",
                f"the selection moved by KS distance {drift.ks_distance:.3g} since the previous "
                f"one (flag threshold {drift.threshold:g})",
            )
        )
    return found


def _spread(
    rows: Sequence[CandidateNumbersResult], probs: Sequence[float]
) -> dict[float | str, tuple[float, float]]:
    spread: dict[float | str, tuple[float, float]] = {}
    for p in probs:
        vals = [r.quantiles[p] for r in rows]
        spread[p] = (min(vals), max(vals))
    tails = [r.tail_mean for r in rows]
    spread["tail_mean"] = (min(tails), max(tails))
    return spread


def derive_numbers(report: CheckReportInput) -> ReportNumbersResult:
    """Compute every number the report shows that the input does not carry."""
    probs, level = report.probabilities, report.tail_level
    rows = tuple(_candidate_numbers(c, probs, level) for c in report.candidates)
    t0 = report.data.conditioned_on if report.data is not None else None
    conditional: tuple[CandidateNumbersResult, ...] = ()
    share: dict[str, float] = {}
    if t0 is not None:
        conditional = tuple(_conditional_numbers(c, t0, probs, level) for c in report.candidates)
        share = {c.label: float(np.asarray(c.sampler.cdf(t0))) for c in report.candidates}
    drift = _drift_numbers(report)
    warnings = [(w, False) for w in report.warnings]
    warnings += [(w, True) for w in _derived_warnings(report, drift)]
    return ReportNumbersResult(
        candidates=rows,
        data_row=_data_numbers(report),
        spread=_spread(rows, probs),
        drift=drift,
        warnings=tuple(warnings),
        given_above=t0,
        conditional=conditional,
        conditional_spread=_spread(conditional, probs) if conditional else {},
        share_below=share,
    )
