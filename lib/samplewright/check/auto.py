"""Method ``auto``: fit a candidate set of families and keep the best by a documented rule.

Rule: every candidate is fitted by maximum likelihood (fits that fail are listed with their error
and never chosen). Candidates whose fit suits the data's nature come first (support rule below);
among them the one with the lowest AIC (or BIC, ``criterion="bic"``) wins; criteria equal to 8
decimals tie, and ties go to fewer estimated parameters, then to the candidate listed first.
Goodness of fit does not choose, it informs: for each candidate the Kolmogorov–Smirnov,
Anderson–Darling and Cramér–von Mises statistics are recorded with p-values from a parametric
bootstrap that refits the family on every replicate (``n_resamples``, default 99; 0 turns it
off). A chosen family whose bootstrap p-value is at most 0.01 on any statistic is flagged in the
record (``poor_fit``): the best of a poor set is still a poor model. (The smallest attainable
p-value is 1 / (1 + n_resamples), so the flag needs n_resamples >= 99.) Bootstrap refits that
fail are left out of the p-values and counted (``n_failed``); when more than 10% fail, the
candidate's p-values are marked unreliable (``pvalues_reliable``) and do not raise the flag.

Support rule: a candidate whose fit has a support warning ranks after every candidate without
one, whatever its criterion: it puts more than 0.1% of its mass below 0 while no value is
negative (``support_below_zero``), a value lies outside its support (``support_beyond_data``),
or its mean is infinite (``infinite_mean``). These are the warnings every family fit records
(:func:`samplewright.fitting.mle_warnings.fit_warnings`); ``infinite_variance`` is recorded but
does not demote (a heavy tail with a finite mean can be the right model). Among warned
candidates the criterion decides as above. Every candidate's warnings are in its ranking row;
the chosen one's are kept in the sampler's ``diagnostics["warnings"]``.

Counts or measurements (whole-number data). Data that are all whole numbers >= 0 are not
necessarily counts: amounts in whole currency units and durations in whole minutes are
measurements recorded to a resolution. The rule reads the data's own evidence: whole numbers are
**counts** when they are dense on the integers, i.e. more than half of the integers from the
data's 10% to their 90% quantile occur in the data (small integers with repeats: the integer
grid is what the data are made of); otherwise they are **measurements** (sparse on the
integers: the unit is a recording resolution much finer than the data's spread, like 400
claim amounts in whole euros spread over tens of thousands; or every value lies on a coarser
grid, like minutes recorded in steps of 5, which fills about a fifth of the integers). Few
large counts look sparse too and are read as measurements; option ``integers`` ("counts" or
"measurements") states what the data are, and ``candidates`` overrides everything.

Default candidates: counts -> poisson, negative_binomial, geometric; all values > 0 ->
lognormal, gamma, weibull, exponential, inverse_gaussian; values >= 0 with zeros -> normal,
logistic, gumbel, student_t, exponential; otherwise normal, logistic, gumbel, student_t.
Families fitted by a general optimiser (loglogistic, gev, ...) can be listed in ``candidates``;
they make the bootstrap noticeably slower on large samples. A density and a probability mass are
never ranked together (:mod:`samplewright.check.comparable`).

Composites (:mod:`samplewright.check.auto_composites`): without ``candidates``, zero-inflated
counts and finite mixtures join the ranking when the data call for them, and measurements with
an atom at 0 are answered by a hurdle whose continuous part is ``auto``'s answer on the other
values. Censored, truncated and interval rows are ranked by their own likelihood
(:mod:`samplewright.check.auto_incomplete`).

Recorded values: when the data lie on a grid (:mod:`samplewright.check.resolution`), the
bootstrap replicates of continuous candidates are rounded to it; when the grid makes ties
(coarse), a ``recording_resolution`` warning is recorded.

Randomness: the bootstrap's stream comes from ``rng`` (a Generator or seed, given to
:func:`fit_auto` or the catalog fitter), else from option ``seed`` (an int >= 0), else from a
seed derived from the data's values and weights (sha256), so the same data always give the same
artifact and different datasets never share a stream. A pipeline passes ``seed`` derived from
its root seed and stable keys (dataset, method label, purpose). The record keeps the seed used
(``seed``) and where it came from (``seed_source``: ``"rng"``, ``"option"`` or ``"data"``).
"""

