"""The file work of ``samplewright check`` and ``samplewright report``.

:func:`write_check` reads the data (a snapshot or a file column) and the candidate artifacts,
refuses candidates fitted to other data (their recorded fingerprint is not the data's), says
which candidate the workflow selected (``selected``: the selected artifact) and why, runs a
parametric-bootstrap goodness-of-fit test for plain parametric candidates that carry none (auto
records its own), gathers every warning, finds the previous selection of the dataset in the
store and measures what moved (:mod:`samplewright.check.drift`), and writes the summary as JSON
with Markdown beside it, and optionally the report page.

:func:`write_report` writes the report page (HTML, its numbers as JSON beside it). Given a check
summary it takes the goodness-of-fit records, warnings and previous selection from it (the
workflow's report rule); otherwise it gathers them itself, without new tests. Data are
optional: a column snapshot or data file, a table snapshot of incomplete rows (interval rows,
truncation), or none at all (a drawn CDF, elicited quantiles). It adds bootstrap intervals from
the dataset's intervals document (statistics of the data: shown on an empirical candidate fitted
to all of them, whose figures are the data's) and from its replicates artifact (percentile 95%
intervals of the selected candidate's figures over the replicates).
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError

__all__ = ["candidate_labels", "write_check", "write_report"]

PathLike = str | Path
_TEST_NAMES = {"ks": "KS", "ad": "AD", "cvm": "CvM"}


def candidate_labels(paths: Sequence[PathLike], samplers: Sequence[Any]) -> list[str]:
    """Labels of candidates: the label folder of a store path
    (``samplers/<dataset>/<label>/<key>.parquet``), else the method; repeats get ``#2``..."""
    out: list[str] = []
    for path, s in zip(paths, samplers, strict=True):
        p = Path(path)
        label = p.parent.name if p.parent.parent.parent.name == "samplers" else str(s.method)
        base, i = label, 2
        while label in out:
            label, i = f"{base}#{i}", i + 1
        out.append(label)
    return out


@dataclass
class _Inputs:
    """What a check or a report reads: data (any form), candidates, the selection."""

    values: np.ndarray | None
    weights: np.ndarray | None
    censored: np.ndarray | None
    fingerprint: str | None
    info: dict[str, Any] | None
    roles: Any
    samplers: list[Any]
    labels: list[str]
    index: int | None
    rule: str | None


def _read_any(path: PathLike | None, column: str | None) -> tuple[Any, ...]:
    """(values, weights, censored, fingerprint, info, role data) of a data source, or Nones."""
    if path is None:
        return None, None, None, None, None, None
    from samplewright.pipeline.table_data import read_roles, table_snapshot_info
    from samplewright.store.fingerprints import fingerprint_column
    from samplewright.store.snapshots import read_data

    table_info = table_snapshot_info(path)
    if table_info is not None and table_info.get("roles"):
        rd = read_roles(path, table_info["roles"])
        arrays = {r: np.asarray(a, dtype=np.float64) for r, a in rd.arrays.items()}
        lo, hi, v = arrays.get("lower"), arrays.get("upper"), arrays.get("value")
        if v is None and lo is not None and hi is not None:  # a point per row, for pictures
            both = np.isfinite(lo) & np.isfinite(hi)
            v = np.where(both, (lo + hi) / 2.0, np.where(np.isfinite(lo), lo, hi))
        assert v is not None
        keep = np.isfinite(v)  # a row open at both ends has no point to draw
        if "weight" in arrays:
            keep &= arrays["weight"] > 0  # rows of weight 0 carry nothing (fit drops them too)
        arrays = {r: a[keep] for r, a in arrays.items()}
        c = arrays.get("censor")
        censored = None if c is None else c.astype(bool)
        return v[keep], arrays.get("weight"), censored, rd.fingerprint, table_info, arrays
    data, info = read_data(path, column)
    fp = fingerprint_column(data)
    values, weights, censored = data.values, data.weights, data.censored
    if weights is not None and not np.all(weights > 0):  # rows of weight 0 carry nothing
        keep = weights > 0
        values, weights = values[keep], weights[keep]
        censored = None if censored is None else censored[keep]
    if censored is not None and not censored.any():
        censored = None
    return values, weights, censored, fp, info, None


