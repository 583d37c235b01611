"""Commands that make sampler artifacts: ``fit`` (from data) and ``knots`` (a drawn CDF).

``fit`` reads one value column (with weights and right-censoring flags), or several columns by
role for incomplete data: a truncation column (``--truncation COLUMN``; a number applies to every
row) and interval rows (``--lower``/``--upper`` instead of ``--column``; grouped counts as
``--weights``), read by :func:`samplewright.pipeline.table_data.read_roles`. ``--seed N`` seeds a
method that draws random numbers while fitting (option ``seed`` of ``auto`` and ``mixture``).
"""

from __future__ import annotations

import argparse
from typing import Any

from samplewright.core.errors import MethodError, SamplewrightError
from samplewright.pipeline.cli.common import (
    add_data_args,
    check_expected,
    check_outputs,
    check_seed,
    parse_option,
    reading,
    table_reading,
)
from samplewright.pipeline.cli.method_help import (
    FIT_USAGE,
    check_method_name,
    methods_epilog,
    print_recorded_warnings,
)

__all__ = [
    "add_commands",
    "one_line",
    "options_with_seed",
    "roles_from_args",
    "run_fit",
    "run_knots",
]


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


def _number(text: str | None) -> float | None:
    """``text`` as a number, or None when it is not one (then it names a column)."""
    if text is None:
        return None
    try:
        return float(text)
    except ValueError:
        return None


def options_with_seed(method: str, options: dict[str, Any], seed: int | None) -> dict[str, Any]:
    """``options`` with ``seed`` from ``--seed`` when the method takes one (catalog option
    ``seed``); a method without randomness does not depend on it and takes it unchanged.

    >>> options_with_seed("auto", {"n_resamples": 19}, 7)
    {'n_resamples': 19, 'seed': 7}
    >>> options_with_seed("gamma", {}, 7)
    {}
    """
    if seed is None:
        return options
    check_seed(seed)
    from samplewright.fitting.catalog import METHOD_OPTIONS

    if "seed" not in METHOD_OPTIONS.get(method, frozenset()):
        return options
    if "seed" in options and options["seed"] != seed:
        raise MethodError(
            f"--seed: {seed} disagrees with --option seed={options['seed']!r}; give one of them"
        )
    return {**options, "seed": seed}


def roles_from_args(args: argparse.Namespace) -> dict[str, str] | None:
    """The columns by role when the fit needs several (truncation column, interval rows)."""
    interval = args.lower is not None or args.upper is not None
    t_column = args.truncation is not None and _number(args.truncation) is None
    if not interval and not t_column:
        return None
    roles: dict[str, str] = {}
    if interval:
        if args.lower is None or args.upper is None:
            raise MethodError("--lower/--upper: interval rows need both columns")
        for flag, value in (("--column", args.column), ("--censor", args.censor)):
            if value is not None:
                raise MethodError(
                    f"{flag}: interval rows (--lower, --upper) take no {flag}; an upper end of "
                    "inf marks a right-censored row"
                )
        roles["lower"], roles["upper"] = args.lower, args.upper
    else:
        if args.column is None:
            raise MethodError("--column: required (or --lower and --upper for interval rows)")
        roles["value"] = args.column
    if t_column:
        roles["truncation"] = args.truncation
    if args.weights is not None:
        roles["weight"] = args.weights
    if args.censor is not None:
        roles["censor"] = args.censor
    return roles


