"""Pictures beside the data: tail diagnostics, joint draws, elicited points and drift.

Drawn like :mod:`samplewright.check.plots` (which re-exports them), with matplotlib's Agg
renderer into PNG bytes; matplotlib is imported inside the functions.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.check.plots_base import (
    _DATA_COLOUR,
    PlotResult,
    _axis,
    _figure,
    _finish,
    _span,
    _thin,
)
from samplewright.check.report_model import JointInput, SamplerLike
from samplewright.check.report_numbers import rank_correlation

__all__ = ["plot_drift", "plot_elicited", "plot_joint", "plot_mean_excess", "plot_shape_scan"]


def plot_mean_excess(
    thresholds: Any, mean_excess: Any, *, chosen: float | None = None, units: str = ""
) -> PlotResult:
    """Mean excess over each threshold, with the chosen tail threshold marked."""
    fig, (ax,) = _figure()
    ax.plot(thresholds, mean_excess, marker="o", markersize=3, color="#1f77b4", label="data")
    if chosen is not None:
        ax.axvline(chosen, color="#d62728", linestyle="--", label=f"chosen threshold {chosen:.4g}")
    ax.set_xlabel(_axis("threshold", units))
    ax.set_ylabel(_axis("mean excess over the threshold", units))
    ax.legend(fontsize=8, frameon=False)
    return _finish(fig, [ax], f"mean excess against threshold, in {units or 'data units'}")


def plot_shape_scan(
    thresholds: Any,
    shapes: Any,
    *,
    low: Any = None,
    high: Any = None,
    chosen: float | None = None,
    units: str = "",
) -> PlotResult:
    """The fitted tail shape at each threshold of a scan, with its band and the chosen one."""
    fig, (ax,) = _figure()
    if low is not None and high is not None:
        ax.fill_between(thresholds, low, high, color="#c6dbef", label="interval")
    ax.plot(thresholds, shapes, marker="o", markersize=3, color="#1f77b4", label="tail shape")
    if chosen is not None:
        ax.axvline(chosen, color="#d62728", linestyle="--", label=f"chosen threshold {chosen:.4g}")
    ax.set_xlabel(_axis("threshold", units))
    ax.set_ylabel("tail shape ξ (no unit)")
    ax.legend(fontsize=8, frameon=False)
    return _finish(fig, [ax], f"tail shape against threshold in {units or 'data units'}")


def plot_joint(joint: JointInput, *, max_pairs: int = 3, max_points: int = 3000) -> PlotResult:
    """Scatter of data rows and of joint draws for each pair of columns, with rank correlations."""
    data = np.asarray(joint.data, dtype=np.float64)
    draws = np.asarray(joint.draws, dtype=np.float64)
    rd = rank_correlation(data, joint.data_rank_correlation)
    rs = rank_correlation(draws, joint.draws_rank_correlation)
    d = len(joint.columns)
    pairs = [(i, j) for i in range(d) for j in range(i + 1, d)][:max_pairs]
    fig, axes = _figure(len(pairs), size=(4.2 * len(pairs) + 0.6, 4.2))
    units = joint.units or ("",) * d
    stride = max(1, draws.shape[0] // max_points)
    for ax, (i, j) in zip(axes, pairs, strict=True):
        ax.scatter(
            draws[::stride, i],
            draws[::stride, j],
            s=4,
            color="#9ecae1",
            alpha=0.6,
            label="draws",
            rasterized=True,
        )
        rows = _thin(data.shape[0], max_points)
        ax.scatter(data[rows, i], data[rows, j], s=12, color=_DATA_COLOUR, label="data")
        ax.set_xlabel(_axis(joint.columns[i], units[i]))
        ax.set_ylabel(_axis(joint.columns[j], units[j]))
        ax.set_title(f"rank correlation: data {rd[i, j]:.2f}, draws {rs[i, j]:.2f}", fontsize=9)
        ax.legend(fontsize=8, frameon=False, markerscale=2)
    alt = "; ".join(
        f"{joint.columns[i]} against {joint.columns[j]}: Spearman rank correlation "
        f"{rd[i, j]:.2f} in the data, {rs[i, j]:.2f} in the draws"
        for i, j in pairs
    )
    return _finish(fig, axes, "scatter of data and draws, " + alt)


def plot_elicited(
    sampler: SamplerLike,
    probabilities: Any,
    values: Any,
    *,
    mode: float | None = None,
    units: str = "",
    label: str = "",
) -> PlotResult:
    """The sampler's CDF with the elicited points and how far the curve passes from each; a
    three-point estimate's most likely value ``mode`` is marked where the curve crosses it."""
    p = np.asarray(probabilities, dtype=np.float64)
    v = np.asarray(values, dtype=np.float64)
    fig, (ax,) = _figure()
    lo, hi = _span(None, [("", sampler)], 0.002, 0.998)
    lo, hi = min(lo, float(v.min())), max(hi, float(v.max()))
    pad = 0.03 * (hi - lo)
    lo, hi = lo - pad, hi + pad
    grid = np.linspace(lo, hi, 800)
    ax.plot(
        grid,
        np.asarray(sampler.cdf(grid)),
        color="#1f77b4",
        linewidth=2.0,
        label=label or sampler.method,
    )
    fitted = np.asarray(sampler.cdf(v), dtype=np.float64)
    ax.vlines(v, np.minimum(p, fitted), np.maximum(p, fitted), color="#d62728", linewidth=1.0)
    ax.scatter(v, p, s=36, color="#d62728", zorder=4, label="elicited points")
    extra = ""
    if mode is not None:
        at = float(np.asarray(sampler.cdf(mode)))
        ax.axvline(mode, color="#d62728", linestyle=":", linewidth=1.2)
        ax.scatter(
            [mode], [at], s=44, marker="D", color="#d62728", zorder=4, label=f"most likely {mode:g}"
        )
        extra = f"; most likely value {mode:g}, where the curve is at {at:.3f}"
    ax.set_xlim(lo, hi)
    ax.set_ylim(-0.03, 1.03)
    ax.set_xlabel(_axis("value", units))
    ax.set_ylabel("cumulative probability")
    ax.legend(fontsize=8, frameon=False, loc="lower right")
    misses = ", ".join(f"P{100 * a:g}: {b - a:+.3f}" for a, b in zip(p, fitted, strict=True))
    alt = (
        f"CDF of {label or sampler.method} with the elicited points (CDF minus given: {misses})"
        + extra
    )
    return _finish(fig, [ax], alt + f"; value axis in {units or 'data units'}")


