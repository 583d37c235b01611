"""Commands of the resampling stage: ``interval``, ``replicate``, ``spread`` and ``mc-error``.

* ``interval DATA --column C --statistic S ...`` (or ``--items JSON``, the workflow config's
  list of intervals): bootstrap confidence intervals of named statistics of a data column (iid
  or block schemes), written as JSON;
* ``replicate DATA --column C --method M`` (or ``--method-from ARTIFACT``, e.g. the selected
  sampler, whose method and options it reuses; for an ``auto`` sampler, the family it chose):
  parameter replicates of a method as one ensemble artifact (Parquet, like any sampler);
* ``spread ARTIFACT ...``: key quantiles and tail mean of a dataset's candidate samplers and
  their spread, optionally with intervals from replicate ensembles, as Markdown or JSON;
* ``mc-error DRAWS --statistic S ...``: Monte Carlo standard errors and intervals of statistics
  of simulated draws, and the draws needed for a target precision, as JSON.

Random streams come from ``--seed`` (the workflow's root seed) and stable names (``--stream``,
then the command and the statistic), never from the order jobs run in. ``interval`` prints each
interval's warnings (a tail statistic from too few observations beyond its level) on stderr as
``samplewright: warning: ...`` and keeps them in the JSON (``"warnings"``, per interval).
``interval`` and ``replicate`` show their progress on a terminal, nothing in a log
(:mod:`samplewright.core.progress`). The command group follows
the shape of :mod:`samplewright.pipeline.cli`'s groups: :func:`add_commands` adds the
subcommands; numpy, scipy and pandas are imported inside the commands only (the ``choices=``
come from :mod:`samplewright.pipeline.choices`).
"""

from __future__ import annotations

import argparse
import json
import sys
import warnings
from pathlib import Path
from typing import Any

from samplewright.core.errors import MethodError, SamplewrightError
from samplewright.pipeline.choices import INTERVAL_METHODS, REPLICATIONS, SCHEMES
from samplewright.pipeline.cli.common import (
    add_data_args,
    check_expected,
    check_outputs,
    parse_option,
    reading,
)

__all__ = ["add_commands", "run_interval", "run_mc_error", "run_replicate", "run_spread"]


def _check_seed(seed: int) -> None:
    if seed < 0:
        raise MethodError(f"--seed: expected a non-negative int, found {seed}")


def _write_json(path: str | Path, document: dict[str, Any]) -> None:
    from samplewright.store.atomic import write_text

    write_text(path, json.dumps(document, indent=2, sort_keys=True, allow_nan=False) + "\n")


def _finite_or_none(v: float | None) -> float | None:
    import math

    return None if v is None or not math.isfinite(v) else float(v)


def _read(args: argparse.Namespace) -> tuple[Any, dict[str, Any]]:
    """The data column and a plain-JSON description of where it came from."""
    from samplewright.store.fingerprints import fingerprint_column
    from samplewright.store.snapshots import read_data

    data, snap = read_data(args.data, args.column, **reading(args))
    fp = fingerprint_column(data)
    check_expected(str(args.data), fp, args.expect_fingerprint)
    origin = {
        "source": snap["source"] if snap else str(args.data),
        "column": snap["column"] if snap else args.column,
        "read_from": str(args.data),
        "fingerprint": fp,
        "n_obs": data.n,
        "weighted": data.weights is not None,
        "censored": int(data.censored.sum()) if data.censored is not None else 0,
    }
    return data, origin


