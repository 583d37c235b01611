"""The words sampler kinds accept, as ``Literal`` types with the tuple of their values.

Plain typing, no numpy: the method catalog (:mod:`samplewright.fitting.catalog`), which
planning imports on every workflow parse, reads these tuples too.
"""

from __future__ import annotations

from typing import Literal, get_args

__all__ = [
    "BANDWIDTH_RULES",
    "BandwidthRule",
    "KERNEL_SCALES",
    "KernelScale",
    "TAIL_RULES",
    "TailRule",
]

# Where a smoothed sampler's Gaussian kernels live: on log x, reflected at 0, or on x itself.
KernelScale = Literal["log", "reflect", "none"]
KERNEL_SCALES: tuple[KernelScale, ...] = get_args(KernelScale)

# Rules of thumb for a smoothed sampler's bandwidth (a number is the other way to give one).
BandwidthRule = Literal["silverman", "scott"]
BANDWIDTH_RULES: tuple[BandwidthRule, ...] = get_args(BandwidthRule)

# Where a Kaplan–Meier sampler puts the survival left after the largest value.
TailRule = Literal["at_last", "exponential"]
TAIL_RULES: tuple[TailRule, ...] = get_args(TailRule)
