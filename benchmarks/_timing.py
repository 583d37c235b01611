"""Shared timing for the benchmarks: baseline and candidate interleaved (A B A B), median ratio."""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from typing import Any


def timed(fn: Callable[[], Any]) -> float:
    """Wall time of one call, in seconds."""
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def interleaved_ratio(
    baseline: Callable[[], Any], candidate: Callable[[], Any], repeat: int = 5
) -> dict[str, float]:
    """Run baseline and candidate alternately ``repeat`` times each (after one warm-up call of
    each) and return the median times and the median of the per-pair ratios candidate/baseline."""
    baseline()
    candidate()
    pairs = []
    for _ in range(repeat):
        a = timed(baseline)
        b = timed(candidate)
        pairs.append((a, b))
    return {
        "baseline_s": statistics.median(a for a, _ in pairs),
        "candidate_s": statistics.median(b for _, b in pairs),
        "ratio": statistics.median(b / a for a, b in pairs),
    }


def row(name: str, baseline: str, ratio: float, target: str, **extra: Any) -> dict[str, Any]:
    """One line of the benchmark table."""
    return {"name": name, "baseline": baseline, "ratio": ratio, "target": target, **extra}