def _interval_items(args: argparse.Namespace) -> list[dict[str, Any]]:
    """The intervals asked for: ``--items`` (a JSON list, as the workflow config holds them) or
    ``--statistic`` with the shared options; each item with every field filled in."""
    if (args.items is None) == (args.statistic is None):
        raise MethodError("interval: give exactly one of --items or --statistic")
    if args.statistic is not None:
        raw: Any = [
            {
                "statistic": text,
                "method": args.method,
                "confidence_level": args.confidence,
                "scheme": args.scheme,
                "block_length": args.block_length,
                "n_resamples": args.resamples,
            }
            for text in args.statistic
        ]
    else:
        try:
            raw = json.loads(args.items)
        except ValueError as exc:
            raise MethodError(f"--items: expected a JSON list of intervals ({exc})") from None
        if not isinstance(raw, list) or not raw or not all(isinstance(i, dict) for i in raw):
            raise MethodError(f"--items: expected a non-empty JSON list of objects, found {raw!r}")
    items = []
    for item in raw:
        unknown = sorted(set(item) - set(_ITEM_DEFAULTS))
        if unknown or "statistic" not in item:
            raise MethodError(
                f"--items: each interval needs 'statistic' and may have "
                f"{', '.join(k for k in _ITEM_DEFAULTS if k != 'statistic')}; found {item!r}"
            )
        full = {**_ITEM_DEFAULTS, **item}
        block = full["block_length"]
        if full["scheme"] == "iid" and block == "auto":
            full["block_length"] = None  # 'auto' (the config's default) means none for iid
        elif isinstance(block, str) and block != "auto":
            try:
                full["block_length"] = float(block)
            except ValueError:
                raise MethodError(
                    f"--block-length: expected a number or 'auto', found {block!r}"
                ) from None
        items.append(full)
    return items


_ITEM_DEFAULTS: dict[str, Any] = {
    "statistic": None,
    "method": "bca",
    "confidence_level": 0.95,
    "scheme": "iid",
    "block_length": None,
    "n_resamples": 9999,
}


def run_interval(args: argparse.Namespace) -> int:
    """Bootstrap intervals of statistics of a column; write them as JSON.

    Each interval's stream is the root seed and ``--stream`` names followed by ``"interval"``
    and the canonical JSON of the interval's settings, so adding, removing or reordering
    intervals never changes another one's numbers.
    """
    _check_seed(args.seed)
    check_outputs({"--out": args.out}, [args.data])
    from samplewright.core.canonical import canonical_json
    from samplewright.core.progress import progress_label
    from samplewright.core.randomness import stream_rng
    from samplewright.resample.intervals import bootstrap_interval

    items = _interval_items(args)
    data, origin = _read(args)
    if origin["censored"]:
        raise MethodError(
            f"--censor: {origin['censored']} rows are censored; bootstrap intervals of a "
            "statistic of the values need every value observed (use 'replicate' with a method "
            "that handles censoring)"
        )
    streams = args.stream or [origin["column"]]
    results = []
    for i, item in enumerate(items, 1):
        label = f"{origin['column']} {item['statistic']} ({i}/{len(items)})"
        with warnings.catch_warnings(record=True) as caught, progress_label(label):
            warnings.simplefilter("always")
            r = bootstrap_interval(
                data.values,
                item["statistic"],
                method=item["method"],
                confidence_level=item["confidence_level"],
                n_resamples=item["n_resamples"],
                scheme=item["scheme"],
                block_length=item["block_length"],
                weights=data.weights,
                rng=stream_rng(args.seed, *streams, "interval", canonical_json(item)),
            )
        notes = list(r.warnings) + [
            str(w.message) for w in caught if str(w.message) not in r.warnings
        ]
        for text in notes:
            print(f"samplewright: warning: column {origin['column']!r}: {text}", file=sys.stderr)
        results.append(
            {
                "statistic": r.statistic,
                "estimate": r.estimate,
                "low": r.low,
                "high": r.high,
                "standard_error": r.standard_error,
                "method": r.method,
                "confidence_level": r.confidence_level,
                "n_resamples": r.n_resamples,
                "scheme": r.scheme,
                "block_length": r.block_length,
                "bias_correction": _finite_or_none(r.bias_correction),
                "acceleration": _finite_or_none(r.acceleration),
                "warnings": notes,
            }
        )
    document = {
        "format": "samplewright-intervals",
        "data": origin,
        "key": args.key,
        "seed": args.seed,
        "stream": streams,
        "intervals": results,
    }
    _write_json(args.out, document)
    for row in results:
        print(
            f"{args.out}: {row['statistic']} {row['estimate']:.6g} "
            f"[{row['low']:.6g}, {row['high']:.6g}]"
        )
    return 0


