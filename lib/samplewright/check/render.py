"""The per-dataset check summary (a JSON document) and its Markdown; ``show``'s text.

Everything here works on objects already in memory (samplers, their metadata, data arrays) and
returns documents or text; reading and writing files is the pipeline's job. ``samplewright
show``'s text is :func:`samplewright.check.show_text.format_show` (re-exported here).

The summary leads with the decision: which candidate the workflow selected and why, and whether
it fails a goodness-of-fit test (bootstrap p-value at most :data:`POOR_FIT_P` on any statistic);
then every warning; then one row per candidate against the data. Quantiles are the generalised
inverse ``Q(u) = inf{x : F(x) >= u}`` for the data (numpy's ``method="inverted_cdf"``, with
weights; for censored, truncated or interval data the matching nonparametric estimate's, from
its own sampler) and for every candidate alike, so an empirical sampler's row equals the data's
and a Kaplan–Meier candidate's the estimate's. When every row is truncated the data describe
``X`` given ``X > t0`` (``t0`` the smallest truncation point): each candidate is compared given
``X > t0`` and its ground-up figures, what a simulation draws, are kept apart
(:mod:`samplewright.check.incomplete_reference`). The Markdown is
:mod:`samplewright.check.render_markdown`.

A fitted distribution is a model of the data, not the truth: the summary says how far each
candidate is from the data and where it cannot reach (an empirical or interpolated sampler never
exceeds the largest observation).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from samplewright.check.render_markdown import CAUTION, POOR_FIT_P, render_check_markdown
from samplewright.check.report_model import ReportWarning
from samplewright.check.selection import selection_reason
from samplewright.check.show_text import format_show
from samplewright.distributions.base import Sampler

__all__ = [
    "CAUTION",
    "POOR_FIT_P",
    "auto_fit_check",
    "check_candidates",
    "check_summary",
    "format_show",
    "is_poor_fit",
    "render_check_markdown",
]

TAIL_LEVEL = 0.99
_PROBS = (0.5, 0.9, 0.99, 0.999)


def _ks_distance(sampler: Sampler, x: np.ndarray, reference: Sampler | None = None) -> float:
    """sup |F_ref - F| over the line, exact for continuous, discrete and mixed models.

    ``F_ref`` is the data's ECDF (or ``reference``: a weighted ECDF, or the Kaplan–Meier estimate
    for censored data). Both functions are compared at every distinct data value v and at its
    left limit v- (taken at the next float below v), which gives the supremum whenever the
    model's atoms sit at data values, and the usual statistic for a continuous model.
    """
    values = np.unique(x)
    below = np.nextafter(values, -np.inf)
    if reference is None:
        counts = np.unique(x, return_counts=True)[1]
        fn = np.cumsum(counts) / x.size
        fn_left = np.concatenate([[0.0], fn[:-1]])
    else:
        fn = np.asarray(reference.cdf(values), dtype=np.float64)
        fn_left = np.asarray(reference.cdf(below), dtype=np.float64)
    f = np.asarray(sampler.cdf(values), dtype=np.float64)
    f_left = np.asarray(sampler.cdf(below), dtype=np.float64)
    return float(max(np.max(np.abs(fn - f)), np.max(np.abs(fn_left - f_left))))


def _finite_or_none(v: Any) -> float | None:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return None
    return f if np.isfinite(f) else None


def _label(s: Sampler) -> str:
    family = getattr(getattr(s, "family", None), "name", None)
    return f"{s.method} ({family})" if family and family != s.method else s.method


def auto_fit_check(diagnostics: Mapping[str, Any]) -> dict[str, Any] | None:
    """The goodness-of-fit record of ``auto``'s chosen family, in the summary's form, or None.

    The form (also of tests run by the check itself): ``statistics`` and ``pvalues`` (keys
    ``ks``, ``ad``, ``cvm``), ``n_resamples``, ``n_failed``, ``reliable`` and ``source``.
    """
    auto = diagnostics.get("auto")
    if not isinstance(auto, Mapping) or not auto.get("n_resamples"):
        return None
    row = next(
        (r for r in auto.get("ranking") or [] if r.get("family") == auto.get("chosen")), None
    )
    if row is None or not row.get("pvalues"):
        return None
    return {
        "statistics": dict(row.get("statistics") or {}),
        "pvalues": dict(row["pvalues"]),
        "n_resamples": int(auto["n_resamples"]),
        "n_failed": int(row.get("n_failed") or 0),
        "reliable": bool(row.get("pvalues_reliable", True)),
        "source": "auto",
    }


def is_poor_fit(gof: Mapping[str, Any] | None) -> bool | None:
    """True when a reliable test has a p-value <= :data:`POOR_FIT_P`; None when untested."""
    if not gof:
        return None
    pv = [p for p in (gof.get("pvalues") or {}).values() if p is not None]
    if not pv:
        return None
    return bool(gof.get("reliable", True)) and min(pv) <= POOR_FIT_P


def _common_row(
    s: Sampler,
    label: str,
    gof: Mapping[str, Any] | None,
    top: float,
    q: np.ndarray,
    data_q: np.ndarray,
) -> dict[str, Any]:
    """The entries of a candidate's row that do not depend on the kind of data."""
    from samplewright.check.report_numbers import sampler_tail_mean

    meta = getattr(s, "metadata", {}) or {}
    diagnostics = meta.get("diagnostics") or getattr(s, "diagnostics", {}) or {}
    gof = gof or auto_fit_check(diagnostics)
    hi = s.support[1]
    return {
        "label": label,
        "method": _label(s),
        "mean": _finite_or_none(s.mean),
        "sd": _finite_or_none(s.sd),
        "quantiles": {f"p{p * 100:g}": _finite_or_none(v) for p, v in zip(_PROBS, q, strict=True)},
        "data_quantiles": {
            f"p{p * 100:g}": _finite_or_none(v) for p, v in zip(_PROBS, data_q, strict=True)
        },
        "tail_mean": _finite_or_none(sampler_tail_mean(s, TAIL_LEVEL)),
        "can_exceed_data_max": bool(hi > top),
        "prob_above_data_max": _finite_or_none(1.0 - float(s.cdf(top))),
        "loglik": _finite_or_none(getattr(s, "loglik", None)),
        "aic": _finite_or_none(getattr(s, "aic", None)),
        "gof": dict(gof) if gof else None,
        "poor_fit": is_poor_fit(gof),
        "diagnostics": dict(diagnostics),
    }


