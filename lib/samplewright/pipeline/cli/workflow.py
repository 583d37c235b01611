"""Commands the workflow rules run over candidates: ``select``, ``check`` and ``report``.

:func:`select_artifacts` does the file work around the pure ranking of
:mod:`samplewright.check.selection`; :func:`~samplewright.pipeline.cli.check_files.write_check`
and :func:`~samplewright.pipeline.cli.check_files.write_report` the file work of the check
summary and the report page.
"""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from samplewright.check.selection import RANKING_RULES
from samplewright.core.errors import MethodError
from samplewright.pipeline.cli.common import check_outputs

__all__ = [
    "add_commands",
    "check_same_data",
    "run_check",
    "run_report",
    "run_select",
    "select_artifacts",
    "write_check",
]


def select_artifacts(
    candidates: Sequence[str | Path], *, by: str, key: str | None, out: str | Path
) -> str:
    """Select among candidate artifacts and write the winner to ``out``; return its method.

    The winner is written again under ``key`` with the ranking in ``diagnostics.selection``
    and its provenance (less time and versions) plus ``selected_from``. Candidates must have
    been fitted to the same data (the same recorded fingerprint and truncation point; see
    :func:`check_same_data`), and a likelihood rule (``aic``, ``bic``) must not compare a count
    model with a density
    (:func:`~samplewright.check.comparable.check_comparable_fitted`): MethodError otherwise.
    """
    from samplewright.check.comparable import check_comparable_fitted
    from samplewright.check.selection import rank_loaded, selection_record
    from samplewright.pipeline.cli.check_files import candidate_labels
    from samplewright.store.artifacts import load_sampler, write_sampler

    if not candidates:
        raise MethodError("select: at least one candidate artifact is needed")
    loaded = [load_sampler(c) for c in candidates]
    check_same_data(candidates, [s.metadata for s in loaded])
    check_comparable_fitted([(str(c), s) for c, s in zip(candidates, loaded, strict=True)], by)
    ranking = rank_loaded(loaded, by)
    best = loaded[ranking[0]]
    metas = [s.metadata for s in loaded]
    meta = metas[ranking[0]]
    diagnostics = dict(meta.get("diagnostics") or {})
    labels = candidate_labels(candidates, loaded)
    diagnostics["selection"] = selection_record(metas, ranking, by, labels)
    provenance = {
        k: v
        for k, v in (meta.get("provenance") or {}).items()
        if k not in ("created_at", "versions")
    }
    provenance["selected_from"] = str(candidates[ranking[0]])
    write_sampler(
        best,
        out,
        fingerprint=meta.get("fingerprint"),
        key=key,
        data=meta.get("data"),
        diagnostics=diagnostics,
        provenance=provenance,
    )
    return str(meta["sampler"]["method"])


def _data_of(meta: dict[str, Any]) -> tuple[Any, Any]:
    """What identifies the data an artifact was fitted to: fingerprint and truncation point."""
    return meta.get("fingerprint"), (meta.get("provenance") or {}).get("truncation")


def _describe(data: tuple[Any, Any]) -> str:
    fp, t = data
    text = "no recorded fingerprint" if fp is None else f"fingerprint {str(fp)[:16]}"
    return text if t is None else f"{text}, truncation {t!r}"


def check_same_data(candidates: Sequence[str | Path], metadata: Sequence[dict[str, Any]]) -> None:
    """Refuse candidates fitted to other data than the first one (MethodError naming both).

    Two artifacts share their data when they record the same fingerprint (None counts as a
    value of its own: an artifact whose data are unknown is not compared with one whose data
    are known) and the same truncation point.
    """
    first = _data_of(metadata[0])
    for path, meta in zip(candidates[1:], metadata[1:], strict=True):
        other = _data_of(meta)
        if other != first:
            raise MethodError(
                f"select: {path} was fitted to other data than {candidates[0]} "
                f"({_describe(other)} against {_describe(first)}); refit it on the same data"
            )


def write_check(
    data_path: str | Path,
    candidates: Sequence[str | Path],
    *,
    out: str | Path,
    dataset: str = "",
    column: str | None = None,
    **options: Any,
) -> dict[str, Any]:
    """Write the check summary (JSON, Markdown beside); see
    :func:`samplewright.pipeline.cli.check_files.write_check` for ``options``."""
    from samplewright.pipeline.cli.check_files import write_check as write

    return write(data_path, candidates, out=out, dataset=dataset, column=column, **options)


