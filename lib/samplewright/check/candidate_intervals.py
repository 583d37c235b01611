"""Bootstrap intervals of every candidate's key quantiles and tail mean, for the check.

How sure is each candidate's answer? For each candidate the data are replicated, the candidate
is refitted to every replicate, and the 95% percentile interval of each figure over the
replicates is reported (the 2.5% and 97.5% sample quantiles, numpy's default interpolation):
the key quantiles and the tail mean ``(1/(1-p)) ∫_p^1 Q(u) du``, all ground-up (what a
simulation drawing from the candidate gets). How a candidate is replicated depends on what it
is (the ``source`` of the result says it):

* a plain parametric family (and ``auto``, as its chosen family: the choice of family is held
  fixed) on complete or right-censored data: a **parametric bootstrap**, values simulated from
  the fit with the data's censoring (:func:`~samplewright.fitting.replicates.fit_replicates`,
  kind ``parametric``);
* a parametric family on truncated or interval data: the parametric bootstrap of
  :func:`~samplewright.check.gof_incomplete.goodness_of_fit_incomplete`, which redoes the
  truncation and censoring (the goodness-of-fit test's own replicates when it ran);
* ``spliced``: a parametric bootstrap of its **tail**: the number of exceedances is drawn
  ``Binomial(n, zeta)``, the excesses from the fitted generalized Pareto distribution and
  refitted (:func:`~samplewright.fitting.spliced.gpd_fit_excesses`); the threshold and the body
  are held (so figures inside the body get no interval);
* anything else (empirical, Kaplan–Meier, Turnbull, hurdle, mixtures...): a **nonparametric
  bootstrap**, rows drawn with replacement (with their censoring and truncation) and the method
  refitted with its options.

Replicates whose refit fails are left out and counted. Randomness comes only from ``rng``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from samplewright.check.report_model import ConfidenceInterval
from samplewright.check.report_numbers import sampler_tail_mean
from samplewright.core.errors import MethodError, SamplewrightError
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.fitting.incomplete_sample import IncompleteSample

__all__ = [
    "DEFAULT_INTERVAL_RESAMPLES",
    "CandidateIntervalsResult",
    "candidate_intervals",
    "intervals_from_record",
]

DEFAULT_INTERVAL_RESAMPLES = 99
_TAIL_CELLS = 1 << 10
_FAILURES = (SamplewrightError, ArithmeticError, np.linalg.LinAlgError)


@dataclass(frozen=True)
class CandidateIntervalsResult:
    """Percentile intervals of one candidate's figures over bootstrap refits.

    Attributes
    ----------
    source : str
        How the replicates were made (module docstring), in words.
    n_resamples, n_failed : int
        Replicates drawn, and those whose refit failed (left out).
    quantiles : dict
        Probability -> interval of the quantile there (absent where no interval applies).
    tail_level : float
        ``p`` of the tail mean.
    tail_mean : ConfidenceInterval or None
        Interval of the tail mean (None when some replicate's is infinite or none applies).
    """

    source: str
    n_resamples: int
    n_failed: int
    quantiles: dict[float, ConfidenceInterval] = field(default_factory=dict)
    tail_level: float = 0.99
    tail_mean: ConfidenceInterval | None = None

    def as_dict(self) -> dict[str, Any]:
        """The summary's JSON form (finite numbers; intervals as ``[low, high]``)."""
        return {
            "source": self.source,
            "n_resamples": self.n_resamples,
            "n_failed": self.n_failed,
            "level": 0.95,
            "quantiles": {f"{p:g}": [ci.low, ci.high] for p, ci in self.quantiles.items()},
            "tail_level": self.tail_level,
            "tail_mean": None
            if self.tail_mean is None
            else [self.tail_mean.low, self.tail_mean.high],
        }


def _percentile(values: Any) -> ConfidenceInterval | None:
    v = np.asarray(values, dtype=np.float64)
    if v.size < 2 or not np.all(np.isfinite(v)):
        return None
    lo, hi = np.quantile(v, [0.025, 0.975])
    return ConfidenceInterval(float(lo), float(hi), 0.95)


def _summarise(
    reps: Sequence[Any],
    source: str,
    n: int,
    probs: Sequence[float],
    level: float,
    floor: float | None = None,
) -> CandidateIntervalsResult:
    """Intervals of the figures of the refitted samplers ``reps`` (``floor``: only quantiles at
    probabilities above it get one)."""
    q = np.array([np.asarray(r.quantile(np.asarray(probs)), dtype=np.float64) for r in reps])
    quantiles = {}
    for j, p in enumerate(probs):
        if floor is not None and p <= floor:
            continue
        ci = _percentile(q[:, j]) if len(reps) else None
        if ci is not None:
            quantiles[float(p)] = ci
    # 1,024 cells: the integration error (about 1e-4 relative for smooth quantile functions)
    # is far below the bootstrap's own spread, and each replicate costs 16 times less
    tails = [sampler_tail_mean(r, level, n_cells=_TAIL_CELLS) for r in reps]
    return CandidateIntervalsResult(
        source=source,
        n_resamples=n,
        n_failed=n - len(reps),
        quantiles=quantiles,
        tail_level=level,
        tail_mean=_percentile(tails),
    )


def _family_of(sampler: Any) -> str | None:
    """The parametric family of a plain family fit or of ``auto`` (else None)."""
    if getattr(sampler, "kind", None) != "parametric":
        return None
    family = getattr(getattr(sampler, "family", None), "name", None)
    if family is None or sampler.method not in (family, "auto"):
        return None
    return str(family)


def _spliced_tail(
    s: Any, n_units: int, n_rep: int, gen: np.random.Generator, probs: Sequence[float], level: float
) -> CandidateIntervalsResult:
    from scipy import stats

    from samplewright.distributions.spliced import SplicedSampler
    from samplewright.fitting.spliced import MIN_EXCEEDANCES, gpd_fit_excesses

    reps = []
    for _ in range(n_rep):
        k = int(gen.binomial(n_units, s.zeta))
        if not MIN_EXCEEDANCES <= k < n_units:
            continue
        y = stats.genpareto(s.xi, scale=s.sigma).ppf(gen.random(k))
        try:
            xi, sigma, _, _ = gpd_fit_excesses(y)
            reps.append(
                SplicedSampler(s.body, threshold=s.threshold, zeta=k / n_units, xi=xi, sigma=sigma)
            )
        except _FAILURES:
            continue
    source = "parametric bootstrap of the tail"
    # inside the body (at or below the threshold's level) the figures get no interval
    return _summarise(reps, source, n_rep, probs, level, floor=1.0 - s.zeta)


def _rows_bootstrap(
    rows: IncompleteSample,
    method: str,
    options: Mapping[str, Any],
    n_rep: int,
    gen: np.random.Generator,
    probs: Sequence[float],
    level: float,
) -> CandidateIntervalsResult:
    """Rows (with their truncation and censoring) drawn with replacement; ``method`` refitted."""
    from samplewright.fitting.incomplete_sample import incomplete_sample
    from samplewright.fitting.interval_api import fit_incomplete_sample

    w = rows.weights
    total = float(w.sum())
    m = max(1, round(total))
    reps = []
    for _ in range(n_rep):
        counts = gen.multinomial(m, w / total)
        keep = counts > 0
        try:
            rep = incomplete_sample(
                rows.lower[keep],
                rows.upper[keep],
                truncation=rows.truncation[keep],
                weights=counts[keep] * (total / m),
            )
            reps.append(fit_incomplete_sample(rep, method, **dict(options)))
        except _FAILURES:
            continue
    return _summarise(reps, "nonparametric bootstrap", n_rep, probs, level)


def candidate_intervals(
    sampler: Any,
    *,
    values: Any = None,
    censored: Any = None,
    weights: Any = None,
    rows: IncompleteSample | None = None,
    options: Mapping[str, Any] | None = None,
    probabilities: Sequence[float] = (0.5, 0.9, 0.99, 0.999),
    tail_level: float = 0.99,
    n_resamples: int = DEFAULT_INTERVAL_RESAMPLES,
    rng: SeedLike = None,
    replicate_params: Sequence[Mapping[str, float]] | None = None,
) -> CandidateIntervalsResult | None:
    """Bootstrap intervals of a candidate's key quantiles and tail mean (module docstring).

    ``values`` (with ``censored`` flags and ``weights``) are complete or right-censored data;
    ``rows`` truncated or interval rows instead. ``options`` are the candidate's fit options.
    ``replicate_params`` (a parametric family on ``rows``): refits already made, e.g. by the
    goodness-of-fit test. Returns None when no interval applies (no data, a method that cannot
    be refitted) or too few refits succeed (fewer than 2).
    """
    if isinstance(n_resamples, bool) or not isinstance(n_resamples, int) or n_resamples < 0:
        raise MethodError(f"n_resamples: expected an int >= 0, found {n_resamples!r}")
    if n_resamples < 2 or (values is None and rows is None):
        return None
    probs, level = [float(p) for p in probabilities], float(tail_level)
    opts = dict(options or {})
    if getattr(sampler, "method", None) == "auto":
        # auto's options (candidates, seed, n_resamples) choose a family; the interval refits
        # the chosen family with its choice held, which takes none of them
        opts = {}
    gen = make_rng(rng)
    family = _family_of(sampler)
    try:
        if rows is not None:
            return _incomplete(sampler, family, rows, opts, n_resamples, gen, probs, level,
                               replicate_params)  # fmt: skip
        return _complete(sampler, family, values, censored, weights, opts, n_resamples, gen,
                         probs, level)  # fmt: skip
    except _FAILURES:
        return None


def _incomplete(
    sampler: Any,
    family: str | None,
    rows: IncompleteSample,
    opts: dict[str, Any],
    n_rep: int,
    gen: np.random.Generator,
    probs: Sequence[float],
    level: float,
    replicate_params: Sequence[Mapping[str, float]] | None,
) -> CandidateIntervalsResult | None:
    from samplewright.distributions.parametric import ParametricSampler
    from samplewright.fitting.interval_api import INCOMPLETE_FAMILIES, INCOMPLETE_METHODS

    if family is not None and family in INCOMPLETE_FAMILIES:
        redone = [
            what
            for what, present in (
                ("censoring", bool(np.any(~rows.is_exact))),
                ("truncation", bool(np.any(rows.is_truncated))),
            )
            if present
        ]
        source = f"parametric bootstrap, {' and '.join(redone) or 'rows'} redone"
        if replicate_params is None:
            from samplewright.check.gof_incomplete import goodness_of_fit_incomplete

            r = goodness_of_fit_incomplete(rows, family, n_resamples=n_rep, rng=gen, **opts)
            replicate_params, n_rep = r.replicate_params, r.n_resamples
        else:
            n_rep = max(n_rep, len(replicate_params))
        reps = [ParametricSampler(family, dict(p)) for p in replicate_params]
        return _summarise(reps, source, n_rep, probs, level) if len(reps) >= 2 else None
    if sampler.method in INCOMPLETE_METHODS:
        out = _rows_bootstrap(rows, sampler.method, opts, n_rep, gen, probs, level)
        return out if out.n_failed <= n_rep - 2 else None
    return None


def _complete(
    sampler: Any,
    family: str | None,
    values: Any,
    censored: Any,
    weights: Any,
    opts: dict[str, Any],
    n_rep: int,
    gen: np.random.Generator,
    probs: Sequence[float],
    level: float,
) -> CandidateIntervalsResult | None:
    from samplewright.fitting.replicates import fit_replicates

    x = np.asarray(values, dtype=np.float64)
    if sampler.method == "spliced" and getattr(sampler, "kind", None) == "spliced":
        units = x.size if weights is None else round(float(np.sum(weights)))
        return _spliced_tail(sampler, int(units), n_rep, gen, probs, level)
    whole = weights is None or bool(np.all(np.asarray(weights) == np.round(weights)))
    if family is not None and whole:
        method, kind, source = family, "parametric", "parametric bootstrap"
        if sampler.method == "auto":
            opts, source = {}, "parametric bootstrap of the chosen family"
    else:
        method, kind, source = str(sampler.method), "nonparametric", "nonparametric bootstrap"
    ens = fit_replicates(
        x,
        method,
        n_replicates=n_rep,
        kind=kind,  # type: ignore[arg-type]
        weights=weights,
        censored=censored,
        rng=gen,
        **opts,
    )
    reps = [ens.replicate(i) for i in range(ens.n_replicates)]
    return _summarise(reps, source, n_rep, probs, level)


def intervals_from_record(doc: Mapping[str, Any] | None) -> tuple[dict[float, Any], Any, str]:
    """(quantile intervals, tail-mean interval, source) of a summary's ``intervals`` record."""
    if not doc:
        return {}, None, ""
    q = {
        float(p): ConfidenceInterval(float(v[0]), float(v[1]), float(doc.get("level", 0.95)))
        for p, v in (doc.get("quantiles") or {}).items()
        if v is not None and all(math.isfinite(float(a)) for a in v)
    }
    t = doc.get("tail_mean")
    tail = None if not t else ConfidenceInterval(float(t[0]), float(t[1]), 0.95)
    n = doc.get("n_resamples")
    return q, tail, f"{doc.get('source', 'bootstrap')}, {n} replicates"
