"""One dataset's check report as a self-contained HTML page.

The page is built around the decision a simulation needs, in this order:

1. *What the simulation will draw*: the selected sampler, why it was selected, its key
   quantiles and tail mean with their intervals, what moved since the previous selection, and
   the caution;
2. *Warnings*: every warning, given or found here, always shown;
3. *How much the choice matters*: key quantiles and tail mean of every candidate next to the
   data's own, with how far they spread, and a picture of the candidates' upper quantiles;
4. *Pictures*: the data against the candidates (density or pmf, CDF with a band, Q–Q and P–P of
   the selected sampler), tail diagnostics, the nonparametric estimate for incomplete data, joint
   data against joint draws, elicited points, and the drift picture, as applicable;
5. *Details*: goodness-of-fit statistics, parameters, the data, provenance and definitions.

Plots are embedded as base64 PNG ``<img>`` with alt text; the page has inline CSS, no
JavaScript and no reference to the network. :func:`render_report_html` is pure: the same input
gives the same page.
"""

from __future__ import annotations

import math

import numpy as np

from samplewright.check import plots
from samplewright.check.html_bits import cell, escape, img, number, pct, pvalue, table
from samplewright.check.render_markdown import KIND_NAMES as _KIND_NAMES
from samplewright.check.report_model import CheckReportInput
from samplewright.check.report_numbers import (
    CandidateNumbersResult,
    ReportNumbersResult,
    derive_numbers,
    effective_n,
    is_discrete,
)
from samplewright.check.report_pictures import comparison_curves, given_text, pictures_section

__all__ = ["CAUTION_TEXT", "QUANTILE_DEFINITION", "SECTION_IDS", "render_report_html"]

CAUTION_TEXT = (
    "A fitted distribution is a model of the data, not the truth. Check it against the data and "
    "the engineering or actuarial judgement it stands in for, above all in the tail, before "
    "decisions on safety or money rest on it; local codes and licensed professional practice "
    "take precedence over anything shown here."
)
QUANTILE_DEFINITION = (
    "Quantiles are the generalised inverse Q(u) = inf{x : F(x) ≥ u}, for the data and for every "
    "candidate alike, so an empirical sampler's row equals the data's row."
)
SECTION_IDS = ("draw", "warnings", "spread", "pictures", "details")
_CSS = """

:root{--ink:#1d2430;--muted:#5b6472;--line:#d9dde3;--accent:#245b8f;--warn:#9a5b00;
--warnbg:#fff6e5;--pick:#eef4fa}
*{box-sizing:border-box}
body{margin:0;background:#f6f7f9;color:var(--ink);
font:15px/1.5 system-ui,-apple-system,"Segoe UI",Roboto,"Helvetica Neue",Arial,sans-serif}
main{max-width:1060px;margin:0 auto;padding:24px 20px 48px}
header h1{margin:0 0 4px;font-size:28px}
.eyebrow{margin:0;color:var(--muted);font-size:13px;letter-spacing:.06em;text-transform:uppercase}
nav{margin:12px 0 20px;font-size:14px}nav a{color:var(--accent);margin-right:14px}
section{background:#fff;border:1px solid var(--line);border-radius:8px;padding:18px 22px;
margin:0 0 18px}
h2{margin:0 0 12px;font-size:20px}h3{margin:18px 0 8px;font-size:16px}
.verdict{background:var(--pick);border-radius:6px;padding:12px 16px;margin-bottom:14px}
.verdict .pick{font-size:19px;margin:0}.verdict .why{margin:4px 0 0;color:var(--muted)}
table{border-collapse:collapse;margin:6px 0 10px;font-variant-numeric:tabular-nums}
th,td{border-bottom:1px solid var(--line);padding:5px 10px;text-align:left;vertical-align:top}
th{font-weight:600;background:#fafbfc}td.num{text-align:right;white-space:nowrap}
tr.selected td{background:var(--pick);font-weight:600}tr.reference td{font-style:italic}
tr.spread td{border-top:2px solid var(--ink)}
.ci{display:block;color:var(--muted);font-size:12px;font-weight:400;white-space:normal}
.caution{border-left:4px solid var(--accent);background:#f3f6fa;padding:10px 14px;margin:14px 0 0}
ul.warnings{list-style:none;padding:0;margin:0}
ul.warnings li{border-left:4px solid var(--warn);background:var(--warnbg);padding:8px 12px;
margin:0 0 8px}
.kind{font-weight:600;color:var(--warn);margin-right:8px}
.found{color:var(--muted);font-size:12px}.flag{color:#a11;font-weight:600}
figure{margin:0 0 22px}
figure img{box-sizing:content-box;max-width:100%;height:auto;border:1px solid var(--line)}
figcaption{color:var(--muted);font-size:13px;margin-top:4px}
.note{color:var(--muted);font-size:13px}
dl{display:grid;grid-template-columns:max-content 1fr;gap:4px 16px;margin:6px 0}
dt{color:var(--muted)}dd{margin:0;word-break:break-all}
"""