def run_select(args: argparse.Namespace) -> int:
    """Write the candidate the rule chooses under the selection's key."""
    check_outputs({"--out": args.out}, args.candidates)
    winner = select_artifacts(args.candidates, by=args.by, key=args.key, out=args.out)
    print(f"{args.out}: selected {winner}")
    return 0


def _json_out(option: str, path: str | Path) -> Path:
    out = Path(path)
    if out.suffix.lower() != ".json":
        raise MethodError(f"{option}: expected a .json file, found {out.name!r}")
    return out


def _html_out(option: str, path: str | Path) -> Path:
    out = Path(path)
    if out.suffix.lower() != ".html":
        raise MethodError(f"{option}: expected a .html file, found {out.name!r}")
    return out


def _threshold(value: float | None) -> float | None:
    if value is not None and not 0.0 < value <= 1.0:
        raise MethodError(f"--drift-threshold: expected a KS distance in (0, 1], found {value}")
    return value


def run_check(args: argparse.Namespace) -> int:
    """Write the check summary of the candidates against the data (and the report page)."""
    from samplewright.pipeline.cli.check_files import write_check as write

    out = _json_out("--out", args.out)
    html = _html_out("--html", args.html) if args.html else None
    if args.gof_resamples < 0:
        raise MethodError(f"--gof-resamples: expected an int >= 0, found {args.gof_resamples}")
    if args.seed < 0:
        raise MethodError(f"--seed: expected a non-negative int, found {args.seed}")
    if args.interval_resamples < 0:
        raise MethodError(
            f"--interval-resamples: expected an int >= 0, found {args.interval_resamples}"
        )
    inputs = [args.data, *args.candidates, args.selected]
    outputs = {"--out": out, "--out (its .md)": out.with_suffix(".md")}
    if html is not None:
        outputs.update({"--html": html, "--html (its .json)": html.with_suffix(".json")})
    check_outputs(outputs, inputs)
    summary = write(
        args.data,
        args.candidates,
        out=out,
        gof_resamples=args.gof_resamples,
        interval_resamples=args.interval_resamples,
        seed=args.seed,
        streams=args.stream or ["check"],
        html=html,
        **_shared_report_options(args),
    )
    chosen = summary.get("selected")
    what = f"; selected {chosen['label']} ({chosen['reason']})" if chosen else ""
    print(f"{args.out}: check written for {len(args.candidates)} candidate(s){what}")
    from samplewright.check.report_model import ReportWarning
    from samplewright.pipeline.cli.output import warn

    warn(ReportWarning(w["kind"], w["message"]) for w in summary.get("warnings") or [])
    return 0


def run_report(args: argparse.Namespace) -> int:
    """Write the report page (and its JSON) of a dataset's candidates."""
    from samplewright.core.canonical import parse_json
    from samplewright.pipeline.cli.check_files import write_report

    out = _html_out("--out", args.out)
    inputs = [args.check, args.data, *args.candidates, args.selected, args.intervals]
    check_outputs(
        {"--out": out, "--out (its .json)": out.with_suffix(".json")},
        [*inputs, args.replicates, args.draws],
    )
    summary = None
    if args.check is not None:
        summary = parse_json(Path(args.check).read_bytes())
        if not isinstance(summary, dict) or "candidates" not in summary:
            raise MethodError(f"--check {args.check}: not a check summary")
    write_report(
        args.candidates,
        out=out,
        data_path=args.data,
        summary=summary,
        intervals=args.intervals,
        replicates=args.replicates,
        draws=args.draws,
        **_shared_report_options(args),
    )
    print(f"{args.out}: report written for {len(args.candidates)} candidate(s)")
    return 0