from __future__ import annotations

import hashlib
from typing import Any

import numpy as np

from samplewright.check.compare import CandidateResult, rank_candidates
from samplewright.check.dispersion import count_diagnostics
from samplewright.check.resolution import recording_resolution
from samplewright.core.checks import CheckedSample
from samplewright.core.errors import MethodError
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.distributions.base import Sampler
from samplewright.distributions.families import FAMILIES, get_family
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.steps import step_index
from samplewright.fitting.catalog import CRITERIA, INTEGER_READINGS, Criterion, IntegerReading
from samplewright.fitting.mle_warnings import fit_warnings
from samplewright.fitting.registry import check_options, check_sample_for

__all__ = [
    "COUNTS",
    "DENSE_SHARE",
    "NON_NEGATIVE",
    "POOR_FIT_P",
    "POSITIVE",
    "REAL_LINE",
    "SUPPORT_KINDS",
    "default_candidates",
    "dense_share",
    "fit_auto",
    "fit_sample",
    "read_integers",
    "support_warnings",
]

POSITIVE = ("lognormal", "gamma", "weibull", "exponential", "inverse_gaussian")
REAL_LINE = ("normal", "logistic", "gumbel", "student_t")
NON_NEGATIVE = (*REAL_LINE, "exponential")
COUNTS = ("poisson", "negative_binomial", "geometric")
POOR_FIT_P = 0.01
# whole numbers are counts when more than this share of the integers in their bulk occur
DENSE_SHARE = 0.5
# warning kinds that rank a candidate after those without
SUPPORT_KINDS = ("support_below_zero", "support_beyond_data", "infinite_mean")


def _is_whole(x: np.ndarray) -> bool:
    return bool(np.all(x >= 0) and np.all(x == np.round(x)))


def dense_share(values: np.ndarray, weights: np.ndarray | None = None) -> float:
    """Share of the integers from the 10% to the 90% quantile (inverse-CDF quantiles of the
    frequency-weighted data) that occur in the data.

    >>> round(dense_share(np.array([0.0, 1, 1, 2, 2, 2, 3, 4, 6])), 4)  # 6 of 0..6
    0.8571
    >>> round(dense_share(np.array([120.0, 4375, 980, 15020, 2210])), 6)  # 5 of 120..15020
    0.000336
    """
    order = np.argsort(values, kind="stable")
    xs = values[order]
    w = np.ones(xs.size) if weights is None else weights[order]
    running = np.cumsum(w)
    lo, hi = xs[step_index(running / running[-1], np.array([0.1, 0.9]))]
    inside = np.unique(xs[(xs >= lo) & (xs <= hi)])
    return float(inside.size / (hi - lo + 1.0))


def read_integers(
    values: np.ndarray, weights: np.ndarray | None = None, integers: IntegerReading = "detect"
) -> tuple[str, float | None]:
    """How data are read: ``("counts" | "measurements", dense share or None)``.

    Values that are not all whole numbers >= 0 are measurements; whole numbers follow option
    ``integers``, or with ``"detect"`` the rule of the module docstring.

    >>> read_integers(np.array([0.0, 1, 1, 2, 2, 2, 3, 4, 5]))
    ('counts', 1.0)
    >>> read_integers(np.array([0.5, 1.5, 2.0]))
    ('measurements', None)
    """
    if not _is_whole(values):
        return "measurements", None
    share = dense_share(values, weights)
    if integers != "detect":
        return integers, share
    return ("counts" if share > DENSE_SHARE else "measurements"), share