def check_candidates(
    x: np.ndarray,
    samplers: Sequence[Sampler],
    *,
    weights: np.ndarray | None = None,
    censored: np.ndarray | None = None,
    labels: Sequence[str] | None = None,
    fit_checks: Sequence[Mapping[str, Any] | None] | None = None,
    rows: Any = None,
) -> list[dict[str, Any]]:
    """Compare each candidate with the data: distance, moments, quantiles, the tail beyond the
    data, goodness of fit, and the diagnostics the fit recorded (threshold scans, dispersion,
    rankings).

    ``ks`` is the Kolmogorov–Smirnov distance sup |F_n - F| (no p-value: parameters were
    estimated from the same data; ``gof`` holds bootstrap p-values where ``auto`` recorded them
    or ``fit_checks`` gives them, one entry per candidate). Non-finite values (an infinite mean
    of a heavy tail) are written as null. With weights the data side is the weighted ECDF. For
    incomplete data (right-censored ``censored`` flags, or ``rows``: an
    :class:`~samplewright.fitting.incomplete_sample.IncompleteSample` of truncated, censored or
    interval rows) the data side is the matching nonparametric estimate
    (:func:`~samplewright.check.incomplete_reference.reference_estimate`), ``ks`` the largest
    gap to it where the data determine it, and when every row is truncated each candidate is
    compared given ``X > t0`` (row entry ``given_above``: ``t0``, the conditional quantiles and
    mean, the share at or below ``t0``) while ``quantiles``, ``mean`` and ``tail_mean`` stay the
    ground-up figures a simulation draws. Quantiles: see the module docstring.
    """
    from samplewright.check.incomplete_reference import incomplete_rows, is_incomplete

    if rows is None and censored is not None and np.any(censored):
        rows = incomplete_rows(x, censored=censored, weights=weights)
    names = [labels[i] if labels is not None else _label(s) for i, s in enumerate(samplers)]
    checks = [fit_checks[i] if fit_checks is not None else None for i in range(len(samplers))]
    if rows is not None and is_incomplete(rows):
        return _incomplete_candidates(rows, samplers, names, checks)
    reference: Sampler | None = None
    if weights is not None:
        from samplewright.distributions.empirical import EmpiricalSampler

        reference = EmpiricalSampler(x, weights)
    if reference is None:
        data_q = np.quantile(x, _PROBS, method="inverted_cdf")
        data_mean, data_sd = float(np.mean(x)), float(np.std(x))
    else:
        data_q = np.asarray(reference.quantile(np.asarray(_PROBS)), dtype=np.float64)
        data_mean, data_sd = float(reference.mean), float(reference.sd)
    top = float(np.max(x))
    out = []
    for s, label, gof in zip(samplers, names, checks, strict=True):
        q = np.asarray(s.quantile(np.asarray(_PROBS)), dtype=np.float64)
        row = _common_row(s, label, gof, top, q, data_q)
        row.update(
            {"ks": _ks_distance(s, x, reference), "data_mean": data_mean, "data_sd": data_sd}
        )
        out.append(row)
    return out