def add_commands(sub: Any) -> None:
    """Add ``select``, ``check`` and ``report`` to the subcommand parsers ``sub``."""
    p = sub.add_parser("select", help="pick one of several candidate artifacts (workflow use)")
    p.add_argument("candidates", nargs="+")
    p.add_argument(
        "--by",
        choices=RANKING_RULES,
        default="aic",
        help="selection rule (default: aic); 'named': the first candidate, named by the analyst",
    )
    p.add_argument("--key", help="content key to record")
    p.add_argument("--out", required=True)
    p.set_defaults(func=run_select)

    p = sub.add_parser(
        "check",
        help="check candidates against the data: a summary (JSON, Markdown) and a report page",
        description="Compare candidate samplers with the data they were fitted to. Refuses "
        "candidates fitted to other data (their recorded fingerprint differs from the data's). "
        "Says which candidate was selected (--selected) and why, tests plain parametric "
        "candidates by a parametric bootstrap, lists every warning, and compares the selection "
        "with the previous one of the dataset found in --store.",
    )
    p.add_argument("data", help="data file or snapshot")
    p.add_argument("candidates", nargs="+", help="candidate artifacts (.parquet)")
    _shared_report_args(p)
    p.add_argument("--selected", help="the selected artifact (says which candidate and why)")
    p.add_argument("--store", help="store folder to look for the dataset's previous selection")
    p.add_argument(
        "--gof-resamples",
        type=int,
        default=99,
        help="bootstrap replicates of the goodness-of-fit test of plain parametric candidates "
        "(default 99; 0: no test)",
    )
    p.add_argument(
        "--interval-resamples",
        type=int,
        default=99,
        help="bootstrap replicates of every candidate's tail intervals (default 99; 0: none)",
    )
    p.add_argument("--seed", type=int, default=0, help="root seed of the tests (default 0)")
    p.add_argument(
        "--stream", action="append", metavar="NAME", help="stream name, repeatable (default: check)"
    )
    p.add_argument(
        "--allow-other-data",
        action="store_true",
        help="compare candidates fitted to other data instead of refusing them (with a warning)",
    )
    p.add_argument("--out", required=True, help="summary path (.json; a .md is written beside)")
    p.add_argument("--html", help="also write the report page here (.html; a .json beside)")
    p.set_defaults(func=run_check)

    p = sub.add_parser(
        "report",
        help="write the report page (HTML, JSON beside) of a dataset's candidates",
        description="Write the check report page of a dataset: what the simulation will draw, "
        "every warning, how much the choice of sampler matters, pictures and details. With "
        "--check it takes the goodness-of-fit tests, warnings and previous selection from a "
        "check summary; --data is optional (none for a drawn CDF or elicited quantiles).",
    )
    p.add_argument("candidates", nargs="+", help="candidate artifacts (.parquet)")
    p.add_argument("--data", help="data file, column snapshot or table snapshot")
    p.add_argument("--check", help="the check summary (.json) of the same candidates")
    _shared_report_args(p)
    p.add_argument("--selected", help="the selected artifact (says which candidate and why)")
    p.add_argument("--store", help="store folder to look for the previous selection (no --check)")
    p.add_argument("--intervals", help="bootstrap intervals of the data (.json, from 'interval')")
    p.add_argument("--replicates", help="replicates of the selected method (.parquet)")
    p.add_argument(
        "--draws", help="stored draws of a joint input (.parquet), for its page's scatter"
    )
    p.add_argument(
        "--allow-other-data",
        action="store_true",
        help="show candidates fitted to other data instead of refusing them (with a warning)",
    )
    p.add_argument("--out", required=True, help="report page (.html; a .json is written beside)")
    p.set_defaults(func=run_report)


def _shared_report_options(args: argparse.Namespace) -> dict[str, Any]:
    """The keyword arguments ``check`` and ``report`` both pass on (their shared options)."""
    return {
        "dataset": args.dataset,
        "column": args.column,
        "labels": args.label,
        "selected": args.selected,
        "store": args.store,
        "units": args.units or "",
        "drift_threshold": _threshold(args.drift_threshold),
        "allow_other_data": args.allow_other_data,
    }


def _shared_report_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("--dataset", default="", help="dataset name for the heading")
    p.add_argument(
        "--column", "-c", help="value column (required for a data file, not for a snapshot)"
    )
    p.add_argument(
        "--label", action="append", metavar="NAME", help="candidate label, one per candidate"
    )
    p.add_argument("--units", help="units of the values, for the axis labels")
    p.add_argument(
        "--drift-threshold",
        type=float,
        help="KS distance to the previous selection that flags drift (default 0.05)",
    )
