"""Commands that read artifacts and write nothing: ``show`` and ``verify``.

Their text goes through :func:`~samplewright.pipeline.cli.output.emit`, so piping it into a
reader that stops early (``samplewright show x.parquet | head``) ends quietly.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any

from samplewright.core.errors import IntegrityError, SamplewrightError
from samplewright.pipeline.cli.common import EXIT_INPUT, EXIT_INTEGRITY
from samplewright.pipeline.cli.output import emit

__all__ = ["add_commands", "run_show", "run_verify"]


def run_show(args: argparse.Namespace) -> int:
    """Describe a (verified) artifact, as text (names and rounded values in columns, the
    recorded warnings, every diagnostics section in full) or as its full metadata in JSON."""
    from samplewright.check.show_text import format_show
    from samplewright.store.artifacts import load_sampler

    sampler = load_sampler(args.artifact)
    meta = sampler.metadata
    if args.json:
        emit(json.dumps(meta, indent=2, sort_keys=True))
        return 0
    emit(format_show(args.artifact, sampler, meta))
    return 0


def run_verify(args: argparse.Namespace) -> int:
    """ok/FAIL per artifact on stdout; exit 3 if any was altered, else 2 if any was unreadable,
    with one line on stderr naming the first failure."""
    from samplewright.store.artifacts import verify_artifact

    status = 0
    failures: list[str] = []
    for path in args.artifacts:
        try:
            meta = verify_artifact(path)
        except IntegrityError as exc:
            emit(f"FAIL {exc}")
            failures.append(str(exc))
            status = EXIT_INTEGRITY
        except SamplewrightError as exc:
            emit(f"FAIL {exc}")
            failures.append(str(exc))
            status = status or EXIT_INPUT
        else:
            emit(f"ok   {path}: {meta['sampler']['method']} {meta['content_hash'][:19]}")
    if failures:
        print(
            f"samplewright: error: {len(failures)} of {len(args.artifacts)} artifact(s) failed;"
            f" first: {failures[0]}",
            file=sys.stderr,
        )
    return status


def add_commands(sub: Any) -> None:
    """Add ``show`` and ``verify`` to the subcommand parsers ``sub``."""
    p = sub.add_parser(
        "show",
        help="describe an artifact (verified first)",
        description="Describe an artifact after verifying it: method, parameters, support, "
        "moments, the data it was fitted to, the selection, recorded warnings and every "
        "diagnostics section (numbers rounded to 6 significant digits; --json for the exact "
        "metadata).",
    )
    p.add_argument("artifact")
    p.add_argument("--json", action="store_true", help="print the full metadata as JSON")
    p.set_defaults(func=run_show)

    p = sub.add_parser("verify", help="check the content hashes of artifacts")
    p.add_argument("artifacts", nargs="+")
    p.set_defaults(func=run_verify)
