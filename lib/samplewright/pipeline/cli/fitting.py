"""Commands that make sampler artifacts: ``fit`` (from data) and ``knots`` (a drawn CDF)."""

from __future__ import annotations

import argparse
from typing import Any

from samplewright.core.errors import MethodError, SamplewrightError
from samplewright.pipeline.cli.common import (
    add_data_args,
    check_expected,
    check_outputs,
    parse_option,
    reading,
)

__all__ = ["add_commands", "one_line", "run_fit", "run_knots"]


def one_line(sampler: Any) -> str:
    """A sampler in one line: method, parameters, support, mean (and log-likelihood)."""
    lo, hi = sampler.support
    params = ", ".join(
        f"{k}={v:.6g}" if isinstance(v, float) else f"{k}={v}" for k, v in sampler.params.items()
    )
    text = f"{sampler.method} ({params}); support [{lo:.6g}, {hi:.6g}]; mean {sampler.mean:.6g}"
    ll = getattr(sampler, "loglik", None)
    if ll is not None:
        text += f"; loglik {ll:.6g}"
    return text


def run_fit(args: argparse.Namespace) -> int:
    """Fit a method to a data file or snapshot and write the artifact."""
    from samplewright.fitting.api import fit, known_methods
    from samplewright.store.artifacts import write_sampler
    from samplewright.store.fingerprints import fingerprint_column
    from samplewright.store.snapshots import read_data

    options = dict(parse_option(o) for o in args.option or [])
    if args.method not in known_methods():
        raise MethodError(
            f"--method: unknown method {args.method!r}; expected one of: "
            f"{', '.join(known_methods())}"
        )
    check_outputs({"--out": args.out}, [args.data])
    data, snap = read_data(args.data, args.column, **reading(args))
    fp = fingerprint_column(data)
    check_expected(str(args.data), fp, args.expect_fingerprint)
    try:
        sampler = fit(
            data.values, args.method, weights=data.weights, censored=data.censored, **options
        )
    except SamplewrightError as exc:  # too few values, values outside the support, ...
        where = snap["source"] if snap else args.data
        col = snap["column"] if snap else args.column
        raise type(exc)(f"column {col!r} in {where}: {exc}") from None
    origin = snap or {
        "source": str(args.data),
        "column": args.column,
        "weight_column": args.weights,
        "censor_column": args.censor,
    }
    data_section = {
        "n_obs": data.n,
        "n_rows_read": data.n_rows_read,
        "dropped": data.dropped,
        "weighted": data.weights is not None,
        "censored": int(data.censored.sum()) if data.censored is not None else 0,
    }
    if snap:
        data_section["n_rows_read"] = snap["n_rows_read"]
        data_section["dropped"] = snap["dropped"]
    write_sampler(
        sampler,
        args.out,
        fingerprint=fp,
        key=args.key,
        data=data_section,
        diagnostics=getattr(sampler, "diagnostics", {}) or {},
        provenance={
            "source": origin["source"],
            "column": origin["column"],
            "weight_column": origin.get("weight_column"),
            "censor_column": origin.get("censor_column"),
            "options": options,
            "read_from": str(args.data),
        },
    )
    print(f"{args.out}: {one_line(sampler)}")
    return 0


def run_knots(args: argparse.Namespace) -> int:
    """Write an artifact from user-drawn CDF points (a file or ``--points``)."""
    from samplewright.fitting.api import parse_knots_text, read_knots
    from samplewright.store.artifacts import write_sampler
    from samplewright.store.fingerprints import knots_fingerprint

    if (args.file is None) == (args.points is None):
        raise MethodError("knots: give exactly one of --file or --points")
    check_outputs({"--out": args.out}, [args.file])
    sampler = read_knots(args.file) if args.file else parse_knots_text(args.points)
    write_sampler(
        sampler,
        args.out,
        fingerprint=knots_fingerprint(sampler.x, sampler.p),
        key=args.key,
        data={"n_obs": 0, "n_knots": int(sampler.x.size)},
        provenance={"source": str(args.file) if args.file else "--points"},
    )
    print(f"{args.out}: {one_line(sampler)}")
    return 0


def add_commands(sub: Any) -> None:
    """Add ``fit`` and ``knots`` to the subcommand parsers ``sub``."""
    p = sub.add_parser("fit", help="fit a sampler to a data column and write an artifact")
    add_data_args(p, column_required=False)
    p.add_argument(
        "--method",
        "-m",
        required=True,
        help="empirical, interpolated, or a family (normal, lognormal, gamma, ...)",
    )
    p.add_argument(
        "--option",
        "-o",
        action="append",
        metavar="KEY=VALUE",
        help="method option, repeatable (values parsed as JSON, e.g. loc=0.5)",
    )
    p.add_argument("--out", required=True, help="artifact path (.parquet)")
    p.add_argument("--key", help="content key to record (set by the workflow rules)")
    p.add_argument("--expect-fingerprint", help="fail unless the data has this fingerprint")
    p.set_defaults(func=run_fit)

    p = sub.add_parser("knots", help="write an artifact from a user-drawn CDF (x, p) points")
    p.add_argument("--file", help="CSV/TSV with columns x and p, or YAML")
    p.add_argument("--points", help="inline knots: 'x1:p1,x2:p2,...'")
    p.add_argument("--out", required=True, help="artifact path (.parquet)")
    p.add_argument("--key", help="content key to record (set by the workflow rules)")
    p.set_defaults(func=run_knots)
