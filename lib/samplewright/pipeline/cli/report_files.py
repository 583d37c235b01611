"""The file work of ``samplewright report``: the report page of a dataset or of a joint input.

:func:`write_report` writes the report page (HTML, its numbers as JSON beside it). Given a check
summary it takes the goodness-of-fit records, warnings, bootstrap intervals of every candidate
and the previous selection from it (the workflow's report rule); otherwise it gathers them
itself, without new tests. Data are optional: a column snapshot or data file, a table snapshot
of incomplete rows (interval rows, truncation), or none at all (a drawn CDF, elicited
quantiles). Incomplete data get the matching nonparametric estimate computed from the rows. It
adds bootstrap intervals from the dataset's intervals document (statistics of the data: shown
on an empirical candidate fitted to all of them, whose figures are the data's) and from its
replicates artifact (percentile 95% intervals of the selected candidate's figures over the
replicates, in place of the check's own).

Given a joint input's artifact (kind ``joint``) and its table snapshot, :func:`write_report`
writes the joint page instead (:mod:`samplewright.check.report_joint`): the data rows against
draws of the joint sampler, with rank correlations.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError

__all__ = ["write_joint_report", "write_report"]

PathLike = str | Path
JOINT_REPORT_DRAWS = 4000  # draws of a joint sampler made for its page


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


def _with_intervals(
    report: Any,
    inp: Any,
    intervals: PathLike | None,
    replicates: PathLike | None,
    summary_rows: Sequence[Mapping[str, Any]] | None,
) -> Any:
    """The candidates with their intervals: the check's (every candidate), the data's (an
    empirical candidate fitted to all of them), the replicates' (the selected one)."""
    from dataclasses import replace

    from samplewright.check.candidate_intervals import intervals_from_record
    from samplewright.check.report_model import ConfidenceInterval

    data_cis = _data_intervals(intervals)
    probs, level = report.probabilities, report.tail_level
    rep_q, rep_tail = _replicate_intervals(replicates, probs, level)
    n = None if inp.values is None else int(inp.values.size)
    new = []
    for i, (c, s) in enumerate(zip(report.candidates, inp.samplers, strict=True)):
        record = (summary_rows[i].get("intervals") if summary_rows else None) or {}
        q_cis, tail_ci, source = intervals_from_record(record)
        plain_empirical = s.method == "empirical" and s.params.get("n") == n and inp.rows is None
        if plain_empirical and inp.weights is None and data_cis:
            for p in probs:
                r = data_cis.get(f"quantile:{p:g}")
                if r is not None:
                    q_cis[p] = ConfidenceInterval(r["low"], r["high"], r["confidence_level"])
            r = data_cis.get(f"tail_mean:{level:g}")
            if r is not None:
                tail_ci = ConfidenceInterval(r["low"], r["high"], r["confidence_level"])
            source = "the data's bootstrap intervals (intervals document)"
        if i == inp.index and rep_q:
            q_cis, tail_ci = rep_q, rep_tail
            source = "the replicates artifact (percentile over its refits)"
        new.append(
            replace(
                c,
                quantile_intervals=q_cis,
                tail_mean_interval=tail_ci,
                interval_source=source,
            )
        )
    return replace(report, candidates=tuple(new))


