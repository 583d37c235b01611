"""Human-readable views: ``samplewright show`` and the per-dataset check summary.

Everything here works on objects already in memory (samplers, their metadata, data arrays) and
returns documents or text; reading and writing files is the pipeline's job.

A fitted distribution is a model of the data, not the truth: the check summary says how far each
candidate is from the data and where it cannot reach (an empirical or interpolated sampler never
exceeds the largest observation).
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from samplewright.distributions.base import Sampler

__all__ = [
    "CAUTION",
    "check_candidates",
    "check_summary",
    "format_show",
    "render_check_markdown",
]

CAUTION = (
    "A fitted distribution is a model: check it against the data and the engineering or actuarial "
    "judgement it stands in for, especially in the tail, before results inform safety or money "
    "decisions; local codes and licensed practice take precedence."
)
_PROBS = (0.5, 0.9, 0.99, 0.999)


def format_show(path: Any, sampler: Sampler, meta: dict[str, Any]) -> str:
    s = meta["sampler"]
    lines = [f"{path}", f"  method       {s['method']}"]
    if "family" in s:
        lines.append(f"  family       {s['family']}")
    for k, v in s["params"].items():
        lines.append(f"  param {k:<8}{v:.6g}" if isinstance(v, float) else f"  param {k:<8}{v}")
    lines.append(f"  support      [{s['support'][0]}, {s['support'][1]}]")
    lines.append(f"  mean, sd     {s['mean']}, {s['sd']}")
    for k in ("loglik", "aic", "bic"):
        if k in s:
            lines.append(f"  {k:<12} {s[k]:.6g}" if isinstance(s[k], float) else f"  {k} {s[k]}")
    data = meta.get("data") or {}
    if data:
        lines.append(
            f"  data         n={data.get('n_obs')} read={data.get('n_rows_read')} "
            f"dropped={data.get('dropped') or {}}"
        )
    sel = (meta.get("diagnostics") or {}).get("selection")
    if sel:
        lines.append(f"  chosen by    {sel['rule']} among {len(sel['ranking'])}:")
        for row in sel["ranking"]:
            aic = row.get("aic")
            aic_text = f"aic {aic:.6g}" if isinstance(aic, float) else "aic -"
            lines.append(f"    {row['rank']}. {row['method']:<14} {aic_text}")
    auto = (meta.get("diagnostics") or {}).get("auto")
    if auto:
        lines += _auto_table(auto)
    for name, block in (meta.get("diagnostics") or {}).items():
        if name not in ("selection", "auto"):
            lines.append(f"  {name}: {json.dumps(block, sort_keys=True)[:300]}")
    prov = meta.get("provenance") or {}
    lines.append(f"  source       {prov.get('source')} column {prov.get('column')!r}")
    lines.append(f"  fingerprint  {meta.get('fingerprint')}")
    lines.append(f"  key          {meta.get('key')}")
    lines.append(f"  content      {meta['content_hash']}")
    lines.append(f"  created      {prov.get('created_at')}")
    return "\n".join(lines)


def _fmt(v: Any, spec: str = ".4g") -> str:
    """``v`` formatted, or "-" for a missing value."""
    return "-" if v is None else format(v, spec)


def _auto_table(auto: dict[str, Any]) -> list[str]:
    """The candidate ranking of method 'auto' as aligned text."""
    lines = [
        f"  candidates   ranked by {auto['rule']}; p-values from {auto['n_resamples']} "
        "parametric-bootstrap refits",
        f"    {'#':>2} {'family':<18} {'loglik':>11} {'AIC':>11} {'BIC':>11} "
        f"{'KS':>7} {'p':>5} {'AD':>7} {'p':>5} {'CvM':>7} {'p':>5}",
    ]
    for row in auto["ranking"]:
        if row.get("error"):
            lines.append(f"    {row['rank']:>2} {row['family']:<18} failed: {row['error']}")
            continue
        st, pv = row.get("statistics") or {}, row.get("pvalues") or {}
        lines.append(
            f"    {row['rank']:>2} {row['family']:<18} {_fmt(row['loglik'], '11.2f')} "
            f"{_fmt(row['aic'], '11.2f')} {_fmt(row['bic'], '11.2f')} "
            + " ".join(
                f"{_fmt(st.get(k), '7.4f')} {_fmt(pv.get(k), '5.3f')}" for k in ("ks", "ad", "cvm")
            )
        )
    if auto.get("poor_fit"):
        lines.append("  WARNING      the chosen family fails a goodness-of-fit test at p <= 0.01")
    return lines


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


def check_candidates(
    x: np.ndarray,
    samplers: Sequence[Sampler],
    *,
    weights: np.ndarray | None = None,
    censored: np.ndarray | None = None,
) -> list[dict[str, Any]]:
    """Compare each candidate with the data: distance, moments, quantiles, the tail beyond the
    data, and the diagnostics the fit recorded (threshold scans, dispersion, rankings).

    ``ks`` is the Kolmogorov–Smirnov distance sup |F_n - F| (no p-value: parameters were
    estimated from the same data; method ``auto`` records bootstrap p-values). Non-finite values
    (an infinite mean of a heavy tail) are written as null. With weights the data side is the
    weighted ECDF; with right-censored values it is the Kaplan–Meier estimate (censored values
    are not observations of the variable itself).
    """
    reference: Sampler | None = None
    if censored is not None and np.any(censored):
        from samplewright.fitting.kaplan_meier import fit_kaplan_meier

        reference = fit_kaplan_meier(x, censored, weights=weights)
    elif weights is not None:
        from samplewright.distributions.empirical import EmpiricalSampler

        reference = EmpiricalSampler(x, weights)
    if reference is None:
        data_q = np.quantile(x, _PROBS)
        data_mean, data_sd = float(np.mean(x)), float(np.std(x))
    else:
        data_q = np.asarray(reference.quantile(np.asarray(_PROBS)), dtype=np.float64)
        data_mean, data_sd = float(reference.mean), float(reference.sd)
    top = float(np.max(x))
    rows = []
    for s in samplers:
        q = np.asarray(s.quantile(np.asarray(_PROBS)), dtype=np.float64)
        lo, hi = s.support
        meta = getattr(s, "metadata", {}) or {}
        rows.append(
            {
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
                "diagnostics": meta.get("diagnostics") or {},
            }
        )
    return rows


def _markdown(dataset: str, n: int, rows: list[dict[str, Any]], n_censored: int = 0) -> list[str]:
    against = (
        "the Kaplan–Meier estimate (data values in brackets are Kaplan–Meier too)"
        if n_censored
        else "the data's ECDF"
    )
    md = [
        f"# Check: {dataset}",
        "",
        f"{n} observations"
        + (f", {n_censored} right-censored" if n_censored else "")
        + f". KS is the largest gap between {against} and the model's CDF.",
        "",
        "| method | KS distance | mean (data) | p99 (data) | p99.9 (data) | P(X > data max) "
        "| AIC |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        md.append(
            f"| {r['method']} | {r['ks']:.4f} | {_fmt(r['mean'])} ({r['data_mean']:.4g}) | "
            f"{_fmt(r['quantiles']['p99'])} ({r['data_quantiles']['p99']:.4g}) | "
            f"{_fmt(r['quantiles']['p99.9'])} ({r['data_quantiles']['p99.9']:.4g}) | "
            f"{_fmt(r['prob_above_data_max'], '.3g')} | {_fmt(r['aic'], '.2f')} |"
        )
    for r in rows:
        diag = r["diagnostics"]
        if "dispersion" in diag:
            md += ["", f"**{r['method']}**, dispersion: {diag['dispersion'].get('message')}"]
        if "auto" in diag:
            md += [
                "",
                f"**{r['method']}**, candidates by {diag['auto']['rule']}:",
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
            tc = diag["threshold_choice"]
            md += [
                "",
                f"**{r['method']}**, tail threshold {_fmt(tc.get('threshold'))} "
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
    md += ["", f"_{CAUTION}_", ""]
    return md


def check_summary(
    x: np.ndarray,
    samplers: Sequence[Sampler],
    *,
    weights: np.ndarray | None = None,
    censored: np.ndarray | None = None,
    dataset: str = "",
) -> dict[str, Any]:
    """The check summary document of candidates ``samplers`` against data ``x``.

    Holds the dataset name, the number of observations (and of censored ones), the reference
    the candidates were measured against (``ecdf``, ``weighted_ecdf`` or ``kaplan_meier``), one
    row per candidate from :func:`check_candidates`, and :data:`CAUTION`. Every number in it is
    finite or null, so it is strict JSON.
    """
    rows = check_candidates(x, samplers, weights=weights, censored=censored)
    n_censored = int(np.sum(censored)) if censored is not None else 0
    return {
        "dataset": dataset,
        "n_obs": int(np.asarray(x).size),
        "n_censored": n_censored,
        "reference": "kaplan_meier"
        if n_censored
        else ("weighted_ecdf" if weights is not None else "ecdf"),
        "candidates": rows,
        "caution": CAUTION,
    }


def render_check_markdown(summary: Mapping[str, Any], *, title: str | None = None) -> str:
    """A check summary (from :func:`check_summary`) as Markdown, headed by ``title``
    (default: the summary's dataset name)."""
    heading = title or str(summary["dataset"])
    rows = list(summary["candidates"])
    return "\n".join(_markdown(heading, int(summary["n_obs"]), rows, int(summary["n_censored"])))