_e = escape
_num = number
_pct = pct
_pvalue = pvalue
_cell = cell
_table = table
_img = img


# --- sections ---------------------------------------------------------------------------------


def _draw_section(report: CheckReportInput, numbers: ReportNumbersResult) -> str:
    chosen = report.selected_candidate
    out = ['<section id="draw"><h2>What the simulation will draw</h2>']
    if chosen is None:
        out.append(
            '<div class="verdict"><p class="pick">No sampler has been selected for this dataset '
            'yet.</p><p class="why">The candidates are compared below; nothing here is what a '
            "simulation draws.</p></div>"
        )
    else:
        row = next(r for r in numbers.candidates if r.label == chosen.label)
        s = chosen.sampler
        reason = report.reason or "no reason was recorded"
        out.append(
            f'<div class="verdict"><p class="pick">Draws come from <strong>{_e(chosen.label)}'
            f"</strong> (method {_e(s.method)}).</p>"
            f'<p class="why">Selected because: {_e(reason)}.</p></div>'
        )
        units = f" ({_e(report.units)})" if report.units else ""
        rows = [
            f"<tr><td>{_pct(p)} of draws are at or below</td>"
            f"{_cell(row.quantiles[p], row.quantile_intervals.get(p))}</tr>"
            for p in report.probabilities
        ]
        rows.append(
            f"<tr><td>mean of the highest {_pct(1 - report.tail_level)} of draws</td>"
            f"{_cell(row.tail_mean, row.tail_mean_interval)}</tr>"
        )
        rows.append(f"<tr><td>mean of all draws</td>{_cell(s.mean)}</tr>")
        lo, hi = s.support
        span = f'<td class="num">[{_num(lo)}, {_num(hi)}]</td>'
        rows.append(f"<tr><td>range a draw can take</td>{span}</tr>")
        if report.data is not None:
            top = float(np.max(report.data.values))
            above = 1.0 - float(np.asarray(s.cdf(top)))
            rows.append(f"<tr><td>largest observation</td>{_cell(top)}</tr>")
            rows.append(f"<tr><td>chance a draw exceeds it</td>{_cell(above)}</tr>")
        out.append(_table(["", f"value{units}"], rows, "key"))
        t0 = numbers.given_above
        if t0 is not None:
            share = numbers.share_below.get(chosen.label, 0.0)
            out.append(
                f'<p class="note">These are ground-up figures: the whole distribution, below '
                f"{_e(f'{t0:.6g}')} too (the smallest truncation point), where the data saw "
                f"nothing and {_e(f'{share:.1%}')} of the draws fall. Set beside the data, given "
                "above that point: see How much the choice matters.</p>"
            )
        if not (row.quantile_intervals or row.tail_mean_interval):
            out.append('<p class="note">No bootstrap intervals were given for these figures.</p>')
    out.append(_tails_block(report, numbers))
    out.append(_drift_block(report, numbers))
    out.append(f'<p class="caution" role="note"><strong>Caution.</strong> {_e(CAUTION_TEXT)}</p>')
    out.append("</section>")
    return "".join(out)


