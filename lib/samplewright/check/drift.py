"""What moved between two samplers of the same input: an earlier selection and the current one.

:func:`compare_samplers` measures the change a simulation would see: the Kolmogorov–Smirnov
distance ``sup |F_old - F_new|`` (where it is largest), the shift of each key quantile, of the
mean and of the tail mean (the mean of the highest ``1 - tail_level`` share), and whether the
distance exceeds a threshold (``report.drift_threshold`` in a workflow, default
:data:`DEFAULT_DRIFT_THRESHOLD`). Quantiles are the generalised inverse and the tail mean is
``(1 / (1 - p)) ∫_p^1 Q(u) du``, as on the check report
(:mod:`samplewright.check.report_numbers`, whose functions compute them).

The check of a dataset compares its new selection with the previous one found in the store;
``samplewright store compare`` compares any two artifacts.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.check.report_model import KEY_PROBABILITIES, SamplerLike
from samplewright.check.report_numbers import sampler_tail_mean
from samplewright.core.errors import MethodError

__all__ = ["DEFAULT_DRIFT_THRESHOLD", "DriftResult", "compare_samplers", "largest_gap"]

DEFAULT_DRIFT_THRESHOLD = 0.05


@dataclass(frozen=True)
class DriftResult:
    """The change from sampler ``old`` to sampler ``new``.

    Attributes
    ----------
    ks_distance : float
        ``sup |F_old - F_new|`` over the line.
    at : float
        A value where the largest gap occurs.
    threshold : float
        The flag threshold the distance was compared with.
    flagged : bool
        ``ks_distance > threshold``.
    quantiles : dict
        Probability -> ``(old, new)`` quantile.
    mean, tail_mean : tuple of float
        ``(old, new)``; the tail mean at ``tail_level`` (infinite when the mean is).
    tail_level : float
    """

    ks_distance: float
    at: float
    threshold: float
    flagged: bool
    quantiles: dict[float, tuple[float, float]]
    mean: tuple[float, float]
    tail_mean: tuple[float, float]
    tail_level: float

    def as_dict(self) -> dict[str, Any]:
        """Plain JSON (non-finite numbers as None), as the check summary stores it."""

        def num(v: float) -> float | None:
            return float(v) if math.isfinite(v) else None

        return {
            "ks_distance": num(self.ks_distance),
            "at": num(self.at),
            "threshold": self.threshold,
            "flagged": self.flagged,
            "quantiles": {
                f"p{100 * p:g}": {"old": num(a), "new": num(b)}
                for p, (a, b) in self.quantiles.items()
            },
            "mean": {"old": num(self.mean[0]), "new": num(self.mean[1])},
            "tail_mean": {"old": num(self.tail_mean[0]), "new": num(self.tail_mean[1])},
            "tail_level": self.tail_level,
        }


def largest_gap(a: SamplerLike, b: SamplerLike, *, n_grid: int = 4001) -> tuple[float, float]:
    """``(sup |F_a - F_b|, a value where it is reached)``.

    Both CDFs are compared at 4,001 quantiles of each sampler and just below them (as
    :func:`~samplewright.check.report_numbers.ks_between` does): exact at the jumps of step CDFs
    finer than the grid, otherwise within about 1/4000.
    """
    u = np.linspace(0.0, 1.0, n_grid)[1:-1]
    pts = np.concatenate([np.asarray(a.quantile(u)), np.asarray(b.quantile(u))])
    pts = np.unique(pts[np.isfinite(pts)])
    if pts.size == 0:
        return 0.0, math.nan
    best, where = -1.0, math.nan
    for p in (pts, np.nextafter(pts, -np.inf)):
        gap = np.abs(
            np.asarray(a.cdf(p), dtype=np.float64) - np.asarray(b.cdf(p), dtype=np.float64)
        )
        i = int(np.argmax(gap))
        if gap[i] > best:
            best, where = float(gap[i]), float(p[i])
    return best, where


def compare_samplers(
    old: SamplerLike,
    new: SamplerLike,
    *,
    probabilities: Sequence[float] = KEY_PROBABILITIES,
    tail_level: float = 0.99,
    threshold: float = DEFAULT_DRIFT_THRESHOLD,
) -> DriftResult:
    """What moved from ``old`` to ``new`` (see the module docstring).

    Parameters
    ----------
    old, new : samplers (anything with ``cdf``, ``quantile``, ``mean``).
    probabilities : the key quantiles' probabilities, each in (0, 1).
    tail_level : ``p`` of the tail mean, in (0, 1).
    threshold : KS distance above which the change is flagged, in [0, 1].

    Examples
    --------
    >>> import samplewright as sw
    >>> from samplewright.distributions.parametric import ParametricSampler
    >>> a = ParametricSampler("normal", {"mu": 0.0, "sigma": 1.0})
    >>> b = ParametricSampler("normal", {"mu": 0.5, "sigma": 1.0})
    >>> r = compare_samplers(a, b)
    >>> round(r.ks_distance, 4), r.flagged, round(r.at, 2)
    (0.1974, True, 0.25)
    """
    for p in (*probabilities, tail_level):
        if not 0.0 < float(p) < 1.0:
            raise MethodError(f"probabilities: expected values in (0, 1), found {p}")
    if not 0.0 <= float(threshold) <= 1.0:
        raise MethodError(f"threshold: expected a KS distance in [0, 1], found {threshold}")
    ks, at = largest_gap(old, new)
    probs = np.asarray([float(p) for p in probabilities])
    qa = np.asarray(old.quantile(probs), dtype=np.float64)
    qb = np.asarray(new.quantile(probs), dtype=np.float64)
    return DriftResult(
        ks_distance=ks,
        at=at,
        threshold=float(threshold),
        flagged=bool(ks > threshold),
        quantiles={float(p): (float(a), float(b)) for p, a, b in zip(probs, qa, qb, strict=True)},
        mean=(float(old.mean), float(new.mean)),
        tail_mean=(sampler_tail_mean(old, tail_level), sampler_tail_mean(new, tail_level)),
        tail_level=float(tail_level),
    )
