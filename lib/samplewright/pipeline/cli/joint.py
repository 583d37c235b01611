"""The ``fit-joint`` command: several row-aligned columns fitted as one joint sampler artifact.

::

    samplewright fit-joint repairs.csv --columns hours,cost_per_crew_hour \\
        --marginal hours=spliced --marginal cost_per_crew_hour=gamma \\
        --marginal-option cost_per_crew_hour:loc='"free"' \\
        --coupling rank_correlation --rank-correlation '[[1, 0.6], [0.6, 1]]' --out job.parquet

Each column's method defaults to ``empirical``; ``--rank-correlation`` takes a JSON matrix in
the order of ``--columns`` (inline, or a file holding it). With ``--seed`` the fit also measures
the rank correlation its draws achieve, from the stream ``--seed``/``--stream``. A matrix the
fitter repairs (not positive semi-definite) is reported as a note line on stderr, with how far it
moved.
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path
from typing import Any, cast

from samplewright.core.errors import MethodError, SamplewrightError
from samplewright.pipeline.cli.common import (
    add_reading_args,
    add_seed_args,
    check_expected,
    check_outputs,
    check_seed,
    notes,
    parse_option,
    table_reading,
)

__all__ = ["add_commands", "parse_marginals", "run_fit_joint"]


def _split(text: str, flag: str, sep: str) -> tuple[str, str]:
    left, found, right = text.partition(sep)
    if not found or not left.strip() or not right.strip():
        raise MethodError(f"{flag}: expected COLUMN{sep}..., found {text!r}")
    return left.strip(), right.strip()


def parse_marginals(
    columns: list[str], methods: list[str] | None, options: list[str] | None
) -> dict[str, Any]:
    """Column -> method name, or ``{"method": m, **options}``, from ``--marginal`` and
    ``--marginal-option`` texts (every column listed; ``empirical`` by default).

    >>> parse_marginals(["a", "b"], ["a=gamma"], ["a:loc=0"])
    {'a': {'method': 'gamma', 'loc': 0}, 'b': 'empirical'}
    """
    chosen = {c: "empirical" for c in columns}
    extra: dict[str, dict[str, Any]] = {c: {} for c in columns}
    for text in methods or []:
        column, method = _split(text, "--marginal", "=")
        if column not in chosen:
            raise MethodError(f"--marginal: column {column!r} is not one of --columns {columns}")
        chosen[column] = method
    for text in options or []:
        column, option = _split(text, "--marginal-option", ":")
        if column not in chosen:
            raise MethodError(
                f"--marginal-option: column {column!r} is not one of --columns {columns}"
            )
        key, value = parse_option(option)
        extra[column][key] = value
    return {c: {"method": m, **extra[c]} if extra[c] else m for c, m in chosen.items()}


def _matrix(text: str | None) -> Any:
    if text is None:
        return None
    raw = text
    if not text.lstrip().startswith("["):
        path = Path(text)
        if not path.is_file():
            raise MethodError(
                f"--rank-correlation: expected a JSON matrix or a file holding one, found {text!r}"
            )
        raw = path.read_text()
    try:
        return json.loads(raw)
    except ValueError as exc:
        raise MethodError(f"--rank-correlation: not valid JSON ({exc})") from None


def run_fit_joint(args: argparse.Namespace) -> int:
    """Fit a joint sampler to row-aligned columns of a data file or table snapshot."""
    check_seed(args.seed)
    if args.stream and args.seed is None:
        raise MethodError("--stream: names a stream under --seed, which is not given")
    check_outputs({"--out": args.out}, [args.data])
    from samplewright.pipeline.cli.tables import _columns

    columns = _columns(args.columns)
    marginals = parse_marginals(columns, args.marginal, args.marginal_option)
    matrix = _matrix(args.rank_correlation)

    from samplewright.core.randomness import stream_rng
    from samplewright.fitting.joint import fit_joint
    from samplewright.pipeline.cli.fitting import one_line
    from samplewright.pipeline.table_data import joint_fingerprint, read_joint_table
    from samplewright.store.artifacts import write_sampler

    table, _ = read_joint_table(args.data, columns, **table_reading(args))
    fp = joint_fingerprint(table.values)
    check_expected(str(args.data), fp, args.expect_fingerprint)
    streams = args.stream or ["check"]
    rng = None if args.seed is None else stream_rng(args.seed, *streams)
    try:
        with notes():
            sampler = fit_joint(
                table,
                marginals,
                coupling=args.coupling,
                rank_correlation=matrix,
                correlation_method=args.correlation_method,
                rng=rng,
            )
    except SamplewrightError as exc:
        raise type(exc)(f"columns {columns} in {table.source}: {exc}") from None
    write_sampler(
        cast(Any, sampler),
        args.out,
        fingerprint=fp,
        key=args.key,
        data={
            "n_obs": table.n,
            "n_rows_read": table.n_rows_read,
            "dropped": table.dropped,
            "columns": columns,
        },
        diagnostics=sampler.diagnostics,
        provenance={
            "source": table.source,
            "columns": columns,
            "marginals": marginals,
            "coupling": args.coupling,
            "read_from": str(args.data),
            "seed": args.seed,
            "stream": streams if args.seed is not None else None,
        },
    )
    for c in columns:
        print(f"{args.out}: {c}: {one_line(sampler.marginal(c))}")
    print(f"{args.out}: coupling {_coupling_line(sampler)}")
    return 0


def _coupling_line(sampler: Any) -> str:
    p = sampler.params
    text = str(p["coupling"])
    matrix = p.get("rank_correlation", p.get("correlation"))
    if matrix is not None:
        d = len(matrix)
        pairs = [f"{matrix[i][j]:.3g}" for i in range(d) for j in range(i + 1, d)]
        label = "Spearman" if "rank_correlation" in p else "correlation"
        text += f"; {label} {', '.join(pairs)}"
    if p.get("df") is not None:
        text += f"; df {float(p['df']):.4g}"
    repair = (sampler.diagnostics.get("coupling") or {}).get("repair_distance")
    if repair:
        text += f"; matrix repaired by {float(repair):.3g}"
    return text


def add_commands(sub: Any) -> None:
    """Add ``fit-joint`` to the subcommand parsers ``sub``."""
    from samplewright.pipeline.choices import CORRELATION_METHODS, COUPLINGS

    p = sub.add_parser("fit-joint", help="fit several row-aligned columns as one joint sampler")
    p.add_argument("data", help="data file (.csv, .tsv, .tab, .parquet) or table snapshot")
    p.add_argument("--columns", required=True, help="columns, comma-separated, in draw order")
    p.add_argument(
        "--marginal",
        action="append",
        metavar="COLUMN=METHOD",
        help="a column's method, repeatable (default: empirical)",
    )
    p.add_argument(
        "--marginal-option",
        action="append",
        metavar="COLUMN:KEY=VALUE",
        help="a column's method option, repeatable (values parsed as JSON)",
    )
    p.add_argument(
        "--coupling",
        choices=COUPLINGS,
        default="rank_correlation",
        help="default: rank_correlation",
    )
    p.add_argument(
        "--rank-correlation",
        metavar="JSON|FILE",
        help="Spearman matrix in the order of --columns (default: the data's)",
    )
    p.add_argument(
        "--correlation-method",
        choices=CORRELATION_METHODS,
        default="kendall",
        help="how a Gaussian copula's correlation is estimated (default: kendall)",
    )
    add_reading_args(p)
    add_seed_args(p, required=False, default="check")
    p.add_argument("--out", required=True, help="artifact path (.parquet)")
    p.add_argument("--key", help="content key to record (set by the workflow rules)")
    p.add_argument("--expect-fingerprint", help="fail unless the data has this fingerprint")
    p.set_defaults(func=run_fit_joint)