def _match_selected(samplers: Sequence[Any], selected: Any, where: PathLike) -> int:
    meta = selected.metadata
    sel = (meta.get("diagnostics") or {}).get("selection") or {}
    ranking = sel.get("ranking") or []
    wanted = ranking[0].get("content_hash") if ranking else meta.get("content_hash")
    for i, s in enumerate(samplers):
        if s.metadata.get("content_hash") == wanted:
            return i
    raise MethodError(
        f"--selected {where}: it is not one of the candidates given (content hash {wanted})"
    )


def _load(
    data_path: PathLike | None,
    candidates: Sequence[PathLike],
    column: str | None,
    labels: Sequence[str] | None,
    selected: PathLike | None,
) -> _Inputs:
    from samplewright.store.artifacts import load_sampler

    values, weights, censored, fp, info, roles = _read_any(data_path, column)
    samplers = [load_sampler(c) for c in candidates]
    if labels is not None and len(labels) != len(samplers):
        raise MethodError(f"--label: expected {len(samplers)} labels, found {len(labels)}")
    names = list(labels) if labels is not None else candidate_labels(candidates, samplers)
    index = rule = None
    if selected is not None:
        chosen = load_sampler(selected)
        index = _match_selected(samplers, chosen, selected)
        sel = (chosen.metadata.get("diagnostics") or {}).get("selection") or {}
        rule = sel.get("rule")
    return _Inputs(values, weights, censored, fp, info, roles, samplers, names, index, rule)


def _gof(sampler: Any, values: np.ndarray, weights: Any, n_resamples: int, rng: Any) -> Any:
    """The summary-form goodness-of-fit record of a plain parametric candidate, or None."""
    from samplewright.check.gof import goodness_of_fit
    from samplewright.core.errors import SamplewrightError
    from samplewright.distributions.families import FAMILIES

    meta = sampler.metadata
    family = (meta.get("sampler") or {}).get("family")
    if sampler.kind != "parametric" or sampler.method != family or family not in FAMILIES:
        return None
    options = dict((meta.get("provenance") or {}).get("options") or {})
    try:
        r = goodness_of_fit(
            values, family, n_resamples=n_resamples, rng=rng, weights=weights, **options
        )
    except (SamplewrightError, ValueError, FloatingPointError):
        return None
    mine = sampler.params
    same = all(
        math.isclose(float(r.params[k]), float(mine[k]), rel_tol=1e-6, abs_tol=1e-9)
        for k in mine
        if k in r.params
    )
    if not same:
        return None  # the refit is another model (options not recorded): no test of this one
    return {
        "statistics": {k: float(v) for k, v in r.statistics.items()},
        "pvalues": {k: (float(v) if np.isfinite(v) else None) for k, v in r.pvalues.items()},
        "n_resamples": r.n_resamples,
        "n_failed": r.n_failed,
        "reliable": bool(r.reliable),
        "source": "check",
    }


