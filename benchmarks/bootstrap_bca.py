#!/usr/bin/env python3
"""BCa bootstrap intervals: samplewright's bootstrap_interval against scipy.stats.bootstrap.

Two rows: BCa on the mean and on the 0.99-quantile (``method="inverted_cdf"`` on scipy's side,
the definition of samplewright's ``quantile:0.99``), n = 1e5 values, 9,999 resamples. scipy runs
with ``batch=100`` (unbatched, its jackknife index array alone would need ~75 GiB at this n);
samplewright picks its batch itself. The runs are interleaved A B A B (ours, scipy, ours, scipy,
...) in the same process, and each row reports scipy's median time (the baseline) and the median
of the per-pair time ratios ours / scipy; the target is a ratio of at most 0.5.

Most of scipy's time goes to its O(n^2) jackknife (n leave-one-out samples of n - 1 values);
samplewright gets the mean's acceleration in closed form and the quantile's from a grouped
jackknife (100 groups), so the two also differ in the quantile's interval by the acceleration's
estimate; the printed ends let one compare.

Data: lognormal values from numpy's Generator with a fixed seed (benchmark data, not a reference).

    python benchmarks/bootstrap_bca.py [--quick] [--repeat 2]

``--quick`` uses n = 1e4 and 999 resamples (seconds instead of minutes).
"""

from __future__ import annotations

import argparse
import statistics
import time
from collections.abc import Callable
from typing import Any

import numpy as np
from scipy import stats

from samplewright.resample.intervals import bootstrap_interval

TARGET = 0.5


def _quantile_99(sample: np.ndarray, axis: int = -1) -> np.ndarray:
    return np.quantile(sample, 0.99, axis=axis, method="inverted_cdf")


CASES: list[tuple[str, str, Callable[..., Any]]] = [
    ("mean", "mean", np.mean),
    ("quantile:0.99", "quantile:0.99", _quantile_99),
]


def _timed(fn: Callable[..., Any], *args: Any, **kwargs: Any) -> tuple[float, Any]:
    t0 = time.perf_counter()
    out = fn(*args, **kwargs)
    return time.perf_counter() - t0, out


def main(quick: bool, repeat: int = 2) -> list[dict[str, Any]]:
    """Run the comparison; print and return one row per statistic."""
    n, n_resamples = (10_000, 999) if quick else (100_000, 9999)
    x = np.random.default_rng(20240601).lognormal(size=n)
    rows = []
    for label, name, func in CASES:
        ours_t, base_t, ratios = [], [], []
        ours_ci = base_ci = (float("nan"), float("nan"))
        for k in range(repeat):
            t_a, r = _timed(bootstrap_interval, x, name, n_resamples=n_resamples, rng=k)
            t_b, s = _timed(
                stats.bootstrap,
                (x,),
                func,
                method="bca",
                n_resamples=n_resamples,
                batch=100,
                rng=k,
            )
            ours_t.append(t_a)
            base_t.append(t_b)
            ratios.append(t_a / t_b)
            ours_ci = (r.low, r.high)
            base_ci = (s.confidence_interval.low, s.confidence_interval.high)
        row = {
            "name": f"bca {label} n={n} B={n_resamples}",
            "baseline": f"scipy.stats.bootstrap BCa, batch=100 ({statistics.median(base_t):.1f} s)",
            "ratio": statistics.median(ratios),
            "target": TARGET,
            "baseline_s": statistics.median(base_t),
            "ours_s": statistics.median(ours_t),
        }
        rows.append(row)
        print(
            f"{row['name']} | {row['baseline_s']:.2f} s | {row['ratio']:.3f}"
            f"   (ours {statistics.median(ours_t):.2f} s; ends ours"
            f" {ours_ci[0]:.5g}..{ours_ci[1]:.5g}, scipy {base_ci[0]:.5g}..{base_ci[1]:.5g})",
            flush=True,
        )
    return rows


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="n = 1e4, 999 resamples")
    parser.add_argument("--repeat", type=int, default=2, help="A B pairs per row (default 2)")
    args = parser.parse_args()
    main(args.quick, args.repeat)