def _incomplete_candidates(
    rows: Any,
    samplers: Sequence[Sampler],
    names: Sequence[str],
    checks: Sequence[Mapping[str, Any] | None],
) -> list[dict[str, Any]]:
    from samplewright.check.incomplete_reference import (
        conditioned,
        reference_distance,
        reference_estimate,
        reference_quantiles,
        smallest_truncation,
    )

    ref = reference_estimate(rows)
    data_q = reference_quantiles(ref, np.asarray(_PROBS))
    whole = ref.reached is None or ref.reached >= 1.0 - 1e-12
    data_mean = _finite_or_none(ref.sampler.mean) if whole and ref.sampler is not None else None
    data_sd = None
    if whole and ref.sampler is not None:
        data_sd = _finite_or_none(float(np.sqrt(ref.sampler.var)))
    ends = np.concatenate([rows.lower, rows.upper])
    top = float(np.max(ends[np.isfinite(ends)]))
    t0 = smallest_truncation(rows)
    out = []
    for s, label, gof in zip(samplers, names, checks, strict=True):
        q = np.asarray(s.quantile(np.asarray(_PROBS)), dtype=np.float64)
        row = _common_row(s, label, gof, top, q, data_q)
        row.update({"ks": reference_distance(rows, s), "data_mean": data_mean, "data_sd": data_sd})
        row["given_above"] = None
        if t0 is not None:
            c = conditioned(s, t0)
            cq = np.asarray(c.quantile(np.asarray(_PROBS)), dtype=np.float64)
            row["given_above"] = {
                "threshold": t0,
                "share_below": float(np.asarray(s.cdf(t0))),
                "mean": _finite_or_none(c.mean),
                "quantiles": {
                    f"p{p * 100:g}": _finite_or_none(v) for p, v in zip(_PROBS, cq, strict=True)
                },
            }
        out.append(row)
    return out


def _data_section(x: np.ndarray, weights: Any, censored: Any, rows: Any) -> dict[str, Any]:
    """Counts of the rows and what the candidates are measured against."""
    from samplewright.check.incomplete_reference import (
        describe_reference,
        incomplete_rows,
        is_incomplete,
        reference_estimate,
        smallest_truncation,
    )

    if rows is None and censored is not None and np.any(censored):
        rows = incomplete_rows(x, censored=censored, weights=weights)
    n_censored = int(np.sum(censored)) if censored is not None else 0
    if rows is None or not is_incomplete(rows):
        return {
            "n_obs": int(np.asarray(x).size),
            "n_censored": n_censored,
            "reference": "weighted_ecdf" if weights is not None else "ecdf",
        }
    ref = reference_estimate(rows)
    exact, right = rows.is_exact, rows.is_right & ~rows.is_exact
    return {
        "n_obs": int(rows.n_rows),
        "n_censored": int(right.sum()),
        "n_interval": int((~exact & ~right).sum()),
        "n_truncated": int(rows.is_truncated.sum()),
        "reference": "turnbull" if ref.kind == "knots" else "kaplan_meier",
        "reference_label": describe_reference(rows),
        "conditioned_on": smallest_truncation(rows),
    }


def check_summary(
    x: np.ndarray,
    samplers: Sequence[Sampler],
    *,
    weights: np.ndarray | None = None,
    censored: np.ndarray | None = None,
    rows: Any = None,
    dataset: str = "",
    labels: Sequence[str] | None = None,
    selected: int | None = None,
    rule: str | None = None,
    fit_checks: Sequence[Mapping[str, Any] | None] | None = None,
    gof_notes: Sequence[str | None] | None = None,
    intervals: Sequence[Mapping[str, Any] | None] | None = None,
    warnings: Sequence[ReportWarning] = (),
    extra: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """The check summary document of candidates ``samplers`` against data ``x``.

    Holds the dataset name, the number of observations (and of censored, interval and
    truncated ones), the reference the candidates were measured against (``ecdf``,
    ``weighted_ecdf``, ``kaplan_meier`` or ``turnbull``; with ``conditioned_on``, ``t0`` when
    every row is truncated), the selection (``selected``: the index of the selected candidate,
    chosen by ``rule``; its label, method, rule, reason in words, its goodness-of-fit record
    and whether it fails a test), every warning, one row per candidate from
    :func:`check_candidates` with ``gof_note`` (why no test was run, from ``gof_notes``) and
    ``intervals`` (bootstrap intervals of its figures,
    :class:`~samplewright.check.candidate_intervals.CandidateIntervalsResult` as JSON),
    :data:`CAUTION`, and the sections of ``extra`` (e.g. the fingerprints compared, the
    previous selection and what moved since). Every number in it is finite or null, so it is
    strict JSON.
    """
    found = check_candidates(
        x,
        samplers,
        weights=weights,
        censored=censored,
        labels=labels,
        fit_checks=fit_checks,
        rows=rows,
    )
    for i, row in enumerate(found):
        row["gof_note"] = gof_notes[i] if gof_notes is not None else None
        found_iv = intervals[i] if intervals is not None else None
        row["intervals"] = dict(found_iv) if found_iv else None
    chosen = None
    if selected is not None:
        row = found[selected]
        row["selected"] = True
        chosen = {
            "label": row["label"],
            "method": row["method"],
            "rule": rule,
            "reason": selection_reason(rule) if rule else "not recorded",
            "gof": row["gof"],
            "gof_note": row["gof_note"],
            "poor_fit": row["poor_fit"],
        }
    return {
        "dataset": dataset,
        **_data_section(np.asarray(x), weights, censored, rows),
        "tail_level": TAIL_LEVEL,
        "selected": chosen,
        "warnings": [{"kind": w.kind, "message": w.message} for w in warnings],
        "candidates": found,
        **dict(extra or {}),
        "caution": CAUTION,
    }