def _fingerprints(inp: _Inputs, allow_other: bool) -> tuple[dict[str, Any], list[Any]]:
    """The fingerprints compared, and warnings; refuses candidates fitted to other data."""
    from samplewright.check.report_model import ReportWarning

    data_fp = str(inp.fingerprint)
    rows, warned, other = [], [], []
    for label, s in zip(inp.labels, inp.samplers, strict=True):
        fp = s.metadata.get("fingerprint")
        match = None if fp is None else bool(fp == data_fp)
        rows.append({"label": label, "fingerprint": fp, "matches": match})
        if match is False:
            other.append((label, str(fp)))
            warned.append(
                ReportWarning(
                    "other",
                    f"{label} was fitted to other data (fingerprint {str(fp)[:16]}, the data's "
                    f"is {data_fp[:16]})",
                )
            )
        elif match is None:
            warned.append(
                ReportWarning("other", f"{label} records no data fingerprint: its data are unknown")
            )
    if other and not allow_other:
        names = ", ".join(label for label, _ in other)
        raise MethodError(
            f"candidates: {names} {'was' if len(other) == 1 else 'were'} fitted to other data "
            f"(fingerprint {other[0][1][:16]}, the data's is {data_fp[:16]}); refit, or pass "
            "--allow-other-data to compare anyway"
        )
    return {"data": data_fp, "candidates": rows}, warned


def _drift(
    store: PathLike | None, dataset: str, selected: PathLike | None, inp: _Inputs, threshold: float
) -> tuple[dict[str, Any] | None, Any, Any]:
    """(previous-selection record, DriftResult, previous sampler), or Nones."""
    if store is None or not dataset or selected is None or inp.index is None:
        return None, None, None
    from samplewright.check.drift import compare_samplers
    from samplewright.store.artifacts import load_sampler
    from samplewright.store.listing import previous_selection

    entry = previous_selection(store, dataset, current=selected)
    if entry is None:
        return None, None, None
    previous = load_sampler(entry.path)
    drift = compare_samplers(previous, inp.samplers[inp.index], threshold=threshold)
    record = {
        "path": entry.path,
        "key": entry.key,
        "method": entry.method,
        "content_hash": entry.content_hash,
        "created_at": entry.created,
        "fingerprint": entry.fingerprint,
        "data_changed": inp.fingerprint is not None and entry.fingerprint != inp.fingerprint,
    }
    return record, drift, previous


def _warnings(inp: _Inputs, gofs: Sequence[Any], drift: Any, extra: Sequence[Any]) -> list[Any]:
    """Every warning: the selected artifact's, the other candidates' (named), the data's, the
    check's own (other data, poor fit of the selection, a flagged change)."""
    from samplewright.check.recorded import artifact_warnings, data_warnings, merge_warnings
    from samplewright.check.render import auto_fit_check, is_poor_fit
    from samplewright.check.report_model import ReportWarning

    i = inp.index
    pick = inp.samplers[i] if i is not None else None
    own = artifact_warnings(pick.metadata) if pick is not None else []
    warned: list[Any] = list(own)
    if inp.values is not None and inp.roles is None:
        warned += data_warnings(
            inp.values,
            weights=inp.weights,
            sampler=pick,
            label=inp.labels[i] if i is not None else "",
        )
    said = {w.message for w in warned}
    for j, (label, s) in enumerate(zip(inp.labels, inp.samplers, strict=True)):
        if j != i:  # another candidate's warning, named, unless it says what is said already
            warned += [
                ReportWarning(w.kind, f"{label}: {w.message}")
                for w in artifact_warnings(s.metadata)
                if w.message not in said
            ]
    warned += list(extra)
    if i is not None and pick is not None:
        gof = gofs[i] or auto_fit_check(pick.metadata.get("diagnostics") or {})
        if gof is not None and is_poor_fit(gof) and not any(w.kind == "poor_fit" for w in own):
            tests = ", ".join(
                f"{_TEST_NAMES.get(k, k)} p = {v:.3g}"
                for k, v in (gof.get("pvalues") or {}).items()
                if v is not None
            )
            warned.append(
                ReportWarning(
                    "poor_fit",
                    f"the selected {inp.labels[i]} fails a goodness-of-fit test at p <= 0.01 "
                    f"({tests}; {gof.get('n_resamples')} bootstrap replicates)",
                )
            )
    if drift is not None and drift.flagged:
        warned.append(
            ReportWarning(
                "drift",
                f"the selection moved by KS distance {drift.ks_distance:.3g} since the previous "
                f"one (flag threshold {drift.threshold:g})",
            )
        )
    return merge_warnings(warned)


