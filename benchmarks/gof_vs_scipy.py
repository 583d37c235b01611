#!/usr/bin/env python3
"""Goodness-of-fit bootstrap: samplewright.goodness_of_fit against scipy.stats.goodness_of_fit.

Both fit the family to the data by maximum likelihood, draw B replicates from the fit, refit every
replicate and compare the observed statistic with the replicates' (a parametric bootstrap, the
p-value being ``(1 + #{T* >= T}) / (1 + B)`` in both). The parameters held fixed are the same on
both sides:

* normal: both estimate mean and sd (scipy's sd uses ``ddof=1``, ours is the MLE, ``ddof=0``);
* exponential, gamma, weibull: location fixed at 0 (ours by default, scipy ``known_params``).

samplewright computes KS, AD and CvM from one set of replicates in one call; scipy computes one
statistic per call. The baseline is therefore scipy called once per statistic (ks, ad, cvm) with
the same integer seed, so its three calls use the same replicates, and its time is the sum of the
three calls. The ratio to one scipy call (the AD call alone) is printed too. Both baselines are
measured in the same run; the p-values of both are printed side by side (they agree only up to
Monte Carlo error, exactly only when both sides happen to draw the same replicates).

Data: generated with numpy's Generator from a fixed seed (benchmark data, not a reference).

    python benchmarks/gof_vs_scipy.py [--sizes 200,2000] [--resamples 199] [--repeat 3]
                                    [--families normal,exponential,gamma,weibull] [--seed 0]
"""

from __future__ import annotations

import argparse
import statistics
import time
import warnings
from collections.abc import Callable
from typing import Any

import numpy as np
import scipy
from scipy import stats

import samplewright as sw

STATS = ("ks", "ad", "cvm")

# family -> (scipy distribution, scipy known_params, data generator, scipy name of our params)
CASES: dict[str, tuple[Any, dict[str, float] | None, Callable[..., np.ndarray], dict[str, str]]] = {
    "normal": (
        stats.norm,
        None,
        lambda g, n: g.normal(10.0, 2.0, n),
        {"mu": "loc", "sigma": "scale"},
    ),
    "exponential": (
        stats.expon,
        {"loc": 0.0},
        lambda g, n: g.exponential(3.0, n),
        {"scale": "scale"},
    ),
    "gamma": (
        stats.gamma,
        {"loc": 0.0},
        lambda g, n: g.gamma(2.0, 3.0, n),
        {"shape": "a", "scale": "scale"},
    ),
    "weibull": (
        stats.weibull_min,
        {"loc": 0.0},
        lambda g, n: 2.0 * g.weibull(1.5, n),
        {"shape": "c", "scale": "scale"},
    ),
}


def timed(fn: Callable[[], Any]) -> tuple[float, Any]:
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def median_timed(repeat: int, fn: Callable[[], Any]) -> tuple[float, Any]:
    runs = [timed(fn) for _ in range(repeat)]
    return statistics.median(t for t, _ in runs), runs[-1][1]


def warm_up(families: list[str]) -> None:
    """One small untimed call per family on both sides (imports, first-call caches)."""
    g = np.random.default_rng(12345)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        for family in families:
            dist, known, gen_data, _ = CASES[family]
            x = gen_data(g, 50)
            sw.goodness_of_fit(x, family, n_resamples=3, rng=g)
            stats.goodness_of_fit(dist, x, known_params=known, n_mc_samples=3, rng=g)


def ints(text: str) -> list[int]:
    return [int(float(v)) for v in text.split(",") if v.strip()]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument(
        "--sizes",
        type=ints,
        default=[200, 2000],
        help="comma-separated sample sizes (default 200,2000)",
    )
    ap.add_argument(
        "--resamples",
        type=int,
        default=199,
        help="bootstrap replicates B on both sides (default 199)",
    )
    ap.add_argument(
        "--families", default=",".join(CASES), help=f"comma-separated subset of {','.join(CASES)}"
    )
    ap.add_argument("--repeat", type=int, default=3, help="timed runs per case, median (default 3)")
    ap.add_argument("--seed", type=int, default=0, help="seed of data and bootstrap (default 0)")
    args = ap.parse_args()
    families = [f.strip() for f in args.families.split(",") if f.strip()]
    unknown = sorted(set(families) - set(CASES))
    if unknown:
        ap.error(f"--families: unknown {unknown[0]!r}; expected some of {', '.join(CASES)}")
    B = args.resamples
    warm_up(families)

    print(
        f"parametric bootstrap, B = {B}, median of {args.repeat}; baseline = scipy "
        f"{scipy.__version__} stats.goodness_of_fit, once per statistic (ks+ad+cvm), same run"
    )
    print("time ratio = ours / baseline (< 1: ours faster); p-values ours | scipy")
    head = (
        f"  {'family':<12}{'n':>6}{'ours s':>9}{'scipy s':>9}{'ratio':>7}{'vs ad':>7}"
        f"{'par diff':>10}   " + "   ".join(f"{s:>3} ours|scipy" for s in STATS)
    )
    print(head)
    for fi, family in enumerate(families):
        dist, known, gen_data, names = CASES[family]
        for n in args.sizes:
            data_rng = np.random.default_rng([args.seed, fi, n])
            x = gen_data(data_rng, n)
            t_ours, ours = median_timed(
                args.repeat,
                lambda x=x, family=family: sw.goodness_of_fit(
                    x, family, n_resamples=B, rng=args.seed
                ),
            )
            t_scipy, theirs = {}, {}
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)  # scipy's optimiser on replicates
                for s in STATS:
                    t_scipy[s], theirs[s] = median_timed(
                        args.repeat,
                        lambda x=x, dist=dist, known=known, s=s: stats.goodness_of_fit(
                            dist, x, known_params=known, statistic=s, n_mc_samples=B, rng=args.seed
                        ),
                    )
            total = sum(t_scipy.values())
            fitted = theirs["ad"].fit_result.params
            diff = max(
                abs(ours.params[k] - float(getattr(fitted, v))) / abs(ours.params[k])
                for k, v in names.items()
            )
            pv = "   ".join(f"{ours.pvalues[s]:>6.3f}|{theirs[s].pvalue:<6.3f}" for s in STATS)
            print(
                f"  {family:<12}{n:>6}{t_ours:>9.3f}{total:>9.3f}{t_ours / total:>7.2f}"
                f"{t_ours / t_scipy['ad']:>7.2f}{diff:>10.1e}   {pv}",
                flush=True,
            )
    print(
        "par diff = largest relative difference between our fitted parameters and scipy's; "
        "vs ad = ours / scipy's single AD call"
    )


if __name__ == "__main__":
    main()
