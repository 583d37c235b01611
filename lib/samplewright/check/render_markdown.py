"""The check summary as Markdown (:func:`render_check_markdown`).

The page leads with the decision: the selected candidate, why, and what its goodness-of-fit test
(if any) tested and found; then the tail of every candidate with its bootstrap intervals and how
far the candidates disagree; every warning; what moved since the previous selection; each
candidate against the data (for incomplete data against the matching nonparametric estimate,
given above the smallest truncation point where every row is truncated, with the ground-up
figures a simulation draws apart); the fits' diagnostics; and the caution.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

__all__ = ["CAUTION", "KIND_NAMES", "POOR_FIT_P", "render_check_markdown"]

CAUTION = (
    "A fitted distribution is a model: check it against the data and the engineering or actuarial "
    "judgement it stands in for, especially in the tail, before results inform safety or money "
    "decisions; local codes and licensed practice take precedence."
)
POOR_FIT_P = 0.01
_TEST_NAMES = {"ks": "KS", "ad": "AD", "cvm": "CvM"}
# warning kinds in words (the Markdown summary and the report pages)
KIND_NAMES = {
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
_NONPARAMETRIC = ("empirical", "empirical_pmf", "kaplan_meier", "turnbull")


def _fmt(v: Any, spec: str = ".4g") -> str:
    """``v`` formatted, or "-" for a missing value; four significant digits are written out
    in full up to a billion (30640, not 3.064e+04)."""
    if v is None:
        return "-"
    text = format(v, spec)
    if spec == ".4g" and "e+" in text and 1.0 <= abs(float(v)) < 1e9:
        text = str(int(round(float(text))))
    return text


def tested_what(gof: Mapping[str, Any]) -> str:
    """In words, what a goodness-of-fit record tested and how."""
    n = gof.get("n_resamples")
    if gof.get("source") == "auto":
        return f"auto's own parametric bootstrap ({n} replicates, each refitted)"
    if gof.get("test") == "incomplete":
        est = gof.get("estimator_label") or "the nonparametric estimate"
        return (
            f"the largest distance to {est}, by a parametric bootstrap of {n} replicates that "
            "redo the censoring and truncation and refit the family to each"
        )
    return (
        f"the distance to the data's empirical CDF (KS, AD, CvM), by a parametric bootstrap "
        f"of {n} samples simulated from the fit and refitted"
    )


def gof_sentence(chosen: Mapping[str, Any]) -> str:
    """What the selected candidate's goodness-of-fit test tested and found, honestly."""
    gof = chosen.get("gof")
    if not gof:
        note = chosen.get("gof_note")
        if note:
            return f"No goodness-of-fit test was run for it: {note}."
        return "No goodness-of-fit test was recorded for it; see the distances below."
    pv = {k: v for k, v in (gof.get("pvalues") or {}).items() if v is not None}
    tests = ", ".join(f"{_TEST_NAMES.get(k, k)} p = {v:.3g}" for k, v in pv.items())
    what = tested_what(gof)
    if not gof.get("reliable", True):
        return (
            f"Its goodness-of-fit p-values are unreliable: {gof.get('n_failed')} of "
            f"{gof.get('n_resamples')} bootstrap refits failed ({tests}; tested: {what})."
        )
    if chosen.get("poor_fit"):
        return (
            f"**It fails a goodness-of-fit test at p ≤ {POOR_FIT_P:g}** ({tests}; tested: "
            f"{what}): the best of the candidates is still a poor model of these data."
        )
    return (
        f"Tested: {what}; {tests}. None of these p-values is at or below {POOR_FIT_P:g}, the "
        "level at which this summary calls a fit poor; not being rejected does not show that "
        "the model is right (with few data a test rejects little): look at the distances and "
        "the tail figures below."
    )


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
        + gof_sentence(chosen),
        "",
    ]


def _interval(v: Any, ci: Any) -> str:
    text = _fmt(v)
    if ci:
        text += f" [{_fmt(ci[0])}, {_fmt(ci[1])}]"
    return text


def _tail_lines(summary: Mapping[str, Any], rows: list[dict[str, Any]]) -> list[str]:
    level = float(summary.get("tail_level", 0.99))
    head = f"tail mean {100 * level:g}%"
    md = [
        "## The tail of every candidate",
        "",
        "What a simulation would draw from each candidate (ground-up), with 95% bootstrap "
        "intervals in brackets where they were computed (how: last column).",
        "",
        f"| candidate | p99 | p99.9 | {head} | interval from |",
        "|---|---|---|---|---|",
    ]
    for r in rows:
        name = f"**{r['label']}** (selected)" if r.get("selected") else r["label"]
        iv = r.get("intervals") or {}
        qi = iv.get("quantiles") or {}
        how = f"{iv.get('source')}, {iv.get('n_resamples')} replicates" if iv else "-"
        md.append(
            f"| {name} | {_interval(r['quantiles']['p99'], qi.get('0.99'))} | "
            f"{_interval(r['quantiles']['p99.9'], qi.get('0.999'))} | "
            f"{_interval(r.get('tail_mean'), iv.get('tail_mean'))} | {how} |"
        )
    vals: list[tuple[Any, ...]] = [
        (r["quantiles"]["p99"], r["quantiles"]["p99.9"], r.get("tail_mean")) for r in rows
    ]
    if len(rows) > 1:
        spread = []
        for j in range(3):
            col = [float(v[j]) for v in vals if v[j] is not None]
            ok = bool(col) and min(col) > 0
            spread.append(_fmt(max(col) / min(col), ".3g") if ok else "-")
        md.append(f"| largest ÷ smallest | {' | '.join(spread)} | |")
    return [*md, ""]


