#!/usr/bin/env python3
"""Method ``auto`` on a large sample: absolute time, and against one scipy fit of each candidate.

``samplewright.fit(x, "auto")`` with its defaults fits the five positive candidates (lognormal,
gamma, weibull, exponential, inverse_gaussian) and runs a 99-replicate bootstrap goodness of fit
for each. The target is absolute (at most 3 s at n = 1e5; rows of its wall and CPU seconds);
since absolute times drift, a row also gives a ratio against a baseline measured in the same
run, interleaved A B A B (median of the per-pair ratios): one
``scipy.stats.<dist>.fit(x, floc=0)`` of each candidate, i.e. what fitting the candidates alone
costs with scipy, without any goodness of fit.

Data: gamma values from numpy's Generator with a fixed seed (benchmark data, not a reference).

    python benchmarks/auto.py [--quick] [--size 100000] [--repeat 3]
"""

from __future__ import annotations

import argparse
import warnings
from typing import Any

import numpy as np
import scipy
from _timing import interleaved_ratio, row
from scipy import stats

import samplewright as sw

TARGET_S = 3.0
# the default candidates of auto for positive data, as scipy distributions
SCIPY_CANDIDATES = (stats.lognorm, stats.gamma, stats.weibull_min, stats.expon, stats.invgauss)


def _scipy_fits(x: np.ndarray) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # scipy's generic optimiser
        for dist in SCIPY_CANDIDATES:
            dist.fit(x, floc=0.0)


def rows(quick: bool, size: int | None = None, repeat: int | None = None) -> list[dict[str, Any]]:
    """Rows of auto at n = 1e5 (quick: 1e4) with default options: the ratio to the scipy fits,
    then its wall and CPU seconds (the target is absolute; the bootstrap runs on two threads,
    so on an idle two-core machine the wall time is about half the CPU time)."""
    n = size or (10_000 if quick else 100_000)
    r = repeat or (1 if quick else 3)
    x = np.random.default_rng(20240602).gamma(2.0, 3.0, n)
    got: dict[str, Any] = {}

    def ours() -> None:
        got["sampler"] = sw.fit(x, "auto")

    timing = interleaved_ratio(lambda: _scipy_fits(x), ours, repeat=r)
    chosen = got["sampler"].diagnostics["auto"]["chosen"]
    target = f"<= {TARGET_S:g} s absolute" if n == 100_000 else "(quick size; target at 1e5)"
    out = row(
        f"auto, n={n}, 5 candidates, 99 replicates each",
        f"scipy {scipy.__version__} fit(floc=0) of the 5 candidates, once each",
        timing["ratio"],
        target,
        ours_s=timing["candidate_s"],
        baseline_s=timing["baseline_s"],
        cpu_ratio=timing["cpu_ratio"],
        ours_cpu_s=timing["candidate_cpu_s"],
        chosen=chosen,
    )
    absolute = [
        row(
            f"auto, n={n}: {kind} time of one fit, seconds",
            "absolute (no baseline)",
            timing[key],
            target,
            unit="s",
        )
        for kind, key in (("wall", "candidate_s"), ("CPU", "candidate_cpu_s"))
    ]
    print(
        f"  auto n={n}: {timing['candidate_s']:.2f} s, {timing['candidate_cpu_s']:.2f} s CPU "
        f"(target {TARGET_S:g} s at 1e5), scipy fits "
        f"{timing['baseline_s']:.2f} s, ratio {timing['ratio']:.2f}; chose {chosen}",
        flush=True,
    )
    return [out, *absolute]


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="n = 1e4, one pair")
    ap.add_argument("--size", type=int, default=None, help="sample size (default 1e5)")
    ap.add_argument("--repeat", type=int, default=None, help="timed A B pairs (default 3)")
    args = ap.parse_args(argv)
    for r in rows(args.quick, args.size, args.repeat):
        print(f"{r['name']} | {r['baseline']} | {r['ratio']:.3f} | {r['target']}")


if __name__ == "__main__":
    main()
