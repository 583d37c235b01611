"""The pictures section of a check report page (see :mod:`samplewright.check.report_html`).

The data against the candidates (density or pmf, the empirical CDF with its band, Q–Q and P–P
of the selected sampler), the matching nonparametric estimate for incomplete data, tail
diagnostics, joint data against joint draws, elicited points, and the drift picture, as
applicable. When every row of the data is truncated (``t0`` the smallest truncation point) the
data show ``X`` given ``X > t0`` only: every picture that puts a candidate beside the data draws
the candidate given ``X > t0`` too, and says so in its title.
"""

from __future__ import annotations

import numpy as np

from samplewright.check import plots
from samplewright.check.html_bits import img
from samplewright.check.report_model import CheckReportInput
from samplewright.check.report_numbers import dkw_half_width, effective_n

__all__ = ["CAPTIONS", "comparison_curves", "given_text", "pictures_section"]

CAPTIONS = {
    "density": "Grey: the data; lines: candidates, the selected one drawn solid and thick.",
    "density_no_data": "Lines: each candidate's density (or probability mass), the selected one "
    "drawn solid and thick; no data were given, so there is nothing to compare them with.",
    "incomplete_rows": " Incomplete rows are drawn at their recorded value (a censored row at its "
    "censoring point, an interval row at its middle), so the bars are only a rough guide.",
    "cdf": "The band is the {level} Dvoretzky–Kiefer–Wolfowitz band, ±{eps:.3f} "
    "(sqrt(log(2/α)/(2n)), Massart's constant); a candidate leaving it disagrees with the data.",
    "reference": "The nonparametric estimate uses the incomplete rows as they are; the band is "
    "its own.",
    "entry": " Truncated rows enter the estimate at their truncation point (entry times): a "
    "row counts as at risk only above it.",
    "given": " Every row is truncated, so the data describe values above {t0} only: each "
    "candidate is drawn given X > {t0} (its ground-up figures are in the tables above).",
    "qq": "Points on the line: {against} and the sampler agree; a bend at the right end is a "
    "tail that is too light or too heavy.",
    "pp": "Points on the line: the sampler puts the right share of probability below each "
    "observed value.",
    "mean_excess": "A roughly straight, rising line above a threshold suggests a heavy "
    "(Pareto-type) tail beyond it.",
    "shape": "A threshold is reasonable where the fitted shape has stopped drifting.",
    "joint": "Rank correlations are Spearman's.",
    "elicited": "Red segments show how far the curve passes from each point an expert gave.",
    "drift": "The red segment marks the largest gap between the two CDFs.",
}


def given_text(t0: float | None, units: str = "") -> str:
    """`` (given X > t0)`` for titles, or nothing without conditioning."""
    if t0 is None:
        return ""
    return f" (given X > {t0:.6g}{' ' + units if units else ''})"


def comparison_curves(report: CheckReportInput) -> list[plots.Curve]:
    """The candidates as compared with the data: given ``X > t0`` when every row is truncated."""
    from samplewright.check.incomplete_reference import conditioned

    t0 = report.data.conditioned_on if report.data is not None else None
    return [(c.label, conditioned(c.sampler, t0)) for c in report.candidates]


def _qq_positions(report: CheckReportInput) -> tuple[np.ndarray, np.ndarray] | None:
    """The nonparametric estimate's jumps and mid-step probabilities, for incomplete data."""
    ref = report.reference
    if ref is None or ref.kind != "step":
        return None
    mass = np.diff(np.r_[0.0, ref.cdf])
    jump = mass > 0
    return ref.x[jump], (ref.cdf - mass / 2.0)[jump]


