"""``samplewright show``: one artifact as aligned, rounded text that a terminal can hold.

Layout: one ``name  value`` line per fact, names in a column of their own (so a long name never
runs into its value); numbers to :data:`DIGITS` significant digits; the warnings the artifact
records (:func:`samplewright.check.recorded.artifact_warnings`), one per line; then every
diagnostics section in full, as indented ``key: value`` lines (lists of numbers on one line,
wrapped), never cut. A drawn CDF (knots) says how many knots it has instead of counts of data
rows. ``show --json`` prints the metadata exactly as stored instead.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Mapping
from typing import Any

from samplewright.check.recorded import artifact_warnings
from samplewright.check.selection import selection_reason

__all__ = ["DIGITS", "format_show", "format_value"]

DIGITS = 6
_WIDTH = 100
_NAME = 14  # width of the name column


def format_value(v: Any, digits: int = DIGITS) -> str:
    """A scalar for people: floats to ``digits`` significant digits, None as "-".

    >>> format_value(0.1 + 0.2), format_value(1234567.891), format_value(None), format_value(3)
    ('0.3', '1.23457e+06', '-', '3')
    """
    if v is None:
        return "-"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        text = format(v, f".{digits}g")
        return "0" if text == "-0" else text
    return str(v)


def _line(name: str, value: str, indent: int = 2) -> str:
    pad = " " * indent
    width = max(_NAME, len(name) + 2)
    return f"{pad}{name:<{width}}{value}"


def _scalar(v: Any) -> bool:
    return v is None or isinstance(v, str | int | float | bool)


def _block(obj: Any, indent: int) -> list[str]:
    """A JSON value as indented ``key: value`` lines, every entry shown."""
    pad = " " * indent
    lines: list[str] = []
    if isinstance(obj, Mapping):
        for k, v in obj.items():
            if _scalar(v):
                lines.append(f"{pad}{k}: {format_value(v)}")
            elif isinstance(v, list) and all(_scalar(i) for i in v):
                text = "[" + ", ".join(format_value(i) for i in v) + "]"
                lines += textwrap.wrap(
                    text,
                    _WIDTH,
                    initial_indent=f"{pad}{k}: ",
                    subsequent_indent=pad + "  ",
                    break_on_hyphens=False,
                ) or [f"{pad}{k}: []"]
            else:
                lines.append(f"{pad}{k}:")
                lines += _block(v, indent + 2)
    elif isinstance(obj, list):
        for item in obj:
            sub = _block(item, indent + 2)
            if sub:
                first = sub[0].lstrip()
                lines.append(f"{pad}- {first}")
                lines += sub[1:]
            else:
                lines.append(f"{pad}- {format_value(item)}")
    else:
        lines.append(f"{pad}{format_value(obj)}")
    return lines


def _params(params: Mapping[str, Any]) -> str:
    return ", ".join(f"{k} = {format_value(v)}" for k, v in params.items()) or "none"


def _data_line(sampler: Mapping[str, Any], data: Mapping[str, Any]) -> str | None:
    if not data:
        return None
    if "n_knots" in data or sampler.get("method") == "knots":
        return f"a drawn CDF of {data.get('n_knots', '?')} knots (no data rows)"
    parts = [f"{format_value(data.get('n_obs'))} observations"]
    if data.get("n_rows_read") is not None:
        parts.append(f"{format_value(data['n_rows_read'])} rows read")
    dropped = data.get("dropped") or {}
    if isinstance(dropped, Mapping) and any(dropped.values()):
        parts.append("dropped: " + ", ".join(f"{v} {k}" for k, v in dropped.items() if v))
    if data.get("weighted"):
        parts.append("weighted")
    if data.get("censored"):
        parts.append(f"{data['censored']} right-censored")
    return "; ".join(parts)


def _selection(sel: Mapping[str, Any]) -> list[str]:
    rule = str(sel.get("rule"))
    ranking = sel.get("ranking") or []
    lines = [
        _line("selected by", f"{selection_reason(rule)} (rule {rule}, {len(ranking)} candidates)")
    ]
    for row in ranking:
        crit = "  ".join(
            f"{k} {format_value(row[k])}" for k in ("aic", "bic") if row.get(k) is not None
        )
        name = str(row.get("label") or row.get("method"))
        lines.append(f"    {row.get('rank')}. {name:<18} {crit}".rstrip())
    return lines


def format_show(path: Any, sampler: Any, meta: Mapping[str, Any]) -> str:
    """The text of ``samplewright show`` for the artifact at ``path`` with metadata ``meta``.

    ``sampler`` is the loaded sampler (unused beyond what ``meta`` records; kept so callers
    pass what they have).
    """
    s = meta.get("sampler") or {}
    lines = [str(path), _line("method", str(s.get("method")))]
    if s.get("family") and s.get("family") != s.get("method"):
        lines.append(_line("family", str(s["family"])))
    lines.append(_line("parameters", _params(s.get("params") or {})))
    lo, hi = (s.get("support") or [None, None])[:2]
    lines.append(_line("support", f"[{format_value(lo)}, {format_value(hi)}]"))
    lines.append(_line("mean, sd", f"{format_value(s.get('mean'))}, {format_value(s.get('sd'))}"))
    crit = [f"{k} {format_value(s[k])}" for k in ("loglik", "aic", "bic") if k in s]
    if crit:
        lines.append(_line("likelihood", "   ".join(crit)))
    data_line = _data_line(s, meta.get("data") or {})
    if data_line:
        lines.append(_line("data", data_line))
    diag = dict(meta.get("diagnostics") or {})
    sel = diag.pop("selection", None)
    if isinstance(sel, Mapping):
        lines += _selection(sel)
    warned = artifact_warnings(meta)
    if warned:
        lines.append(_line("warnings", f"{len(warned)}"))
        lines += [f"    - [{w.kind}] {w.message}" for w in warned]
    if diag:
        lines.append("  diagnostics")
        lines += _block(diag, 4)
    prov = meta.get("provenance") or {}
    source = prov.get("source")
    column = prov.get("column")
    lines.append(
        _line("source", f"{source}" + (f", column {column!r}" if column is not None else ""))
    )
    lines.append(_line("fingerprint", str(meta.get("fingerprint"))))
    lines.append(_line("key", str(meta.get("key"))))
    lines.append(_line("content hash", str(meta.get("content_hash"))))
    lines.append(_line("created", str(prov.get("created_at"))))
    return "\n".join(lines)
