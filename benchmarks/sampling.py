#!/usr/bin/env python3
"""Draw speed of samplewright's samplers against the plain numpy/scipy way of drawing the same.

Million draws per second of ``sampler.draw(n, rng)`` for n = 1e6 and 1e7, each against a named
baseline measured in the same run on the same generator state (a fresh ``default_rng(seed)``
before every timed call, so ours and the baseline see the same uniforms where both use them):

* ``EmpiricalSampler`` (10,000 values) vs ``rng.choice(values, n)`` on the same sorted array;
  weighted, vs ``rng.choice(values, n, p=weights)``;
* ``PiecewiseSampler`` with 1000 knots equally spaced in probability, and with 1000 unequally
  spaced ones, vs ``np.interp(rng.random(n), p, x)`` (the same uniforms and the same answer);
* ``ParametricSampler`` for normal, lognormal, gamma, weibull, exponential vs the scipy.stats
  frozen distribution's ``.rvs(size=n, random_state=rng)`` with the same parameters;
* the spliced sampler (``samplewright.fit(data, "spliced")``, empirical body and GPD tail) vs
  ``EmpiricalSampler`` of the same data.

Each figure is the median of ``--repeat`` timed calls, ours and the baseline timed alternately
(which one goes first swaps every repeat); ``speed ratio`` is ours / baseline in draws
per second (> 1: ours faster). For the piecewise rows the largest absolute difference from
``np.interp`` is printed as a check that both compute the same thing. Data are generated with
numpy's Generator from a fixed seed (benchmark data, not a reference).

    python benchmarks/sampling.py [--sizes 1e6,1e7] [--repeat 5] [--seed 0]
"""

from __future__ import annotations

import argparse
import statistics
import time
from collections.abc import Callable

import numpy as np
from scipy import stats

import samplewright as sw

Draw = Callable[[int, np.random.Generator], np.ndarray]

# family -> (our parameters, the same distribution frozen in scipy.stats)
PARAMETRIC = {
    "normal": ({"mu": 10.0, "sigma": 2.0}, stats.norm(loc=10.0, scale=2.0)),
    "lognormal": ({"mu": 1.0, "sigma": 0.5, "loc": 0.0}, stats.lognorm(s=0.5, scale=np.e)),
    "gamma": ({"shape": 2.0, "scale": 3.0, "loc": 0.0}, stats.gamma(a=2.0, scale=3.0)),
    "weibull": ({"shape": 1.5, "scale": 2.0, "loc": 0.0}, stats.weibull_min(c=1.5, scale=2.0)),
    "exponential": ({"scale": 3.0, "loc": 0.0}, stats.expon(scale=3.0)),
}


def timed(fn: Draw, n: int, seed: int) -> tuple[float, np.ndarray]:
    rng = np.random.default_rng(seed)
    t0 = time.perf_counter()
    out = fn(n, rng)
    elapsed = time.perf_counter() - t0
    if len(out) != n:
        raise SystemExit(f"a draw returned {len(out)} values, expected {n}")
    return elapsed, out


def rates(ours: Draw, base: Draw, n: int, repeat: int, seed: int) -> tuple[float, float, float]:
    """Median million draws per second of ours and of the baseline, and their largest difference.

    The two are timed alternately (ours first on even repeats, the baseline first on odd ones),
    so drift in the machine's state affects both alike.
    """
    t_ours, t_base = [], []
    diff = 0.0
    for i in range(repeat):
        order = ((ours, t_ours), (base, t_base)) if i % 2 == 0 else ((base, t_base), (ours, t_ours))
        outs = []
        for fn, acc in order:
            elapsed, out = timed(fn, n, seed)
            acc.append(elapsed)
            outs.append(out)
        if i == 0 and outs[0].dtype.kind == "f":
            diff = float(np.max(np.abs(outs[0] - outs[1])))
        del outs
    return n / statistics.median(t_ours) / 1e6, n / statistics.median(t_base) / 1e6, diff


def cases(seed: int) -> list[tuple[str, Draw, str, Draw, bool]]:
    """(label, ours, baseline label, baseline, compare outputs)."""
    g = np.random.default_rng([seed, 1])
    data = g.gamma(2.0, 3.0, 10_000)
    emp = sw.EmpiricalSampler(data)
    weights = g.uniform(0.5, 1.5, data.size)
    wemp = sw.EmpiricalSampler(data, weights)
    values, wnorm = emp.values, wemp.weights
    wvalues = wemp.values
    out: list[tuple[str, Draw, str, Draw, bool]] = [
        (
            "EmpiricalSampler",
            emp.draw,
            "rng.choice(values)",
            lambda n, r: r.choice(values, n),
            False,
        ),
        (
            "EmpiricalSampler, weighted",
            wemp.draw,
            "rng.choice(values, p=w)",
            lambda n, r: r.choice(wvalues, n, p=wnorm),
            False,
        ),
    ]

    for label, p in (
        ("equal", np.linspace(0.0, 1.0, 1000)),
        ("unequal", np.sort(np.concatenate([[0.0, 1.0], g.beta(0.5, 0.5, 998)]))),
    ):
        x = np.quantile(data, p)
        pw = sw.from_knots(x, p)
        out.append(
            (
                f"PiecewiseSampler, 1000 {label} knots",
                pw.draw,
                "np.interp(u, p, x)",
                lambda n, r, p=p, x=x: np.interp(r.random(n), p, x),
                True,
            )
        )

    for family, (params, frozen) in PARAMETRIC.items():
        ps = sw.ParametricSampler(family, params)
        out.append(
            (
                f"ParametricSampler {family}",
                ps.draw,
                "scipy frozen .rvs",
                lambda n, r, f=frozen: f.rvs(size=n, random_state=r),
                False,
            )
        )

    tail_data = g.lognormal(1.0, 0.8, 10_000)
    spliced = sw.fit(tail_data, "spliced")
    tail_emp = sw.EmpiricalSampler(tail_data)
    out.append(
        ("spliced (empirical body + GPD)", spliced.draw, "EmpiricalSampler", tail_emp.draw, False)
    )
    return out


def sizes(text: str) -> list[int]:
    return [int(float(v)) for v in text.split(",") if v.strip()]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument(
        "--sizes",
        type=sizes,
        default=[1_000_000, 10_000_000],
        help="comma-separated draw counts (default 1e6,1e7)",
    )
    ap.add_argument(
        "--repeat", type=int, default=5, help="timed calls per figure, median (default 5)"
    )
    ap.add_argument("--seed", type=int, default=0, help="seed of data and draws (default 0)")
    args = ap.parse_args()

    rows = cases(args.seed)
    for _, ours, _, base, _ in rows:  # warm-up: first-call imports and caches, untimed
        ours(1000, np.random.default_rng(args.seed))
        base(1000, np.random.default_rng(args.seed))

    print(
        f"million draws per second, median of {args.repeat}; baseline measured in the same run; "
        "speed ratio = ours / baseline (> 1: ours faster)"
    )
    for n in args.sizes:
        print(f"n = {n:.0e}")
        print(f"  {'ours':<38}{'Mdraws/s':>9}   {'baseline':<24}{'Mdraws/s':>9}{'ratio':>8}")
        for label, ours, base_label, base, compare in rows:
            r_ours, r_base, diff = rates(ours, base, n, args.repeat, args.seed)
            note = f"   max |diff| {diff:.1e}" if compare else ""
            print(
                f"  {label:<38}{r_ours:>9.1f}   {base_label:<24}{r_base:>9.1f}"
                f"{r_ours / r_base:>8.2f}{note}",
                flush=True,
            )


if __name__ == "__main__":
    main()
