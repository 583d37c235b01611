#!/usr/bin/env python3
"""Draw speed of samplewright's samplers against the plain numpy/scipy way of drawing the same.

Each row times ``sampler.draw(n, rng)`` against a named baseline measured in the same run, the
two interleaved (A B A B after one warm-up of each, :mod:`_timing`), and reports the median of
the per-pair time ratios ours / baseline (< 1: ours faster). Every call gets a fresh
``default_rng(seed)``, so where both sides use uniforms they use the same ones.

* interpolated draws (``fit(data, "interpolated")``: knots equally spaced in probability) vs
  generating the uniforms alone, ``rng.random(n)`` (the floor of any inverse-transform draw);
  target at most 4 (1e6 knots, 1e7 draws);
* a piecewise-linear CDF with unequally spaced knots (guide table) vs generating the uniforms
  alone, and vs ``np.interp(rng.random(n), p, x)`` (the same numbers by binary search);
* ``EmpiricalSampler`` (10,000 values) vs ``rng.choice(values, n)``; weighted, vs
  ``rng.choice(values, n, p=weights)``;
* ``ParametricSampler`` for normal, lognormal, gamma, weibull, exponential vs the scipy.stats
  frozen distribution's ``.rvs(size=n, random_state=rng)``.

The piecewise rows also check that ours and ``np.interp`` give the same numbers (largest absolute
difference printed). Data are generated with numpy's Generator from a fixed seed (benchmark data,
not a reference).

    python benchmarks/sampling.py [--quick] [--draws 1e7] [--knots 1e6] [--repeat 5]
"""

from __future__ import annotations

import argparse
from collections.abc import Callable
from typing import Any

import numpy as np
from _timing import interleaved_ratio, row
from scipy import stats

import samplewright as sw
from samplewright.distributions.piecewise import PiecewiseSampler

Draw = Callable[[int, np.random.Generator], np.ndarray]
SEED = 0

# family -> (our parameters, the same distribution frozen in scipy.stats)
PARAMETRIC = {
    "normal": ({"mu": 10.0, "sigma": 2.0}, stats.norm(loc=10.0, scale=2.0)),
    "lognormal": ({"mu": 1.0, "sigma": 0.5, "loc": 0.0}, stats.lognorm(s=0.5, scale=np.e)),
    "gamma": ({"shape": 2.0, "scale": 3.0, "loc": 0.0}, stats.gamma(a=2.0, scale=3.0)),
    "weibull": ({"shape": 1.5, "scale": 2.0, "loc": 0.0}, stats.weibull_min(c=1.5, scale=2.0)),
    "exponential": ({"scale": 3.0, "loc": 0.0}, stats.expon(scale=3.0)),
}


def _pair(ours: Draw, base: Draw, n: int, repeat: int) -> dict[str, float]:
    """Interleaved timing of two draws of ``n`` values, each from a fresh generator."""
    return interleaved_ratio(
        lambda: base(n, np.random.default_rng(SEED)),
        lambda: ours(n, np.random.default_rng(SEED)),
        repeat=repeat,
    )


def _uniforms(n: int, rng: np.random.Generator) -> np.ndarray:
    return rng.random(n)


def _piecewise_rows(n_draws: int, n_knots: int, repeat: int) -> list[dict[str, Any]]:
    g = np.random.default_rng([SEED, 1])
    data = g.gamma(2.0, 3.0, n_knots)
    interp = sw.fit(data, "interpolated")
    p = np.sort(np.concatenate([[0.0, 1.0], g.beta(0.5, 0.5, n_knots - 2)]))
    unequal = PiecewiseSampler(np.quantile(data, p), p)
    out = []
    for label, sampler, target in (
        ("interpolated", interp, "<= 4"),
        ("piecewise, unequal knots", unequal, "(no target)"),
    ):
        t = _pair(sampler.draw, _uniforms, n_draws, repeat)
        out.append(
            row(
                f"{label} draws, {n_knots:.0e} knots, {n_draws:.0e} draws",
                "rng.random(n), the uniforms alone",
                t["ratio"],
                target,
                ours_s=t["candidate_s"],
                baseline_s=t["baseline_s"],
                cpu_ratio=t["cpu_ratio"],
            )
        )
    # np.interp on the same uniforms: the same answer by binary search
    x, pp = unequal.x, unequal.p
    t = _pair(unequal.draw, lambda n, r: np.interp(r.random(n), pp, x), n_draws, repeat)
    diff = float(
        np.max(
            np.abs(
                unequal.draw(n_draws, np.random.default_rng(SEED))
                - np.interp(np.random.default_rng(SEED).random(n_draws), pp, x)
            )
        )
    )
    out.append(
        row(
            f"piecewise, unequal knots, {n_knots:.0e} knots, {n_draws:.0e} draws",
            "np.interp(u, p, x), same uniforms",
            t["ratio"],
            "< 1",
            ours_s=t["candidate_s"],
            baseline_s=t["baseline_s"],
            cpu_ratio=t["cpu_ratio"],
            max_abs_diff=diff,
        )
    )
    return out