def plot_drift(
    old: SamplerLike,
    new: SamplerLike,
    *,
    old_label: str = "previous",
    new_label: str = "current",
    units: str = "",
) -> PlotResult:
    """The previous and the current selection's CDFs, with their largest gap marked."""
    fig, (ax,) = _figure()
    lo, hi = _span(None, [("", old), ("", new)], 0.002, 0.998)
    grid = np.linspace(lo, hi, 1200)
    fo, fn = np.asarray(old.cdf(grid)), np.asarray(new.cdf(grid))
    ax.plot(grid, fo, color="#7f7f7f", linestyle="--", linewidth=1.6, label=old_label)
    ax.plot(grid, fn, color="#1f77b4", linewidth=2.2, label=new_label)
    k = int(np.argmax(np.abs(fo - fn)))
    gap = float(abs(fo[k] - fn[k]))
    ax.vlines(
        grid[k],
        min(fo[k], fn[k]),
        max(fo[k], fn[k]),
        color="#d62728",
        linewidth=2.0,
        label=f"largest gap {gap:.3f}",
    )
    ax.set_xlabel(_axis("value", units))
    ax.set_ylabel("cumulative probability")
    ax.legend(fontsize=8, frameon=False, loc="lower right")
    alt = f"CDF of {old_label} and of {new_label}; largest gap {gap:.3f} at {grid[k]:.4g}"
    return _finish(fig, [ax], alt + f" {units}".rstrip())
