"""Small HTML pieces shared by the report pages: escaping, numbers, cells, tables, pictures.

Numbers are shown to four significant digits (full precision stays in a cell's ``data-value``);
pictures are embedded as base64 PNG with their alt text, so a page needs no network.
"""

from __future__ import annotations

import base64
import html
import math
from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    from samplewright.check.plots import PlotResult
    from samplewright.check.report_model import ConfidenceInterval

__all__ = ["cell", "escape", "img", "number", "pct", "pvalue", "table"]


def escape(text: object) -> str:
    """``text`` escaped for HTML text and attributes."""
    return html.escape(str(text), quote=True)


def number(v: float | None, digits: int = 4) -> str:
    """A number to ``digits`` significant digits; ∞ for infinities, — when missing.

    >>> number(1234.5678), number(None), number(float("inf")), number(-0.0)
    ('1235', '—', '∞', '0')
    """
    if v is None:
        return "—"
    v = float(v)
    if math.isnan(v):
        return "n/a"
    if math.isinf(v):
        return "∞" if v > 0 else "−∞"
    text = format(v, f".{digits}g")
    return "0" if text in ("-0", "0") else text


def pct(p: float) -> str:
    """A probability as a percentage: ``pct(0.999) == '99.9%'``."""
    return f"{100 * p:.10g}%"


def pvalue(p: float | None) -> str:
    """A p-value to three decimals (``< 0.001`` below), — when missing."""
    if p is None:
        return "—"
    return "< 0.001" if p < 0.001 else f"{p:.3f}"


def cell(v: float | None, ci: ConfidenceInterval | None = None) -> str:
    """A numeric table cell, with an interval below the value when given."""
    attr = "" if v is None else f' data-value="{float(v)!r}"'
    extra = ""
    if ci is not None:
        extra = f'<span class="ci">{ci.level:.0%}: [{number(ci.low)}, {number(ci.high)}]</span>'
    return f'<td class="num"{attr}>{number(v)}{extra}</td>'


def table(head: Sequence[str], rows: Iterable[str], cls: str = "") -> str:
    """A table with header cells ``head`` (HTML) and body rows ``rows`` (``<tr>`` HTML)."""
    th = "".join(f"<th>{h}</th>" for h in head)
    c = f' class="{cls}"' if cls else ""
    return f"<table{c}><thead><tr>{th}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def img(result: PlotResult, title: str, caption: str) -> str:
    """A figure: title, the embedded PNG with its alt text and size, and a caption."""
    width = int.from_bytes(result.png[16:20], "big")
    height = int.from_bytes(result.png[20:24], "big")
    data = base64.b64encode(result.png).decode("ascii")
    return (
        f'<figure><h3>{escape(title)}</h3><img src="data:image/png;base64,{data}" '
        f'alt="{escape(result.alt)}" width="{width}" height="{height}">'
        f"<figcaption>{escape(caption)}</figcaption></figure>"
    )
