"""Commands that read raw data: ``fingerprint`` and ``snapshot`` (workflow use)."""

from __future__ import annotations

import argparse
import json
from pathlib import Path
from typing import Any

from samplewright.core.errors import MethodError, SamplewrightError
from samplewright.pipeline.cli.common import (
    add_data_args,
    check_expected,
    check_outputs,
    reading,
)

__all__ = ["add_commands", "run_fingerprint", "run_snapshot"]


def run_fingerprint(args: argparse.Namespace) -> int:
    """Print a column's fingerprint; memoise it; optionally write it as JSON."""
    from samplewright.store.atomic import write_text
    from samplewright.store.fingerprints import fingerprint_file
    from samplewright.store.layout import FINGERPRINT_CACHE_NAME

    cache = Path(args.cache_dir) / FINGERPRINT_CACHE_NAME if args.cache_dir else None
    check_outputs({"--json-out": args.json_out, "--cache-dir": cache}, [args.data])
    fp = fingerprint_file(args.data, args.column, cache_dir=args.cache_dir, **reading(args))
    if args.json_out:
        doc = json.dumps({"fingerprint": fp, "source": str(args.data), "column": args.column})
        write_text(args.json_out, doc + "\n")
    print(fp)
    return 0


def run_snapshot(args: argparse.Namespace) -> int:
    """Write the cleaned column to a snapshot, if its fingerprint is the planned one."""
    from samplewright.intake.columns import read_column
    from samplewright.store.fingerprints import FingerprintCache, fingerprint_column
    from samplewright.store.layout import FINGERPRINT_CACHE_NAME
    from samplewright.store.snapshots import write_snapshot

    if Path(args.out).suffix.lower() not in (".parquet", ".pq"):
        raise MethodError(f"--out: expected a .parquet file, found {Path(args.out).name!r}")
    cache_file = Path(args.cache_dir) / FINGERPRINT_CACHE_NAME if args.cache_dir else None
    check_outputs({"--out": args.out, "--cache-dir": cache_file}, [args.data])
    data = read_column(args.data, args.column, **reading(args))
    fp = fingerprint_column(data)
    try:
        check_expected(f"column {args.column!r} in {args.data}", fp, args.expect_fingerprint)
    except SamplewrightError as exc:
        if args.cache_dir:  # the plan's memo was wrong or stale: make the next plan recompute
            cache = FingerprintCache(args.cache_dir)
            if cache.forget(args.data, args.column, **reading(args)):
                cache.save()
                raise SamplewrightError(f"{exc} (its cached fingerprint was dropped)") from None
        raise
    write_snapshot(data, args.out)
    print(f"{args.out}: {data.n} values, fingerprint {fp[:16]}")
    return 0


def add_commands(sub: Any) -> None:
    """Add ``fingerprint`` and ``snapshot`` to the subcommand parsers ``sub``."""
    p = sub.add_parser("fingerprint", help="print the content fingerprint of a data column")
    add_data_args(p)
    p.add_argument("--cache-dir", help="folder for the fingerprint cache (fingerprints.json)")
    p.add_argument("--json-out", help="also write {fingerprint, source, column} to this JSON file")
    p.set_defaults(func=run_fingerprint)

    p = sub.add_parser("snapshot", help="write the cleaned column to a snapshot (workflow use)")
    add_data_args(p)
    p.add_argument("--out", required=True, help="snapshot path (.parquet)")
    p.add_argument("--expect-fingerprint", help="fail unless the data has this fingerprint")
    p.add_argument(
        "--cache-dir", help="fingerprint cache to correct if the fingerprint is not the planned one"
    )
    p.set_defaults(func=run_snapshot)
