"""How much the choice among a dataset's candidate samplers moves the figures a risk model uses.

:func:`candidate_spread` tabulates, for each candidate, the key quantiles (default 0.5, 0.9,
0.99, 0.999) and the tail mean beyond ``tail_level`` (0.99), then for each figure the smallest
and largest value across candidates, their difference and ratio. With ``ensembles`` (parameter
replicates of a candidate, :func:`samplewright.fitting.replicates.fit_replicates`) each figure
also gets a bootstrap percentile interval across the replicates, so a reviewer can see whether
the candidates differ by more than each one's own parameter uncertainty.

Definitions (the check report's, :mod:`samplewright.check.report_numbers`):

* quantile: the generalised inverse ``Q(u) = inf{x : F(x) >= u}``;
* tail mean at level ``p``: ``(1 / (1 - p)) * integral_p^1 Q(u) du`` (expected shortfall,
  Acerbi & Tasche 2002), exact for empirical and empirical-pmf samplers, otherwise by the
  report's midpoint rule (infinite when the sampler's mean is);
* ratio: largest / smallest when both are > 0, else NaN (a ratio of values of mixed or negative
  sign says nothing).

The result renders as Markdown with :func:`render_candidate_spread_markdown`. Pure: nothing is
read or written and no randomness is used.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.check.report_model import KEY_PROBABILITIES, ConfidenceInterval, SamplerLike
from samplewright.check.report_numbers import sampler_tail_mean, step_tail_mean
from samplewright.core.errors import MethodError
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.empirical_pmf import EmpiricalPmfSampler
from samplewright.distributions.ensemble import EnsembleSampler
from samplewright.resample.intervals import check_level, interval_from_distribution

__all__ = [
    "CandidateFiguresResult",
    "CandidateSpreadResult",
    "FigureSpreadResult",
    "candidate_spread",
    "figure_names",
    "render_candidate_spread_markdown",
    "tail_mean",
]


@dataclass(frozen=True)
class CandidateFiguresResult:
    """The figures of one candidate.

    Attributes
    ----------
    label : str
    figures : dict
        Figure name (``"quantile:0.99"``, ``"tail_mean:0.99"``) -> value.
    intervals : dict
        Figure name -> percentile interval across the candidate's replicates (empty without an
        ensemble).
    n_replicates : int
        Replicates behind the intervals (0 without an ensemble).
    """

    label: str
    figures: dict[str, float]
    intervals: dict[str, ConfidenceInterval]
    n_replicates: int


@dataclass(frozen=True)
class FigureSpreadResult:
    """One figure across the candidates.

    Attributes
    ----------
    figure : str
        ``"quantile:<p>"`` or ``"tail_mean:<p>"``.
    smallest, largest : float
        Its extreme values across candidates.
    smallest_label, largest_label : str
        The candidates that give them (the first listed on ties).
    difference : float
        ``largest - smallest``.
    ratio : float
        ``largest / smallest`` when both are > 0, else NaN.
    """

    figure: str
    smallest: float
    largest: float
    smallest_label: str
    largest_label: str
    difference: float
    ratio: float


@dataclass(frozen=True)
class CandidateSpreadResult:
    """Key figures of each candidate and their spread across candidates.

    Attributes
    ----------
    probabilities : tuple of float
        The quantile levels.
    tail_level : float
        The level of the tail mean.
    figures : tuple of str
        Figure names in table order (quantiles, then the tail mean).
    candidates : tuple of CandidateFiguresResult
        In the order given.
    spread : tuple of FigureSpreadResult
        One per figure, in table order.
    confidence_level : float
        Level of the replicate intervals.
    """

    probabilities: tuple[float, ...]
    tail_level: float
    figures: tuple[str, ...]
    candidates: tuple[CandidateFiguresResult, ...]
    spread: tuple[FigureSpreadResult, ...]
    confidence_level: float


def figure_names(probabilities: Sequence[float], tail_level: float) -> tuple[str, ...]:
    """The figure names, in the form statistic names take (``quantile:0.5``, ``tail_mean:0.99``).

    >>> figure_names([0.5, 0.99], 0.99)
    ('quantile:0.5', 'quantile:0.99', 'tail_mean:0.99')
    """
    return (*(f"quantile:{p:g}" for p in probabilities), f"tail_mean:{tail_level:g}")


def tail_mean(sampler: SamplerLike, level: float) -> float:
    """``(1 / (1 - p)) * integral_p^1 Q(u) du``: exact for empirical and empirical-pmf samplers.

    >>> tail_mean(EmpiricalSampler([1.0, 2.0, 3.0, 4.0]), 0.5)
    3.5
    """
    if isinstance(sampler, EmpiricalSampler | EmpiricalPmfSampler):
        atoms = np.unique(sampler.values)
        return step_tail_mean(atoms, level, sampler.pmf(atoms))
    return sampler_tail_mean(sampler, level)


def _figures(sampler: SamplerLike, probs: np.ndarray, level: float) -> np.ndarray:
    q = np.asarray(sampler.quantile(probs), dtype=np.float64)
    return np.append(q, tail_mean(sampler, level))


def _check_probability(p: Any, name: str, *, closed_low: bool) -> float:
    if isinstance(p, bool) or not isinstance(p, int | float | np.floating):
        raise MethodError(f"{name}: expected a number in (0, 1), found {p!r}")
    v = float(p)
    if not (0.0 <= v < 1.0 if closed_low else 0.0 < v < 1.0):
        raise MethodError(f"{name}: expected a number in (0, 1), found {p!r}")
    return v


def candidate_spread(
    samplers: Sequence[SamplerLike],
    labels: Sequence[str],
    *,
    probabilities: Sequence[float] = KEY_PROBABILITIES,
    tail_level: float = 0.99,
    ensembles: Sequence[EnsembleSampler | None] | None = None,
    confidence_level: float = 0.95,
) -> CandidateSpreadResult:
    """Key quantiles and tail mean of each candidate, and their spread across candidates.

    Parameters
    ----------
    samplers : sequence of samplers
        The candidates (at least one).
    labels : sequence of str
        One distinct label per candidate.
    probabilities : sequence of float
        Quantile levels, each in (0, 1) (default 0.5, 0.9, 0.99, 0.999).
    tail_level : float
        Level ``p`` of the tail mean, in [0, 1) (default 0.99).
    ensembles : sequence, optional
        One entry per candidate: its parameter replicates (an EnsembleSampler) or None.
    confidence_level : float
        Level of the percentile intervals across replicates.

    Returns
    -------
    CandidateSpreadResult

    Examples
    --------
    >>> from samplewright.distributions.parametric import ParametricSampler
    >>> a = ParametricSampler("exponential", {"scale": 1.0, "loc": 0.0})
    >>> b = ParametricSampler("exponential", {"scale": 2.0, "loc": 0.0})
    >>> r = candidate_spread([a, b], ["one", "two"], probabilities=[0.5])
    >>> r.figures, round(r.spread[0].ratio, 12), round(r.spread[1].largest, 4)
    (('quantile:0.5', 'tail_mean:0.99'), 2.0, 11.2103)
    """
    samplers, labels = list(samplers), list(labels)
    if not samplers:
        raise MethodError("samplers: expected at least one candidate, found none")
    if len(labels) != len(samplers) or len(set(labels)) != len(labels):
        raise MethodError(
            f"labels: expected {len(samplers)} distinct labels (one per sampler), found {labels}"
        )
    probs = tuple(_check_probability(p, "probabilities", closed_low=False) for p in probabilities)
    if not probs:
        raise MethodError("probabilities: expected at least one level, found none")
    level = _check_probability(tail_level, "tail_level", closed_low=True)
    conf = check_level(confidence_level)
    ens = list(ensembles) if ensembles is not None else [None] * len(samplers)
    if len(ens) != len(samplers):
        raise MethodError(
            f"ensembles: expected {len(samplers)} entries (one per sampler, None allowed), "
            f"found {len(ens)}"
        )
    names = figure_names(probs, level)
    p_arr = np.asarray(probs)
    rows = []
    for label, sampler, e in zip(labels, samplers, ens, strict=True):
        values = _figures(sampler, p_arr, level)
        intervals: dict[str, ConfidenceInterval] = {}
        n_rep = 0
        if e is not None:
            if not isinstance(e, EnsembleSampler):
                raise MethodError(f"ensembles: expected an EnsembleSampler or None for {label!r}")
            n_rep = e.n_replicates
            reps = np.column_stack(
                [
                    e.replicate_quantiles(p_arr),
                    [tail_mean(e.replicate(i), level) for i in range(n_rep)],
                ]
            )
            for k, name in enumerate(names):
                low, high = interval_from_distribution(reps[:, k], values[k], confidence_level=conf)
                intervals[name] = ConfidenceInterval(low, high, conf)
        rows.append(
            CandidateFiguresResult(
                label, dict(zip(names, map(float, values), strict=True)), intervals, n_rep
            )
        )
    spread = []
    for name in names:
        vals = np.array([r.figures[name] for r in rows])
        lo, hi = int(np.argmin(vals)), int(np.argmax(vals))
        small, large = float(vals[lo]), float(vals[hi])
        ratio = large / small if small > 0 and large > 0 else math.nan
        spread.append(
            FigureSpreadResult(name, small, large, labels[lo], labels[hi], large - small, ratio)
        )
    return CandidateSpreadResult(probs, level, names, tuple(rows), tuple(spread), conf)


def _num(v: float, digits: int) -> str:
    return f"{v:.{digits}g}" if math.isfinite(v) else ("∞" if v > 0 else "–" if v != v else "-∞")


def render_candidate_spread_markdown(result: CandidateSpreadResult, *, digits: int = 4) -> str:
    """A Markdown table: one row per candidate (intervals in brackets), then the spread rows.

    >>> from samplewright.distributions.parametric import ParametricSampler
    >>> a = ParametricSampler("exponential", {"scale": 1.0, "loc": 0.0})
    >>> r = candidate_spread([a], ["exp"], probabilities=[0.5])
    >>> print(render_candidate_spread_markdown(r, digits=3))
    | candidate | Q(0.5) | mean beyond Q(0.99) |
    |---|---:|---:|
    | exp | 0.693 | 5.61 |
    | smallest | 0.693 | 5.61 |
    | largest | 0.693 | 5.61 |
    | largest / smallest | 1 | 1 |
    """
    heads = [f"Q({p:g})" for p in result.probabilities]
    heads.append(f"mean beyond Q({result.tail_level:g})")
    lines = [
        "| candidate | " + " | ".join(heads) + " |",
        "|---|" + "---:|" * len(heads),
    ]
    for row in result.candidates:
        cells = []
        for name in result.figures:
            cell = _num(row.figures[name], digits)
            ci = row.intervals.get(name)
            if ci is not None:
                cell += f" [{_num(ci.low, digits)}, {_num(ci.high, digits)}]"
            cells.append(cell)
        lines.append(f"| {row.label} | " + " | ".join(cells) + " |")
    for title, attr in (("smallest", "smallest"), ("largest", "largest")):
        cells = [_num(getattr(s, attr), digits) for s in result.spread]
        lines.append(f"| {title} | " + " | ".join(cells) + " |")
    ratios = [_num(s.ratio, digits) for s in result.spread]
    lines.append("| largest / smallest | " + " | ".join(ratios) + " |")
    counts = sorted({r.n_replicates for r in result.candidates if r.intervals})
    if counts:
        n = " or ".join(str(c) for c in counts)
        lines += [
            "",
            f"In brackets: {result.confidence_level:.0%} percentile intervals across {n} "
            "parameter replicates of the candidate.",
        ]
    return "\n".join(lines)
