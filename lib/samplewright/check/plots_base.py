"""The shared parts of the report pictures: the result type, figure set-up and small helpers.

See :mod:`samplewright.check.plots` (which re-exports :class:`PlotResult` and :data:`Curve`).
matplotlib is imported inside the functions, so importing this module stays cheap.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from samplewright.check.report_model import SamplerLike

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = ["Curve", "PlotResult", "plotting_positions"]

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