def write_check(
    data_path: PathLike,
    candidates: Sequence[PathLike],
    *,
    out: PathLike,
    dataset: str = "",
    column: str | None = None,
    labels: Sequence[str] | None = None,
    selected: PathLike | None = None,
    store: PathLike | None = None,
    units: str = "",
    drift_threshold: float | None = None,
    gof_resamples: int = 99,
    seed: int = 0,
    streams: Sequence[str] = ("check",),
    allow_other_data: bool = False,
    html: PathLike | None = None,
) -> dict[str, Any]:
    """Write the check summary as JSON to ``out`` and as Markdown beside it (``.md``); with
    ``html``, also the report page and its JSON beside it. Returns the summary.

    ``data_path`` is a column snapshot or a data file with ``column``.
    """
    from samplewright.check.drift import DEFAULT_DRIFT_THRESHOLD
    from samplewright.check.render import check_summary, render_check_markdown
    from samplewright.core.randomness import stream_rng
    from samplewright.store.atomic import write_text

    inp = _load(data_path, candidates, column, labels, selected)
    if inp.roles is not None or inp.values is None:
        raise MethodError(
            f"{data_path}: a table snapshot of incomplete rows has no single column to check; "
            "use 'samplewright report' for its page"
        )
    fp_doc, fp_warnings = _fingerprints(inp, allow_other_data)
    gofs: list[dict[str, Any] | None] = []
    for label, s in zip(inp.labels, inp.samplers, strict=True):
        run = gof_resamples > 0 and inp.censored is None
        rng = stream_rng(seed, *streams, label)
        gofs.append(_gof(s, inp.values, inp.weights, gof_resamples, rng) if run else None)
    threshold = DEFAULT_DRIFT_THRESHOLD if drift_threshold is None else float(drift_threshold)
    previous, drift, _ = _drift(store, dataset, selected, inp, threshold)
    summary = check_summary(
        inp.values,
        inp.samplers,
        weights=inp.weights,
        censored=inp.censored,
        dataset=dataset,
        labels=inp.labels,
        selected=inp.index,
        rule=inp.rule,
        fit_checks=gofs,
        warnings=_warnings(inp, gofs, drift, fp_warnings),
        extra={
            "fingerprint": fp_doc,
            "units": units,
            "previous": previous,
            "drift": None if drift is None else drift.as_dict(),
        },
    )
    out = Path(out)
    write_text(out, json.dumps(summary, indent=2, allow_nan=False) + "\n")
    write_text(out.with_suffix(".md"), render_check_markdown(summary, title=dataset or None))
    if html is not None:
        write_report(
            candidates,
            out=html,
            data_path=data_path,
            summary=summary,
            column=column,
            labels=inp.labels,
            selected=selected,
            units=units,
            drift_threshold=threshold,
        )
    return summary


# --- report ------------------------------------------------------------------------------------


def _data_intervals(path: PathLike | None) -> dict[str, Any]:
    """Intervals of the data by statistic text (``quantile:0.99``...), from an intervals JSON."""
    if path is None:
        return {}
    from samplewright.core.canonical import parse_json

    doc = parse_json(Path(path).read_bytes())
    rows = doc.get("intervals") if isinstance(doc, dict) else None
    if not isinstance(rows, list):
        raise MethodError(f"--intervals {path}: not an intervals document (no 'intervals' list)")
    return {str(r.get("statistic")): r for r in rows if isinstance(r, dict)}