def run_replicate(args: argparse.Namespace) -> int:
    """Fit a method and its parameter replicates; write them as one ensemble artifact."""
    _check_seed(args.seed)
    check_outputs({"--out": args.out}, [args.data])
    from samplewright.core.progress import progress_label
    from samplewright.core.randomness import stream_rng
    from samplewright.fitting.replicates import fit_replicates
    from samplewright.store.artifacts import write_sampler

    method, options = _method_and_options(args)
    data, origin = _read(args)
    streams = args.stream or [origin["column"]]
    try:
        with progress_label(f"{origin['column']} {method}"):
            ens = fit_replicates(
                data.values,
                method,
                n_replicates=args.replicates,
                kind=args.kind,
                weights=data.weights,
                censored=data.censored,
                rng=stream_rng(args.seed, *streams, "replicates", method),
                **options,
            )
    except SamplewrightError as exc:
        raise type(exc)(f"column {origin['column']!r} in {origin['source']}: {exc}") from None
    write_sampler(
        ens,
        args.out,
        fingerprint=origin["fingerprint"],
        key=args.key,
        data={k: origin[k] for k in ("n_obs", "weighted", "censored")},
        diagnostics=ens.diagnostics,
        provenance={
            "source": origin["source"],
            "column": origin["column"],
            "read_from": origin["read_from"],
            "options": options,
            "method_from": None if args.method_from is None else str(args.method_from),
            "seed": args.seed,
            "stream": streams,
        },
    )
    p = ens.params
    print(
        f"{args.out}: {method}, {p['n_replicates']} {p['replication']} replicates "
        f"({p['n_failed']} of {p['n_requested']} fits failed)"
    )
    return 0


def _method_and_options(args: argparse.Namespace) -> tuple[str, dict[str, Any]]:
    """``--method`` with ``--option``s, or the method and options an artifact was fitted with
    (``--method-from``, e.g. the workflow's selected sampler)."""
    if (args.method is None) == (args.method_from is None):
        raise MethodError("replicate: give exactly one of --method or --method-from")
    if args.method is not None:
        return args.method, dict(parse_option(o) for o in args.option or [])
    if args.option:
        raise MethodError("--option: the options come from --method-from's artifact")
    from samplewright.store.artifacts import read_metadata

    meta = read_metadata(args.method_from)
    options = (meta.get("provenance") or {}).get("options") or {}
    method = str(meta["sampler"]["method"])
    if method == "auto":  # replicate the family auto chose, not the whole ranking per replicate
        family = meta["sampler"].get("family")
        if not isinstance(family, str):
            raise MethodError(f"--method-from {args.method_from}: an 'auto' sampler without family")
        return family, {}
    return method, dict(options)


