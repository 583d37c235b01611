"""The per-dataset check summary (a JSON document) and its Markdown; ``show``'s text.

Everything here works on objects already in memory (samplers, their metadata, data arrays) and
returns documents or text; reading and writing files is the pipeline's job. ``samplewright
show``'s text is :func:`samplewright.check.show_text.format_show` (re-exported here).

The summary leads with the decision: which candidate the workflow selected and why, and whether
it fails a goodness-of-fit test (bootstrap p-value at most :data:`POOR_FIT_P` on any statistic);
then every warning; then one row per candidate against the data. Quantiles are the generalised
inverse ``Q(u) = inf{x : F(x) >= u}`` for the data (numpy's ``method="inverted_cdf"``, with
weights; the Kaplan–Meier estimate's for censored data) and for every candidate alike, so an
empirical sampler's row equals the data's.

A fitted distribution is a model of the data, not the truth: the summary says how far each
candidate is from the data and where it cannot reach (an empirical or interpolated sampler never
exceeds the largest observation).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

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

CAUTION = (
    "A fitted distribution is a model: check it against the data and the engineering or actuarial "
    "judgement it stands in for, especially in the tail, before results inform safety or money "
    "decisions; local codes and licensed practice take precedence."
)
POOR_FIT_P = 0.01
_PROBS = (0.5, 0.9, 0.99, 0.999)
_TEST_NAMES = {"ks": "KS", "ad": "AD", "cvm": "CvM"}
_KIND_NAMES = {
    "small_n": "few observations",
    "ties": "ties or rounding",
    "support_beyond_data": "range beyond the data",
    "draws_beyond_record": "draws beyond the record",
    "censoring_share": "incomplete rows",
    "failed_refits": "failed refits",
    "poor_fit": "poor fit",
    "drift": "moved since last time",
    "other": "note",
}


def _fmt(v: Any, spec: str = ".4g") -> str:
    """``v`` formatted, or "-" for a missing value."""
    return "-" if v is None else format(v, spec)


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


def check_candidates(
    x: np.ndarray,
    samplers: Sequence[Sampler],
    *,
    weights: np.ndarray | None = None,
    censored: np.ndarray | None = None,
    labels: Sequence[str] | None = None,
    fit_checks: Sequence[Mapping[str, Any] | None] | None = None,
) -> list[dict[str, Any]]:
    """Compare each candidate with the data: distance, moments, quantiles, the tail beyond the
    data, goodness of fit, and the diagnostics the fit recorded (threshold scans, dispersion,
    rankings).

    ``ks`` is the Kolmogorov–Smirnov distance sup |F_n - F| (no p-value: parameters were
    estimated from the same data; ``gof`` holds bootstrap p-values where ``auto`` recorded them
    or ``fit_checks`` gives them, one entry per candidate). Non-finite values (an infinite mean
    of a heavy tail) are written as null. With weights the data side is the weighted ECDF; with
    right-censored values it is the Kaplan–Meier estimate (censored values are not
    observations of the variable itself). Quantiles: see the module docstring.
    """
    reference: Sampler | None = None
    if censored is not None and np.any(censored):
        from samplewright.fitting.kaplan_meier import fit_kaplan_meier

        reference = fit_kaplan_meier(x, censored, weights=weights)
    elif weights is not None:
        from samplewright.distributions.empirical import EmpiricalSampler

        reference = EmpiricalSampler(x, weights)
    if reference is None:
        data_q = np.quantile(x, _PROBS, method="inverted_cdf")
        data_mean, data_sd = float(np.mean(x)), float(np.std(x))
    else:
        data_q = np.asarray(reference.quantile(np.asarray(_PROBS)), dtype=np.float64)
        data_mean, data_sd = float(reference.mean), float(reference.sd)
    top = float(np.max(x))
    rows = []
    for i, s in enumerate(samplers):
        q = np.asarray(s.quantile(np.asarray(_PROBS)), dtype=np.float64)
        lo, hi = s.support
        meta = getattr(s, "metadata", {}) or {}
        diagnostics = meta.get("diagnostics") or getattr(s, "diagnostics", {}) or {}
        gof = fit_checks[i] if fit_checks is not None and fit_checks[i] else None
        gof = gof or auto_fit_check(diagnostics)
        rows.append(
            {
                "label": labels[i] if labels is not None else _label(s),
                "method": _label(s),
                "ks": _ks_distance(s, x, reference),
                "mean": _finite_or_none(s.mean),
                "data_mean": data_mean,
                "sd": _finite_or_none(s.sd),
                "data_sd": data_sd,
                "quantiles": {
                    f"p{p * 100:g}": _finite_or_none(v) for p, v in zip(_PROBS, q, strict=True)
                },
                "data_quantiles": {
                    f"p{p * 100:g}": float(v) for p, v in zip(_PROBS, data_q, strict=True)
                },
                "can_exceed_data_max": bool(hi > top),
                "prob_above_data_max": _finite_or_none(1.0 - float(s.cdf(top))),
                "loglik": _finite_or_none(getattr(s, "loglik", None)),
                "aic": _finite_or_none(getattr(s, "aic", None)),
                "gof": dict(gof) if gof else None,
                "poor_fit": is_poor_fit(gof),
                "diagnostics": dict(diagnostics),
            }
        )
    return rows


def check_summary(
    x: np.ndarray,
    samplers: Sequence[Sampler],
    *,
    weights: np.ndarray | None = None,
    censored: np.ndarray | None = None,
    dataset: str = "",
    labels: Sequence[str] | None = None,
    selected: int | None = None,
    rule: str | None = None,
    fit_checks: Sequence[Mapping[str, Any] | None] | None = None,
    warnings: Sequence[ReportWarning] = (),
    extra: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """The check summary document of candidates ``samplers`` against data ``x``.

    Holds the dataset name, the number of observations (and of censored ones), the reference
    the candidates were measured against (``ecdf``, ``weighted_ecdf`` or ``kaplan_meier``), the
    selection (``selected``: the index of the selected candidate, chosen by ``rule``; its
    label, method, rule, reason in words and whether it fails a goodness-of-fit test), every
    warning, one row per candidate from :func:`check_candidates`, :data:`CAUTION`, and the
    sections of ``extra`` (e.g. the fingerprints compared, the previous selection and what
    moved since). Every number in it is finite or null, so it is strict JSON.
    """
    rows = check_candidates(
        x, samplers, weights=weights, censored=censored, labels=labels, fit_checks=fit_checks
    )
    n_censored = int(np.sum(censored)) if censored is not None else 0
    chosen = None
    if selected is not None:
        row = rows[selected]
        row["selected"] = True
        chosen = {
            "label": row["label"],
            "method": row["method"],
            "rule": rule,
            "reason": selection_reason(rule) if rule else "not recorded",
            "gof": row["gof"],
            "poor_fit": row["poor_fit"],
        }
    return {
        "dataset": dataset,
        "n_obs": int(np.asarray(x).size),
        "n_censored": n_censored,
        "reference": "kaplan_meier"
        if n_censored
        else ("weighted_ecdf" if weights is not None else "ecdf"),
        "selected": chosen,
        "warnings": [{"kind": w.kind, "message": w.message} for w in warnings],
        "candidates": rows,
        **dict(extra or {}),
        "caution": CAUTION,
    }


# --- Markdown ----------------------------------------------------------------------------------


def _gof_sentence(chosen: Mapping[str, Any]) -> str:
    gof = chosen.get("gof")
    if not gof:
        return (
            "No goodness-of-fit test was run for it (bootstrap tests apply to the parametric "
            "families; see the distances below)."
        )
    pv = {k: v for k, v in (gof.get("pvalues") or {}).items() if v is not None}
    tests = ", ".join(f"{_TEST_NAMES.get(k, k)} p = {v:.3g}" for k, v in pv.items())
    reps = f"{gof.get('n_resamples')} bootstrap replicates"
    if not gof.get("reliable", True):
        return (
            f"Its goodness-of-fit p-values are unreliable: {gof.get('n_failed')} of "
            f"{gof.get('n_resamples')} bootstrap refits failed ({tests})."
        )
    if chosen.get("poor_fit"):
        return (
            f"**It fails a goodness-of-fit test at p ≤ {POOR_FIT_P:g}** ({tests}; {reps}): "
            "the best of the candidates is still a poor model of these data."
        )
    return f"It passes the goodness-of-fit tests at p ≤ {POOR_FIT_P:g} ({tests}; {reps})."


def _decision(summary: Mapping[str, Any]) -> list[str]:
    chosen = summary.get("selected")
    if not chosen:
        return [
            "No candidate is marked as selected (the check was not told which one the workflow "
            "chose).",
            "",
        ]
    return [
        f"**Selected: {chosen['label']}** (method {chosen['method']}), {chosen['reason']}. "
        + _gof_sentence(chosen),
        "",
    ]


def _warning_lines(summary: Mapping[str, Any]) -> list[str]:
    warned = summary.get("warnings") or []
    if not warned:
        return ["## Warnings", "", "None recorded.", ""]
    lines = [f"## Warnings ({len(warned)})", ""]
    for w in warned:
        lines.append(f"- **{_KIND_NAMES.get(w['kind'], w['kind'])}**: {w['message']}")
    return [*lines, ""]


def _drift_lines(summary: Mapping[str, Any]) -> list[str]:
    prev, drift = summary.get("previous"), summary.get("drift")
    if not prev or not drift:
        return []
    flag = "**flagged**" if drift.get("flagged") else "not flagged"
    lines = [
        "## Since the previous selection",
        "",
        f"Previous: {prev.get('method')} ({prev.get('path')}, created {prev.get('created_at')})."
        f" KS distance between the two samplers {_fmt(drift.get('ks_distance'))} "
        f"(threshold {drift.get('threshold'):g}): {flag}.",
        "",
        "| figure | before | now |",
        "|---|---|---|",
    ]
    for name, pair in drift.get("quantiles", {}).items():
        lines.append(f"| {name} | {_fmt(pair['old'])} | {_fmt(pair['new'])} |")
    for name in ("mean", "tail_mean"):
        pair = drift.get(name) or {}
        lines.append(
            f"| {name.replace('_', ' ')} | {_fmt(pair.get('old'))} | {_fmt(pair.get('new'))} |"
        )
    return [*lines, ""]


def _candidate_table(summary: Mapping[str, Any], rows: list[dict[str, Any]]) -> list[str]:
    n, n_censored = int(summary["n_obs"]), int(summary["n_censored"])
    against = (
        "the Kaplan–Meier estimate (data values in brackets are Kaplan–Meier too)"
        if n_censored
        else "the data's ECDF"
    )
    md = [
        "## Candidates against the data",
        "",
        f"{n} observations"
        + (f", {n_censored} right-censored" if n_censored else "")
        + f". KS is the largest gap between {against} and the model's CDF. Quantiles are "
        "Q(u) = inf{x : F(x) ≥ u} for the data and every candidate alike.",
        "",
        "| candidate | KS distance | GOF p (smallest) | mean (data) | p99 (data) | p99.9 (data) "
        "| P(X > data max) | AIC |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        name = f"**{r['label']}** (selected)" if r.get("selected") else r["label"]
        pv = [p for p in ((r.get("gof") or {}).get("pvalues") or {}).values() if p is not None]
        gof = _fmt(min(pv), ".3g") + (" ⚠" if r.get("poor_fit") else "") if pv else "-"
        md.append(
            f"| {name} | {r['ks']:.4f} | {gof} | {_fmt(r['mean'])} ({r['data_mean']:.4g}) | "
            f"{_fmt(r['quantiles']['p99'])} ({r['data_quantiles']['p99']:.4g}) | "
            f"{_fmt(r['quantiles']['p99.9'])} ({r['data_quantiles']['p99.9']:.4g}) | "
            f"{_fmt(r['prob_above_data_max'], '.3g')} | {_fmt(r['aic'], '.2f')} |"
        )
    return md


def _diagnostics_lines(rows: list[dict[str, Any]]) -> list[str]:
    md: list[str] = []
    for r in rows:
        diag = r["diagnostics"]
        if "dispersion" in diag:
            md += ["", f"**{r['label']}**, dispersion: {diag['dispersion'].get('message')}"]
        if "auto" in diag:
            md += [
                "",
                f"**{r['label']}**, candidates by {diag['auto']['rule']}:",
                "",
                "| family | AIC | KS p | AD p | CvM p |",
                "|---|---|---|---|---|",
            ]
            for row in diag["auto"]["ranking"]:
                pv = row.get("pvalues") or {}
                md.append(
                    f"| {row['family']} | {_fmt(row.get('aic'), '.2f')} | "
                    + " | ".join(_fmt(pv.get(k), ".3f") for k in ("ks", "ad", "cvm"))
                    + " |"
                )
        if "threshold_choice" in diag:
            md += _threshold_lines(r["label"], diag)
    return md


def _threshold_lines(label: str, diag: Mapping[str, Any]) -> list[str]:
    tc = diag["threshold_choice"]
    md = [
        "",
        f"**{label}**, tail threshold {_fmt(tc.get('threshold'))} "
        f"(rule: {tc.get('rule')}, {tc.get('n_exceedances')} exceedances).",
        "",
        "| threshold (quantile) | mean excess | exceedances | tail shape xi (se) |",
        "|---|---|---|---|",
    ]
    me = diag.get("mean_excess") or {}
    stab = diag.get("parameter_stability") or {}
    xi_at = dict(
        zip(
            stab.get("threshold", []),
            zip(stab.get("xi", []), stab.get("xi_se", []), strict=False),
            strict=False,
        )
    )
    for u, p, e, k in zip(
        me.get("threshold", []),
        me.get("probability", []),
        me.get("mean_excess", []),
        me.get("n_exceedances", []),
        strict=False,
    ):
        xi, se = xi_at.get(u, (None, None))
        shape = "-" if xi is None else f"{xi:.3f} ({_fmt(se, '.3f')})"
        md.append(f"| {_fmt(u)} ({p:g}) | {_fmt(e)} | {k} | {shape} |")
    return md


def render_check_markdown(summary: Mapping[str, Any], *, title: str | None = None) -> str:
    """A check summary (from :func:`check_summary`) as Markdown, headed by ``title``
    (default: the summary's dataset name): the selection first, then the warnings, what moved
    since the previous selection, the candidates against the data, their diagnostics and the
    caution."""
    heading = title or str(summary["dataset"])
    rows = list(summary["candidates"])
    md = [f"# Check: {heading}", ""]
    md += _decision(summary)
    md += _warning_lines(summary)
    md += _drift_lines(summary)
    md += _candidate_table(summary, rows)
    md += _diagnostics_lines(rows)
    md += ["", f"_{summary.get('caution', CAUTION)}_", ""]
    return "\n".join(md)
