"""A check report's input from what a check has in memory: data, candidates and their records.

:func:`report_input` gathers, for :func:`~samplewright.check.report_html.render_report_html`,
what the artifacts and the check recorded: the candidates with their goodness-of-fit records,
the selection and its reason, every warning, the tail diagnostics of a spliced candidate (mean
excess and the shape across thresholds, the chosen threshold), the matching nonparametric
estimate (Kaplan–Meier with its band, or Turnbull's) for incomplete data, elicited points, and
the previous selection with the distance already measured (:mod:`samplewright.check.drift`). It
reads no file.

The Kaplan–Meier band is the pointwise 95% band of the log(−log) transform with Greenwood's
variance (Kalbfleisch & Prentice 2002, §1.4): ``S(t)^exp(±z σ(t))`` with
``σ² = Σ d / (n (n − d)) / log(S)²`` over event times up to ``t``, ``n`` the weight at risk
(with entry times: the rows entered before ``t`` and not yet ended). For truncated, censored or
interval rows the matching nonparametric estimate comes from
:mod:`samplewright.check.incomplete_reference`. Elicited points are a quantiles input's points,
or a three-point input's lowest and highest value (the curve's 0 and 1) and its most likely
value (the mode).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from samplewright.check.drift import DriftResult
from samplewright.check.report_html import CAUTION_TEXT, QUANTILE_DEFINITION
from samplewright.check.report_model import (
    Candidate,
    CheckReportInput,
    DriftInput,
    ElicitedPoints,
    FitCheck,
    ObservedData,
    ReferenceEstimate,
    ReportWarning,
    SamplerLike,
    TailDiagnostics,
)
from samplewright.check.report_numbers import CandidateNumbersResult, derive_numbers

__all__ = [
    "fit_checks_of",
    "kaplan_meier_band",
    "report_input",
    "report_numbers_document",
    "tail_diagnostics_of",
]


def fit_checks_of(gof: Mapping[str, Any] | None) -> tuple[FitCheck, ...]:
    """A goodness-of-fit record (the check summary's form) as the report's :class:`FitCheck`."""
    if not gof:
        return ()
    stats = gof.get("statistics") or {}
    pvals = gof.get("pvalues") or {}
    out = []
    for name in stats:
        value = stats.get(name)
        if value is None:
            continue
        out.append(
            FitCheck(
                str(name),
                float(value),
                None if pvals.get(name) is None else float(pvals[name]),
                gof.get("n_resamples"),
                int(gof.get("n_failed") or 0),
            )
        )
    return tuple(out)


def tail_diagnostics_of(diagnostics: Mapping[str, Any]) -> TailDiagnostics | None:
    """The mean-excess and threshold-scan points a spliced fit recorded, or None."""
    me = diagnostics.get("mean_excess")
    stab = diagnostics.get("parameter_stability")
    if not isinstance(me, Mapping) and not isinstance(stab, Mapping):
        return None

    def pairs(a: Any, b: Any) -> tuple[np.ndarray, np.ndarray]:
        x = np.asarray([np.nan if v is None else v for v in a or []], dtype=np.float64)
        y = np.asarray([np.nan if v is None else v for v in b or []], dtype=np.float64)
        keep = np.isfinite(x) & np.isfinite(y)
        return x[keep], y[keep]

    me_x, me_y = pairs((me or {}).get("threshold"), (me or {}).get("mean_excess"))
    st = stab or {}
    u = np.asarray([np.nan if v is None else v for v in st.get("threshold", [])], dtype=float)
    xi = np.asarray([np.nan if v is None else v for v in st.get("xi", [])], dtype=float)
    se = np.asarray([np.nan if v is None else v for v in st.get("xi_se", [])], dtype=float)
    keep = np.isfinite(u) & np.isfinite(xi) & np.isfinite(se)
    chosen = (diagnostics.get("threshold_choice") or {}).get("threshold")
    return TailDiagnostics(
        mean_excess_thresholds=me_x,
        mean_excess=me_y,
        scan_thresholds=u[keep],
        scan_shapes=xi[keep],
        scan_low=xi[keep] - 1.96 * se[keep],
        scan_high=xi[keep] + 1.96 * se[keep],
        chosen_threshold=None if chosen is None else float(chosen),
    )


def kaplan_meier_band(
    values: Any,
    censored: Any,
    weights: Any = None,
    *,
    entry: Any = None,
    z: float = 1.959963984540054,
) -> ReferenceEstimate:
    """The Kaplan–Meier estimate of the CDF with its log(−log) Greenwood band (docstring).

    ``entry`` holds entry times (lower truncation points: a row is at risk from just after its
    entry on); ``z`` is the standard normal quantile of the band (default: 95%).
    """
    from samplewright.check.incomplete_reference import incomplete_rows, reference_estimate

    rows = incomplete_rows(values, censored=censored, truncation=entry, weights=weights)
    return reference_estimate(rows, z=z)


def _elicited_points(diag: Mapping[str, Any]) -> ElicitedPoints | None:
    """The points an expert gave, from a sampler's diagnostics (quantiles or three points)."""
    e = diag.get("elicited")
    if isinstance(e, Mapping) and e.get("probabilities"):
        return ElicitedPoints(e["probabilities"], e["values"], "elicited points")
    t = diag.get("three_points")
    if isinstance(t, Mapping) and t.get("low") is not None and t.get("high") is not None:
        return ElicitedPoints(
            [0.0, 1.0],
            [float(t["low"]), float(t["high"])],
            f"three points ({t.get('family', 'pert')}): lowest, most likely and highest value",
            mode=None if t.get("mode") is None else float(t["mode"]),
        )
    return None


def report_input(
    dataset: str,
    samplers: Sequence[SamplerLike],
    labels: Sequence[str],
    *,
    values: Any = None,
    weights: Any = None,
    censored: Any = None,
    truncation: Any = None,
    lower: Any = None,
    upper: Any = None,
    selected: int | None = None,
    reason: str = "",
    units: str = "",
    warnings: Sequence[ReportWarning] = (),
    gof: Sequence[Mapping[str, Any] | None] = (),
    previous: SamplerLike | None = None,
    previous_label: str = "previous selection",
    drift: DriftResult | None = None,
    provenance: Mapping[str, str] | None = None,
) -> CheckReportInput:
    """The :class:`CheckReportInput` of one dataset (see the module docstring).

    ``samplers`` and ``labels`` are the candidates in order; ``gof`` one goodness-of-fit record
    per candidate (or None); ``selected`` the index of the selected one. ``previous`` with
    ``drift`` (its comparison with the selected candidate) adds the drift block. Incomplete
    data (``censored`` flags, lower ``truncation`` points, interval rows ``lower``/``upper``
    with ``values`` a point per row for the histogram) get the matching nonparametric estimate
    (:func:`~samplewright.check.incomplete_reference.reference_estimate`), computed from the
    rows whether or not a candidate is one.
    """
    records = list(gof) + [None] * (len(samplers) - len(gof))
    candidates = []
    for s, label, g in zip(samplers, labels, records, strict=True):
        meta = getattr(s, "metadata", {}) or {}
        note = ""
        diag = meta.get("diagnostics") or getattr(s, "diagnostics", {}) or {}
        if isinstance(diag.get("auto"), Mapping):
            note = f"auto chose {diag['auto'].get('chosen')} by {diag['auto'].get('criterion')}"
        candidates.append(Candidate(label, s, fit_checks=fit_checks_of(g), note=note))
    chosen = samplers[selected] if selected is not None else None
    data = None
    reference = None
    if values is not None:
        cens = None if censored is None or not np.any(censored) else censored
        data = ObservedData(
            values, weights=weights, censored=cens, lower=lower, upper=upper, truncation=truncation
        )
        if data.is_incomplete:
            from samplewright.check.incomplete_reference import incomplete_rows, reference_estimate

            if lower is not None and upper is not None:
                rows = incomplete_rows(
                    lower=lower, upper=upper, truncation=truncation, weights=weights
                )
            else:
                rows = incomplete_rows(
                    values, censored=cens, truncation=truncation, weights=weights
                )
            reference = reference_estimate(rows)
    tail = None
    elicited = None
    for s in [chosen] if chosen is not None else samplers:
        meta = getattr(s, "metadata", {}) or {}
        diag = meta.get("diagnostics") or getattr(s, "diagnostics", {}) or {}
        tail = tail or tail_diagnostics_of(diag)
        elicited = elicited or _elicited_points(diag)
    drift_input = None
    if previous is not None and drift is not None:
        drift_input = DriftInput(
            previous,
            previous_label,
            threshold=drift.threshold,
            ks_distance=drift.ks_distance,
            flagged=drift.flagged,
        )
    return CheckReportInput(
        dataset=dataset,
        candidates=tuple(candidates),
        selected=labels[selected] if selected is not None else None,
        reason=reason,
        units=units,
        data=data,
        warnings=tuple(warnings),
        tail=tail,
        reference=reference,
        elicited=elicited,
        drift=drift_input,
        provenance=dict(provenance or {}),
    )


def _num(v: Any) -> float | None:
    f = float(v)
    return f if np.isfinite(f) else None


def _ci(ci: Any) -> dict[str, Any] | None:
    if ci is None:
        return None
    return {"low": _num(ci.low), "high": _num(ci.high), "level": ci.level}


def _spread_doc(spread: Mapping[float | str, tuple[float, float]]) -> dict[str, Any]:
    return {
        (f"{k:g}" if isinstance(k, float) else str(k)): {"smallest": _num(lo), "largest": _num(hi)}
        for k, (lo, hi) in spread.items()
    }


def _row(r: CandidateNumbersResult) -> dict[str, Any]:
    return {
        "label": r.label,
        "quantiles": {f"{p:g}": _num(v) for p, v in r.quantiles.items()},
        "quantile_intervals": {f"{p:g}": _ci(ci) for p, ci in r.quantile_intervals.items()},
        "tail_mean": _num(r.tail_mean),
        "tail_mean_interval": _ci(r.tail_mean_interval),
    }


def report_numbers_document(report: CheckReportInput) -> dict[str, Any]:
    """The numbers the report page shows, as strict JSON (non-finite numbers as null): the
    selection and its reason, every candidate's key quantiles and tail mean with intervals, the
    data's row, the spread across candidates, what moved since the previous selection, and
    every warning (``found_by_report`` for those the report added)."""
    n = derive_numbers(report)
    spread = _spread_doc(n.spread)
    given_above = None
    if n.given_above is not None:
        given_above = {
            "threshold": n.given_above,
            "meaning": "every row is truncated: the data row and these rows describe X given "
            "X > threshold, the smallest truncation point; 'candidates' above are ground-up",
            "candidates": [
                {**_row(r), "share_below": _num(n.share_below[r.label])} for r in n.conditional
            ],
            "spread": _spread_doc(n.conditional_spread),
        }
    drift = None
    if n.drift is not None:
        d = n.drift
        drift = {
            "previous": report.drift.previous_label if report.drift is not None else None,
            "ks_distance": _num(d.ks_distance),
            "threshold": d.threshold,
            "flagged": d.flagged,
            "quantiles": {f"{p:g}": [_num(a), _num(b)] for p, (a, b) in d.quantile_shifts.items()},
            "mean": [_num(v) for v in d.mean],
            "tail_mean": [_num(v) for v in d.tail_mean],
        }
    return {
        "format": "samplewright-report",
        "dataset": report.dataset,
        "selected": report.selected,
        "reason": report.reason,
        "units": report.units,
        "probabilities": list(report.probabilities),
        "tail_level": report.tail_level,
        "candidates": [_row(r) for r in n.candidates],
        "data": None if n.data_row is None else _row(n.data_row),
        "spread": spread,
        "given_above": given_above,
        "drift": drift,
        "warnings": [
            {"kind": w.kind, "message": w.message, "found_by_report": found}
            for w, found in n.warnings
        ],
        "quantile_definition": QUANTILE_DEFINITION,
        "caution": CAUTION_TEXT,
    }
