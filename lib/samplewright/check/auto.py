"""Method ``auto``: fit a candidate set of families and keep the best by a documented rule.

Rule: every candidate is fitted by maximum likelihood (fits that fail are listed with their error
and never chosen); the one with the lowest AIC (or BIC, ``criterion="bic"``) wins; criteria equal
to 8 decimals tie, and ties go to fewer estimated parameters, then to the candidate listed first.
Goodness of fit does not choose, it informs: for each candidate the Kolmogorov–Smirnov,
Anderson–Darling and Cramér–von Mises statistics are recorded with p-values from a parametric
bootstrap that refits the family on every replicate (``n_resamples``, default 99; 0 turns it
off). The bootstrap's random stream comes from ``seed`` (default 0), so the same data always give
the same artifact. A chosen family whose bootstrap p-value is at most 0.01 on any statistic is
flagged in the record (``poor_fit``): the best of a poor set is still a poor model. (The
smallest attainable p-value is 1 / (1 + n_resamples), so the flag needs n_resamples >= 99.)

Default candidates, by the data: non-negative integers -> poisson, negative_binomial, geometric;
all values > 0 -> lognormal, gamma, weibull, exponential, inverse_gaussian; otherwise -> normal,
logistic, gumbel, student_t. Families fitted by a general optimiser (loglogistic, gev, ...) can
be listed in ``candidates``; they make the bootstrap noticeably slower on large samples.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.check.compare import rank_candidates
from samplewright.check.dispersion import count_diagnostics
from samplewright.core.checks import CheckedSample
from samplewright.core.errors import MethodError
from samplewright.distributions.families import FAMILIES, get_family
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.catalog import CRITERIA

__all__ = ["COUNTS", "POOR_FIT_P", "POSITIVE", "REAL_LINE", "default_candidates", "fit_sample"]

POSITIVE = ("lognormal", "gamma", "weibull", "exponential", "inverse_gaussian")
REAL_LINE = ("normal", "logistic", "gumbel", "student_t")
COUNTS = ("poisson", "negative_binomial", "geometric")
POOR_FIT_P = 0.01


def default_candidates(x: np.ndarray) -> tuple[str, ...]:
    """The candidate families used when none are given (see module docstring)."""
    if np.all(x >= 0) and np.all(x == np.round(x)):
        return COUNTS
    if np.all(x > 0):
        return POSITIVE
    return REAL_LINE


def _finite(v: float) -> float | None:
    return float(v) if np.isfinite(v) else None


def fit_sample(sample: CheckedSample, method: str = "auto", **options: Any) -> ParametricSampler:
    """Catalog fitter of ``auto``: fit every candidate, rank them, return the winner carrying
    the whole ranking in its diagnostics."""
    x, w = sample.values, sample.weights
    candidates = options.get("candidates") or default_candidates(x)
    if not isinstance(candidates, list | tuple) or not all(isinstance(c, str) for c in candidates):
        raise MethodError("option 'candidates' of auto: expected a list of family names")
    bad = [c for c in candidates if c not in FAMILIES]
    if bad:
        raise MethodError(f"option 'candidates' of auto: unknown family {bad[0]!r}")
    criterion = options.get("criterion", "aic")
    if criterion not in CRITERIA:
        raise MethodError(
            f"option 'criterion' of auto: expected 'aic' or 'bic', found {criterion!r}"
        )
    n_resamples = options.get("n_resamples", 99)
    if isinstance(n_resamples, bool) or not isinstance(n_resamples, int) or n_resamples < 0:
        raise MethodError(
            f"option 'n_resamples' of auto: expected an int >= 0, found {n_resamples!r}"
        )
    seed = options.get("seed", 0)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise MethodError(f"option 'seed' of auto: expected an int >= 0, found {seed!r}")

    ranked = rank_candidates(
        x,
        list(candidates),
        criterion=criterion,
        weights=w,
        n_resamples=n_resamples,
        rng=np.random.default_rng(seed),
    )
    best = ranked[0]
    if best.error is not None:
        raise MethodError(f"auto: no candidate could be fitted (first error: {best.error})")
    table = []
    for rank, c in enumerate(ranked, start=1):
        table.append(
            {
                "rank": rank,
                "family": c.family,
                "params": {k: float(v) for k, v in c.params.items()},
                "n_params": c.n_params,
                "loglik": _finite(c.loglik),
                "aic": _finite(c.aic),
                "bic": _finite(c.bic),
                "statistics": {k: _finite(v) for k, v in c.statistics.items()},
                "pvalues": {k: _finite(v) for k, v in c.pvalues.items()},
                "error": c.error,
            }
        )
    poor = bool(best.pvalues) and min(best.pvalues.values()) <= POOR_FIT_P
    diagnostics: dict[str, Any] = {
        "auto": {
            "criterion": criterion,
            "rule": f"lowest {criterion.upper()}; ties to fewer parameters, then listed order",
            "candidates": list(candidates),
            "n_resamples": n_resamples,
            "seed": seed,
            "chosen": best.family,
            "poor_fit": poor,
            "ranking": table,
        }
    }
    if get_family(best.family).discrete:
        diagnostics.update(count_diagnostics(x, w))
    return ParametricSampler(
        best.family,
        dict(best.params),
        loglik=best.loglik,
        aic=best.aic,
        bic=best.bic,
        method="auto",
        diagnostics=diagnostics,
    )