def _tails_block(report: CheckReportInput, numbers: ReportNumbersResult) -> str:
    """Every candidate's tail quantiles and tail mean with their intervals (ground-up)."""
    probs = [p for p in report.probabilities if p >= 0.9] or list(report.probabilities)
    sources = {c.label: c.interval_source for c in report.candidates}
    ordered = sorted(numbers.candidates, key=lambda r: r.label != report.selected)
    rows = []
    for r in ordered:
        chosen = r.label == report.selected
        cells = "".join(_cell(r.quantiles[p], r.quantile_intervals.get(p)) for p in probs)
        how = sources.get(r.label) or (
            "—" if not (r.quantile_intervals or r.tail_mean_interval) else "given"
        )
        rows.append(
            f'<tr class="{"selected" if chosen else ""}"><td>{_e(r.label)}'
            f"{' (selected)' if chosen else ''}</td>{cells}"
            f"{_cell(r.tail_mean, r.tail_mean_interval)}<td>{_e(how)}</td></tr>"
        )
    head = ["candidate"] + [f"{_pct(p)} quantile" for p in probs]
    head += [f"mean of highest {_pct(1 - report.tail_level)}", "interval from"]
    return (
        "<h3>The tail of every candidate</h3>"
        '<p class="note">What a simulation would draw from each candidate, with 95% bootstrap '
        "intervals where they were computed (each candidate's own data refitted many times): "
        "how sure these figures are, and how far the candidates disagree.</p>"
        + _table(head, rows, "tails")
    )


def _drift_block(report: CheckReportInput, numbers: ReportNumbersResult) -> str:
    d = numbers.drift
    if report.drift is None:
        return ""
    if d is None:
        return '<p class="note">A previous selection exists, but nothing is selected now.</p>'
    flag = '<span class="flag">flagged</span>' if d.flagged else "not flagged"
    rows = [
        f"<tr><td>{_pct(p)} quantile</td>{_cell(a)}{_cell(b)}{_cell(b - a)}</tr>"
        for p, (a, b) in d.quantile_shifts.items()
    ]
    rows.append(
        f"<tr><td>mean</td>{_cell(d.mean[0])}{_cell(d.mean[1])}{_cell(d.mean[1] - d.mean[0])}</tr>"
    )
    a, b = d.tail_mean
    rows.append(
        f"<tr><td>mean of the highest {_pct(1 - report.tail_level)}</td>{_cell(a)}{_cell(b)}"
        f"{_cell(b - a if math.isfinite(a) and math.isfinite(b) else None)}</tr>"
    )
    return (
        f"<h3>Since the previous selection ({_e(report.drift.previous_label)})</h3>"
        f"<p>Largest gap between the two CDFs (KS distance): <strong>{_num(d.ks_distance, 3)}"
        f"</strong>; flag threshold {_num(d.threshold, 3)}: {flag}.</p>"
        + _table(["", "before", "now", "change"], rows)
    )


def _warnings_section(numbers: ReportNumbersResult) -> str:
    items = []
    for w, found in numbers.warnings:
        tag = ' <span class="found">(found by the report)</span>' if found else ""
        items.append(
            f'<li data-kind="{_e(w.kind)}"><span class="kind">{_e(_KIND_NAMES[w.kind])}</span>'
            f"{_e(w.message)}{tag}</li>"
        )
    body = (
        f'<ul class="warnings">{"".join(items)}</ul>'
        if items
        else '<p class="note">No warnings were recorded for this dataset.</p>'
    )
    return f'<section id="warnings"><h2>Warnings ({len(items)})</h2>{body}</section>'


def _spread_table(
    report: CheckReportInput,
    rows_in: tuple[CandidateNumbersResult, ...],
    spread: dict[float | str, tuple[float, float]],
    data_row: CandidateNumbersResult | None,
    share_below: dict[str, float] | None = None,
) -> str:
    """Candidates (the selected first), the data's row, and how far the candidates spread."""
    probs = report.probabilities
    head = ["candidate"] + [f"{_pct(p)} quantile" for p in probs]
    head.append(f"mean of highest {_pct(1 - report.tail_level)}")
    if share_below is not None:
        head.append("share at or below t0")
    ordered = sorted(rows_in, key=lambda r: r.label != report.selected)

    def line(r: CandidateNumbersResult, cls: str, name: str, extra: str = "") -> str:
        cells = "".join(_cell(r.quantiles[p], r.quantile_intervals.get(p)) for p in probs)
        return (
            f'<tr class="{cls}"><td>{name}</td>{cells}'
            f"{_cell(r.tail_mean, r.tail_mean_interval)}{extra}</tr>"
        )

    rows = [
        line(
            r,
            "selected" if r.label == report.selected else "",
            _e(r.label) + (" (selected)" if r.label == report.selected else ""),
            _cell(share_below[r.label]) if share_below is not None else "",
        )
        for r in ordered
    ]
    if data_row is not None:
        rows.append(line(data_row, "reference", _e(data_row.label)))
    keys: list[float | str] = [*probs, "tail_mean"]
    gap = "".join(_cell(spread[k][1] - spread[k][0]) for k in keys)
    ratio = "".join(
        _cell(hi / lo if lo > 0 and math.isfinite(hi) else None)
        for lo, hi in (spread[k] for k in keys)
    )
    rows.append(f'<tr class="spread"><td>largest − smallest</td>{gap}</tr>')
    rows.append(f"<tr><td>largest ÷ smallest</td>{ratio}</tr>")
    return _table(head, rows, "spread")


