"""Method ``auto`` on censored, truncated and interval rows: candidates ranked by their likelihood.

``fit(values, "auto", truncation=...)`` and ``fit_interval(lower, upper, "auto")`` reach
:func:`fit_rows` through the method catalog (the ``incomplete`` fitter of ``auto``), as ``fit``
reaches ``auto`` on complete data; ``fit(values, "auto", censored=...)`` reaches ``auto``'s own
fitter, which hands right-censored values here (:func:`fit_censored`).

Rule. The candidates are option ``candidates`` (names from
:data:`~samplewright.fitting.interval_api.INCOMPLETE_FAMILIES`), else chosen by the support rule
of complete data (:mod:`samplewright.check.auto`) read on the rows
(:func:`default_candidates_rows`): every exact value > 0 and no finite end below 0 (a
left-censored row may start at 0 or ``-inf``) gives the positive families; every exact value and
finite end >= 0, with an exact 0 (or a row ending at 0), gives the non-negative set; anything
else the real-line families. Incomplete rows are never read as counts (no count family has an
incomplete-data fit; option ``integers="counts"`` is refused). Every candidate is fitted by
maximum likelihood of the rows (:func:`~samplewright.fitting.interval_api.rank_incomplete`:
the density of exact rows, the probability of censored and interval rows, each divided by the
probability beyond its truncation point); the likelihood is the same for every candidate, so
AIC and BIC compare. Order, as on complete data: candidates whose fit has a support warning
(:data:`~samplewright.check.auto.SUPPORT_KINDS`, judged on the rows' finite ends) after those
without; then the lowest AIC (or BIC); criteria equal to 8 decimals tie, and ties go to fewer
estimated parameters, then to the candidate listed first; failed fits last, each with its
error.

Goodness of fit informs, it does not choose. The chosen family is tested by the bootstrap that
redoes the truncation and censoring
(:func:`~samplewright.check.gof_incomplete.goodness_of_fit_incomplete`, ``n_resamples``
replicates, default 99, 0 for none): its distance ``D`` to the matching nonparametric estimate
and the p-value are recorded in its ranking row (``statistics``/``pvalues`` key ``ks``). Every
other candidate's row records its ``D`` without a p-value: each test refits the family on every
replicate (seconds per candidate), and the p-value does not rank. The choice is flagged
``poor_fit`` when its p-value is at most :data:`~samplewright.check.auto.POOR_FIT_P` and at most
10% of the refits failed.

Randomness as on complete data: ``rng``, else option ``seed``, else a seed derived from the rows
(ends, truncation points and weights), recorded with where it came from.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.check.auto import (
    NON_NEGATIVE,
    POOR_FIT_P,
    POSITIVE,
    REAL_LINE,
    SUPPORT_KINDS,
    _check_options,
    _randomness,
    support_warnings,
)
from samplewright.check.gof import MAX_FAILED_SHARE
from samplewright.core.checks import CheckedSample
from samplewright.core.errors import FitError, MethodError
from samplewright.core.randomness import SeedLike
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.incomplete_sample import IncompleteSample, incomplete_from_flags
from samplewright.fitting.interval_api import (
    INCOMPLETE_FAMILIES,
    IncompleteRankResult,
    rank_incomplete,
)

__all__ = ["default_candidates_rows", "fit_censored", "fit_rows"]


def _finite(v: float) -> float | None:
    return float(v) if np.isfinite(v) else None


def _finite_ends(rows: IncompleteSample) -> np.ndarray:
    ends = np.concatenate([rows.lower, rows.upper])
    return ends[np.isfinite(ends)]


def default_candidates_rows(rows: IncompleteSample) -> tuple[str, ...]:
    """The candidates of ``auto`` for incomplete rows (module docstring).

    >>> from samplewright.fitting.incomplete_sample import incomplete_sample
    >>> default_candidates_rows(incomplete_sample([0.0, 2.0], [1.0, np.inf]))[0]
    'lognormal'
    >>> default_candidates_rows(incomplete_sample([0.0, 2.0], [0.0, np.inf]))[-1]
    'exponential'
    >>> default_candidates_rows(incomplete_sample([-1.0, 2.0], [1.0, 2.0]))[0]
    'normal'
    """
    lo, hi, exact = rows.lower, rows.upper, rows.is_exact
    ends = _finite_ends(rows)
    if ends.size and np.all(ends >= 0):
        if np.all(lo[exact] > 0) and np.all(hi > 0):
            return POSITIVE
        return NON_NEGATIVE
    return REAL_LINE


def _candidates(options: dict[str, Any], rows: IncompleteSample) -> list[str]:
    given = options.get("candidates")
    if given is None:
        return list(default_candidates_rows(rows))
    bad = [c for c in given if c not in INCOMPLETE_FAMILIES]
    if bad:
        raise MethodError(
            f"option 'candidates' of auto: {bad[0]!r} is not fitted to censored, truncated or "
            f"interval data; expected names from: {', '.join(INCOMPLETE_FAMILIES)}"
        )
    return list(given)


def _distance(rows: IncompleteSample, c: IncompleteRankResult) -> dict[str, float | None]:
    from samplewright.check.gof_incomplete import incomplete_distance

    try:
        with np.errstate(all="ignore"):
            return {"ks": _finite(incomplete_distance(rows, c.family, c.params)[0])}
    except (FitError, MethodError, ValueError, ArithmeticError):
        return {}


def _row(
    rank: int, c: IncompleteRankResult, warnings: list[dict[str, str]], stats: dict[str, Any]
) -> dict[str, Any]:
    return {
        "rank": rank,
        "family": c.family,
        "params": {k: float(v) for k, v in c.params.items()},
        "n_params": c.n_params,
        "loglik": _finite(c.loglik),
        "aic": _finite(c.aic),
        "bic": _finite(c.bic),
        "mass_above_truncation": _finite(c.mass_above_truncation),
        "statistics": stats,
        "pvalues": {},
        "n_failed": 0,
        "pvalues_reliable": True,
        "warnings": warnings,
        "error": c.error,
    }


def _seed_data(rows: IncompleteSample) -> tuple[np.ndarray, np.ndarray]:
    """What the derived seed hashes: the rows' ends and truncation points, and their weights."""
    return np.concatenate([rows.lower, rows.upper, rows.truncation]), rows.weights


