"""What a check report is made of: the input of the HTML builder (``render_report_html``).

:class:`CheckReportInput` holds everything one dataset's report can show; only the dataset name
and the candidates are required. Numbers that can be computed from a sampler (key quantiles, the
tail mean, the distance to a previous selection) are left out or given: missing ones are computed
by :func:`samplewright.check.report_numbers.derive_numbers`, given ones (e.g. from a bootstrap
run) are shown as given. Samplers are used only through :class:`SamplerLike`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Literal, Protocol, get_args, runtime_checkable

import numpy as np

from samplewright.core.errors import InputDataError

__all__ = [
    "KEY_PROBABILITIES",
    "WARNING_KINDS",
    "Candidate",
    "CheckReportInput",
    "ConfidenceInterval",
    "DriftInput",
    "ElicitedPoints",
    "FitCheck",
    "JointInput",
    "ObservedData",
    "ReferenceEstimate",
    "ReportWarning",
    "SamplerLike",
    "TailDiagnostics",
    "WarningKind",
]

KEY_PROBABILITIES = (0.5, 0.9, 0.99, 0.999)
WarningKind = Literal[
    "small_n",
    "ties",
    "support_beyond_data",
    "draws_beyond_record",
    "censoring_share",
    "failed_refits",
    "poor_fit",
    "drift",
    "other",
]
WARNING_KINDS: tuple[str, ...] = get_args(WarningKind)


@runtime_checkable
class SamplerLike(Protocol):
    """The part of the sampler interface the report uses (``pdf``/``pmf`` are looked up)."""

    method: str
    params: dict[str, Any]

    def cdf(self, x: Any) -> np.ndarray: ...
    def quantile(self, u: Any) -> np.ndarray: ...
    @property
    def mean(self) -> float: ...
    @property
    def var(self) -> float: ...
    @property
    def support(self) -> tuple[float, float]: ...


@dataclass(frozen=True)
class ConfidenceInterval:
    """An interval ``[low, high]`` at confidence ``level`` (e.g. from a bootstrap)."""

    low: float
    high: float
    level: float = 0.95


@dataclass(frozen=True)
class FitCheck:
    """One goodness-of-fit statistic of one candidate.

    Attributes
    ----------
    statistic : name, e.g. ``"ks"``, ``"ad"``, ``"cvm"``.
    value : the statistic's value on the data.
    p_value : bootstrap p-value, or None when none was computed.
    n_replicates : bootstrap replicates behind ``p_value``.
    n_failed : replicates whose refit failed.
    """

    statistic: str
    value: float
    p_value: float | None = None
    n_replicates: int | None = None
    n_failed: int = 0


@dataclass(frozen=True)
class Candidate:
    """A candidate sampler with its label and whatever was computed for it elsewhere.

    ``quantiles`` maps a probability to a value and ``quantile_intervals`` to an interval; the
    tail mean is at the report's ``tail_level``. Missing numbers are computed from ``sampler``.
    ``interval_source`` says how the intervals were made (e.g. "parametric bootstrap, 99").
    """

    label: str
    sampler: SamplerLike
    quantiles: Mapping[float, float] | None = None
    quantile_intervals: Mapping[float, ConfidenceInterval] = field(default_factory=dict)
    tail_mean: float | None = None
    tail_mean_interval: ConfidenceInterval | None = None
    fit_checks: tuple[FitCheck, ...] = ()
    note: str = ""
    interval_source: str = ""


@dataclass(frozen=True)
class ObservedData:
    """The data a dataset's candidates were fitted to.

    ``censored`` marks right-censored rows (``values`` holds the censoring point). For interval
    data, ``lower``/``upper`` hold each row's bounds and ``values`` a representative point (used
    for the histogram only). ``truncation`` is a lower truncation point, one or per row.
    ``discrete`` says whether the values are counts (None: counts when every value is an integer
    and no candidate has a density).
    """

    values: Any
    weights: Any = None
    censored: Any = None
    lower: Any = None
    upper: Any = None
    truncation: Any = None
    discrete: bool | None = None

    def __post_init__(self) -> None:
        x = np.asarray(self.values, dtype=np.float64).ravel()
        if x.size == 0 or not np.all(np.isfinite(x)):
            raise InputDataError("data.values: expected at least one value, all finite")
        object.__setattr__(self, "values", x)
        for name in ("weights", "censored", "lower", "upper"):
            v = getattr(self, name)
            if v is None:
                continue
            arr = np.asarray(v, dtype=bool if name == "censored" else np.float64).ravel()
            if arr.shape != x.shape:
                raise InputDataError(
                    f"data.{name}: expected {x.size} entries (one per value), found {arr.size}"
                )
            object.__setattr__(self, name, arr)
        if self.weights is not None and not np.all(np.isfinite(self.weights) & (self.weights > 0)):
            raise InputDataError("data.weights: expected finite weights > 0")

    @property
    def is_incomplete(self) -> bool:
        """True when rows are censored, interval-valued or truncated."""
        return self.n_incomplete > 0 or self.truncation is not None

    @property
    def conditioned_on(self) -> float | None:
        """``t0``, the smallest lower truncation point, when every row is truncated (then the
        data describe ``X`` given ``X > t0``); else None."""
        if self.truncation is None:
            return None
        t = np.asarray(self.truncation, dtype=np.float64)
        return float(t.min()) if t.size and bool(np.all(t > -np.inf)) else None

    @property
    def n_incomplete(self) -> int:
        """Rows not observed exactly (right-censored or with lower != upper)."""
        n = int(np.sum(self.censored)) if self.censored is not None else 0
        if self.lower is not None and self.upper is not None:
            n += int(np.sum(self.lower != self.upper))
        return n


@dataclass(frozen=True)
class TailDiagnostics:
    """Points of a mean-excess plot and of a threshold scan of the tail shape."""

    mean_excess_thresholds: Any = ()
    mean_excess: Any = ()
    scan_thresholds: Any = ()
    scan_shapes: Any = ()
    scan_low: Any = None
    scan_high: Any = None
    chosen_threshold: float | None = None


@dataclass(frozen=True)
class ReferenceEstimate:
    """A nonparametric CDF estimate (e.g. Kaplan–Meier, Turnbull) with an optional band.

    ``kind="step"``: ``cdf[i]`` holds on ``[x[i], x[i+1])``; ``kind="knots"``: linear between.
    ``sampler`` (optional) is the matching sampler, whose quantile definition the data row then
    uses; ``reached`` the highest level the estimate determines (below 1 when the largest rows
    are censored; default ``cdf[-1]``): quantiles above it are not shown.
    """

    label: str
    x: Any
    cdf: Any
    low: Any = None
    high: Any = None
    kind: Literal["step", "knots"] = "step"
    sampler: SamplerLike | None = None
    reached: float | None = None

    def __post_init__(self) -> None:
        x = np.asarray(self.x, dtype=np.float64).ravel()
        f = np.asarray(self.cdf, dtype=np.float64).ravel()
        if x.size == 0 or f.shape != x.shape or np.any(np.diff(x) < 0) or np.any(np.diff(f) < 0):
            raise InputDataError(
                "reference: expected x and cdf of equal length, both non-decreasing"
            )
        object.__setattr__(self, "x", x)
        object.__setattr__(self, "cdf", f)


@dataclass(frozen=True)
class JointInput:
    """Row-aligned data and draws of a joint input; rank correlations computed when missing."""

    columns: tuple[str, ...]
    data: Any
    draws: Any
    units: tuple[str, ...] = ()
    data_rank_correlation: Any = None
    draws_rank_correlation: Any = None


@dataclass(frozen=True)
class ElicitedPoints:
    """Points an expert gave: values not exceeded with the given probabilities, and for a
    three-point estimate its most likely value ``mode`` (the lowest and highest value are the
    points at probability 0 and 1)."""

    probabilities: Any
    values: Any
    source: str = ""
    mode: float | None = None


@dataclass(frozen=True)
class DriftInput:
    """The previous selection of the same dataset, to compare with the selected candidate."""

    previous: SamplerLike
    previous_label: str = "previous selection"
    threshold: float = 0.1
    ks_distance: float | None = None
    flagged: bool | None = None


@dataclass(frozen=True)
class ReportWarning:
    """A warning shown in the report, with its kind (one of :data:`WARNING_KINDS`)."""

    kind: WarningKind
    message: str

    def __post_init__(self) -> None:
        if self.kind not in WARNING_KINDS:
            raise InputDataError(
                f"warning kind: expected one of {', '.join(WARNING_KINDS)}, found {self.kind!r}"
            )


@dataclass(frozen=True)
class CheckReportInput:
    """Everything one dataset's check report shows. Only ``dataset`` and ``candidates`` are needed.

    ``selected`` is the label of the candidate the simulation draws from; ``reason`` says why (a
    criterion, or "named by the analyst"). ``units`` labels the data axis of every plot.
    """

    dataset: str
    candidates: tuple[Candidate, ...]
    selected: str | None = None
    reason: str = ""
    units: str = ""
    data: ObservedData | None = None
    warnings: tuple[ReportWarning, ...] = ()
    tail: TailDiagnostics | None = None
    reference: ReferenceEstimate | None = None
    joint: JointInput | None = None
    elicited: ElicitedPoints | None = None
    drift: DriftInput | None = None
    provenance: Mapping[str, str] = field(default_factory=dict)
    probabilities: tuple[float, ...] = KEY_PROBABILITIES
    tail_level: float = 0.99
    band_alpha: float = 0.05

    def __post_init__(self) -> None:
        object.__setattr__(self, "candidates", tuple(self.candidates))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        if not self.dataset:
            raise InputDataError("dataset: expected a non-empty name, found ''")
        if not self.candidates:
            raise InputDataError("candidates: expected at least one candidate, found none")
        labels = [c.label for c in self.candidates]
        if len(set(labels)) != len(labels):
            raise InputDataError(f"candidates: expected distinct labels, found {labels}")
        if self.selected is not None and self.selected not in labels:
            raise InputDataError(
                f"selected: expected one of the candidate labels {labels}, found {self.selected!r}"
            )
        for name, p in [("tail_level", self.tail_level), ("band_alpha", self.band_alpha)] + [
            ("probabilities", q) for q in self.probabilities
        ]:
            if not 0.0 < p < 1.0:
                raise InputDataError(f"{name}: expected values in (0, 1), found {p}")

    @property
    def selected_candidate(self) -> Candidate | None:
        """The selected candidate, or None when no selection was recorded."""
        return next((c for c in self.candidates if c.label == self.selected), None)
