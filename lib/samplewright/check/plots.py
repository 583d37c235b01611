"""Pictures of a fit, drawn with matplotlib's Agg renderer into PNG bytes.

Each ``plot_*`` function returns a :class:`PlotResult`: the PNG, an alt text that says what the
picture shows in words, the axis labels and where each plot area sits in the image. matplotlib
is imported inside the functions, so importing this module stays cheap. Figures are built with
``matplotlib.figure.Figure`` (no pyplot, no global state); nothing random is drawn.

The pictures beside the data (tail diagnostics, joint draws, elicited points, drift) are in
:mod:`samplewright.check.plots_side`, the shared set-up in :mod:`samplewright.check.plots_base`;
all are re-exported here. The data axis of every picture is labelled with the dataset's units.
The confidence band of an empirical CDF is the Dvoretzky–Kiefer–Wolfowitz band with Massart's
constant (see :func:`~samplewright.check.report_numbers.dkw_half_width`).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any, Literal

import numpy as np

from samplewright.check.plots_base import (
    _DATA_COLOUR,
    _MAX_BINS,
    _MAX_POINTS,
    Curve,
    PlotResult,
    _axis,
    _ecdf,
    _figure,
    _finish,
    _span,
    _style,
    _thin,
    plotting_positions,
)
from samplewright.check.plots_side import (
    plot_drift,
    plot_elicited,
    plot_joint,
    plot_mean_excess,
    plot_shape_scan,
)
from samplewright.check.report_model import ReferenceEstimate, SamplerLike
from samplewright.check.report_numbers import dkw_half_width, effective_n, is_discrete

__all__ = [
    "Curve",
    "PlotResult",
    "plot_cdf",
    "plot_density",
    "plot_drift",
    "plot_elicited",
    "plot_joint",
    "plot_mean_excess",
    "plot_pp",
    "plot_qq",
    "plot_quantile_spread",
    "plot_reference",
    "plot_shape_scan",
    "plotting_positions",
]


def plot_density(
    values: Any,
    curves: Sequence[Curve],
    *,
    weights: Any = None,
    discrete: bool | None = None,
    units: str = "",
    selected: str | None = None,
) -> PlotResult:
    """Histogram of the data (bars of relative frequency for counts) with each candidate's
    density (or pmf); candidates with neither are named in the legend."""
    x = None if values is None else np.asarray(values, dtype=np.float64)
    w = None if weights is None else np.asarray(weights, dtype=np.float64)
    if discrete is None:
        ints = x is None or bool(np.all(x == np.round(x)))
        discrete = ints and all(is_discrete(s) for _, s in curves)
    fig, (ax,) = _figure()
    lo, hi = _span(x, curves, 0.005, 0.995)
    if discrete:
        from matplotlib.ticker import MaxNLocator

        k = np.arange(np.floor(lo + 0.5), np.ceil(hi) + 1)
        if k.size > 400:
            k = np.unique(np.round(np.linspace(k[0], k[-1], 400)))
        if x is not None:
            vals, counts = np.unique(x, return_counts=True)
            if w is not None:
                counts = np.array([w[x == v].sum() for v in vals])
            ax.bar(vals, counts / counts.sum(), width=0.8, color="#c9c9c9", label="data")
        for i, (label, s) in enumerate(curves):
            pmf = getattr(s, "pmf", None)
            if pmf is None or not is_discrete(s):
                ax.plot([], [], " ", label=f"{label}: continuous, no pmf")
                continue
            st = _style(i, label, selected)
            ax.plot(k, np.asarray(pmf(k)), marker="o", markersize=3.5, **st)
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))
        ax.set_ylabel("probability")
        ax.set_xlabel(_axis("count", units))
        what = "relative frequency of each count with each candidate's probability mass"
    else:
        if x is not None:
            edges = np.histogram_bin_edges(x, bins="fd")
            if x.min() == x.max():
                edges = np.array([x.min() - 0.5, x.min() + 0.5])
            elif edges.size - 1 > _MAX_BINS or edges.size < 6:
                edges = np.linspace(x.min(), x.max(), min(_MAX_BINS, max(5, x.size // 4)) + 1)
            ax.hist(x, bins=edges.tolist(), weights=w, density=True, color="#c9c9c9", label="data")
        grid = np.linspace(lo, hi, 600)
        for i, (label, s) in enumerate(curves):
            if is_discrete(s):
                ax.plot([], [], " ", label=f"{label}: atoms, no density")
                continue
            density = np.asarray(s.pdf(grid))  # type: ignore[attr-defined]  # not discrete
            ax.plot(grid, density, **_style(i, label, selected))
        ax.set_ylabel(_axis("density", f"1/{units}" if units else ""))
        ax.set_xlabel(_axis("value", units))
        what = "histogram of the data with each candidate's density"
    ax.set_xlim(lo, hi)
    ax.legend(fontsize=8, frameon=False)
    return _finish(fig, [ax], f"{what}; value axis in {units or 'data units'}")


def plot_cdf(
    values: Any,
    curves: Sequence[Curve],
    *,
    weights: Any = None,
    alpha: float = 0.05,
    units: str = "",
    selected: str | None = None,
) -> PlotResult:
    """Empirical CDF with its DKW confidence band, and each candidate's CDF."""
    x = np.asarray(values, dtype=np.float64)
    w = None if weights is None else np.asarray(weights, dtype=np.float64)
    xs, fs = _ecdf(x, w)
    keep = _thin(xs.size, 4 * _MAX_POINTS)  # the step drawn through at most 8,000 points
    xs, fs = xs[keep], fs[keep]
    eps = dkw_half_width(effective_n(w, x.size), alpha)
    fig, (ax,) = _figure()
    lo, hi = _span(x, curves, 0.005, 0.995)
    sx = np.r_[lo, xs, hi]
    sf = np.r_[0.0, fs, 1.0]
    ax.fill_between(
        sx,
        np.clip(sf - eps, 0, 1),
        np.clip(sf + eps, 0, 1),
        step="post",
        color="#dcdcdc",
        label=f"{1 - alpha:.0%} band (DKW, ±{eps:.3f})",
    )
    ax.step(sx, sf, where="post", color=_DATA_COLOUR, linewidth=1.2, label="data")
    grid = np.sort(np.r_[np.linspace(lo, hi, 800), xs])
    for i, (label, s) in enumerate(curves):
        ax.plot(grid, np.asarray(s.cdf(grid)), **_style(i, label, selected))
    ax.set_xlim(lo, hi)
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlabel(_axis("value", units))
    ax.set_ylabel("cumulative probability")
    ax.legend(fontsize=8, frameon=False, loc="lower right")
    alt = (
        f"empirical CDF of the data with a {1 - alpha:.0%} DKW band of half-width {eps:.3f} and "
        f"each candidate's CDF; value axis in {units or 'data units'}"
    )
    return _finish(fig, [ax], alt)


