"""The ``draw`` command: draws from an artifact into a Parquet or CSV file.

Uniforms come from the stream ``--seed``/``--stream`` (a root seed and stable names) and, with
``--sequence``, from a scrambled quasi-random sequence (sobol, halton, latin_hypercube) instead of
plain pseudo-random numbers; every sampler turns them into draws by its quantile function. Plain
``random`` draws keep each sampler's native path, so their values are what they always were. A
joint artifact gives one column per input (named as the input); any other gives ``value``.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path
from typing import Any

from samplewright.core.errors import MethodError
from samplewright.pipeline.choices import SEQUENCES
from samplewright.pipeline.cli.common import check_outputs, notes

__all__ = ["DRAWS_KEY", "add_commands", "draw_columns", "run_draw"]

DRAWS_KEY = b"samplewright-draws"
_BYTES_PER_DRAW = 24  # the values, the uniforms behind them and a copy while writing


def _memory_bytes() -> int | None:
    try:
        return int(os.sysconf("SC_PAGE_SIZE")) * int(os.sysconf("SC_PHYS_PAGES"))
    except (OSError, ValueError, AttributeError):  # pragma: no cover - not POSIX
        return None


def _check_count(n: int, width: int = 1) -> None:
    if n < 0:
        raise MethodError(f"-n: expected a count >= 0, found {n}")
    need = n * _BYTES_PER_DRAW * width
    total = _memory_bytes()
    if total is not None and need > total:
        raise MethodError(
            f"-n: {n} draws need about {need / 1e9:.3g} GB of memory, more than "
            f"this machine has ({total / 1e9:.3g} GB); draw in parts with several streams"
        )


class _Points:
    """A uniform source handing out precomputed points (quasi-random draws of 1-d samplers)."""

    def __init__(self, u: Any) -> None:
        self.u = u

    def uniforms(self, shape: tuple[int, ...]) -> Any:
        return self.u.reshape(shape)


def draw_columns(sampler: Any, n: int, rng: Any, sequence: str = "random") -> dict[str, Any]:
    """``n`` draws of ``sampler`` as named columns: one per input of a joint sampler, else
    ``value``. Uniforms come from ``rng`` and, unless ``sequence`` is ``random``, from that
    quasi-random sequence (scrambled with ``rng``)."""
    # Whoever made a joint sampler loaded its module: looking it up rather than importing it
    # keeps scipy (~1 s of start-up) out of a plain draw from a 1-d artifact.
    joint = sys.modules.get("samplewright.distributions.joint")
    if joint is not None and isinstance(sampler, joint.JointSampler):
        values = sampler.draw(n, rng=rng, sequence=sequence)
        return {c: values[:, j] for j, c in enumerate(sampler.columns)}
    if sequence == "random":
        return {"value": sampler.draw(n, rng=rng)}
    from samplewright.core.uniforms import draw_uniforms  # scipy.stats.qmc

    u = draw_uniforms(n, rng=rng, sequence=sequence)  # type: ignore[arg-type]
    return {"value": sampler.draw(n, rng=_Points(u))}


def _arrow_table(columns: dict[str, Any]) -> Any:
    """The draws as an Arrow table, numeric columns over their numpy memory. The same table as
    ``pa.table(columns)``, which in pyarrow 26 imports pandas (~0.4 s) to inspect the arrays."""
    import numpy as np
    import pyarrow as pa

    arrays = {}
    for name, values in columns.items():
        a = np.ascontiguousarray(values)
        if a.ndim == 1 and a.dtype.kind in "fiu" and a.dtype.isnative:
            buffers = [None, pa.py_buffer(a)]
            arrays[name] = pa.Array.from_buffers(pa.from_numpy_dtype(a.dtype), a.size, buffers)
        else:
            arrays[name] = pa.array(a)
    return pa.table(arrays)


def run_draw(args: argparse.Namespace) -> int:
    """Draw ``-n`` values from an artifact with a stream of the root seed; write them."""
    if args.n < 0:
        raise MethodError(f"-n: expected a count >= 0, found {args.n}")
    if args.seed < 0:
        raise MethodError(f"--seed: expected a non-negative int, found {args.seed}")
    out = Path(args.out)
    if out.suffix.lower() not in (".parquet", ".csv"):
        raise MethodError(f"--out: expected a .parquet or .csv file, found {out.name!r}")
    check_outputs({"--out": out}, [args.artifact])

    import numpy as np

    from samplewright.core.randomness import stream_rng
    from samplewright.store.artifacts import load_sampler

    sampler: Any = load_sampler(args.artifact)
    width = len(getattr(sampler, "columns", ())) or 1
    _check_count(args.n, width + 1)  # a t copula takes one uniform more than it has columns
    streams = args.stream or ["draws"]
    try:
        with notes():  # e.g. a Sobol' size that is not a power of two
            columns = draw_columns(sampler, args.n, stream_rng(args.seed, *streams), args.sequence)
    except MemoryError:
        raise MethodError(f"-n: not enough memory for {args.n} draws") from None
    if out.suffix.lower() == ".csv":
        import pandas as pd

        from samplewright.store.atomic import atomic_write

        frame = pd.DataFrame(columns)
        atomic_write(out, lambda tmp: frame.to_csv(tmp, index=False))
    else:
        from samplewright.store.tables import write_table

        meta = sampler.metadata
        record = {
            "artifact": str(args.artifact),
            "content_hash": meta["content_hash"],
            "seed": args.seed,
            "stream": streams,
            "n": args.n,
        }
        if args.sequence != "random":  # draws files written before sequences existed: unchanged
            record["sequence"] = args.sequence
        write_table(out, _arrow_table(columns), {DRAWS_KEY: json.dumps(record).encode()})
    means = ", ".join(
        f"{name} {np.mean(v) if args.n else float('nan'):.6g}" for name, v in columns.items()
    )
    label = "mean" if list(columns) == ["value"] else "means"
    print(f"{out}: {args.n} draws, {label} {means.removeprefix('value ')}")
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
    p.add_argument(
        "--sequence",
        choices=SEQUENCES,
        default="random",
        help="source of the uniforms: random (default) or a scrambled quasi-random sequence",
    )
    p.add_argument(
        "--out",
        required=True,
        help="output file: .parquet or .csv (column 'value'; a joint artifact: one per input)",
    )
    p.set_defaults(func=run_draw)
