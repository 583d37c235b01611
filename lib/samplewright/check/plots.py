"""Pictures of a fit, drawn with matplotlib's Agg renderer into PNG bytes.

Each ``plot_*`` function returns a :class:`PlotResult`: the PNG, an alt text that says what the
picture shows in words, the axis labels and where each plot area sits in the image. matplotlib
is imported inside the functions, so importing this module stays cheap. Figures are built with
``matplotlib.figure.Figure`` (no pyplot, no global state); nothing random is drawn.

The data axis of every picture is labelled with the dataset's units. The confidence band of an
empirical CDF is the Dvoretzky–Kiefer–Wolfowitz band with Massart's constant (see
:func:`~samplewright.check.report_numbers.dkw_half_width`).
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from samplewright.check.report_model import JointInput, ReferenceEstimate, SamplerLike
from samplewright.check.report_numbers import (
    dkw_half_width,
    effective_n,
    is_discrete,
    rank_correlation,
)

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

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
]

Curve = tuple[str, SamplerLike]
_DPI = 96
_SIZE = (7.2, 4.0)
_DATA_COLOUR = "#4d4d4d"
_MAX_BINS = 60
_MAX_POINTS = 2000  # points drawn in a Q–Q or P–P picture


@dataclass(frozen=True)
class PlotResult:
    """A rendered picture.

    Attributes
    ----------
    png : the PNG file's bytes.
    alt : what the picture shows, in words (for the ``alt`` attribute).
    axis_labels : ``(x label, y label)`` of each plot area.
    plot_areas : ``(left, top, right, bottom)`` pixel box of each plot area in the PNG.
    """

    png: bytes
    alt: str
    axis_labels: tuple[tuple[str, str], ...]
    plot_areas: tuple[tuple[int, int, int, int], ...]


def _axis(name: str, units: str) -> str:
    return f"{name} ({units})" if units else name


def _figure(ncols: int = 1, size: tuple[float, float] = _SIZE) -> tuple[Figure, list[Axes]]:
    from matplotlib.figure import Figure

    fig = Figure(figsize=size, dpi=_DPI, layout="constrained")
    axes = [fig.add_subplot(1, ncols, i + 1) for i in range(ncols)]
    for ax in axes:
        ax.grid(True, color="#e3e3e3", linewidth=0.6)
        ax.set_axisbelow(True)
    return fig, axes


def _finish(fig: Figure, axes: Sequence[Axes], alt: str) -> PlotResult:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=_DPI, metadata={"Software": None})
    # savefig laid the figure out at the same dpi, so the axes now sit where the PNG shows them.
    height = int(round(fig.get_figheight() * _DPI))
    areas = []
    for ax in axes:
        box = ax.get_window_extent()
        areas.append(
            (int(box.x0), int(height - box.y1), int(np.ceil(box.x1)), int(height - box.y0))
        )
    labels = tuple((ax.get_xlabel(), ax.get_ylabel()) for ax in axes)
    return PlotResult(buf.getvalue(), alt, labels, tuple(areas))


def _style(i: int, label: str, selected: str | None) -> dict[str, Any]:
    from matplotlib import colormaps

    chosen = label == selected
    return {
        "color": colormaps["tab10"](i % 10),
        "linewidth": 2.4 if chosen else 1.3,
        "linestyle": "-" if chosen or selected is None else "--",
        "label": f"{label} (selected)" if chosen else label,
        "zorder": 3 if chosen else 2,
    }


def _span(values: np.ndarray | None, curves: Sequence[Curve], lo_p: float, hi_p: float) -> tuple:
    """A plotting range: the data's range, or the curves' ``lo_p``..``hi_p`` quantiles."""
    if values is not None:
        lo, hi = float(np.min(values)), float(np.max(values))
    else:
        qs = np.array([np.asarray(s.quantile(np.array([lo_p, hi_p]))) for _, s in curves])
        lo, hi = float(np.min(qs[:, 0])), float(np.max(qs[:, 1]))
    pad = 0.04 * (hi - lo) if hi > lo else max(abs(hi), 1.0) * 0.1
    return lo - pad, hi + pad


def _ecdf(values: np.ndarray, weights: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """Distinct values and the (weighted) empirical CDF at each."""
    w = np.ones_like(values) if weights is None else weights
    order = np.argsort(values, kind="stable")
    x, w = values[order], w[order]
    cum = np.cumsum(w) / np.sum(w)
    last = np.r_[x[1:] != x[:-1], True]
    return x[last], cum[last]


def _thin(n: int, limit: int) -> np.ndarray:
    """At most ``limit`` evenly spaced indices of ``range(n)``, first and last included."""
    if n <= limit:
        return np.arange(n)
    return np.unique(np.linspace(0, n - 1, limit).round().astype(np.intp))


def plotting_positions(values: Any, weights: Any = None) -> tuple[np.ndarray, np.ndarray]:
    """Sorted values and their mid-step probabilities ``(F(x-) + F(x)) / 2`` (``(i-1/2)/n``)."""
    x = np.asarray(values, dtype=np.float64)
    w = np.ones_like(x) if weights is None else np.asarray(weights, dtype=np.float64)
    order = np.argsort(x, kind="stable")
    cum = np.cumsum(w[order]) / np.sum(w)
    return x[order], cum - w[order] / np.sum(w) / 2.0


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
    units: str = "",
    label: str = "",
) -> PlotResult:
    """The sampler's CDF with the elicited points and how far the curve passes from each."""
    p = np.asarray(probabilities, dtype=np.float64)
    v = np.asarray(values, dtype=np.float64)
    fig, (ax,) = _figure()
    lo, hi = _span(None, [("", sampler)], 0.002, 0.998)
    lo, hi = min(lo, float(v.min())), max(hi, float(v.max()))
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
    ax.set_xlabel(_axis("value", units))
    ax.set_ylabel("cumulative probability")
    ax.legend(fontsize=8, frameon=False, loc="lower right")
    misses = ", ".join(f"P{100 * a:g}: {b - a:+.3f}" for a, b in zip(p, fitted, strict=True))
    alt = f"CDF of {label or sampler.method} with the elicited points (CDF minus given: {misses})"
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
