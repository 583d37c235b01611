"""The ``samplewright`` command line.

Every command validates its input before it writes anything; errors print one line
(``samplewright: error: ...``) and exit with status 2 (input errors) or 3 (artifact integrity).
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from samplewright import __version__
from samplewright.core.errors import IntegrityError, MethodError, SamplewrightError
from samplewright.core.randomness import stream_rng
from samplewright.distributions.base import Sampler
from samplewright.fitting.api import fit, known_methods, parse_knots_text, read_knots
from samplewright.store.artifacts import (
    atomic_write,
    load_sampler,
    read_metadata,
    verify_artifact,
    write_sampler,
)
from samplewright.store.fingerprints import fingerprint_column, fingerprint_file

EXIT_INPUT = 2
EXIT_INTEGRITY = 3


def _parse_option(text: str) -> tuple[str, Any]:
    if "=" not in text:
        raise MethodError(f"--option: expected KEY=VALUE, found {text!r}")
    key, raw = text.split("=", 1)
    try:
        value = json.loads(raw)
    except ValueError:
        value = raw
    return key.strip(), value


def _method_minimum(method: str) -> int:
    from samplewright.distributions.families import FAMILIES
    from samplewright.fitting.api import NONPARAMETRIC_METHODS

    if method in NONPARAMETRIC_METHODS:
        return NONPARAMETRIC_METHODS[method][0]
    if method in FAMILIES:
        return FAMILIES[method].min_obs
    return 1


def _data_section(data: Any, n_obs: int) -> dict[str, Any]:
    return {
        "n_obs": n_obs,
        "n_rows_read": data.n_rows_read,
        "dropped": data.dropped,
        "weighted": data.weights is not None,
        "censored": int(data.censored.sum()) if data.censored is not None else 0,
    }


# ---------------------------------------------------------------------------------------------
# commands


def _reading(args: argparse.Namespace) -> dict[str, Any]:
    """The data-reading options every data command shares (see ``_add_data_args``)."""
    return {
        "weights": args.weights,
        "censor": args.censor,
        "missing": args.missing,
        "infinite": args.infinite,
    }


def cmd_fingerprint(args: argparse.Namespace) -> int:
    fp = fingerprint_file(args.data, args.column, cache_dir=args.cache_dir, **_reading(args))
    if args.json_out:
        doc = json.dumps({"fingerprint": fp, "source": str(args.data), "column": args.column})
        atomic_write(Path(args.json_out), lambda tmp: Path(tmp).write_text(doc + "\n"))
    print(fp)
    return 0


def _check_expected(label: str, fp: str, expected: str | None) -> None:
    """Fail if the data's fingerprint is not the one the workflow planned with (a prefix)."""
    if expected and not fp.startswith(expected):
        raise SamplewrightError(
            f"{label} changed after the workflow was planned (fingerprint {fp[:20]}, planned "
            f"{expected[:20]}); run snakemake again to plan with the new data"
        )


def cmd_snapshot(args: argparse.Namespace) -> int:
    from samplewright.intake.columns import read_column
    from samplewright.store.snapshots import write_snapshot

    data = read_column(args.data, args.column, **_reading(args))
    fp = fingerprint_column(data)
    _check_expected(f"column {args.column!r} in {args.data}", fp, args.expect_fingerprint)
    write_snapshot(data, args.out)
    print(f"{args.out}: {data.n} values, fingerprint {fp[:16]}")
    return 0


def cmd_fit(args: argparse.Namespace) -> int:
    from samplewright.store.snapshots import read_data

    options = dict(_parse_option(o) for o in args.option or [])
    if args.method not in known_methods():
        raise MethodError(
            f"--method: unknown method {args.method!r}; expected one of: "
            f"{', '.join(known_methods())}"
        )
    data, snap = read_data(
        args.data, args.column, min_rows=_method_minimum(args.method), **_reading(args)
    )
    fp = fingerprint_column(data)
    _check_expected(str(args.data), fp, args.expect_fingerprint)
    try:
        sampler = fit(
            data.values, args.method, weights=data.weights, censored=data.censored, **options
        )
    except SamplewrightError as exc:
        where = snap["source"] if snap else args.data
        col = snap["column"] if snap else args.column
        raise type(exc)(f"column {col!r} in {where}: {exc}") from None
    origin = snap or {
        "source": str(args.data),
        "column": args.column,
        "weight_column": args.weights,
        "censor_column": args.censor,
    }
    data_section = _data_section(data, data.n)
    if snap:
        data_section["n_rows_read"] = snap["n_rows_read"]
        data_section["dropped"] = snap["dropped"]
    diagnostics = getattr(sampler, "diagnostics", {}) or {}
    write_sampler(
        sampler,
        args.out,
        fingerprint=fp,
        key=args.key,
        data=data_section,
        diagnostics=diagnostics,
        provenance={
            "source": origin["source"],
            "column": origin["column"],
            "weight_column": origin.get("weight_column"),
            "censor_column": origin.get("censor_column"),
            "options": options,
            "read_from": str(args.data),
        },
    )
    print(f"{args.out}: {_one_line(sampler)}")
    return 0