def _spread_section(
    report: CheckReportInput, numbers: ReportNumbersResult, picture: plots.PlotResult
) -> str:
    units = f" ({_e(report.units)})" if report.units else ""
    t0 = numbers.given_above
    intro = (
        f"<p>Each candidate's answer to the questions a simulation asks{units}. The wider the "
        "spread, the more the result depends on the choice of sampler rather than on the data."
        "</p>"
    )
    if t0 is None:
        tables = _spread_table(report, numbers.candidates, numbers.spread, numbers.data_row)
    else:
        t = _e(f"{t0:.6g}")
        tables = (
            f"<h3>What a simulation draws (ground-up, below {t} too)</h3>"
            f'<p class="note">The whole distribution of each candidate, t0 = {t} being the '
            "smallest truncation point (deductible) of the data. The last column is the share "
            "the data never saw: below t0 a family only extrapolates its shape.</p>"
            + _spread_table(
                report, numbers.candidates, numbers.spread, None, dict(numbers.share_below)
            )
            + f"<h3>Compared with the data, given above the smallest deductible t0 = {t}</h3>"
            f'<p class="note">Every row of the data is truncated, so the data describe values '
            f"above {t} only. Each candidate is taken given X &gt; {t}, "
            "F_c(x) = (F(x) − F(t0)) / (1 − F(t0)), and set beside the matching nonparametric "
            "estimate: compare like with like here, not with the ground-up rows.</p>"
            + _spread_table(
                report, numbers.conditional, numbers.conditional_spread, numbers.data_row
            )
        )
    note = f'<p class="note">{_e(QUANTILE_DEFINITION)}</p>'
    dots = (
        "Dots are the data's own quantiles."
        if numbers.data_row is not None
        else "No data quantiles are shown (no data, or incomplete data without an estimate)."
    )
    return (
        '<section id="spread"><h2>How much the choice matters</h2>'
        + intro
        + tables
        + note
        + _img(
            picture,
            "Upper quantiles of every candidate" + given_text(t0, report.units),
            "The right of the picture is the tail: values exceeded rarely. " + dots,
        )
        + "</section>"
    )


def _details_section(report: CheckReportInput) -> str:
    out = ['<section id="details"><h2>Details</h2><h3>Goodness of fit</h3>']
    rows = []
    for c in report.candidates:
        for f in c.fit_checks:
            rows.append(
                f"<tr><td>{_e(c.label)}</td><td>{_e(f.statistic)}</td>{_cell(f.value)}"
                f'<td class="num">{_pvalue(f.p_value)}</td>'
                f'<td class="num">{"—" if f.n_replicates is None else f.n_replicates}</td>'
                f'<td class="num">{f.n_failed}</td></tr>'
            )
    if rows:
        head = ["candidate", "statistic", "value", "p-value", "replicates", "failed refits"]
        out.append(_table(head, rows))
        out.append(
            '<p class="note">p-values from a parametric bootstrap that refits each replicate: '
            "p = (1 + replicates whose statistic is at least the data's) / (1 + successful "
            "refits). Failed refits are left out (they are counted in the last column); with "
            "more than 10% failed the p-values are unreliable. For incomplete data the "
            "statistic is the largest distance to the matching nonparametric estimate and each "
            "replicate redoes the censoring and truncation.</p>"
        )
    else:
        out.append('<p class="note">No goodness-of-fit statistics were given.</p>')
    out.append("<h3>Parameters</h3>")
    prow = []
    for c in report.candidates:
        s = c.sampler
        params = ", ".join(
            f"{_e(k)} = {_num(v) if isinstance(v, float) else _e(v)}" for k, v in s.params.items()
        )
        lo, hi = s.support
        kind = "no (atoms or pmf)" if is_discrete(s) else "yes"
        prow.append(
            f"<tr><td>{_e(c.label)}</td><td>{_e(s.method)}</td><td>{params or '—'}</td>"
            f'<td class="num">[{_num(lo)}, {_num(hi)}]</td><td>{kind}</td>'
            f"<td>{_e(c.note)}</td></tr>"
        )
    out.append(_table(["candidate", "method", "parameters", "range", "density", "note"], prow))
    out.append(_data_block(report))
    if report.provenance:
        items = "".join(f"<dt>{_e(k)}</dt><dd>{_e(v)}</dd>" for k, v in report.provenance.items())
        out.append(f"<h3>Provenance</h3><dl>{items}</dl>")
    out.append(
        "<h3>Definitions</h3><ul>"
        f"<li>{_e(QUANTILE_DEFINITION)}</li>"
        f"<li>Mean of the highest {_pct(1 - report.tail_level)}: (1/(1−p)) ∫ from p to 1 of "
        f"Q(u) du with p = {report.tail_level:g} (expected shortfall); exact for the data, "
        "numerical for the candidates.</li>"
        "<li>CDF band: Dvoretzky–Kiefer–Wolfowitz with Massart's constant, half-width "
        "sqrt(log(2/α)/(2n)); n is Kish's effective size with weights.</li></ul>"
    )
    out.append("</section>")
    return "".join(out)