def run_spread(args: argparse.Namespace) -> int:
    """The candidates' key figures and their spread, as Markdown (``.md``) or JSON."""
    out = Path(args.out)
    if out.suffix.lower() not in (".md", ".json"):
        raise MethodError(f"--out: expected a .md or .json file, found {out.name!r}")
    labels = args.label or []
    if labels and len(labels) != len(args.artifacts):
        raise MethodError(
            f"--label: expected one per artifact ({len(args.artifacts)}), found {len(labels)}"
        )
    pairs = [_pair(text) for text in args.ensemble or []]
    check_outputs({"--out": out}, [*args.artifacts, *(p for _, p in pairs)])
    from samplewright.check.candidate_spread import (
        candidate_spread,
        render_candidate_spread_markdown,
    )
    from samplewright.check.report_model import KEY_PROBABILITIES
    from samplewright.distributions.ensemble import EnsembleSampler
    from samplewright.store.artifacts import load_sampler

    samplers = [load_sampler(a) for a in args.artifacts]
    labels = labels or [s.method for s in samplers]
    ensembles: list[EnsembleSampler | None] = [None] * len(samplers)
    for label, path in pairs:
        if label not in labels:
            raise MethodError(f"--ensemble: no candidate labelled {label!r} (labels: {labels})")
        ens = load_sampler(path)
        if not isinstance(ens, EnsembleSampler):
            raise MethodError(f"--ensemble {path}: expected an ensemble artifact, found {ens.kind}")
        ensembles[labels.index(label)] = ens
    result = candidate_spread(
        samplers,
        labels,
        probabilities=args.probability or KEY_PROBABILITIES,
        tail_level=args.tail_level,
        ensembles=ensembles,
        confidence_level=args.confidence,
    )
    from samplewright.store.atomic import write_text

    if out.suffix.lower() == ".md":
        write_text(out, render_candidate_spread_markdown(result) + "\n")
    else:
        _write_json(out, _spread_document(result))
    worst = max(result.spread, key=lambda s: s.difference)
    print(f"{out}: widest spread in {worst.figure}: {worst.smallest:.6g} to {worst.largest:.6g}")
    return 0


def _pair(text: str) -> tuple[str, str]:
    label, sep, path = text.partition("=")
    if not sep or not label or not path:
        raise MethodError(f"--ensemble: expected LABEL=PATH, found {text!r}")
    return label, path


def _spread_document(result: Any) -> dict[str, Any]:
    return {
        "format": "samplewright-candidate-spread",
        "figures": list(result.figures),
        "confidence_level": result.confidence_level,
        "candidates": [
            {
                "label": c.label,
                "figures": {k: _finite_or_none(v) for k, v in c.figures.items()},
                "intervals": {
                    k: [_finite_or_none(ci.low), _finite_or_none(ci.high)]
                    for k, ci in c.intervals.items()
                },
                "n_replicates": c.n_replicates,
            }
            for c in result.candidates
        ],
        "spread": [
            {
                "figure": s.figure,
                "smallest": _finite_or_none(s.smallest),
                "largest": _finite_or_none(s.largest),
                "smallest_label": s.smallest_label,
                "largest_label": s.largest_label,
                "ratio": _finite_or_none(s.ratio),
            }
            for s in result.spread
        ],
    }


def run_mc_error(args: argparse.Namespace) -> int:
    """Monte Carlo errors of statistics of simulated draws; write them as JSON."""
    check_outputs({"--out": args.out}, [args.draws])
    from samplewright.check.mc_error import mc_error
    from samplewright.store.snapshots import read_data

    data, _ = read_data(args.draws, args.column)
    rows = []
    for text in args.statistic:
        r = mc_error(
            data.values,
            text,
            confidence_level=args.confidence,
            target_relative_error=args.target,
        )
        rows.append(
            {
                "statistic": r.statistic,
                "estimate": r.estimate,
                "standard_error": r.standard_error,
                "low": r.low,
                "high": r.high,
                "n_draws": r.n_draws,
                "n_draws_needed": r.n_draws_needed,
                "confidence_level": r.confidence_level,
            }
        )
    _write_json(
        args.out,
        {
            "format": "samplewright-mc-error",
            "draws": str(args.draws),
            "column": args.column,
            "target_relative_error": args.target,
            "errors": rows,
        },
    )
    for row in rows:
        print(f"{args.out}: {row['statistic']} {row['estimate']:.6g} ± {row['standard_error']:.3g}")
    return 0