def cmd_knots(args: argparse.Namespace) -> int:
    if (args.file is None) == (args.points is None):
        raise MethodError("knots: give exactly one of --file or --points")
    sampler = read_knots(args.file) if args.file else parse_knots_text(args.points)
    fp = fingerprint_column_like(sampler)
    write_sampler(
        sampler,
        args.out,
        fingerprint=fp,
        key=args.key,
        data={"n_obs": 0, "n_knots": int(sampler.x.size)},
        provenance={"source": str(args.file) if args.file else "--points"},
    )
    print(f"{args.out}: {_one_line(sampler)}")
    return 0


def fingerprint_column_like(sampler: Any) -> str:
    from samplewright.store.fingerprints import fingerprint_arrays

    return fingerprint_arrays(np.concatenate([sampler.x, sampler.p]))


def cmd_draw(args: argparse.Namespace) -> int:
    if args.n < 0:
        raise MethodError(f"-n: expected a count >= 0, found {args.n}")
    if args.seed < 0:
        raise MethodError(f"--seed: expected a non-negative int, found {args.seed}")
    out = Path(args.out)
    if out.suffix.lower() not in (".parquet", ".csv"):
        raise MethodError(f"--out: expected a .parquet or .csv file, found {out.name!r}")
    sampler = load_sampler(args.artifact)
    rng = stream_rng(args.seed, *(args.stream or ["draws"]))
    values = sampler.draw(args.n, rng=rng)
    if out.suffix.lower() == ".csv":
        import pandas as pd

        atomic_write(out, lambda tmp: pd.DataFrame({"value": values}).to_csv(tmp, index=False))
    else:
        import pyarrow as pa
        import pyarrow.parquet as pq

        meta = read_metadata(args.artifact, verify=False)
        table = pa.table({"value": values}).replace_schema_metadata(
            {
                b"samplewright-draws": json.dumps(
                    {
                        "artifact": str(args.artifact),
                        "content_hash": meta["content_hash"],
                        "seed": args.seed,
                        "stream": args.stream or ["draws"],
                        "n": args.n,
                    }
                ).encode()
            }
        )
        atomic_write(out, lambda tmp: pq.write_table(table, tmp, use_dictionary=False))
    print(f"{out}: {args.n} draws, mean {np.mean(values) if args.n else float('nan'):.6g}")
    return 0


def _one_line(sampler: Sampler) -> str:
    lo, hi = sampler.support
    params = ", ".join(
        f"{k}={v:.6g}" if isinstance(v, float) else f"{k}={v}" for k, v in sampler.params.items()
    )
    text = f"{sampler.method} ({params}); support [{lo:.6g}, {hi:.6g}]; mean {sampler.mean:.6g}"
    ll = getattr(sampler, "loglik", None)
    if ll is not None:
        text += f"; loglik {ll:.6g}"
    return text


def cmd_show(args: argparse.Namespace) -> int:
    sampler = load_sampler(args.artifact)
    meta = sampler.metadata  # type: ignore[attr-defined]
    if args.json:
        print(json.dumps(meta, indent=2, sort_keys=True))
        return 0
    from samplewright.check.render import format_show

    print(format_show(args.artifact, sampler, meta))
    return 0


def cmd_verify(args: argparse.Namespace) -> int:
    """ok/FAIL per artifact; exit 3 if any was altered, else 2 if any was unreadable."""
    status = 0
    for path in args.artifacts:
        try:
            meta = verify_artifact(path)
        except IntegrityError as exc:
            print(f"FAIL {exc}")
            status = EXIT_INTEGRITY
        except SamplewrightError as exc:
            print(f"FAIL {exc}")
            status = status or EXIT_INPUT
        else:
            print(f"ok   {path}: {meta['sampler']['method']} {meta['content_hash'][:19]}")
    return status


def cmd_select(args: argparse.Namespace) -> int:
    from samplewright.check.selection import select_artifacts

    winner = select_artifacts(args.candidates, by=args.by, key=args.key, out=args.out)
    print(f"{args.out}: selected {winner}")
    return 0