def plot_qq(
    values: Any,
    sampler: SamplerLike,
    *,
    weights: Any = None,
    positions: tuple[Any, Any] | None = None,
    units: str = "",
    label: str = "",
) -> PlotResult:
    """Observed values against the sampler's quantiles at the same plotting positions.

    ``positions`` (values, probabilities) replaces the data's own, e.g. the jumps of a
    Kaplan–Meier estimate for censored data.
    """
    xs, ps = positions if positions is not None else plotting_positions(values, weights)
    keep = _thin(len(xs), _MAX_POINTS)  # order statistics evenly spread, extremes kept
    xs, ps = np.asarray(xs, dtype=np.float64)[keep], np.asarray(ps, dtype=np.float64)[keep]
    q = np.asarray(sampler.quantile(np.clip(ps, 0.0, 1.0)), dtype=np.float64)
    fig, (ax,) = _figure(size=(5.0, 4.4))
    ok = np.isfinite(q)
    ax.scatter(q[ok], xs[ok], s=12, color=_DATA_COLOUR, label="data", zorder=3)
    both = np.r_[q[ok], xs[ok]]
    ends = [float(both.min()), float(both.max())]
    ax.plot(ends, ends, color="#d62728", linewidth=1.0, label="equal")
    ax.set_xlabel(_axis(f"quantile of {label or sampler.method}", units))
    ax.set_ylabel(_axis("observed value", units))
    ax.legend(fontsize=8, frameon=False, loc="upper left")
    alt = f"Q–Q plot: observed values against quantiles of {label or sampler.method}"
    return _finish(fig, [ax], alt + f", both in {units or 'data units'}")


