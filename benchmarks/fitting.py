#!/usr/bin/env python3
"""Fitting: closed-form maximum-likelihood fits against scipy, and the memory a fit needs.

Rows (ours / baseline; baselines measured in the same run):

* time of ``fit_family`` for lognormal, exponential, gamma, inverse_gaussian and rayleigh at
  n = 1e5 against scipy's ``<dist>.fit(x, floc=0)`` (the same fixed location; both closed
  forms), interleaved A B A B, median of the per-pair ratios. Ours also returns the
  log-likelihood (scipy's ``fit`` does not); each row says whether ours is at least scipy's
  (``loglik_ok``, the gap in ``loglik_gap``);
* the peak memory of ``samplewright.fit(x, method)`` for empirical, lognormal, gamma and weibull
  on one column, measured in a fresh process: the growth of the peak resident size (Linux
  ``VmHWM``; ``ru_maxrss`` would carry the parent's peak across exec) from before the column is
  made to the end of the fit, over the column's size (8 bytes a value). The column is part of
  the peak, so 1.0 is the least possible. A warm-up fit on 1,000 values first loads every
  module the fit uses.

Sizes: memory at 1e8 values (an 800 MB column; about a minute a method) in the full run, 5e6 in
``--quick`` (the timing rows use n = 1e5 in both). Data come from numpy's Generator with a fixed
seed (benchmark data, not reference values).

    python benchmarks/fitting.py [--quick] [--repeat 9]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import warnings
from typing import Any

import numpy as np
from _timing import interleaved_ratio, row
from scipy import stats

from samplewright.fitting.mle import fit_family

TARGET_TIME = "<= 1.5x, loglik >= scipy's"
TARGET_MEMORY = "<= 3x"
N_TIME = 100_000
# family -> (scipy distribution, data generator)
CLOSED_FORMS: dict[str, tuple[Any, Any]] = {
    "lognormal": (stats.lognorm, lambda g, n: g.lognormal(1.0, 0.5, n)),
    "exponential": (stats.expon, lambda g, n: g.exponential(2.0, n)),
    "gamma": (stats.gamma, lambda g, n: g.gamma(2.5, 1.5, n)),
    "inverse_gaussian": (stats.invgauss, lambda g, n: g.wald(2.0, 5.0, n)),
    "rayleigh": (stats.rayleigh, lambda g, n: g.rayleigh(2.0, n)),
}
# method -> code making the n-value column ``x`` without temporaries beyond it
COLUMNS = {
    "empirical": "x = g.standard_normal(n); np.exp(x, out=x)",
    "lognormal": "x = g.standard_normal(n); np.exp(x, out=x)",
    "gamma": "x = g.standard_gamma(2.5, n)",
    "weibull": "x = g.weibull(1.5, n)",
}


def _time_rows(repeat: int) -> list[dict[str, Any]]:
    out = []
    for name, (dist, make) in CLOSED_FORMS.items():
        x = make(np.random.default_rng(7), N_TIME)
        for _ in range(3):  # warm-up: lazy imports, allocator
            dist.fit(x, floc=0)
            fit_family(name, x)
        r = interleaved_ratio(
            lambda d=dist, v=x: d.fit(v, floc=0), lambda f=name, v=x: fit_family(f, v), repeat
        )
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            theirs = float(np.sum(dist.logpdf(x, *dist.fit(x, floc=0))))
        ours = fit_family(name, x).loglik
        out.append(
            row(
                f"fit {name}, n=1e5 (closed form)",
                f"scipy.stats.{dist.name}.fit(x, floc=0)",
                r["ratio"],
                TARGET_TIME,
                loglik_ok=bool(ours >= theirs - 1e-9 * abs(theirs)),
                loglik_gap=ours - theirs,
                baseline_s=r["baseline_s"],
                candidate_s=r["candidate_s"],
                cpu_ratio=r["cpu_ratio"],
            )
        )
    return out


def _peak_ratio(method: str, n: int) -> float:
    """Peak resident growth of fit(x, method) with the column made in the process, over the
    column's size (see the module docstring)."""
    code = (
        "import sys\n"
        "import numpy as np\n"
        "import samplewright as sw\n"
        "def status(key):\n"
        "    line = [ln for ln in open('/proc/self/status') if ln.startswith(key)][0]\n"
        "    return int(line.split()[1]) * 1024\n"
        "method, n = sys.argv[1], int(sys.argv[2])\n"
        "g = np.random.default_rng(3)\n"
        "sw.fit(np.random.default_rng(1).gamma(2.0, 1.0, 1000), method)\n"  # warm-up
        "before = status('VmRSS:')\n"
        f"{COLUMNS[method]}\n"
        "sw.fit(x, method)\n"
        "print((status('VmHWM:') - before) / x.nbytes)\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code, method, str(n)],
        check=True,
        capture_output=True,
        text=True,
    )
    return float(out.stdout.strip().splitlines()[-1])


def _memory_rows(n: int) -> list[dict[str, Any]]:
    size = f"{n:.0e}".replace("+0", "").replace("+", "")
    return [
        row(
            f"fit {method} on a {size}-value column: peak memory",
            f"the column's size ({n * 8 / 1e6:.0f} MB)",
            _peak_ratio(method, n),
            TARGET_MEMORY,
        )
        for method in COLUMNS
    ]


def rows(quick: bool, repeat: int | None = None) -> list[dict[str, Any]]:
    """The benchmark table's rows (see the module docstring)."""
    reps = repeat if repeat is not None else (5 if quick else 9)
    return _time_rows(reps) + _memory_rows(5_000_000 if quick else 100_000_000)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="5e6-value column for memory")
    ap.add_argument("--repeat", type=int, default=None, help="timing pairs per row")
    args = ap.parse_args(argv)
    for r in rows(args.quick, args.repeat):
        extra = "".join(
            f"  {k}={v:.3g}" if isinstance(v, float) else f"  {k}={v}"
            for k, v in r.items()
            if k not in ("name", "baseline", "ratio", "target")
        )
        print(f"{r['name']:<48} {r['ratio']:>7.3g}  vs {r['baseline']}  [{r['target']}]{extra}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