def _other_rows(n_draws: int, repeat: int) -> list[dict[str, Any]]:
    g = np.random.default_rng([SEED, 2])
    data = g.gamma(2.0, 3.0, 10_000)
    emp = sw.EmpiricalSampler(data)
    wemp = sw.EmpiricalSampler(data, g.uniform(0.5, 1.5, data.size))
    values, wvalues, wnorm = emp.values, wemp.values, wemp.weights
    cases: list[tuple[str, Draw, str, Draw]] = [
        ("EmpiricalSampler", emp.draw, "rng.choice(values)", lambda n, r: r.choice(values, n)),
        (
            "EmpiricalSampler, weighted",
            wemp.draw,
            "rng.choice(values, p=w)",
            lambda n, r: r.choice(wvalues, n, p=wnorm),
        ),
    ]
    for family, (params, frozen) in PARAMETRIC.items():
        cases.append(
            (
                f"ParametricSampler {family}",
                sw.ParametricSampler(family, params).draw,
                "scipy frozen .rvs",
                lambda n, r, f=frozen: f.rvs(size=n, random_state=r),
            )
        )
    out = []
    for label, ours, base_label, base in cases:
        t = _pair(ours, base, n_draws, repeat)
        out.append(
            row(
                f"{label}, {n_draws:.0e} draws",
                base_label,
                t["ratio"],
                "~1 (parity)",
                ours_s=t["candidate_s"],
                baseline_s=t["baseline_s"],
                cpu_ratio=t["cpu_ratio"],
            )
        )
    return out


def rows(
    quick: bool,
    n_draws: int | None = None,
    n_knots: int | None = None,
    repeat: int | None = None,
) -> list[dict[str, Any]]:
    """Every row; quick: 1e6 draws, 1e5 knots, 2 pairs (seconds), else 1e7, 1e6, 5 pairs."""
    n = n_draws or (1_000_000 if quick else 10_000_000)
    k = n_knots or (100_000 if quick else 1_000_000)
    r = repeat or (2 if quick else 5)
    out = _piecewise_rows(n, k, r) + _other_rows(n, r)
    for res in out:
        print(
            f"  {res['name']:<48} ours {res['ours_s'] * 1e3:8.1f} ms  {res['baseline']:<34}"
            f" {res['baseline_s'] * 1e3:8.1f} ms  ratio {res['ratio']:.3f}"
            f" (CPU {res['cpu_ratio']:.3f})",
            flush=True,
        )
    return out


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="1e6 draws, 1e5 knots, 2 pairs")
    ap.add_argument("--draws", type=float, default=None, help="draws per call (default 1e7)")
    ap.add_argument("--knots", type=float, default=None, help="piecewise knots (default 1e6)")
    ap.add_argument("--repeat", type=int, default=None, help="timed A B pairs (default 5)")
    args = ap.parse_args(argv)
    got = rows(
        args.quick,
        None if args.draws is None else int(args.draws),
        None if args.knots is None else int(args.knots),
        args.repeat,
    )
    print("time ratio = ours / baseline, median of A B pairs (< 1: ours faster)")
    for r in got:
        print(f"{r['name']} | {r['baseline']} | {r['ratio']:.3f} | {r['target']}")


if __name__ == "__main__":
    main()
