"""Shared timing for the benchmarks: baseline and candidate interleaved (A B A B), median ratio."""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from typing import Any


def timed(fn: Callable[[], Any]) -> float:
    """Wall time of one call, in seconds."""
    return timed_both(fn)[0]


def timed_both(fn: Callable[[], Any]) -> tuple[float, float]:
    """Wall time and CPU time (every thread of this process) of one call, in seconds."""
    c0, t0 = time.process_time(), time.perf_counter()
    fn()
    return time.perf_counter() - t0, time.process_time() - c0


def interleaved_ratio(
    baseline: Callable[[], Any], candidate: Callable[[], Any], repeat: int = 5
) -> dict[str, float]:
    """Run baseline and candidate alternately ``repeat`` times each (after one warm-up call of
    each) and return the median times and the median of the per-pair ratios candidate/baseline.

    The CPU times of both (``*_cpu_s``) and the median ratio of those (``cpu_ratio``) come
    along: on a machine that other jobs load, wall times stretch with the load (a side that runs
    on several threads, as the bootstrap does, loses more than a single-threaded one), CPU times
    hardly; on an idle machine the wall ratio is the one a user sees."""
    baseline()
    candidate()
    pairs = []
    for _ in range(repeat):
        a = timed_both(baseline)
        b = timed_both(candidate)
        pairs.append((a, b))
    return {
        "baseline_s": statistics.median(a[0] for a, _ in pairs),
        "candidate_s": statistics.median(b[0] for _, b in pairs),
        "ratio": statistics.median(b[0] / a[0] for a, b in pairs),
        "baseline_cpu_s": statistics.median(a[1] for a, _ in pairs),
        "candidate_cpu_s": statistics.median(b[1] for _, b in pairs),
        "cpu_ratio": statistics.median(b[1] / max(a[1], 1e-9) for a, b in pairs),
    }


def row(name: str, baseline: str, ratio: float, target: str, **extra: Any) -> dict[str, Any]:
    """One line of the benchmark table."""
    return {"name": name, "baseline": baseline, "ratio": ratio, "target": target, **extra}
