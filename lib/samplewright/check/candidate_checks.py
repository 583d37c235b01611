"""What the check runs for each candidate: its goodness-of-fit test and its bootstrap intervals.

:func:`fit_check_record` tests a candidate that is a plain parametric family (or ``auto``'s
chosen family, when ``auto`` recorded no test itself):

* on complete data by :func:`~samplewright.check.gof.goodness_of_fit` (KS, AD and CvM, a
  parametric bootstrap that refits the family to each simulated sample);
* on censored, truncated or interval data by
  :func:`~samplewright.check.gof_incomplete.goodness_of_fit_incomplete` (the largest distance to
  the matching nonparametric estimate, given ``X > t0`` when every row is truncated; every
  replicate redoes the censoring and truncation), whose refits also give the candidate's
  intervals.

The test is of the candidate itself only when refitting the data gives its parameters back
(within a relative 1e-5): an artifact fitted with options that were not recorded is another
model, and is left untested. A candidate that is not tested gets a note saying why, in words.
:func:`interval_record` gives the intervals of
:func:`~samplewright.check.candidate_intervals.candidate_intervals` as the summary records them.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.core.errors import SamplewrightError
from samplewright.core.randomness import SeedLike

__all__ = ["FitCheckRecordResult", "fit_check_record", "fit_options", "interval_record"]

_NONPARAMETRIC = ("empirical", "empirical_pmf", "kaplan_meier", "turnbull")


@dataclass(frozen=True)
class FitCheckRecordResult:
    """A candidate's goodness-of-fit record in the summary's form, or why there is none.

    ``replicate_params`` are the refits of an incomplete-data test (for the intervals).
    """

    record: dict[str, Any] | None
    note: str | None
    replicate_params: tuple[dict[str, float], ...] | None = None


def fit_options(sampler: Any) -> dict[str, Any]:
    """The options the candidate was fitted with (as recorded), without the truncation."""
    meta = getattr(sampler, "metadata", {}) or {}
    options = dict((meta.get("provenance") or {}).get("options") or {})
    options.pop("truncation", None)
    return options


def _family(sampler: Any) -> str | None:
    if getattr(sampler, "kind", None) != "parametric":
        return None
    name = getattr(getattr(sampler, "family", None), "name", None)
    return str(name) if name is not None and sampler.method in (name, "auto") else None


def _same(a: Mapping[str, Any], b: Mapping[str, Any]) -> bool:
    return all(
        math.isclose(float(a[k]), float(b[k]), rel_tol=1e-5, abs_tol=1e-9)
        for k in b
        if k in a and isinstance(b[k], int | float)
    )


def _why_not(sampler: Any, n_resamples: int, incomplete: bool) -> str:
    method = str(sampler.method)
    if n_resamples <= 0:
        return "the check was asked for no bootstrap replicates (--gof-resamples 0)"
    if method in _NONPARAMETRIC:
        return (
            f"{method} is the data's own nonparametric estimate; a test would compare it with "
            "itself"
        )
    data = "these incomplete data" if incomplete else "these data"
    return (
        f"the check's bootstrap tests cover the plain parametric families on {data}, not "
        f"method {method}; see the distances below"
    )


def fit_check_record(
    sampler: Any,
    *,
    values: Any = None,
    weights: Any = None,
    rows: Any = None,
    n_resamples: int = 99,
    rng: SeedLike = None,
) -> FitCheckRecordResult:
    """Test a candidate (module docstring); ``rows`` for incomplete data, else ``values``."""
    from samplewright.check.render import auto_fit_check

    diagnostics = (getattr(sampler, "metadata", {}) or {}).get("diagnostics") or {}
    if auto_fit_check(diagnostics) is not None:
        return FitCheckRecordResult(None, None)  # auto's own test is reported
    family = _family(sampler)
    incomplete = rows is not None
    if family is None or n_resamples <= 0:
        return FitCheckRecordResult(None, _why_not(sampler, n_resamples, incomplete))
    options = fit_options(sampler) if sampler.method == family else {}
    if incomplete:
        return _incomplete_check(sampler, family, rows, options, n_resamples, rng)
    from samplewright.check.gof import goodness_of_fit

    try:
        r = goodness_of_fit(
            values, family, n_resamples=n_resamples, rng=rng, weights=weights, **options
        )
    except (SamplewrightError, ValueError, FloatingPointError) as exc:
        return FitCheckRecordResult(None, f"the test could not be run ({exc})")
    if not _same(r.params, sampler.params):
        return FitCheckRecordResult(
            None, "refitting the data gives other parameters (options not recorded)"
        )
    return FitCheckRecordResult(
        {
            "statistics": {k: float(v) for k, v in r.statistics.items()},
            "pvalues": {k: (float(v) if np.isfinite(v) else None) for k, v in r.pvalues.items()},
            "n_resamples": r.n_resamples,
            "n_failed": r.n_failed,
            "reliable": bool(r.reliable),
            "source": "check",
        },
        None,
    )


def _incomplete_check(
    sampler: Any,
    family: str,
    rows: Any,
    options: dict[str, Any],
    n_resamples: int,
    rng: SeedLike,
) -> FitCheckRecordResult:
    from samplewright.check.gof_incomplete import goodness_of_fit_incomplete
    from samplewright.check.incomplete_reference import describe_reference
    from samplewright.fitting.interval_api import INCOMPLETE_FAMILIES

    if family not in INCOMPLETE_FAMILIES:
        return FitCheckRecordResult(None, f"{family} is not fitted to incomplete data")
    try:
        r = goodness_of_fit_incomplete(rows, family, n_resamples=n_resamples, rng=rng, **options)
        label = describe_reference(rows)
    except (SamplewrightError, ValueError, FloatingPointError) as exc:
        return FitCheckRecordResult(None, f"the test could not be run ({exc})")
    if not _same(r.params, sampler.params):
        return FitCheckRecordResult(
            None, "refitting the data gives other parameters (options not recorded)"
        )
    n_ok = r.n_resamples - r.n_failed
    from samplewright.check.gof import MAX_FAILED_SHARE

    record = {
        "statistics": {"ks": float(r.statistic)},
        "pvalues": {"ks": float(r.pvalue) if np.isfinite(r.pvalue) else None},
        "n_resamples": r.n_resamples,
        "n_failed": r.n_failed,
        "reliable": bool(n_ok > 0 and r.n_failed <= MAX_FAILED_SHARE * r.n_resamples),
        "source": "check",
        "test": "incomplete",
        "estimator": r.estimator,
        "estimator_label": label,
        "conditioned_on": r.conditioned_on,
    }
    return FitCheckRecordResult(record, None, r.replicate_params)


def interval_record(
    sampler: Any,
    *,
    values: Any = None,
    censored: Any = None,
    weights: Any = None,
    rows: Any = None,
    n_resamples: int,
    rng: SeedLike = None,
    replicate_params: Any = None,
    probabilities: Any = (0.5, 0.9, 0.99, 0.999),
    tail_level: float = 0.99,
) -> dict[str, Any] | None:
    """The candidate's bootstrap intervals as the summary records them, or None."""
    from samplewright.check.candidate_intervals import candidate_intervals

    r = candidate_intervals(
        sampler,
        values=values,
        censored=censored,
        weights=weights,
        rows=rows,
        options=fit_options(sampler),
        probabilities=probabilities,
        tail_level=tail_level,
        n_resamples=n_resamples,
        rng=rng,
        replicate_params=replicate_params,
    )
    return None if r is None else r.as_dict()