def _data_block(report: CheckReportInput) -> str:
    d = report.data
    if d is None:
        return '<h3>Data</h3><p class="note">No data were given (e.g. an expert input).</p>'
    items = [("observations", str(d.values.size))]
    items.append(("smallest, largest", f"{_num(d.values.min())}, {_num(d.values.max())}"))
    if d.weights is not None:
        items.append(("weights", f"yes; effective size {_num(effective_n(d.weights, 0), 3)}"))
    if d.censored is not None:
        items.append(("right-censored rows", str(int(np.sum(d.censored)))))
    if d.lower is not None and d.upper is not None:
        items.append(("interval rows", str(int(np.sum(d.lower != d.upper)))))
    if d.truncation is not None:
        t = np.asarray(d.truncation, dtype=np.float64)
        text = _num(float(t)) if t.ndim == 0 else f"per row, {_num(t.min())} to {_num(t.max())}"
        items.append(("lower truncation", text))
    if report.units:
        items.append(("units", report.units))
    body = "".join(f"<dt>{_e(k)}</dt><dd>{_e(v)}</dd>" for k, v in items)
    return f"<h3>Data</h3><dl>{body}</dl>"


def render_report_html(report: CheckReportInput) -> str:
    """The check report of one dataset as a self-contained HTML page.

    Parameters
    ----------
    report : everything to show; missing quantiles and tail means are computed from the
        candidates' samplers (see :func:`~samplewright.check.report_numbers.derive_numbers`).

    Returns
    -------
    str
        An HTML5 document with inline CSS and base64 PNG images; no JavaScript, no network.
    """
    numbers = derive_numbers(report)
    spread_pic = plots.plot_quantile_spread(
        comparison_curves(report),
        probabilities=report.probabilities,
        data_quantiles=numbers.data_row.quantiles if numbers.data_row is not None else None,
        units=report.units,
        selected=report.selected,
    )
    n = f"{report.data.values.size} observations" if report.data is not None else "no data"
    units = f" · values in {_e(report.units)}" if report.units else ""
    nav = "".join(
        f'<a href="#{i}">{t}</a>'
        for i, t in zip(
            SECTION_IDS,
            ("what is drawn", "warnings", "how much the choice matters", "pictures", "details"),
            strict=True,
        )
    )
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>Check report: {_e(report.dataset)}</title>",
        f"<style>{_CSS}</style></head><body><main>",
        f'<header><p class="eyebrow">samplewright check report</p><h1>{_e(report.dataset)}</h1>',
        f'<p class="note">{n} · {len(report.candidates)} candidate samplers{units}</p></header>',
        f"<nav>{nav}</nav>",
        _draw_section(report, numbers),
        _warnings_section(numbers),
        _spread_section(report, numbers, spread_pic),
        pictures_section(report),
        _details_section(report),
        "</main></body></html>",
        "",
    ]
    return "\n".join(parts)
