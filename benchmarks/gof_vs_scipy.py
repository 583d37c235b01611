#!/usr/bin/env python3
"""Goodness-of-fit bootstrap: samplewright.goodness_of_fit against scipy.stats.goodness_of_fit.

Both fit the family to the data by maximum likelihood, draw B replicates from the fit, refit every
replicate and compare the observed statistic with the replicates' (a parametric bootstrap, the
p-value being ``(1 + #{T* >= T}) / (1 + B)`` in both). The location is fixed at 0 on both sides
(ours by default, scipy's ``known_params``); the other parameters are estimated.

samplewright computes KS, AD and CvM from one set of replicates in one call; scipy computes one
statistic per call. The baseline is therefore scipy called once per statistic (ks, ad, cvm), its
time the sum of the three calls. Ours and the baseline run alternately (A B A B, after one
warm-up of each) and the row's ratio is the median of the per-pair ratios ours / baseline
(:mod:`_timing`). The p-values of both sides are printed with the Monte Carlo standard error of
their difference (they agree only up to Monte Carlo error; ``tests/unit/test_batch_fits.py``
checks that).

Data: generated with numpy's Generator from a fixed seed (benchmark data, not a reference).

    python benchmarks/gof_vs_scipy.py [--quick] [--families gamma,lognormal,weibull]
                                      [--size 1000] [--resamples 999] [--repeat 3]
"""

from __future__ import annotations

import argparse
import math
import warnings
from collections.abc import Callable
from typing import Any

import numpy as np
import scipy
from _timing import interleaved_ratio, row
from scipy import stats

from samplewright.check.gof import goodness_of_fit

STATS = ("ks", "ad", "cvm")
TARGET = "<= 0.05"
BASELINE = f"scipy {scipy.__version__} goodness_of_fit, 3 calls (ks, ad, cvm)"

# family -> (scipy distribution, data generator)
CASES: dict[str, tuple[Any, Callable[[np.random.Generator, int], np.ndarray]]] = {
    "gamma": (stats.gamma, lambda g, n: g.gamma(2.0, 3.0, n)),
    "lognormal": (stats.lognorm, lambda g, n: g.lognormal(1.0, 0.6, n)),
    "weibull": (stats.weibull_min, lambda g, n: 2.0 * g.weibull(1.5, n)),
    "normal": (stats.norm, lambda g, n: g.normal(10.0, 2.0, n)),
    "exponential": (stats.expon, lambda g, n: g.exponential(3.0, n)),
}
DEFAULT_FAMILIES = ("gamma", "lognormal", "weibull")


def _scipy_calls(family: str, x: np.ndarray, n_resamples: int, seed: int) -> dict[str, Any]:
    """scipy's three calls (one per statistic), same seed for each."""
    dist = CASES[family][0]
    known = None if family == "normal" else {"loc": 0.0}
    out = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # scipy's optimiser on replicates
        for s in STATS:
            out[s] = stats.goodness_of_fit(
                dist, x, known_params=known, statistic=s, n_mc_samples=n_resamples, rng=seed
            )
    return out


def compare(family: str, n: int, n_resamples: int, repeat: int, seed: int = 0) -> dict[str, Any]:
    """Time ours against the three scipy calls on one data set; one table row."""
    x = CASES[family][1](np.random.default_rng([seed, n]), n)
    got: dict[str, Any] = {}

    def ours() -> None:
        got["ours"] = goodness_of_fit(x, family, n_resamples=n_resamples, rng=seed)

    def theirs() -> None:
        got["scipy"] = _scipy_calls(family, x, n_resamples, seed)

    timing = interleaved_ratio(theirs, ours, repeat=repeat)
    pv_ours = got["ours"].pvalues
    pv_scipy = {s: float(got["scipy"][s].pvalue) for s in STATS}
    worst = max(
        abs(pv_ours[s] - pv_scipy[s])
        / math.sqrt(2.0 * max(pv_scipy[s] * (1.0 - pv_scipy[s]), 1e-3) / n_resamples)
        for s in STATS
    )
    full = n >= 1000 and n_resamples >= 999
    return row(
        f"goodness of fit {family}, n={n}, B={n_resamples}, ks+ad+cvm",
        BASELINE,
        timing["ratio"],
        TARGET if full else f"(quick size; {TARGET} at n=1000, B=999)",
        ours_s=timing["candidate_s"],
        baseline_s=timing["baseline_s"],
        cpu_ratio=timing["cpu_ratio"],
        ours_cpu_s=timing["candidate_cpu_s"],
        baseline_cpu_s=timing["baseline_cpu_s"],
        pvalues_ours=pv_ours,
        pvalues_scipy=pv_scipy,
        worst_pvalue_gap_in_se=worst,
    )


def rows(
    quick: bool,
    families: tuple[str, ...] = DEFAULT_FAMILIES,
    size: int | None = None,
    n_resamples: int | None = None,
    repeat: int | None = None,
) -> list[dict[str, Any]]:
    """One row per family; quick: n = 200, B = 49, one pair (seconds), else n = 1000, B = 999."""
    n = size or (200 if quick else 1000)
    b = n_resamples or (49 if quick else 999)
    r = repeat or (1 if quick else 3)
    out = []
    for family in families:
        res = compare(family, n, b, r)
        out.append(res)
        pv = "  ".join(
            f"{s} {res['pvalues_ours'][s]:.3f}|{res['pvalues_scipy'][s]:.3f}" for s in STATS
        )
        print(
            f"  {family:<12} ours {res['ours_s']:.3f} s, scipy {res['baseline_s']:.3f} s, "
            f"ratio {res['ratio']:.4f} (CPU {res['ours_cpu_s']:.3f} s / "
            f"{res['baseline_cpu_s']:.3f} s = {res['cpu_ratio']:.4f}); p ours|scipy {pv} "
            f"(largest gap {res['worst_pvalue_gap_in_se']:.1f} SE)",
            flush=True,
        )
    return out


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="n = 200, B = 49, one pair")
    ap.add_argument("--families", default=",".join(DEFAULT_FAMILIES), help=", ".join(CASES))
    ap.add_argument("--size", type=int, default=None, help="sample size (default 1000)")
    ap.add_argument("--resamples", type=int, default=None, help="replicates B (default 999)")
    ap.add_argument("--repeat", type=int, default=None, help="timed A B pairs (default 3)")
    args = ap.parse_args(argv)
    families = tuple(f.strip() for f in args.families.split(",") if f.strip())
    unknown = sorted(set(families) - set(CASES))
    if unknown:
        ap.error(f"--families: unknown {unknown[0]!r}; expected some of {', '.join(CASES)}")
    print(f"baseline: {BASELINE}; ratio = ours / baseline, median of A B pairs")
    for r in rows(args.quick, families, args.size, args.resamples, args.repeat):
        print(f"{r['name']} | {r['baseline']} | {r['ratio']:.4f} | {r['target']}")


if __name__ == "__main__":
    main()
