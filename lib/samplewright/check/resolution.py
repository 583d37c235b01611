"""Recording resolution: values written down on a grid (whole hours, whole euros, steps of 0.25).

Measurements are often recorded to a resolution ``h``: durations to the hour, amounts to the
cent or to the whole currency unit. Such data have ties that a continuous model never produces,
so an EDF goodness-of-fit test of a continuous family rejects the true family far more often
than its level (with durations in whole hours, almost half the time). The honest null
distribution rounds every bootstrap replicate to the same resolution
(:func:`samplewright.check.gof.goodness_of_fit` does this with :func:`snap_to_grid`).

Detection rule (:func:`recording_resolution`): the resolution is ``h = g / 10**k``, where ``k``
is the fewest decimal places (0 to :data:`MAX_DECIMALS`) at which every value is a whole number
(up to float rounding: ``|y - round(y)| <= max(1e-9, 8 eps |y|)`` for ``y = x 10**k``) and ``g``
is the greatest common divisor of those whole numbers. Whole hours give ``h = 1``, minutes
recorded as multiples of 60 give ``h = 60``, prices in cents ``h = 0.01``, quarter hours
``h = 0.25``. No resolution is found for fewer than 3 distinct values, for values that need more
than 6 decimal places (continuous data) and for magnitudes beyond 2**53 after scaling. A grid
that is not decimal (thirds) is not found.

A found resolution matters when it makes ties: the record says it is **coarse** when at least
:data:`COARSE_TIED_SHARE` (5%) of the (frequency-weighted) values repeat a value recorded
before, i.e. ``1 - (distinct values) / (total weight) >= 0.05``. A fine resolution (amounts to
the cent, spread over thousands) still rounds the replicates, which then changes next to nothing.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.core.checks import check_sample

__all__ = [
    "COARSE_TIED_SHARE",
    "MAX_DECIMALS",
    "ResolutionResult",
    "recording_resolution",
    "snap_to_grid",
]

MAX_DECIMALS = 6
COARSE_TIED_SHARE = 0.05
_EPS = float(np.finfo(np.float64).eps)
_WHOLE_LIMIT = 2.0**53


@dataclass(frozen=True)
class ResolutionResult:
    """The recording resolution of a sample.

    Attributes
    ----------
    step : float or None
        The grid ``h`` every value is a multiple of, or None when none was found.
    decimals : int or None
        Decimal places of the grid (0 for whole numbers), None when no grid was found.
    n_distinct : int
        Distinct values.
    tied_share : float
        ``1 - n_distinct / total weight``: the share of values that repeat another.
    coarse : bool
        A grid was found and ``tied_share >= COARSE_TIED_SHARE``.
    """

    step: float | None
    decimals: int | None
    n_distinct: int
    tied_share: float
    coarse: bool

    @property
    def message(self) -> str:
        """One line for a warning record."""
        if self.step is None:
            return "no recording resolution found"
        return (
            f"values are recorded to a resolution of {self.step:g} "
            f"({self.n_distinct} distinct values, {self.tied_share:.0%} of them repeats); "
            "bootstrap replicates are rounded to the same resolution"
        )

    def as_dict(self) -> dict[str, Any]:
        """Plain-JSON form, as stored in artifact diagnostics."""
        return {
            "step": self.step,
            "decimals": self.decimals,
            "n_distinct": self.n_distinct,
            "tied_share": self.tied_share,
            "coarse": self.coarse,
        }


def _grid(distinct: np.ndarray) -> tuple[float, int] | None:
    """``(h, k)`` of the decimal grid of the distinct values (module docstring), or None."""
    if distinct.size < 3:
        return None
    for k in range(MAX_DECIMALS + 1):
        y = distinct * 10.0**k
        if np.max(np.abs(y)) >= _WHOLE_LIMIT:
            return None
        whole = np.round(y)
        if np.all(np.abs(y - whole) <= np.maximum(1e-9, 8.0 * _EPS * np.abs(y))):
            g = int(np.gcd.reduce(np.abs(whole).astype(np.int64)))
            if g == 0:  # every value 0 (not reached: at least 3 distinct values)
                return None
            return g / 10.0**k, k
    return None


def recording_resolution(values: Any, weights: Any = None) -> ResolutionResult:
    """The grid the values were recorded on, by the rule in the module docstring.

    Parameters
    ----------
    values : array_like
        1-d finite values.
    weights : array_like, optional
        Frequency weights (they only count the ties).

    Returns
    -------
    ResolutionResult

    Examples
    --------
    >>> r = recording_resolution([2.0, 3.0, 3.0, 5.0, 8.0, 8.0])
    >>> r.step, r.decimals, r.n_distinct, round(r.tied_share, 3), r.coarse
    (1.0, 0, 4, 0.333, True)
    >>> recording_resolution([0.25, 1.5, 0.75, 2.0]).step
    0.25
    >>> recording_resolution([120.0, 60.0, 300.0, 180.0]).step
    60.0
    >>> recording_resolution([0.1234567891, 1.5, 2.25]).step is None
    True
    """
    sample = check_sample(values, weights, what="recording_resolution")
    distinct = np.unique(sample.values)
    total = sample.total_weight
    tied = float(min(max(1.0 - distinct.size / total, 0.0), 1.0)) if total > 0 else 0.0
    found = _grid(distinct)
    if found is None:
        return ResolutionResult(None, None, int(distinct.size), tied, False)
    step, k = found
    return ResolutionResult(step, k, int(distinct.size), tied, tied >= COARSE_TIED_SHARE)


def snap_to_grid(
    x: np.ndarray, step: float, lower: float = -math.inf, upper: float = math.inf
) -> np.ndarray:
    """Round ``x`` to the nearest multiple of ``step``, kept strictly inside ``(lower, upper)``.

    A value that rounds to or beyond an end of the support (``lower``, ``upper``: the fitted
    family's) goes to the nearest grid point inside it instead, the way a record never holds a
    value the model cannot produce: durations below half an hour rounded to 0 become 1 hour for
    a family on ``(0, inf)``. Ends that are not finite are ignored.

    >>> snap_to_grid(np.array([0.2, 0.6, 2.49, 2.51, 9.7]), 1.0, lower=0.0, upper=9.5).tolist()
    [1.0, 1.0, 2.0, 3.0, 9.0]
    """
    out = np.round(np.asarray(x, dtype=np.float64) / step) * step
    if math.isfinite(lower):
        first = (math.floor(lower / step) + 1) * step
        out = np.where(out <= lower, first, out)
    if math.isfinite(upper):
        last = (math.ceil(upper / step) - 1) * step
        out = np.where(out >= upper, last, out)
    return out