def _fit_roles(args: argparse.Namespace, roles: dict[str, str], options: dict[str, Any]) -> int:
    """Fit from columns by role (truncation column, interval rows); write the artifact."""
    from samplewright.fitting.api import fit
    from samplewright.fitting.interval_api import fit_interval
    from samplewright.pipeline.table_data import read_roles
    from samplewright.store.artifacts import write_sampler

    table = read_roles(args.data, roles, **table_reading(args))
    check_expected(str(args.data), table.fingerprint, args.expect_fingerprint)
    t = table.get("truncation") if "truncation" in roles else _number(args.truncation)
    w = table.get("weight")
    used = [repr(roles[r]) for r in ("value", "lower", "upper") if r in roles]
    names = f"column {used[0]}" if len(used) == 1 else f"columns {', '.join(used)}"
    try:
        if "lower" in roles:
            sampler = fit_interval(
                table.arrays["lower"], table.arrays["upper"], args.method,
                truncation=t, weights=w, **options,
            )  # fmt: skip
        else:
            c = table.get("censor")
            sampler = fit(
                table.arrays["value"], args.method, weights=w,
                censored=None if c is None else c == 1.0, truncation=t, **options,
            )  # fmt: skip
    except SamplewrightError as exc:
        raise type(exc)(f"{names} in {table.source}: {exc}") from None
    c = table.get("censor")
    data_section = {
        "n_obs": table.n,
        "n_rows_read": table.n_rows_read,
        "dropped": table.dropped,
        "weighted": w is not None,
        "censored": int((c == 1.0).sum()) if c is not None else 0,
        "truncated": True if "truncation" in roles else t is not None,
        "interval_rows": "lower" in roles,
    }
    write_sampler(
        sampler,
        args.out,
        fingerprint=table.fingerprint,
        key=args.key,
        data=data_section,
        diagnostics=getattr(sampler, "diagnostics", {}) or {},
        provenance={
            "source": table.source,
            "columns": roles,
            "truncation": t if "truncation" not in roles else None,
            "options": options,
            "read_from": str(args.data),
        },
    )
    print(f"{args.out}: {one_line(sampler)}")
    print_recorded_warnings(sampler)  # one stderr line each; the fit still succeeds
    return 0


def run_fit(args: argparse.Namespace) -> int:
    """Fit a method to a data file or snapshot and write the artifact."""
    from samplewright.fitting.api import fit
    from samplewright.store.artifacts import write_sampler
    from samplewright.store.fingerprints import fingerprint_column
    from samplewright.store.snapshots import read_data

    options = dict(parse_option(o) for o in args.option or [])
    check_method_name(args.method, options)  # the nearest name for a typo
    options = options_with_seed(args.method, options, args.seed)
    check_outputs({"--out": args.out}, [args.data])
    roles = roles_from_args(args)
    if roles is not None:
        return _fit_roles(args, roles, options)
    truncation = _number(args.truncation)
    if truncation is not None:
        options_fit = {**options, "truncation": truncation}
    else:
        options_fit = options
    data, snap = read_data(args.data, args.column, **reading(args))
    fp = fingerprint_column(data)
    check_expected(str(args.data), fp, args.expect_fingerprint)
    try:
        sampler = fit(
            data.values, args.method, weights=data.weights, censored=data.censored, **options_fit
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
            **({"truncation": truncation} if truncation is not None else {}),
        },
    )
    print(f"{args.out}: {one_line(sampler)}")
    print_recorded_warnings(sampler)  # one stderr line each; the fit still succeeds
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
    print_recorded_warnings(sampler)  # one stderr line each; the fit still succeeds
    return 0


def add_commands(sub: Any) -> None:
    """Add ``fit`` and ``knots`` to the subcommand parsers ``sub``."""
    p = sub.add_parser(
        "fit",
        help="fit a sampler to a data column and write an artifact",
        usage=FIT_USAGE,
        epilog=methods_epilog(),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    add_data_args(p, column_required=False)
    column = next(a for a in p._actions if "--column" in a.option_strings)
    column.help = "name of the value column (required for a data file; a snapshot names its own)"
    p.add_argument(
        "--method",
        "-m",
        required=True,
        metavar="METHOD",
        help="a method of the catalog (listed below with its options)",
    )
    p.add_argument(
        "--option",
        "-o",
        action="append",
        metavar="KEY=VALUE",
        help="method option, repeatable (values parsed as JSON, e.g. loc=0.5)",
    )
    p.add_argument(
        "--truncation",
        metavar="NUM|COLUMN",
        help="lower truncation: one number for every row, or a column of per-row points "
        "(deductibles, delayed entry; -inf = none)",
    )
    p.add_argument(
        "--seed",
        type=int,
        metavar="N",
        help="seed (an int >= 0) of a method that draws random numbers while fitting: auto's "
        "bootstrap, mixture's EM starts (it becomes their option seed); other methods do not "
        "depend on it",
    )
    p.add_argument("--lower", metavar="COLUMN", help="interval rows: column of lower ends")
    p.add_argument(
        "--upper", metavar="COLUMN", help="interval rows: column of upper ends (inf: censored)"
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
