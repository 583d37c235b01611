"""Coverage of nominal 95% bootstrap intervals of tail statistics by the count beyond the level.

Run: python docs/studies/interval_coverage.py [reps]  (minutes; not part of the tests)
For each parent distribution, level p and k = n (1 - p) observations expected beyond the level,
draws `reps` samples of n, bootstraps each (B = 999, iid) and records whether the percentile,
basic and BCa intervals of quantile:p, tail_mean:p and exceedance:q_p cover the true value
(top_is_max: share of runs whose bootstrap 97.5% point reached the sample maximum; meaningless
for exceedance). Output of the run behind resample/guards.py: interval_coverage.csv beside this.
"""

from __future__ import annotations

import sys

import numpy as np
from scipy import stats

from samplewright.resample.acceleration import acceleration
from samplewright.resample.intervals import interval_from_distribution
from samplewright.resample.schemes import IIDScheme
from samplewright.resample.statistics import parse_statistic

B = 999
REPS = int(sys.argv[1]) if len(sys.argv) > 1 else 400
ALPHA3 = 3.0  # lomax tail index


def truth(dist: str, p: float) -> tuple[float, float]:
    """True p-quantile and tail mean beyond it."""
    if dist == "exponential":
        q = -np.log1p(-p)
        return q, q + 1.0
    if dist == "lognormal":
        z = stats.norm.ppf(p)
        return float(np.exp(z)), float(np.exp(0.5) * stats.norm.cdf(1.0 - z) / (1 - p))
    q = (1 - p) ** (-1 / ALPHA3) - 1.0
    return q, ALPHA3 * (q + 1.0) / (ALPHA3 - 1.0) - 1.0


def draw(dist: str, n: int, g: np.random.Generator) -> np.ndarray:
    if dist == "exponential":
        return g.exponential(size=n)
    if dist == "lognormal":
        return g.lognormal(size=n)
    return (1.0 - g.random(n)) ** (-1 / ALPHA3) - 1.0


def main() -> None:
    root = np.random.SeedSequence(20260607)
    print("dist,p,k,n,statistic,method,coverage,top_is_max")
    for dist in ("exponential", "lognormal", "lomax3"):
        for p in (0.9, 0.99):
            for k in (1, 2, 3, 5, 7, 10, 15, 20, 30):
                n = round(k / (1 - p))
                q, tm = truth(dist, p)
                names = {
                    "quantile": f"quantile:{p}",
                    "tail_mean": f"tail_mean:{p}",
                    "exceedance": f"exceedance:{float(q)!r}",
                }
                want = {"quantile": q, "tail_mean": tm, "exceedance": 1 - p}
                hits = {(s, m): 0 for s in names for m in ("percentile", "basic", "bca")}
                at_max = {s: 0 for s in names}
                for seq in root.spawn(REPS):
                    g = np.random.default_rng(seq)
                    x = draw(dist, n, g)
                    sch = IIDScheme(x)
                    dists = {s: np.empty(B) for s in names}
                    done = 0
                    for idx in sch.index_batches(B, g):
                        v = x.take(idx)
                        for s, text in names.items():
                            dists[s][done : done + idx.shape[0]] = parse_statistic(text)(v)
                        done += idx.shape[0]
                    for s, text in names.items():
                        stat = parse_statistic(text)
                        est = float(stat(x))
                        d = dists[s]
                        for m in ("percentile", "basic", "bca"):
                            a = acceleration(x, stat, weights=None, gen=g) if m == "bca" else None
                            try:
                                lo, hi = interval_from_distribution(
                                    d, est, method=m, confidence_level=0.95, acceleration=a
                                )
                            except ValueError:
                                continue  # bca undefined: a miss
                            hits[(s, m)] += lo <= want[s] <= hi
                        at_max[s] += bool(np.quantile(d, 0.975) >= x.max())
                for (s, m), h in hits.items():
                    print(
                        f"{dist},{p},{k},{n},{s},{m},{h / REPS:.3f},{at_max[s] / REPS:.3f}",
                        flush=True,
                    )


if __name__ == "__main__":
    main()
