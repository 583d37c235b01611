"""The ``draw`` command: draws from an artifact into a Parquet or CSV file."""

from __future__ import annotations

import argparse
import json
import os
from pathlib import Path
from typing import Any

from samplewright.core.errors import MethodError
from samplewright.pipeline.cli.common import check_outputs

__all__ = ["DRAWS_KEY", "add_commands", "run_draw"]

DRAWS_KEY = b"samplewright-draws"
_BYTES_PER_DRAW = 24  # the values, the uniforms behind them and a copy while writing


def _memory_bytes() -> int | None:
    try:
        return int(os.sysconf("SC_PAGE_SIZE")) * int(os.sysconf("SC_PHYS_PAGES"))
    except (OSError, ValueError, AttributeError):  # pragma: no cover - not POSIX
        return None


def _check_count(n: int) -> None:
    if n < 0:
        raise MethodError(f"-n: expected a count >= 0, found {n}")
    total = _memory_bytes()
    if total is not None and n * _BYTES_PER_DRAW > total:
        raise MethodError(
            f"-n: {n} draws need about {n * _BYTES_PER_DRAW / 1e9:.3g} GB of memory, more than "
            f"this machine has ({total / 1e9:.3g} GB); draw in parts with several streams"
        )


def run_draw(args: argparse.Namespace) -> int:
    """Draw ``-n`` values from an artifact with a stream of the root seed; write them."""
    _check_count(args.n)
    if args.seed < 0:
        raise MethodError(f"--seed: expected a non-negative int, found {args.seed}")
    out = Path(args.out)
    if out.suffix.lower() not in (".parquet", ".csv"):
        raise MethodError(f"--out: expected a .parquet or .csv file, found {out.name!r}")
    check_outputs({"--out": out}, [args.artifact])

    import numpy as np

    from samplewright.core.randomness import stream_rng
    from samplewright.store.artifacts import load_sampler

    sampler = load_sampler(args.artifact)
    streams = args.stream or ["draws"]
    try:
        values = sampler.draw(args.n, rng=stream_rng(args.seed, *streams))
    except MemoryError:
        raise MethodError(f"-n: not enough memory for {args.n} draws") from None
    if out.suffix.lower() == ".csv":
        import pandas as pd

        from samplewright.store.atomic import atomic_write

        frame = pd.DataFrame({"value": values})
        atomic_write(out, lambda tmp: frame.to_csv(tmp, index=False))
    else:
        import pyarrow as pa

        from samplewright.store.tables import write_table

        meta = sampler.metadata
        record = {
            "artifact": str(args.artifact),
            "content_hash": meta["content_hash"],
            "seed": args.seed,
            "stream": streams,
            "n": args.n,
        }
        write_table(out, pa.table({"value": values}), {DRAWS_KEY: json.dumps(record).encode()})
    print(f"{out}: {args.n} draws, mean {np.mean(values) if args.n else float('nan'):.6g}")
    return 0


def add_commands(sub: Any) -> None:
    """Add ``draw`` to the subcommand parsers ``sub``."""
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
    p.set_defaults(func=run_draw)