def _replicate_intervals(
    path: PathLike | None, probabilities: Sequence[float], level: float
) -> tuple[dict[float, Any], Any]:
    """Percentile 95% intervals of the key quantiles and the tail mean over the replicates."""
    if path is None:
        return {}, None
    from samplewright.check.report_model import ConfidenceInterval
    from samplewright.check.report_numbers import sampler_tail_mean
    from samplewright.store.artifacts import load_sampler

    ens: Any = load_sampler(path)
    if not hasattr(ens, "replicate_quantiles"):
        raise MethodError(f"--replicates {path}: not a replicates (ensemble) artifact")
    # shape (n_replicates, len(probabilities))
    q = np.asarray(ens.replicate_quantiles(np.asarray(probabilities)), dtype=np.float64)
    cis = {
        float(p): ConfidenceInterval(*map(float, np.nanquantile(q[:, j], [0.025, 0.975])))
        for j, p in enumerate(probabilities)
    }
    tails = np.asarray(
        [sampler_tail_mean(ens.replicate(i), level) for i in range(ens.n_replicates)]
    )
    tails = tails[np.isfinite(tails)]
    tail_ci = None
    if tails.size:
        tail_ci = ConfidenceInterval(*map(float, np.quantile(tails, [0.025, 0.975])))
    return cis, tail_ci


def _reference(inp: _Inputs) -> Any:
    """For incomplete rows: a nonparametric candidate's CDF as the report's reference."""
    from samplewright.check.report_model import ReferenceEstimate

    if inp.roles is None:
        return None
    for label, s in zip(inp.labels, inp.samplers, strict=True):
        if hasattr(s, "time") and hasattr(s, "survival"):
            return ReferenceEstimate(label, s.time, 1.0 - s.survival, kind="step")
        if s.method == "turnbull":
            u = np.linspace(0.0, 1.0, 401)[1:-1]
            x = np.unique(np.asarray(s.quantile(u), dtype=np.float64))
            x = x[np.isfinite(x)]
            return ReferenceEstimate(label, x, np.asarray(s.cdf(x), dtype=np.float64), kind="knots")
    return None


def _with_intervals(report: Any, inp: _Inputs, intervals: Any, replicates: Any) -> Any:
    from dataclasses import replace

    from samplewright.check.report_model import ConfidenceInterval

    data_cis = _data_intervals(intervals)
    probs, level = report.probabilities, report.tail_level
    rep_q, rep_tail = _replicate_intervals(replicates, probs, level)
    n = None if inp.values is None else int(inp.values.size)
    new = []
    for i, (c, s) in enumerate(zip(report.candidates, inp.samplers, strict=True)):
        q_cis: dict[float, ConfidenceInterval] = {}
        tail_ci = None
        if s.method == "empirical" and s.params.get("n") == n and inp.weights is None:
            for p in probs:
                r = data_cis.get(f"quantile:{p:g}")
                if r is not None:
                    q_cis[p] = ConfidenceInterval(r["low"], r["high"], r["confidence_level"])
            r = data_cis.get(f"tail_mean:{level:g}")
            if r is not None:
                tail_ci = ConfidenceInterval(r["low"], r["high"], r["confidence_level"])
        if i == inp.index and rep_q:
            q_cis, tail_ci = rep_q, rep_tail
        new.append(replace(c, quantile_intervals=q_cis, tail_mean_interval=tail_ci))
    return replace(report, candidates=tuple(new))


