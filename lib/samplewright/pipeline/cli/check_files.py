"""The file work of ``samplewright check`` (and, re-exported, of ``samplewright report``).

:func:`write_check` reads the data (a column snapshot, a file column, or a table snapshot of a
dataset's columns by role: truncation, censoring, interval rows; a column fitted with one
truncation point takes it from the candidates' provenance) and the candidate artifacts, refuses
candidates fitted to other data (their recorded fingerprint is not the data's), says which
candidate the workflow selected (``selected``: the selected artifact) and why, tests each
plain parametric candidate that carries no test (auto records its own) by a parametric
bootstrap, which for censored, truncated or interval data redoes the censoring and truncation
and measures the distance to the matching nonparametric estimate
(:mod:`samplewright.check.candidate_checks`), computes bootstrap intervals of every candidate's
key quantiles and tail mean (:mod:`samplewright.check.candidate_intervals`), gathers every
warning (with truncated data: the share of each candidate below the smallest truncation point),
finds the previous selection of the dataset in the store and measures what moved
(:mod:`samplewright.check.drift`), and writes the summary as JSON with Markdown beside it, and
optionally the report page (:func:`~samplewright.pipeline.cli.report_files.write_report`).
"""

from __future__ import annotations

import json
from collections.abc import Sequence
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
    truncation: Any = None  # per row, or one number (a column fitted with --truncation)
    rows: Any = None  # IncompleteSample of incomplete data (censored, truncated, interval)

    def data_arrays(self) -> dict[str, Any]:
        """What the report's data block takes: censoring, truncation, interval rows."""
        rd = self.roles or {}
        return {
            "censored": self.censored,
            "truncation": self.truncation,
            "lower": rd.get("lower"),
            "upper": rd.get("upper"),
        }


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
    inp = _Inputs(values, weights, censored, fp, info, roles, samplers, names, index, rule)
    if values is not None:
        inp.truncation = roles.get("truncation") if roles else _column_truncation(inp)
        inp.rows = _incomplete_rows(inp)
    return inp


def _column_truncation(inp: _Inputs) -> float | None:
    """The truncation point candidates fitted to one column recorded (all the same), or None."""
    found = {
        label: (s.metadata.get("provenance") or {}).get("truncation")
        for label, s in zip(inp.labels, inp.samplers, strict=True)
    }
    points = {float(t) for t in found.values() if t is not None}
    if len(points) > 1:
        raise MethodError(
            "candidates: fitted with different truncation points "
            f"({', '.join(f'{k}: {v}' for k, v in found.items() if v is not None)}); "
            "compare candidates fitted to the same truncated data"
        )
    return points.pop() if points else None


def _incomplete_rows(inp: _Inputs) -> Any:
    """The data as incomplete rows when they are censored, truncated or interval-valued."""
    from samplewright.check.incomplete_reference import incomplete_rows

    rd = inp.roles or {}
    if rd.get("lower") is not None:
        return incomplete_rows(
            lower=rd["lower"], upper=rd["upper"], truncation=inp.truncation, weights=inp.weights
        )
    if inp.censored is None and inp.truncation is None:
        return None
    return incomplete_rows(
        inp.values, censored=inp.censored, truncation=inp.truncation, weights=inp.weights
    )


def _fingerprints(
    inp: _Inputs, allow_other: bool, command: str = "check"
) -> tuple[dict[str, Any], list[Any]]:
    """The fingerprints compared, and warnings; refuses candidates fitted to other data (the
    message names the option of ``command`` that compares them anyway)."""
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
        how = "pass --allow-other-data to compare anyway"
        raise MethodError(
            f"candidates: {names} {'was' if len(other) == 1 else 'were'} fitted to other data "
            f"(fingerprint {other[0][1][:16]}, the data's is {data_fp[:16]}); refit, or {how}"
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
    from samplewright.check.render_markdown import tested_what
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
                    f"({tests}; tested: {tested_what(gof)})",
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
    interval_resamples: int | None = None,
    seed: int = 0,
    streams: Sequence[str] = ("check",),
    allow_other_data: bool = False,
    html: PathLike | None = None,
) -> dict[str, Any]:
    """Write the check summary as JSON to ``out`` and as Markdown beside it (``.md``); with
    ``html``, also the report page and its JSON beside it. Returns the summary.

    ``data_path`` is a column snapshot, a data file with ``column``, or a table snapshot of a
    dataset's columns by role (truncation, censoring, interval rows). Each candidate gets its
    goodness-of-fit test (``gof_resamples`` replicates, stream ``(seed, *streams, label)``) and
    bootstrap intervals of its key quantiles and tail mean (``interval_resamples``, default
    :data:`~samplewright.check.candidate_intervals.DEFAULT_INTERVAL_RESAMPLES`; stream
    ``(seed, *streams, label, "intervals")``); see
    :mod:`samplewright.check.candidate_checks`.
    """
    from samplewright.check.candidate_checks import fit_check_record, interval_record
    from samplewright.check.candidate_intervals import DEFAULT_INTERVAL_RESAMPLES
    from samplewright.check.drift import DEFAULT_DRIFT_THRESHOLD
    from samplewright.check.incomplete_reference import smallest_truncation
    from samplewright.check.render import check_summary, render_check_markdown
    from samplewright.check.report_numbers import truncation_warnings
    from samplewright.core.randomness import stream_rng
    from samplewright.store.atomic import write_text

    inp = _load(data_path, candidates, column, labels, selected)
    if inp.values is None:
        raise MethodError(f"{data_path}: no data to check the candidates against")
    n_iv = DEFAULT_INTERVAL_RESAMPLES if interval_resamples is None else int(interval_resamples)
    fp_doc, fp_warnings = _fingerprints(inp, allow_other_data)
    gofs: list[dict[str, Any] | None] = []
    notes: list[str | None] = []
    intervals: list[dict[str, Any] | None] = []
    data: dict[str, Any] = {"values": inp.values, "weights": inp.weights}
    if inp.rows is not None:
        data = {}
    for label, s in zip(inp.labels, inp.samplers, strict=True):
        checked = fit_check_record(
            s,
            rows=inp.rows,
            n_resamples=gof_resamples,
            rng=stream_rng(seed, *streams, label),
            **data,
        )
        gofs.append(checked.record)
        notes.append(checked.note)
        intervals.append(
            interval_record(
                s,
                rows=inp.rows,
                n_resamples=n_iv,
                rng=stream_rng(seed, *streams, label, "intervals"),
                replicate_params=checked.replicate_params,
                **data,
            )
        )
    threshold = DEFAULT_DRIFT_THRESHOLD if drift_threshold is None else float(drift_threshold)
    previous, drift, _ = _drift(store, dataset, selected, inp, threshold)
    t0 = None if inp.rows is None else smallest_truncation(inp.rows)
    extra = fp_warnings + truncation_warnings(inp.labels, inp.samplers, t0, units)
    summary = check_summary(
        inp.values,
        inp.samplers,
        weights=inp.weights,
        censored=inp.censored,
        rows=inp.rows,
        dataset=dataset,
        labels=inp.labels,
        selected=inp.index,
        rule=inp.rule,
        fit_checks=gofs,
        gof_notes=notes,
        intervals=intervals,
        warnings=_warnings(inp, gofs, drift, extra),
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
            allow_other_data=allow_other_data,
        )
    return summary


from samplewright.pipeline.cli.report_files import write_report  # noqa: E402  (re-exported)
