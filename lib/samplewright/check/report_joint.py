"""The report page of a joint input: the data rows against draws of the joint sampler.

A joint input draws several columns together; what decides a simulation is each column's
distribution *and* how the columns move together. The page, in this order:

1. *What the simulation will draw*: the coupling, each column's method with its median, 99%
   quantile and tail mean beside the data's, and the Spearman rank correlation of every pair of
   columns in the data and in the draws (the difference is what the coupling got wrong or chose
   to change); the caution;
2. *Warnings*: a pair whose rank correlation in the draws is more than
   :data:`CORRELATION_GAP` away from the data's, few rows;
3. *Pictures*: a scatter of the data rows over the draws for each pair (up to three pairs), and
   each column's empirical CDF with its Dvoretzky–Kiefer–Wolfowitz band and the marginal's CDF;
4. *Details*: provenance and definitions.

Rank correlations are Spearman's (Pearson correlation of average ranks, as
``scipy.stats.spearmanr`` defines it). The page is self-contained: inline CSS, base64 PNG, no
script, no network.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from samplewright.check import plots
from samplewright.check.html_bits import cell, escape, img, pct, table
from samplewright.check.report_html import _CSS, _KIND_NAMES, CAUTION_TEXT, QUANTILE_DEFINITION
from samplewright.check.report_model import JointInput, ReportWarning
from samplewright.check.report_numbers import (
    dkw_half_width,
    rank_correlation,
    sampler_tail_mean,
    step_tail_mean,
)

__all__ = ["CORRELATION_GAP", "joint_numbers_document", "render_joint_html"]

CORRELATION_GAP = 0.1  # rank-correlation difference (draws − data) that is warned about
_PROBS = (0.5, 0.99)
_LEVEL = 0.99


def _units(units: str | Sequence[str], d: int) -> tuple[str, ...]:
    if isinstance(units, str):
        return (units,) * d
    out = tuple(str(u) for u in units)
    return out + ("",) * (d - len(out))


def _pairs(d: int) -> list[tuple[int, int]]:
    return [(i, j) for i in range(d) for j in range(i + 1, d)]


def _numbers(joint: Any, data: np.ndarray, draws: np.ndarray) -> dict[str, Any]:
    columns = list(joint.columns)
    rd, rs = rank_correlation(data), rank_correlation(draws)
    margins = []
    for k, (name, m) in enumerate(zip(columns, joint.marginals, strict=True)):
        col = data[:, k]
        q = np.asarray(m.quantile(np.asarray(_PROBS)), dtype=np.float64)
        dq = np.quantile(col, _PROBS, method="inverted_cdf")
        margins.append(
            {
                "column": name,
                "method": str(m.method),
                "quantiles": {f"{p:g}": float(v) for p, v in zip(_PROBS, q, strict=True)},
                "data_quantiles": {f"{p:g}": float(v) for p, v in zip(_PROBS, dq, strict=True)},
                "tail_mean": float(sampler_tail_mean(m, _LEVEL)),
                "data_tail_mean": float(step_tail_mean(col, _LEVEL)),
            }
        )
    pairs = [
        {
            "columns": [columns[i], columns[j]],
            "data": float(rd[i, j]),
            "draws": float(rs[i, j]),
            "difference": float(rs[i, j] - rd[i, j]),
        }
        for i, j in _pairs(len(columns))
    ]
    return {"marginals": margins, "rank_correlations": pairs}


def _warnings(numbers: Mapping[str, Any], n_rows: int) -> list[ReportWarning]:
    out = []
    for p in numbers["rank_correlations"]:
        gap = p["difference"]
        if np.isfinite(gap) and abs(gap) > CORRELATION_GAP:
            a, b = p["columns"]
            out.append(
                ReportWarning(
                    "other",
                    f"{a} and {b}: rank correlation {p['draws']:.2f} in the draws against "
                    f"{p['data']:.2f} in the data (more than {CORRELATION_GAP:g} apart)",
                )
            )
    if n_rows < 30:
        out.append(
            ReportWarning(
                "small_n", f"only {n_rows} rows: the rank correlations rest on very few points"
            )
        )
    return out


def joint_numbers_document(
    name: str, joint: Any, data: np.ndarray, draws: np.ndarray
) -> dict[str, Any]:
    """The numbers the joint page shows, as JSON (every number finite)."""
    numbers = _numbers(joint, np.asarray(data, float), np.asarray(draws, float))
    return {
        "format": "samplewright-joint-report",
        "joint": name,
        "coupling": str(joint.coupling),
        "n_rows": int(np.asarray(data).shape[0]),
        "n_draws": int(np.asarray(draws).shape[0]),
        **numbers,
        "warnings": [
            {"kind": w.kind, "message": w.message}
            for w in _warnings(numbers, int(np.asarray(data).shape[0]))
        ],
        "caution": CAUTION_TEXT,
    }


def render_joint_html(
    name: str,
    joint: Any,
    data: Any,
    draws: Any,
    *,
    units: str | Sequence[str] = "",
    provenance: Mapping[str, str] | None = None,
) -> str:
    """A joint input's page (module docstring) as a self-contained HTML document.

    ``data`` and ``draws`` are arrays of shape ``(n, d)`` in the order of ``joint.columns``.
    """
    x, y = np.asarray(data, dtype=np.float64), np.asarray(draws, dtype=np.float64)
    columns = tuple(joint.columns)
    u = _units(units, len(columns))
    numbers = _numbers(joint, x, y)
    warned = _warnings(numbers, x.shape[0])
    rows = []
    for m, unit in zip(numbers["marginals"], u, strict=True):
        q, dq = m["quantiles"], m["data_quantiles"]
        rows.append(
            f"<tr><td>{escape(m['column'])}{escape(f' ({unit})' if unit else '')}</td>"
            f"<td>{escape(m['method'])}</td>"
            + "".join(cell(q[f"{p:g}"]) + cell(dq[f"{p:g}"]) for p in _PROBS)
            + cell(m["tail_mean"])
            + cell(m["data_tail_mean"])
            + "</tr>"
        )
    head = ["column", "method"]
    for p in _PROBS:
        head += [f"{pct(p)} quantile", "data"]
    head += [f"mean of highest {pct(1 - _LEVEL)}", "data"]
    pair_rows = [
        f"<tr><td>{escape(' & '.join(p['columns']))}</td>{cell(p['data'])}{cell(p['draws'])}"
        f"{cell(p['difference'])}</tr>"
        for p in numbers["rank_correlations"]
    ]
    draw = (
        '<section id="draw"><h2>What the simulation will draw</h2>'
        f'<div class="verdict"><p class="pick">{len(columns)} columns drawn together, coupled by '
        f"<strong>{escape(joint.coupling)}</strong>.</p>"
        f'<p class="why">{x.shape[0]} data rows; {y.shape[0]} draws shown.</p></div>'
        + table(head, rows, "key")
        + "<h3>How the columns move together (Spearman rank correlation)</h3>"
        + table(["pair", "data", "draws", "draws − data"], pair_rows, "pairs")
        + f'<p class="caution" role="note"><strong>Caution.</strong> {escape(CAUTION_TEXT)}</p>'
        "</section>"
    )
    items = "".join(
        f'<li data-kind="{escape(w.kind)}"><span class="kind">{escape(_KIND_NAMES[w.kind])}'
        f"</span>{escape(w.message)}</li>"
        for w in warned
    )
    warnings = (
        f'<section id="warnings"><h2>Warnings ({len(warned)})</h2>'
        + (
            f'<ul class="warnings">{items}</ul>'
            if warned
            else '<p class="note">No warnings were found for this joint input.</p>'
        )
        + "</section>"
    )
    pictures = ['<section id="pictures"><h2>Pictures</h2>']
    pic = plots.plot_joint(JointInput(columns, x, y, u))
    pictures.append(
        img(
            pic,
            "Data rows over the joint draws",
            "Grey points: the data rows; blue: draws of the joint sampler. Rank correlations "
            "are Spearman's.",
        )
    )
    for k, (col, m) in enumerate(zip(columns, joint.marginals, strict=True)):
        pic = plots.plot_cdf(x[:, k], [(f"{col}: {m.method}", m)], units=u[k])
        eps = dkw_half_width(x.shape[0])
        pictures.append(
            img(
                pic,
                f"{col}: the data against its marginal",
                f"The band is the 95% Dvoretzky–Kiefer–Wolfowitz band, ±{eps:.3f}.",
            )
        )
    pictures.append("</section>")
    prov = "".join(
        f"<dt>{escape(k)}</dt><dd>{escape(v)}</dd>" for k, v in (provenance or {}).items()
    )
    details = (
        '<section id="details"><h2>Details</h2>'
        + (f"<h3>Provenance</h3><dl>{prov}</dl>" if prov else "")
        + "<h3>Definitions</h3><ul>"
        f"<li>{escape(QUANTILE_DEFINITION)}</li>"
        "<li>Rank correlation: Spearman's, the Pearson correlation of average ranks.</li></ul>"
        "</section>"
    )
    return "\n".join(
        [
            "<!DOCTYPE html>",
            '<html lang="en"><head><meta charset="utf-8">',
            '<meta name="viewport" content="width=device-width, initial-scale=1">',
            f"<title>Joint input report: {escape(name)}</title>",
            f"<style>{_CSS}</style></head><body><main>",
            '<header><p class="eyebrow">samplewright joint input report</p>'
            f"<h1>{escape(name)}</h1>",
            f'<p class="note">{x.shape[0]} rows · columns {escape(", ".join(columns))}</p>'
            "</header>",
            draw,
            warnings,
            "".join(pictures),
            details,
            "</main></body></html>",
            "",
        ]
    )