def plot_pp(
    values: Any,
    sampler: SamplerLike,
    *,
    weights: Any = None,
    positions: tuple[Any, Any] | None = None,
    label: str = "",
) -> PlotResult:
    """Empirical plotting positions against the sampler's CDF at the same values."""
    xs, ps = positions if positions is not None else plotting_positions(values, weights)
    keep = _thin(len(xs), _MAX_POINTS)
    xs, ps = np.asarray(xs, dtype=np.float64)[keep], np.asarray(ps, dtype=np.float64)[keep]
    f = np.asarray(sampler.cdf(xs), dtype=np.float64)
    fig, (ax,) = _figure(size=(5.0, 4.4))
    ax.scatter(f, ps, s=12, color=_DATA_COLOUR, label="data", zorder=3)
    ax.plot([0, 1], [0, 1], color="#d62728", linewidth=1.0, label="equal")
    ax.set_xlabel(f"probability under {label or sampler.method}")
    ax.set_ylabel("empirical probability")
    ax.legend(fontsize=8, frameon=False, loc="upper left")
    alt = f"P–P plot: empirical probabilities against the CDF of {label or sampler.method}"
    return _finish(fig, [ax], alt)


def plot_quantile_spread(
    curves: Sequence[Curve],
    *,
    probabilities: Sequence[float],
    data_quantiles: dict[float, float] | None = None,
    units: str = "",
    selected: str | None = None,
) -> PlotResult:
    """Each candidate's value against the probability of exceeding it (log axis), with the key
    probabilities marked and the data's own quantiles as points."""
    tail = 1.0 - np.asarray(probabilities, dtype=np.float64)
    smallest = float(min(tail.min(), 0.5)) / 2.0
    exceed = np.geomspace(0.5, smallest, 300)
    fig, (ax,) = _figure()
    for t in tail:
        ax.axvline(t, color="#bbbbbb", linewidth=0.8, linestyle=":")
    for i, (label, s) in enumerate(curves):
        q = np.asarray(s.quantile(1.0 - exceed), dtype=np.float64)
        ax.plot(exceed, q, **_style(i, label, selected))
    if data_quantiles:
        ps = np.array(sorted(data_quantiles))
        ax.scatter(
            1.0 - ps, [data_quantiles[p] for p in ps], color="black", s=22, zorder=4, label="data"
        )
    ax.set_xscale("log")
    ax.invert_xaxis()
    ax.set_xlabel("probability of exceeding the value (log scale)")
    ax.set_ylabel(_axis("value", units))
    ax.legend(fontsize=8, frameon=False, loc="upper left")
    alt = (
        "each candidate's quantile against the probability of exceeding it, key probabilities "
        f"{', '.join(f'{p:g}' for p in probabilities)} marked; values in {units or 'data units'}"
    )
    return _finish(fig, [ax], alt)


def plot_reference(
    reference: ReferenceEstimate,
    curves: Sequence[Curve],
    *,
    units: str = "",
    selected: str | None = None,
) -> PlotResult:
    """A nonparametric CDF estimate with its band, and each candidate's CDF over it."""
    x, f = reference.x, reference.cdf
    fig, (ax,) = _figure()
    lo, hi = _span(x, curves, 0.005, 0.995)
    step: Literal["post"] | None = "post" if reference.kind == "step" else None
    sx, sf = np.r_[lo, x, hi], np.r_[0.0, f, f[-1]]
    if reference.low is not None and reference.high is not None:
        bl = np.r_[0.0, np.asarray(reference.low, dtype=np.float64), reference.low[-1]]
        bh = np.r_[0.0, np.asarray(reference.high, dtype=np.float64), reference.high[-1]]
        ax.fill_between(sx, bl, bh, step=step, color="#dcdcdc", label="band")
    if step:
        ax.step(sx, sf, where="post", color=_DATA_COLOUR, label=reference.label)
    else:
        ax.plot(sx, sf, color=_DATA_COLOUR, label=reference.label)
    grid = np.linspace(lo, hi, 800)
    for i, (label, s) in enumerate(curves):
        ax.plot(grid, np.asarray(s.cdf(grid)), **_style(i, label, selected))
    ax.set_xlim(lo, hi)
    ax.set_xlabel(_axis("value", units))
    ax.set_ylabel("cumulative probability")
    ax.legend(fontsize=8, frameon=False, loc="lower right")
    alt = f"{reference.label} estimate with its band and each candidate's CDF"
    return _finish(fig, [ax], alt + f"; value axis in {units or 'data units'}")
