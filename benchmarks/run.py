"""Run every benchmark and print one table of ratios, each row naming its baseline.

    python3 dev.py bench            full sizes (minutes)
    python3 dev.py bench --quick    small sizes (CI runs this so the benchmarks cannot rot)

Each benchmark module exposes ``rows(quick: bool) -> list[dict]`` (or ``main(quick)``) whose rows
carry ``name``, ``baseline``, ``ratio`` (ours / baseline, in time unless the row says otherwise) and
``target``. Baselines are measured in the same run, interleaved with ours (A B A B), and the
median ratio is reported: absolute times drift from machine to machine, ratios much less. Rows
timed by :func:`_timing.interleaved_ratio` also carry the median ratio of CPU times (``cpu
ratio``), which other jobs on the machine hardly move (see there).
"""

from __future__ import annotations

import argparse
import importlib
import inspect
import sys
import time
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
# The benchmarks in the table, in order; each is a module in this folder.
BENCHMARKS = (
    "startup",
    "intake",
    "fitting",
    "gof_vs_scipy",
    "auto",
    "sampling",
    "artifacts",
    "bootstrap_bca",
)


def _collect(name: str, quick: bool) -> list[dict[str, Any]]:
    module = importlib.import_module(name)
    fn = getattr(module, "rows", None)
    if fn is None:
        fn = module.main
        if not inspect.signature(fn).parameters:
            raise SystemExit(f"benchmarks/{name}.py: main() takes no 'quick' argument")
    return list(fn(quick))


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="small sizes, for CI")
    ap.add_argument("--only", default="", help="comma-separated benchmark names")
    args = ap.parse_args(argv)
    sys.path.insert(0, str(HERE))
    wanted = [b for b in BENCHMARKS if not args.only or b in args.only.split(",")]
    table: list[dict[str, Any]] = []
    for name in wanted:
        if not (HERE / f"{name}.py").exists():
            print(f"bench: {name}.py not present, skipped", flush=True)
            continue
        t0 = time.perf_counter()
        got = _collect(name, args.quick)
        print(f"bench: {name} done in {time.perf_counter() - t0:.1f} s", flush=True)
        table += [{"benchmark": name, **r, "baseline": str(r["baseline"])} for r in got]
    width = max([len(r["name"]) for r in table] + [4])
    bwidth = max([len(r["baseline"]) for r in table] + [8])
    print()
    print(
        f"{'what':<{width}} | {'baseline (same run)':<{bwidth}} | {'ratio':>8} | "
        f"{'cpu ratio':>9} | target"
    )
    print(f"{'-' * width}-|-{'-' * bwidth}-|-{'-' * 8}-|-{'-' * 9}-|-------")
    for r in table:
        cpu = f"{r['cpu_ratio']:>9.3g}" if "cpu_ratio" in r else f"{'':>9}"
        print(
            f"{r['name']:<{width}} | {r['baseline']:<{bwidth}} | {r['ratio']:>8.3g} | {cpu} | "
            f"{r['target']}"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