def default_candidates(
    x: np.ndarray, weights: np.ndarray | None = None, *, integers: IntegerReading = "detect"
) -> tuple[str, ...]:
    """The candidate families used when none are given (see module docstring).

    >>> default_candidates(np.array([0.0, 1, 1, 2, 2, 2, 3, 4, 6]))
    ('poisson', 'negative_binomial', 'geometric')
    >>> default_candidates(np.array([120.0, 4375, 980, 15020, 2210]))[0]
    'lognormal'
    """
    reading, _ = read_integers(x, weights, integers)
    if reading == "counts":
        return COUNTS
    if np.all(x > 0):
        return POSITIVE
    if np.all(x >= 0):
        return NON_NEGATIVE
    return REAL_LINE


def support_warnings(family: str, params: dict[str, float], x: np.ndarray) -> list[dict[str, str]]:
    """The warnings the fit of ``family(params)`` to ``x`` records (plain JSON), as every family
    fit does (:func:`~samplewright.fitting.mle_warnings.fit_warnings`).

    >>> [w["kind"] for w in support_warnings("normal", {"mu": 1.0, "sigma": 1.0}, np.ones(3))]
    ['support_below_zero']
    """
    return [w.as_dict() for w in fit_warnings(family, params, x)]


def _finite(v: float) -> float | None:
    return float(v) if np.isfinite(v) else None


def _data_seed(x: np.ndarray, w: np.ndarray | None) -> int:
    """A seed from the data's values and weights (53 bits, so JSON keeps it exactly)."""
    h = hashlib.sha256(b"samplewright-auto-bootstrap-v1")
    h.update(np.ascontiguousarray(x, dtype="<f8").tobytes())
    if w is not None:
        h.update(b"weights")
        h.update(np.ascontiguousarray(w, dtype="<f8").tobytes())
    return int.from_bytes(h.digest()[:8], "little") >> 11


def _randomness(
    options: dict[str, Any], rng: SeedLike, x: np.ndarray, w: np.ndarray | None
) -> tuple[np.random.Generator, int | None, str]:
    """The bootstrap's generator, the seed recorded and where it came from."""
    seed = options.get("seed")
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, int) or seed < 0):
        raise MethodError(f"option 'seed' of auto: expected an int >= 0, found {seed!r}")
    if rng is not None:
        if seed is not None:
            raise MethodError("option 'seed' of auto: give either rng or seed, not both")
        if isinstance(rng, int) and not isinstance(rng, bool):
            return make_rng(rng), int(rng), "rng"
        return make_rng(rng), None, "rng"
    if seed is not None:
        return make_rng(seed), seed, "option"
    derived = _data_seed(x, w)
    return make_rng(derived), derived, "data"


def _check_options(
    options: dict[str, Any], x: np.ndarray
) -> tuple[list[str] | None, Criterion, int]:
    candidates = options.get("candidates")
    if candidates is not None:
        if (
            not isinstance(candidates, list | tuple)
            or not candidates
            or not all(isinstance(c, str) for c in candidates)
        ):
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
    integers = options.get("integers", "detect")
    if integers not in INTEGER_READINGS:
        raise MethodError(
            f"option 'integers' of auto: expected one of {', '.join(INTEGER_READINGS)}, "
            f"found {integers!r}"
        )
    chosen: Criterion = criterion
    return (None if candidates is None else list(candidates)), chosen, n_resamples


def _row(rank: int, c: CandidateResult, warnings: list[dict[str, str]]) -> dict[str, Any]:
    return {
        "rank": rank,
        "family": c.family,
        "params": {k: float(v) for k, v in c.params.items()},
        "n_params": c.n_params,
        "loglik": _finite(c.loglik),
        "aic": _finite(c.aic),
        "bic": _finite(c.bic),
        "statistics": {k: _finite(v) for k, v in c.statistics.items()},
        "pvalues": {k: _finite(v) for k, v in c.pvalues.items()},
        "n_failed": c.n_failed,
        "pvalues_reliable": c.reliable,
        "warnings": warnings,
        "error": c.error,
    }