def _is_joint(path: PathLike) -> bool:
    from samplewright.core.canonical import parse_json
    from samplewright.store.artifacts import METADATA_KEY
    from samplewright.store.tables import read_key

    try:
        raw = read_key(path, METADATA_KEY)
    except Exception:  # noqa: BLE001 - loading it later gives the precise error
        return False
    doc = parse_json(raw) if raw else {}
    return isinstance(doc, dict) and (doc.get("sampler") or {}).get("kind") == "joint"


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
    allow_other_data: bool = False,
    draws: PathLike | None = None,
) -> None:
    """Write the HTML report to ``out`` and its numbers as JSON beside it (``.json``).

    A single joint artifact among ``candidates`` makes the joint page
    (:func:`write_joint_report`; ``data_path`` its table snapshot, ``draws`` optional).
    """
    from samplewright.check.drift import DEFAULT_DRIFT_THRESHOLD, compare_samplers
    from samplewright.check.render import auto_fit_check
    from samplewright.check.report_html import render_report_html
    from samplewright.check.report_inputs import report_input, report_numbers_document
    from samplewright.check.report_model import ReportWarning
    from samplewright.check.selection import selection_reason
    from samplewright.core.errors import SamplewrightError
    from samplewright.pipeline.cli.check_files import _drift, _fingerprints, _load, _warnings
    from samplewright.store.artifacts import load_sampler
    from samplewright.store.atomic import write_text

    if any(_is_joint(c) for c in candidates):
        if len(candidates) != 1 or data_path is None:
            raise MethodError(
                "candidates: a joint input's page takes its one joint artifact and --data, its "
                f"table snapshot; found {len(candidates)} artifact(s)"
                + ("" if data_path is not None else " and no --data")
            )
        write_joint_report(
            candidates[0], out=out, data_path=data_path, dataset=dataset, units=units, draws=draws
        )
        return
    inp = _load(data_path, candidates, column, labels, selected)
    threshold = DEFAULT_DRIFT_THRESHOLD if drift_threshold is None else float(drift_threshold)
    name = dataset or (str(summary.get("dataset")) if summary else "") or Path(out).stem
    rows: list[Mapping[str, Any]] | None = None
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
            extra = _fingerprints(inp, allow_other_data, command="report")[1]
        warnings = [w for w in _warnings(inp, gofs, None, extra) if w.kind != "drift"]
    report = report_input(
        name,
        inp.samplers,
        inp.labels,
        values=inp.values,
        weights=inp.weights,
        **inp.data_arrays(),
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
    report = _with_intervals(report, inp, intervals, replicates, rows)
    out = Path(out)
    write_text(out, render_report_html(report))
    doc = report_numbers_document(report)
    write_text(out.with_suffix(".json"), json.dumps(doc, indent=2, allow_nan=False) + "\n")


def write_joint_report(
    artifact: PathLike,
    *,
    out: PathLike,
    data_path: PathLike,
    dataset: str = "",
    units: str | Sequence[str] = "",
    draws: PathLike | None = None,
    n_draws: int = JOINT_REPORT_DRAWS,
) -> None:
    """Write a joint input's page (HTML, its numbers as JSON beside it).

    ``data_path`` is the joint input's table snapshot (or a data file holding its columns);
    ``draws`` a Parquet file of its stored draws (one column per input column). Without it,
    ``n_draws`` rows are drawn for the picture from a generator seeded by the artifact's
    content hash (``stream_rng(0, content hash, "report")``), so the same artifact always gives
    the same page.
    """
    from samplewright.check.report_joint import joint_numbers_document, render_joint_html
    from samplewright.core.randomness import stream_rng
    from samplewright.pipeline.table_data import read_joint_table
    from samplewright.store.artifacts import load_sampler
    from samplewright.store.atomic import write_text

    joint: Any = load_sampler(artifact)
    if getattr(joint, "kind", None) != "joint":
        raise MethodError(f"{artifact}: not a joint artifact (kind {joint.kind!r})")
    table, info = read_joint_table(data_path, list(joint.columns))
    if draws is not None:
        import pyarrow.parquet as pq

        tab = pq.read_table(draws)
        missing = [c for c in joint.columns if c not in tab.column_names]
        if missing:
            raise MethodError(f"--draws {draws}: no column {missing[0]!r} of the joint input")
        sample = np.column_stack([tab.column(c).to_numpy() for c in joint.columns])
        drawn_from = str(draws)
    else:
        key = str(joint.metadata.get("content_hash") or joint.metadata.get("key") or artifact)
        sample = np.asarray(joint.draw(n_draws, rng=stream_rng(0, key, "report")))
        drawn_from = f"{n_draws} draws made for this page (seeded by the artifact's content hash)"
    name = dataset or Path(out).stem
    provenance = {
        "joint artifact": str(artifact),
        "data read from": str(data_path),
        "source file": str(table.source),
        "rows read, kept": f"{table.n_rows_read}, {table.n}",
        "draws": drawn_from,
        "artifact key": str(joint.metadata.get("key")),
        "content hash": str(joint.metadata.get("content_hash")),
    }
    page = render_joint_html(name, joint, table.values, sample, units=units, provenance=provenance)
    out = Path(out)
    write_text(out, page)
    doc = joint_numbers_document(name, joint, table.values, sample)
    write_text(out.with_suffix(".json"), json.dumps(doc, indent=2, allow_nan=False) + "\n")


def _provenance(inp: Any, data_path: PathLike | None) -> dict[str, str]:
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