def _data_pictures(report: CheckReportInput, curves: list[plots.Curve]) -> list[str]:
    """Density, CDF, nonparametric estimate, Q–Q and P–P."""
    units, data, picked = report.units, report.data, report.selected
    t0 = data.conditioned_on if data is not None else None
    given = given_text(t0, units)
    note = CAPTIONS["given"].format(t0=f"{t0:.6g}") if t0 is not None else ""
    out: list[str] = []
    x = data.values if data is not None else None
    w = data.weights if data is not None else None
    discrete = data.discrete if data is not None else None
    pic = plots.plot_density(x, curves, weights=w, discrete=discrete, units=units, selected=picked)
    if data is None:
        text = CAPTIONS["density_no_data"]
    else:
        text = CAPTIONS["density"] + (CAPTIONS["incomplete_rows"] if data.n_incomplete else "")
    out.append(img(pic, "Data and candidate densities" + given, text + note))
    if data is not None and not data.is_incomplete:
        alpha = report.band_alpha
        eps = dkw_half_width(effective_n(data.weights, data.values.size), alpha)
        pic = plots.plot_cdf(x, curves, weights=w, alpha=alpha, units=units, selected=picked)
        text = CAPTIONS["cdf"].format(level=f"{1 - alpha:.0%}", eps=eps)
        out.append(img(pic, "Cumulative distribution with a confidence band", text))
    ref = report.reference
    if ref is not None:
        pic = plots.plot_reference(ref, curves, units=units, selected=picked)
        title = f"{ref.label} estimate and the candidates{given}"
        entry = CAPTIONS["entry"] if data is not None and data.truncation is not None else ""
        out.append(img(pic, title, CAPTIONS["reference"] + entry + note))
    positions = _qq_positions(report) if data is not None and data.is_incomplete else None
    sel = next((s for label, s in curves if label == picked), None)
    if sel is not None and data is not None and (positions is not None or not data.is_incomplete):
        label = f"{picked}{given}"
        pic = plots.plot_qq(x, sel, weights=w, positions=positions, units=units, label=label)
        against = "the nonparametric estimate" if positions is not None else "the data"
        caption = CAPTIONS["qq"].format(against=against)
        out.append(img(pic, f"Q–Q plot of {picked}{given}", caption))
        pic = plots.plot_pp(x, sel, weights=w, positions=positions, label=label)
        out.append(img(pic, f"P–P plot of {picked}{given}", CAPTIONS["pp"]))
    return out


def _pictures(report: CheckReportInput) -> list[str]:
    sel, units = report.selected_candidate, report.units
    out = _data_pictures(report, comparison_curves(report))
    tail = report.tail
    if tail is not None and len(tail.mean_excess_thresholds):
        pic = plots.plot_mean_excess(
            tail.mean_excess_thresholds, tail.mean_excess, chosen=tail.chosen_threshold, units=units
        )
        out.append(img(pic, "Mean excess over a threshold", CAPTIONS["mean_excess"]))
    if tail is not None and len(tail.scan_thresholds):
        pic = plots.plot_shape_scan(
            tail.scan_thresholds,
            tail.scan_shapes,
            low=tail.scan_low,
            high=tail.scan_high,
            chosen=tail.chosen_threshold,
            units=units,
        )
        out.append(img(pic, "Tail shape across thresholds", CAPTIONS["shape"]))
    if report.joint is not None:
        pic = plots.plot_joint(report.joint)
        out.append(img(pic, "Joint data and joint draws", CAPTIONS["joint"]))
    if report.elicited is not None:
        target, e = sel or report.candidates[0], report.elicited
        pic = plots.plot_elicited(
            target.sampler, e.probabilities, e.values, mode=e.mode, units=units, label=target.label
        )
        src = f" Source: {e.source}." if e.source else ""
        out.append(img(pic, "Elicited points on the curve", CAPTIONS["elicited"] + src))
    if report.drift is not None and sel is not None:
        d = report.drift
        pic = plots.plot_drift(
            d.previous, sel.sampler, old_label=d.previous_label, new_label=sel.label, units=units
        )
        out.append(img(pic, "Previous and current selection", CAPTIONS["drift"]))
    return out


def pictures_section(report: CheckReportInput) -> str:
    """The ``pictures`` section of the page."""
    notes = []
    data = report.data
    if data is not None and data.is_incomplete and report.reference is None:
        notes.append(
            '<p class="note">The data are incomplete (censored, interval-valued or truncated) '
            "and no nonparametric estimate was given, so no empirical CDF, Q–Q or P–P picture is "
            "drawn: plotting incomplete rows as observations would mislead.</p>"
        )
    if report.selected_candidate is None:
        notes.append('<p class="note">No sampler is selected: no Q–Q or P–P picture.</p>')
    return (
        '<section id="pictures"><h2>Pictures</h2>'
        + "".join(notes)
        + "".join(_pictures(report))
        + "</section>"
    )