def add_commands(sub: Any) -> None:
    """Add ``interval``, ``replicate``, ``spread`` and ``mc-error`` to the subcommands ``sub``."""
    stat_help = "mean, std, quantile:P, tail_mean:P or exceedance:VALUE; repeatable"
    p = sub.add_parser("interval", help="bootstrap confidence intervals of statistics of a column")
    add_data_args(p, column_required=False)
    p.add_argument("--statistic", "-s", action="append", help=stat_help)
    p.add_argument(
        "--items",
        metavar="JSON",
        help="instead of --statistic: a JSON list of {statistic, method, confidence_level, "
        "scheme, block_length, n_resamples} (the workflow config's form)",
    )
    p.add_argument("--method", "-m", choices=INTERVAL_METHODS, default="bca", help="default: bca")
    p.add_argument("--confidence", type=float, default=0.95, help="two-sided level (0.95)")
    p.add_argument("--resamples", type=int, default=9999, help="bootstrap resamples (9999)")
    p.add_argument("--scheme", choices=SCHEMES, default="iid", help="index scheme (iid)")
    p.add_argument(
        "--block-length", help="block length of a block scheme: a number or 'auto' (Politis-White)"
    )
    _add_stream_args(p)
    p.add_argument("--out", required=True, help="JSON file")
    p.add_argument("--key", help="content key to record (set by the workflow rules)")
    p.add_argument("--expect-fingerprint", help="fail unless the data has this fingerprint")
    p.set_defaults(func=run_interval)

    p = sub.add_parser("replicate", help="parameter replicates of a method as one artifact")
    add_data_args(p, column_required=False)
    p.add_argument("--method", "-m", help="a method fit knows (e.g. lognormal)")
    p.add_argument(
        "--method-from",
        metavar="ARTIFACT",
        help="instead of --method: an artifact's method and options",
    )
    p.add_argument("--replicates", type=int, default=200, help="replicate fits (200)")
    p.add_argument(
        "--kind", choices=REPLICATIONS, default="nonparametric", help="default: nonparametric"
    )
    p.add_argument(
        "--option", "-o", action="append", metavar="KEY=VALUE", help="method option, repeatable"
    )
    _add_stream_args(p)
    p.add_argument("--out", required=True, help="artifact path (.parquet)")
    p.add_argument("--key", help="content key to record (set by the workflow rules)")
    p.add_argument("--expect-fingerprint", help="fail unless the data has this fingerprint")
    p.set_defaults(func=run_replicate)

    p = sub.add_parser("spread", help="how much the choice among candidate samplers matters")
    p.add_argument("artifacts", nargs="+", help="candidate sampler artifacts")
    p.add_argument("--label", action="append", help="candidate label, one per artifact")
    p.add_argument(
        "--ensemble", action="append", metavar="LABEL=PATH", help="replicates of a candidate"
    )
    p.add_argument("--probability", "-p", type=float, action="append", help="quantile level")
    p.add_argument("--tail-level", type=float, default=0.99, help="tail mean level (0.99)")
    p.add_argument("--confidence", type=float, default=0.95, help="interval level (0.95)")
    p.add_argument("--out", required=True, help=".md (a table) or .json")
    p.set_defaults(func=run_spread)

    p = sub.add_parser("mc-error", help="Monte Carlo errors of statistics of simulated draws")
    p.add_argument("draws", help="draws file (.parquet or .csv)")
    p.add_argument("--column", "-c", default="value", help="column of the draws (value)")
    p.add_argument("--statistic", "-s", action="append", required=True, help=stat_help)
    p.add_argument("--confidence", type=float, default=0.95, help="interval level (0.95)")
    p.add_argument("--target", type=float, help="wanted standard error / |estimate|")
    p.add_argument("--out", required=True, help="JSON file")
    p.set_defaults(func=run_mc_error)


def _add_stream_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("--seed", type=int, default=0, help="root seed, a non-negative int (0)")
    p.add_argument(
        "--stream", action="append", help="stream name under the root seed (default: the column)"
    )
