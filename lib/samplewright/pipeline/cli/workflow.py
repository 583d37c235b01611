"""Commands the workflow rules run over candidates: ``select`` and ``check``.

:func:`select_artifacts` and :func:`write_check` do the file work around the pure ranking of
:mod:`samplewright.check.selection` and the rendering of :mod:`samplewright.check.render`.
"""

from __future__ import annotations

import argparse
import json
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from samplewright.check.selection import SELECTION_RULES
from samplewright.core.errors import MethodError
from samplewright.pipeline.cli.common import check_outputs

__all__ = ["add_commands", "run_check", "run_select", "select_artifacts", "write_check"]


def select_artifacts(
    candidates: Sequence[str | Path], *, by: str, key: str | None, out: str | Path
) -> str:
    """Select among candidate artifacts and write the winner to ``out``; return its method.

    The winner is written again under ``key`` with the ranking in ``diagnostics.selection``
    and its provenance (less time and versions) plus ``selected_from``.
    """
    from samplewright.check.selection import rank_loaded, selection_record
    from samplewright.store.artifacts import load_sampler, write_sampler

    if not candidates:
        raise MethodError("select: at least one candidate artifact is needed")
    loaded = [load_sampler(c) for c in candidates]
    ranking = rank_loaded(loaded, by)
    best = loaded[ranking[0]]
    metas = [s.metadata for s in loaded]
    meta = metas[ranking[0]]
    diagnostics = dict(meta.get("diagnostics") or {})
    diagnostics["selection"] = selection_record(metas, ranking, by)
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


def write_check(
    data_path: str | Path,
    candidates: Sequence[str | Path],
    *,
    out: str | Path,
    dataset: str = "",
    column: str | None = None,
) -> dict[str, Any]:
    """Write the check summary as JSON to ``out`` and as Markdown beside it (``.md``).

    ``data_path`` is a snapshot (its column is known) or a data file with ``column``.
    """
    from samplewright.check.render import check_summary, render_check_markdown
    from samplewright.store.artifacts import load_sampler
    from samplewright.store.atomic import write_text
    from samplewright.store.snapshots import read_data

    data, _ = read_data(data_path, column)
    samplers = [load_sampler(c) for c in candidates]
    doc = check_summary(
        data.values, samplers, weights=data.weights, censored=data.censored, dataset=dataset
    )
    out = Path(out)
    text = json.dumps(doc, indent=2, allow_nan=False) + "\n"
    md = render_check_markdown(doc, title=dataset or str(data_path))
    write_text(out, text)
    write_text(out.with_suffix(".md"), md)
    return doc


def run_select(args: argparse.Namespace) -> int:
    """Write the candidate the rule chooses under the selection's key."""
    check_outputs({"--out": args.out}, args.candidates)
    winner = select_artifacts(args.candidates, by=args.by, key=args.key, out=args.out)
    print(f"{args.out}: selected {winner}")
    return 0


def run_check(args: argparse.Namespace) -> int:
    """Write the check summary of the candidates against the data."""
    out = Path(args.out)
    if out.suffix.lower() != ".json":
        raise MethodError(f"--out: expected a .json file, found {out.name!r}")
    inputs = [args.data, *args.candidates]
    check_outputs({"--out": out, "--out (its .md)": out.with_suffix(".md")}, inputs)
    write_check(args.data, args.candidates, out=out, dataset=args.dataset, column=args.column)
    print(f"{args.out}: check written for {len(args.candidates)} candidate(s)")
    return 0


def add_commands(sub: Any) -> None:
    """Add ``select`` and ``check`` to the subcommand parsers ``sub``."""
    p = sub.add_parser("select", help="pick one of several candidate artifacts (workflow use)")
    p.add_argument("candidates", nargs="+")
    p.add_argument(
        "--by", choices=SELECTION_RULES, default="aic", help="selection rule (default: aic)"
    )
    p.add_argument("--key", help="content key to record")
    p.add_argument("--out", required=True)
    p.set_defaults(func=run_select)

    p = sub.add_parser("check", help="write a short check summary of candidates vs the data")
    p.add_argument("data", help="data file or snapshot")
    p.add_argument("candidates", nargs="+")
    p.add_argument("--dataset", default="", help="dataset name for the heading")
    p.add_argument("--column", "-c", help="value column (not needed for a snapshot)")
    p.add_argument("--out", required=True, help="summary path (.json; a .md is written beside)")
    p.set_defaults(func=run_check)
