"""The ``snapshot-table`` command: several row-aligned columns of a file in one snapshot.

Workflow use, like ``snapshot``: the only command besides ``snapshot`` and ``fingerprint`` that
reads a raw data file in a pipeline. Two modes:

* ``--columns a,b``: a joint input's columns, rows cleaned as a whole
  (:func:`samplewright.pipeline.table_data.read_joint_table`);
* ``--column`` (or ``--lower``/``--upper``) with ``--truncation COLUMN``, ``--weights``,
  ``--censor``: an incomplete-data dataset's columns by role
  (:func:`samplewright.pipeline.table_data.read_roles`). A number given as ``--truncation`` is
  no column: it is the fit's business and is not stored.

The snapshot is written only if its fingerprint is the one the workflow planned with
(``--expect-fingerprint``); otherwise the plan's memo entry is dropped so the next plan
recomputes it.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from samplewright.core.errors import MethodError, SamplewrightError
from samplewright.pipeline.cli.common import (
    add_data_args,
    check_expected,
    check_outputs,
    table_reading,
)

__all__ = ["add_commands", "run_snapshot_table"]


def _columns(text: str) -> list[str]:
    names = [c.strip() for c in text.split(",")]
    if len(names) < 2 or not all(names) or len(set(names)) != len(names):
        raise MethodError(
            f"--columns: expected two or more distinct column names separated by commas, "
            f"found {text!r}"
        )
    return names


def _roles(args: argparse.Namespace) -> dict[str, str]:
    from samplewright.pipeline.cli.fitting import roles_from_args

    roles = roles_from_args(args)
    if roles is None:
        if args.column is None:
            raise MethodError("snapshot-table: give --columns, or --column / --lower and --upper")
        roles = {"value": args.column}
        if args.weights is not None:
            roles["weight"] = args.weights
        if args.censor is not None:
            roles["censor"] = args.censor
    return roles


def run_snapshot_table(args: argparse.Namespace) -> int:
    """Write the cleaned columns to a table snapshot, if their fingerprint is the planned one."""
    from samplewright.pipeline.table_data import (
        TableFingerprints,
        joint_fingerprint,
        read_joint_table,
        read_roles,
        write_table_snapshot,
    )
    from samplewright.store.layout import FINGERPRINT_CACHE_NAME

    if Path(args.out).suffix.lower() not in (".parquet", ".pq"):
        raise MethodError(f"--out: expected a .parquet file, found {Path(args.out).name!r}")
    cache_file = Path(args.cache_dir) / FINGERPRINT_CACHE_NAME if args.cache_dir else None
    check_outputs({"--out": args.out, "--cache-dir": cache_file}, [args.data])
    opts = table_reading(args)
    record: dict[str, Any]
    if args.columns is not None:
        if any(v is not None for v in (args.column, args.lower, args.upper, args.weights)):
            raise MethodError(
                "--columns: a joint table takes no --column, --lower, --upper, --weights"
            )
        names = _columns(args.columns)
        table, _ = read_joint_table(args.data, names, **opts)
        fp = joint_fingerprint(table.values)
        columns = {c: table.column(c) for c in names}
        record = {"kind": "joint", "columns": names}
        source, n_read, dropped, n = table.source, table.n_rows_read, table.dropped, table.n

        def forget(cache: TableFingerprints) -> bool:
            return cache.forget_joint(args.data, names, **opts)
    else:
        roles = _roles(args)
        data = read_roles(args.data, roles, **opts)
        fp = data.fingerprint
        columns = {roles[r]: a for r, a in data.arrays.items()}
        record = {"kind": "roles", "roles": roles}
        source, n_read, dropped, n = data.source, data.n_rows_read, data.dropped, data.n

        def forget(cache: TableFingerprints) -> bool:
            return cache.forget_roles(args.data, roles, **opts)

    try:
        check_expected(f"data in {args.data}", fp, args.expect_fingerprint)
    except SamplewrightError as exc:
        if args.cache_dir:  # the plan's memo was wrong or stale: make the next plan recompute
            cache = TableFingerprints(args.cache_dir)
            if forget(cache):
                cache.save()
                raise SamplewrightError(f"{exc} (its cached fingerprint was dropped)") from None
        raise
    record |= {"fingerprint": fp, "source": source, "n_rows_read": n_read, "dropped": dropped}
    write_table_snapshot(args.out, columns, record)
    print(f"{args.out}: {n} rows of {len(columns)} columns, fingerprint {fp[:16]}")
    return 0


def add_commands(sub: Any) -> None:
    """Add ``snapshot-table`` to the subcommand parsers ``sub``."""
    p = sub.add_parser(
        "snapshot-table", help="write several row-aligned columns to a snapshot (workflow use)"
    )
    add_data_args(p, column_required=False)
    p.add_argument("--columns", help="joint input: the columns, comma-separated, in order")
    p.add_argument("--truncation", metavar="NUM|COLUMN", help="column of truncation points")
    p.add_argument("--lower", metavar="COLUMN", help="interval rows: column of lower ends")
    p.add_argument("--upper", metavar="COLUMN", help="interval rows: column of upper ends")
    p.add_argument("--out", required=True, help="snapshot path (.parquet)")
    p.add_argument("--expect-fingerprint", help="fail unless the data has this fingerprint")
    p.add_argument(
        "--cache-dir", help="fingerprint cache to correct if the fingerprint is not the planned one"
    )
    p.set_defaults(func=run_snapshot_table)