def _warning_lines(summary: Mapping[str, Any]) -> list[str]:
    warned = summary.get("warnings") or []
    if not warned:
        return ["## Warnings", "", "None recorded.", ""]
    lines = [f"## Warnings ({len(warned)})", ""]
    for w in warned:
        lines.append(f"- **{KIND_NAMES.get(w['kind'], w['kind'])}**: {w['message']}")
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


def _gof_cell(r: Mapping[str, Any]) -> str:
    pv = [p for p in ((r.get("gof") or {}).get("pvalues") or {}).values() if p is not None]
    return _fmt(min(pv), ".3g") + (" ⚠" if r.get("poor_fit") else "") if pv else "-"


def _candidate_table(summary: Mapping[str, Any], rows: list[dict[str, Any]]) -> list[str]:
    if summary.get("reference") in ("kaplan_meier", "turnbull") and (
        summary.get("n_interval") is not None
    ):
        return _incomplete_table(summary, rows)
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
        md.append(
            f"| {name} | {r['ks']:.4f} | {_gof_cell(r)} | {_fmt(r['mean'])} "
            f"({_fmt(r['data_mean'])}) | "
            f"{_fmt(r['quantiles']['p99'])} ({_fmt(r['data_quantiles']['p99'])}) | "
            f"{_fmt(r['quantiles']['p99.9'])} ({_fmt(r['data_quantiles']['p99.9'])}) | "
            f"{_fmt(r['prob_above_data_max'], '.3g')} | {_fmt(r['aic'], '.2f')} |"
        )
    return md


def _incomplete_table(summary: Mapping[str, Any], rows: list[dict[str, Any]]) -> list[str]:
    n = int(summary["n_obs"])
    counts = [
        f"{summary['n_censored']} right-censored" if summary.get("n_censored") else "",
        f"{summary['n_interval']} interval-censored or grouped"
        if summary.get("n_interval")
        else "",
        f"{summary['n_truncated']} truncated" if summary.get("n_truncated") else "",
    ]
    t0 = summary.get("conditioned_on")
    ref = summary.get("reference_label") or summary.get("reference")
    given = f" given X > {t0:g}" if t0 is not None else ""
    md = [
        "## Candidates against the data",
        "",
        f"{n} rows ({', '.join(c for c in counts if c) or 'incomplete'}). The data side is "
        f"the nonparametric estimate matching these rows ({ref}); distance is the largest gap "
        f"between it and the candidate's CDF{given}, where the data determine it. Quantiles "
        "are Q(u) = inf{x : F(x) ≥ u} for the estimate (its own sampler's) and every candidate "
        "alike; '-' where the data do not reach the level (censored beyond it).",
        "",
    ]
    if t0 is not None:
        md += [
            f"Every row is truncated: the data describe values above t0 = {t0:g} (the smallest "
            "truncation point) only. The first table compares like with like: each candidate "
            f"given X > {t0:g}, F_c(x) = (F(x) − F(t0)) / (1 − F(t0)). The second shows the "
            "ground-up figures a simulation draws, below t0 too.",
            "",
        ]
    head = "Given above t0" if t0 is not None else "Against the data"
    share_head = " share at or below t0 |" if t0 is not None else ""
    md += [
        f"**{head}** (the estimate's values in brackets):",
        "",
        f"| candidate | distance | GOF p (smallest) | median | p90 | p99 |{share_head}",
        "|---|---|---|---|---|---|" + ("---|" if t0 is not None else ""),
    ]
    for r in rows:
        name = f"**{r['label']}** (selected)" if r.get("selected") else r["label"]
        g = r.get("given_above") or {}
        q = g.get("quantiles") or r["quantiles"]
        dq = r["data_quantiles"]
        share = f" {_fmt(g.get('share_below'), '.3g')} |" if t0 is not None else ""
        md.append(
            f"| {name} | {r['ks']:.4f} | {_gof_cell(r)} | "
            + " | ".join(f"{_fmt(q[k])} ({_fmt(dq[k])})" for k in ("p50", "p90", "p99"))
            + f" |{share}"
        )
    md += [
        "",
        "**What a simulation draws**" + (" (ground-up):" if t0 is not None else ":"),
        "",
        "| candidate | mean | median | p99 | p99.9 | P(X > data max) | AIC |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        name = f"**{r['label']}** (selected)" if r.get("selected") else r["label"]
        q = r["quantiles"]
        md.append(
            f"| {name} | {_fmt(r['mean'])} | {_fmt(q['p50'])} | {_fmt(q['p99'])} | "
            f"{_fmt(q['p99.9'])} | {_fmt(r['prob_above_data_max'], '.3g')} | "
            f"{_fmt(r['aic'], '.2f')} |"
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
    """A check summary (from :func:`~samplewright.check.render.check_summary`) as Markdown,
    headed by ``title`` (default: the summary's dataset name); sections in the module
    docstring's order."""
    heading = title or str(summary["dataset"])
    rows = list(summary["candidates"])
    md = [f"# Check: {heading}", ""]
    md += _decision(summary)
    md += _tail_lines(summary, rows)
    md += _warning_lines(summary)
    md += _drift_lines(summary)
    md += _candidate_table(summary, rows)
    md += _diagnostics_lines(rows)
    md += ["", f"_{summary.get('caution', CAUTION)}_", ""]
    return "\n".join(md)