def write_report(
    candidates: Sequence[PathLike],
    *,
    out: PathLike,
    data_path: PathLike | None = None,
    summary: Mapping[str, Any] | None = None,
    dataset: str = "",
    column: str | None = None,
    labels: Sequence[str] | None = None,
    selected: PathLike | None = None,
    store: PathLike | None = None,
    units: str = "",
    drift_threshold: float | None = None,
    intervals: PathLike | None = None,
    replicates: PathLike | None = None,
) -> None:
    """Write the HTML report to ``out`` and its numbers as JSON beside it (``.json``)."""
    from samplewright.check.drift import DEFAULT_DRIFT_THRESHOLD, compare_samplers
    from samplewright.check.render import auto_fit_check
    from samplewright.check.report_html import render_report_html
    from samplewright.check.report_inputs import report_input, report_numbers_document
    from samplewright.check.report_model import ReportWarning
    from samplewright.check.selection import selection_reason
    from samplewright.core.errors import SamplewrightError
    from samplewright.store.artifacts import load_sampler
    from samplewright.store.atomic import write_text

    inp = _load(data_path, candidates, column, labels, selected)
    threshold = DEFAULT_DRIFT_THRESHOLD if drift_threshold is None else float(drift_threshold)
    name = dataset or (str(summary.get("dataset")) if summary else "") or Path(out).stem
    if summary is not None:
        rows = list(summary.get("candidates") or [])
        if [r.get("label") for r in rows] != inp.labels:
            raise MethodError(
                f"--check: its candidates {[r.get('label') for r in rows]} are not the ones "
                f"given ({inp.labels})"
            )
        if inp.index is None:
            inp.index = next((i for i, r in enumerate(rows) if r.get("selected")), None)
        inp.rule = (summary.get("selected") or {}).get("rule") or inp.rule
        gofs = [r.get("gof") for r in rows]
        warnings = [ReportWarning(w["kind"], w["message"]) for w in summary.get("warnings") or []]
        prev = summary.get("previous") or {}
        previous = drift = None
        if prev.get("path") and inp.index is not None:
            try:
                previous = load_sampler(prev["path"])
            except (SamplewrightError, OSError):
                warnings.append(
                    ReportWarning("other", f"the previous selection {prev['path']} is gone")
                )
            else:
                drift = compare_samplers(previous, inp.samplers[inp.index], threshold=threshold)
        warnings = [w for w in warnings if w.kind != "drift"]  # the report flags with its own
    else:
        gofs = [auto_fit_check(s.metadata.get("diagnostics") or {}) for s in inp.samplers]
        prev, drift, previous = _drift(store, name, selected, inp, threshold)
        prev = prev or {}
        extra = []
        if inp.fingerprint is not None:
            extra = _fingerprints(inp, allow_other=False)[1]
        warnings = [w for w in _warnings(inp, gofs, None, extra) if w.kind != "drift"]
    rd = inp.roles
    report = report_input(
        name,
        inp.samplers,
        inp.labels,
        values=inp.values,
        weights=inp.weights,
        censored=inp.censored,
        selected=inp.index,
        reason=selection_reason(inp.rule) if inp.rule else "",
        units=units,
        warnings=warnings,
        gof=gofs,
        previous=previous,
        previous_label=f"previous selection ({prev.get('method')}, {prev.get('created_at')})",
        drift=drift,
        provenance=_provenance(inp, data_path),
    )
    if rd is not None:
        from dataclasses import replace

        from samplewright.check.report_model import ObservedData

        data = ObservedData(
            inp.values,
            weights=inp.weights,
            censored=inp.censored,
            lower=rd.get("lower"),
            upper=rd.get("upper"),
            truncation=rd.get("truncation"),
        )
        report = replace(report, data=data, reference=_reference(inp))
    report = _with_intervals(report, inp, intervals, replicates)
    out = Path(out)
    write_text(out, render_report_html(report))
    doc = report_numbers_document(report)
    write_text(out.with_suffix(".json"), json.dumps(doc, indent=2, allow_nan=False) + "\n")


def _provenance(inp: _Inputs, data_path: PathLike | None) -> dict[str, str]:
    out: dict[str, str] = {}
    if data_path is not None:
        out["data read from"] = str(data_path)
    if inp.info:
        out["source file"] = str(inp.info.get("source"))
        if inp.info.get("column"):
            out["column"] = str(inp.info.get("column"))
    if inp.fingerprint:
        out["data fingerprint"] = inp.fingerprint
    if inp.index is not None:
        meta = inp.samplers[inp.index].metadata
        out["selected artifact key"] = str(meta.get("key"))
        out["selected content hash"] = str(meta.get("content_hash"))
    return out