def fit_rows(
    rows: IncompleteSample, method: str = "auto", *, rng: SeedLike = None, **options: Any
) -> ParametricSampler:
    """The ``incomplete`` fitter of ``auto``: rank the candidates on the rows, test the winner
    and return it carrying the ranking (module docstring).

    >>> from samplewright.fitting.incomplete_sample import incomplete_from_flags
    >>> x = np.random.default_rng(4).weibull(1.5, 120) * 10.0
    >>> rows = incomplete_from_flags(np.minimum(x, 12.0), x > 12.0)
    >>> s = fit_rows(rows, n_resamples=0)
    >>> auto = s.diagnostics["auto"]
    >>> s.method, auto["chosen"] == s.family.name, len(auto["ranking"])
    ('auto', True, 5)
    """
    if method != "auto":
        raise MethodError(f"method: expected 'auto', found {method!r}")
    _, criterion, n_resamples = _check_options(options, rows.lower)
    integers = options.get("integers", "detect")
    if integers == "counts":
        raise MethodError(
            "option 'integers' of auto: 'counts' is not offered for censored, truncated or "
            "interval data (no count family is fitted to them); use 'detect' or 'measurements'"
        )
    candidates = _candidates(options, rows)
    gen, seed, seed_source = _randomness(options, rng, *_seed_data(rows))
    ranked = rank_incomplete(rows, candidates, criterion=criterion)
    ends = _finite_ends(rows)
    fitted = [(c, [] if not c.ok else support_warnings(c.family, c.params, ends)) for c in ranked]

    def group(item: tuple[IncompleteRankResult, list[dict[str, str]]]) -> int:
        c, warned = item
        if not c.ok:
            return 2
        return 1 if any(w.get("kind") in SUPPORT_KINDS for w in warned) else 0

    ordered = sorted(fitted, key=group)  # stable: the criterion's order within each group
    best, best_warnings = ordered[0]
    if not best.ok:
        raise MethodError(f"auto: no candidate could be fitted (first error: {best.error})")
    table = [
        _row(rank, c, warned, _distance(rows, c) if c.ok else {})
        for rank, (c, warned) in enumerate(ordered, start=1)
    ]
    test: dict[str, Any] = {"tested": "chosen", "n_resamples": n_resamples}
    poor = False
    if n_resamples:
        from samplewright.check.gof_incomplete import goodness_of_fit_incomplete

        try:
            g = goodness_of_fit_incomplete(rows, best.family, n_resamples=n_resamples, rng=gen)
        except (FitError, MethodError) as err:
            test["error"] = str(err)
        else:
            n_ok = g.n_resamples - g.n_failed
            reliable = bool(n_ok > 0 and g.n_failed <= MAX_FAILED_SHARE * g.n_resamples)
            table[0].update(
                statistics={"ks": _finite(g.statistic)},
                pvalues={"ks": _finite(g.pvalue)},
                n_failed=g.n_failed,
                pvalues_reliable=reliable,
            )
            test.update(estimator=g.estimator, conditioned_on=g.conditioned_on)
            poor = reliable and bool(np.isfinite(g.pvalue)) and g.pvalue <= POOR_FIT_P
    diagnostics: dict[str, Any] = {
        "auto": {
            "criterion": criterion,
            "rule": f"support warnings last, then lowest {criterion.upper()} of the "
            "incomplete-data likelihood; ties to fewer parameters, then listed order",
            "candidates": candidates,
            "reading": {"as": "incomplete", "integers": integers, "dense_share": None},
            "n_resamples": n_resamples,
            "seed": seed,
            "seed_source": seed_source,
            "chosen": best.family,
            "refit": {"method": best.family, "options": {}},
            "poor_fit": poor,
            "test": test,
            "ranking": table,
        },
        "incomplete": dict(best.diagnostics),
        "warnings": list(best_warnings),
    }
    return ParametricSampler(
        best.family,
        dict(best.params),
        loglik=best.loglik,
        aic=best.aic,
        bic=best.bic,
        method="auto",
        diagnostics=diagnostics,
    )


def fit_censored(
    sample: CheckedSample, method: str = "auto", *, rng: SeedLike = None, **options: Any
) -> ParametricSampler:
    """Right-censored values as rows (no truncation), then :func:`fit_rows`; the rows of weight
    0 that the check dropped are recorded like those of the other entry points."""
    flags = sample.censored if sample.censored is not None else np.zeros(sample.n, bool)
    rows = incomplete_from_flags(sample.values, flags, weights=sample.weights)
    sampler = fit_rows(rows, method, rng=rng, **options)
    sampler.diagnostics["incomplete"]["n_dropped"] = int(sample.n_dropped)
    return sampler
