"""Inputs from expert judgement in a workflow: the settings of a ``quantiles`` or
``three_points`` dataset turned into a sampler, and the command line's point lists parsed.

The plan calls :func:`fit_elicited` once while planning (points no distribution passes through
stop the workflow before any job runs) and the ``elicit`` command calls it to write the artifact,
so both read the settings the same way.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from samplewright.core.errors import MethodError

__all__ = ["fit_elicited", "parse_quantile_points", "parse_three_points"]


def fit_elicited(kind: str, section: Mapping[str, Any]) -> Any:
    """The sampler of a ``quantiles`` or ``three_points`` config section (defaults filled or
    not); raises the fitting functions' one-line errors."""
    from samplewright.fitting.expert import PERT_SHAPE, from_quantiles, from_three_points

    if kind == "quantiles":
        return from_quantiles(
            section["probabilities"],
            section["values"],
            family=section.get("family", "metalog"),
            lower=section.get("lower"),
            upper=section.get("upper"),
            n_terms=section.get("n_terms"),
        )
    if kind != "three_points":
        raise MethodError(f"kind: expected 'quantiles' or 'three_points', found {kind!r}")
    return from_three_points(
        section["low"],
        section["mode"],
        section["high"],
        family=section.get("family", "pert"),
        shape=float(section.get("shape", PERT_SHAPE)),
    )


def parse_quantile_points(text: str) -> tuple[list[float], list[float]]:
    """``"0.1:40,0.5:55,0.9:90"`` -> probabilities and values.

    >>> parse_quantile_points("0.1:40, 0.5:55,0.9:90")
    ([0.1, 0.5, 0.9], [40.0, 55.0, 90.0])
    """
    ps, xs = [], []
    for item in text.split(","):
        p, sep, x = item.strip().partition(":")
        try:
            if not sep:
                raise ValueError
            ps.append(float(p))
            xs.append(float(x))
        except ValueError:
            raise MethodError(
                f"--quantiles: expected P:VALUE pairs separated by commas (e.g. "
                f"'0.1:40,0.5:55,0.9:90'), found {item.strip()!r}"
            ) from None
    return ps, xs


def parse_three_points(text: str) -> tuple[float, float, float]:
    """``"40,55,90"`` -> (low, mode, high).

    >>> parse_three_points("40, 55,90")
    (40.0, 55.0, 90.0)
    """
    parts = [p.strip() for p in text.split(",")]
    try:
        if len(parts) != 3:
            raise ValueError
        low, mode, high = (float(p) for p in parts)
    except ValueError:
        raise MethodError(
            f"--three-points: expected LOW,MODE,HIGH (three numbers), found {text!r}"
        ) from None
    return low, mode, high
