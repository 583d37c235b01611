"""Human-readable views: ``samplewright show`` and the per-dataset check summary.

A fitted distribution is a model of the data, not the truth: the check summary says how far each
candidate is from the data and where it cannot reach (an empirical or interpolated sampler never
exceeds the largest observation).
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from .artifacts import atomic_write, load_sampler
from .samplers import Sampler

__all__ = ["CAUTION", "check_candidates", "format_show", "write_check"]

CAUTION = (
    "A fitted distribution is a model: check it against the data and the engineering or actuarial "
    "judgement it stands in for, especially in the tail, before results inform safety or money "
    "decisions; local codes and licensed practice take precedence."
)
_PROBS = (0.5, 0.9, 0.99)


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


def _num(v: Any, fmt: str = ".4g") -> str:
    return "-" if v is None else format(v, fmt)


def _auto_table(auto: dict[str, Any]) -> list[str]:
    """The candidate ranking of method 'auto' as aligned text."""
    lines = [f"  candidates   ranked by {auto['rule']}; p-values from {auto['n_resamples']} "
             "parametric-bootstrap refits",
             f"    {'#':>2} {'family':<18} {'loglik':>11} {'AIC':>11} {'BIC':>11} "
             f"{'KS':>7} {'p':>5} {'AD':>7} {'p':>5} {'CvM':>7} {'p':>5}"]
    for row in auto["ranking"]:
        if row.get("error"):
            lines.append(f"    {row['rank']:>2} {row['family']:<18} failed: {row['error']}")
            continue
        st, pv = row.get("statistics") or {}, row.get("pvalues") or {}
        lines.append(
            f"    {row['rank']:>2} {row['family']:<18} {_num(row['loglik'], '11.2f')} "
            f"{_num(row['aic'], '11.2f')} {_num(row['bic'], '11.2f')} "
            + " ".join(f"{_num(st.get(k), '7.4f')} {_num(pv.get(k), '5.3f')}"
                       for k in ("ks", "ad", "cvm")))
    if auto.get("poor_fit"):
        lines.append("  WARNING      the chosen family fails a goodness-of-fit test at p < 0.01")
    return lines


def _ks_distance(sampler: Sampler, x: np.ndarray) -> float:
    xs = np.sort(x)
    n = xs.size
    f = np.asarray(sampler.cdf(xs), dtype=np.float64)
    upper = np.arange(1, n + 1) / n - f
    # left limits of the model CDF matter for atoms: use the empirical step below each point
    lower = f - np.arange(0, n) / n
    return float(max(upper.max(), lower.max(), 0.0))


def check_candidates(x: np.ndarray, samplers: Sequence[Sampler]) -> list[dict[str, Any]]:
    """Compare each candidate with the data: distance, moments, quantiles, reach beyond the data.

    ``ks`` is the Kolmogorov–Smirnov distance sup |F_n - F| (no p-value: parameters were
    estimated from the same data).
    """
    data_q = np.quantile(x, _PROBS)
    rows = []
    for s in samplers:
        q = np.asarray(s.quantile(np.asarray(_PROBS)), dtype=np.float64)
        lo, hi = s.support
        rows.append(
            {
                "method": s.method,
                "ks": _ks_distance(s, x),
                "mean": float(s.mean),
                "data_mean": float(np.mean(x)),
                "sd": float(s.sd),
                "data_sd": float(np.std(x)),
                "quantiles": {
                    f"p{round(p * 100)}": float(v) for p, v in zip(_PROBS, q, strict=True)
                },
                "data_quantiles": {
                    f"p{round(p * 100)}": float(v) for p, v in zip(_PROBS, data_q, strict=True)
                },
                "can_exceed_data_max": bool(hi > float(np.max(x))),
                "loglik": getattr(s, "loglik", None),
                "aic": getattr(s, "aic", None),
            }
        )
    return rows


def write_check(
    data_path: str | Path, candidates: Sequence[str | Path], *, out: str | Path, dataset: str = ""
) -> dict[str, Any]:
    """Write the check summary as JSON to ``out`` and as Markdown beside it (``.md``)."""
    from .snapshots import read_data

    data, _ = read_data(data_path, None if str(data_path).endswith(".parquet") else "value")
    samplers = [load_sampler(c) for c in candidates]
    rows = check_candidates(data.values, samplers)
    doc = {"dataset": dataset, "n_obs": data.n, "candidates": rows, "caution": CAUTION}
    out = Path(out)
    atomic_write(out, lambda tmp: Path(tmp).write_text(json.dumps(doc, indent=2) + "\n"))
    md = [
        f"# Check: {dataset or data_path}",
        "",
        f"{data.n} observations.",
        "",
        "| method | KS distance | mean (data) | p99 (data) | beyond max? | AIC |",
        "|---|---|---|---|---|---|",
    ]
    for r in rows:
        aic = f"{r['aic']:.2f}" if r["aic"] is not None else "-"
        md.append(
            f"| {r['method']} | {r['ks']:.4f} | {r['mean']:.4g} ({r['data_mean']:.4g}) | "
            f"{r['quantiles']['p99']:.4g} ({r['data_quantiles']['p99']:.4g}) | "
            f"{'yes' if r['can_exceed_data_max'] else 'no'} | {aic} |"
        )
    md += ["", f"_{CAUTION}_", ""]
    atomic_write(out.with_suffix(".md"), lambda tmp: Path(tmp).write_text("\n".join(md)))
    return doc