def fit_sample(
    sample: CheckedSample, method: str = "auto", *, rng: SeedLike = None, **options: Any
) -> Sampler:
    """Catalog fitter of ``auto``: fit every candidate, rank them, return the winner carrying
    the whole ranking in its diagnostics (``rng``: see the module docstring)."""
    if sample.any_censored:  # ranked by the incomplete-data likelihood
        from samplewright.check.auto_incomplete import fit_censored

        return fit_censored(sample, method, rng=rng, **options)
    x, w = sample.values, sample.weights
    given, criterion, n_resamples = _check_options(options, x)
    integers = options.get("integers", "detect")
    reading, share = read_integers(x, w, integers)
    candidates = given or list(default_candidates(x, w, integers=integers))
    gen, seed, seed_source = _randomness(options, rng, x, w)
    from samplewright.check.auto_composites import add_composites, point_mass_answer

    held = point_mass_answer(
        sample, options, reading=reading, rng=gen, seed=seed, seed_source=seed_source,
        refit=fit_sample,
    )  # fmt: skip
    if held is not None:  # an atom at 0: the hurdle (module docstring, composites)
        return held
    grid = recording_resolution(x, w)
    ranked = rank_candidates(
        x,
        candidates,
        criterion=criterion,
        weights=w,
        n_resamples=n_resamples,
        rng=gen,
        resolution=grid.step,
    )
    fitted = [
        (c, [] if c.error is not None else support_warnings(c.family, c.params, x)) for c in ranked
    ]

    def group(item: tuple[CandidateResult, list[dict[str, str]]]) -> int:
        c, warned = item
        if c.error is not None:
            return 2
        return 1 if any(wr.get("kind") in SUPPORT_KINDS for wr in warned) else 0

    ordered = sorted(fitted, key=group)  # stable: the criterion's order within each group
    best, best_warnings = ordered[0]
    if best.error is not None:
        raise MethodError(f"auto: no candidate could be fitted (first error: {best.error})")
    table = [_row(rank, c, warned) for rank, (c, warned) in enumerate(ordered, start=1)]
    discrete = get_family(best.family).discrete
    warnings = list(best_warnings)
    if grid.coarse and not discrete:
        warnings.append({"kind": "recording_resolution", "message": grid.message})
    poor = best.reliable and bool(best.pvalues) and min(best.pvalues.values()) <= POOR_FIT_P
    diagnostics: dict[str, Any] = {
        "auto": {
            "criterion": criterion,
            "rule": f"support warnings last, then lowest {criterion.upper()}; ties to fewer "
            "parameters, then listed order",
            "candidates": list(candidates),
            "reading": {"as": reading, "integers": integers, "dense_share": share},
            "resolution": grid.as_dict(),
            "n_resamples": n_resamples,
            "seed": seed,
            "seed_source": seed_source,
            "chosen": best.family,
            "poor_fit": poor,
            "ranking": table,
        },
        "warnings": warnings,
    }
    if discrete:
        diagnostics.update(count_diagnostics(x, w))
    sampler = ParametricSampler(
        best.family,
        dict(best.params),
        loglik=best.loglik,
        aic=best.aic,
        bic=best.bic,
        method="auto",
        diagnostics=diagnostics,
    )
    return add_composites(sample, sampler, options, rng=gen)  # mixtures, zero inflation


def fit_auto(values: Any, *, weights: Any = None, rng: SeedLike = None, **options: Any) -> Sampler:
    """``fit(values, "auto", ...)`` with the bootstrap's randomness from ``rng``.

    ``rng`` is a Generator, a SeedSequence or an int (see
    :func:`~samplewright.core.randomness.make_rng`); a pipeline derives it from its root seed
    and stable keys (:func:`~samplewright.core.randomness.stream_rng`). Options as for
    ``fit(..., "auto")`` (module docstring); ``seed`` and ``rng`` exclude each other.

    >>> x = np.random.default_rng(3).gamma(4.0, 2.0, 200)
    >>> a = fit_auto(x, rng=np.random.default_rng(5), n_resamples=9)
    >>> b = fit_auto(x, rng=np.random.default_rng(5), n_resamples=9)
    >>> a.diagnostics == b.diagnostics, a.diagnostics["auto"]["seed_source"]
    (True, 'rng')
    """
    spec = check_options("auto", options)
    sample = check_sample_for(spec, values, weights)
    return fit_sample(sample, "auto", rng=rng, **options)