def cmd_check(args: argparse.Namespace) -> int:
    from samplewright.check.render import write_check

    write_check(args.data, args.candidates, out=args.out, dataset=args.dataset, column=args.column)
    print(f"{args.out}: check written for {len(args.candidates)} candidate(s)")
    return 0


# ---------------------------------------------------------------------------------------------
# parser


def _add_data_args(p: argparse.ArgumentParser, *, column_required: bool = True) -> None:
    p.add_argument("data", help="data file: .csv, .tsv, .tab, .parquet or .pq")
    p.add_argument("--column", "-c", required=column_required, help="name of the value column")
    p.add_argument("--weights", help="name of a column of positive (frequency) weights")
    p.add_argument("--censor", help="name of a 0/1 column; 1 = value is right-censored")
    p.add_argument(
        "--missing",
        choices=["error", "drop"],
        default="error",
        help="what to do with missing values (default: error)",
    )
    p.add_argument(
        "--infinite",
        choices=["error", "drop"],
        default="error",
        help="what to do with infinite values (default: error)",
    )


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="samplewright",
        description="Fit, store, check and draw from input distributions for Monte Carlo models.",
    )
    parser.add_argument("--version", action="version", version=f"samplewright {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    p = sub.add_parser("fit", help="fit a sampler to a data column and write an artifact")
    _add_data_args(p, column_required=False)
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
    p.set_defaults(func=cmd_fit)

    p = sub.add_parser("knots", help="write an artifact from a user-drawn CDF (x, p) points")
    p.add_argument("--file", help="CSV/TSV with columns x and p, or YAML")
    p.add_argument("--points", help="inline knots: 'x1:p1,x2:p2,...'")
    p.add_argument("--out", required=True, help="artifact path (.parquet)")
    p.add_argument("--key", help="content key to record (set by the workflow rules)")
    p.set_defaults(func=cmd_knots)

    p = sub.add_parser("draw", help="draw from an artifact into a Parquet or CSV file")
    p.add_argument("artifact")
    p.add_argument("-n", type=int, required=True, help="number of draws")
    p.add_argument("--seed", type=int, required=True, help="root seed (non-negative int)")
    p.add_argument(
        "--stream",
        action="append",
        help="stream name under the root seed, repeatable (default: draws)",
    )
    p.add_argument("--out", required=True, help="output file: .parquet or .csv (column 'value')")
    p.set_defaults(func=cmd_draw)

    p = sub.add_parser("show", help="describe an artifact (verified first)")
    p.add_argument("artifact")
    p.add_argument("--json", action="store_true", help="print the full metadata as JSON")
    p.set_defaults(func=cmd_show)

    p = sub.add_parser("verify", help="check the content hashes of artifacts")
    p.add_argument("artifacts", nargs="+")
    p.set_defaults(func=cmd_verify)

    p = sub.add_parser("fingerprint", help="print the content fingerprint of a data column")
    _add_data_args(p)
    p.add_argument("--cache-dir", help="folder for the fingerprint cache (fingerprints.json)")
    p.add_argument("--json-out", help="also write {fingerprint, source, column} to this JSON file")
    p.set_defaults(func=cmd_fingerprint)

    p = sub.add_parser("snapshot", help="write the cleaned column to a snapshot (workflow use)")
    _add_data_args(p)
    p.add_argument("--out", required=True)
    p.add_argument("--expect-fingerprint", help="fail unless the data has this fingerprint")
    p.set_defaults(func=cmd_snapshot)

    p = sub.add_parser("select", help="pick one of several candidate artifacts (workflow use)")
    p.add_argument("candidates", nargs="+")
    p.add_argument("--by", default="aic", help="aic, bic or first (default: aic)")
    p.add_argument("--key", help="content key to record")
    p.add_argument("--out", required=True)
    p.set_defaults(func=cmd_select)

    p = sub.add_parser("check", help="write a short check summary of candidates vs the data")
    p.add_argument("data", help="data file or snapshot")
    p.add_argument("candidates", nargs="+")
    p.add_argument("--dataset", default="", help="dataset name for the heading")
    p.add_argument("--column", "-c", help="value column (not needed for a snapshot)")
    p.add_argument("--out", required=True, help="summary path (.json; a .md is written beside)")
    p.set_defaults(func=cmd_check)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args))
    except IntegrityError as exc:
        print(f"samplewright: error: {exc}", file=sys.stderr)
        return EXIT_INTEGRITY
    except SamplewrightError as exc:
        print(f"samplewright: error: {exc}", file=sys.stderr)
        return EXIT_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
