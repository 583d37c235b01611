"""Ranking candidate families fitted to the same data by an information criterion.

:func:`rank_candidates` fits each candidate by maximum likelihood and orders them best first
(the rule is in its docstring); ``auto`` (:mod:`.auto`) and selection rank with it. Goodness-of-fit
statistics (and, on request, bootstrap p-values) are recorded for every candidate but do not
rank.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from samplewright.check.gof import (
    Resolution,
    check_count,
    edf_statistics,
    goodness_of_fit,
)
from samplewright.core.checks import check_sample
from samplewright.core.errors import FitError, MethodError
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.distributions.families import get_family
from samplewright.fitting.catalog import CRITERIA, Criterion
from samplewright.fitting.mle import fit_family

__all__ = ["CandidateResult", "rank_candidates"]


@dataclass(frozen=True)
class CandidateResult:
    """One candidate family in a ranking; ``error`` holds the reason when its fit failed.

    ``n_failed`` counts the bootstrap refits that failed and ``reliable`` says whether at most
    :data:`~samplewright.check.gof.MAX_FAILED_SHARE` of them did (True without a bootstrap).
    """

    family: str
    params: dict[str, float] = field(default_factory=dict)
    loglik: float = float("nan")
    n_params: int = 0
    aic: float = float("nan")
    bic: float = float("nan")
    statistics: dict[str, float] = field(default_factory=dict)
    pvalues: dict[str, float] = field(default_factory=dict)
    error: str | None = None
    n_failed: int = 0
    reliable: bool = True

    @property
    def ok(self) -> bool:
        """Whether the fit succeeded."""
        return self.error is None


def rank_candidates(
    values: Any,
    families: Sequence[str],
    *,
    criterion: Criterion = "aic",
    weights: Any = None,
    options: Mapping[str, Mapping[str, Any]] | None = None,
    n_resamples: int = 0,
    rng: SeedLike = None,
    resolution: Resolution = "detect",
) -> tuple[CandidateResult, ...]:
    """Fit every candidate family and order them best first.

    Selection rule: among the fits that succeeded, the lowest ``criterion`` wins (criteria
    equal to 8 decimal places tie); a tie goes to fewer estimated parameters, then to the family
    listed first. Failed fits follow, in the order listed, each with its one-line ``error``. The
    first element is the selection; the ranking does not use the goodness-of-fit p-values.

    Comparable candidates only: the families must be all continuous (densities) or all discrete
    (probability masses). A log-likelihood of a density and one of a mass are on different
    scales (a density's depends on the unit of measurement), so their AIC or BIC say nothing
    about which model is better; a mixed set is refused.

    Parameters
    ----------
    values, weights
        Data and optional frequency weights, as in :func:`goodness_of_fit`.
    families : sequence of str
        Distinct family names, all continuous or all discrete (a density and a probability
        mass are not comparable).
    criterion : {"aic", "bic"}
    options : mapping, optional
        Fit options per family name, e.g. ``{"gamma": {"loc": 0.0}}``.
    n_resamples : int, default 0
        When positive, bootstrap p-values are computed for every successful fit (each candidate
        gets its own stream spawned from ``rng`` in the listed order); 0 gives statistics only.
    rng : None, int, SeedSequence or Generator
    resolution : "detect", float or None
        Recording resolution the bootstrap replicates of continuous families are rounded to
        (:func:`~samplewright.check.gof.goodness_of_fit`).

    Returns
    -------
    tuple of CandidateResult

    Examples
    --------
    >>> import numpy as np
    >>> x = np.random.default_rng(3).gamma(4.0, 2.0, 300)
    >>> [c.family for c in rank_candidates(x, ["exponential", "gamma"])]
    ['gamma', 'exponential']
    """
    if criterion not in CRITERIA:
        raise MethodError(f"criterion: expected 'aic' or 'bic', found {criterion!r}")
    names = list(families)
    if not names:
        raise MethodError("families: expected at least one family name, found none")
    if len(set(names)) != len(names):
        raise MethodError(f"families: expected distinct names, found {names}")
    fams = [get_family(n) for n in names]
    if len({f.discrete for f in fams}) > 1:
        raise MethodError("families: expected all continuous or all discrete, found a mix")
    options = dict(options or {})
    extra = sorted(set(options) - set(names))
    if extra:
        raise MethodError(f"options: family {extra[0]!r} is not among the candidates")
    n_resamples = check_count(n_resamples, "n_resamples", 0)
    sample = check_sample(values, weights)
    x, w = sample.values, sample.weights_or_ones()
    streams = make_rng(rng).spawn(len(names)) if n_resamples else [None] * len(names)

    ok: list[tuple[tuple[float, int, int], CandidateResult]] = []
    failed: list[CandidateResult] = []
    for i, (name, stream) in enumerate(zip(names, streams, strict=True)):
        opts = dict(options.get(name, {}))
        try:
            if n_resamples:
                g = goodness_of_fit(
                    x,
                    name,
                    n_resamples=n_resamples,
                    rng=stream,
                    weights=w,
                    resolution=resolution,
                    **opts,
                )
                params, ll, aic, bic = g.params, g.loglik, g.aic, g.bic
                stats_, pvals, k = g.statistics, g.pvalues, g.n_params
                n_failed, reliable = g.n_failed, g.reliable
            else:
                out = fit_family(name, x, w, **opts)
                params, ll, aic, bic, k = out.params, out.loglik, out.aic, out.bic, out.n_params
                stats_ = edf_statistics(x, name, params, weights=w)
                pvals, n_failed, reliable = {}, 0, True
        except (FitError, MethodError) as err:
            failed.append(CandidateResult(name, error=str(err)))
            continue
        cand = CandidateResult(
            name, dict(params), ll, k, aic, bic, stats_, pvals, None, n_failed, reliable
        )
        ok.append(((round(aic if criterion == "aic" else bic, 8), k, i), cand))
    ok.sort(key=lambda t: t[0])
    return tuple(c for _, c in ok) + tuple(failed)
