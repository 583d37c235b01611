"""Checks made before a fit to incomplete data: family, fixed values, support, information."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.fitting.incomplete_families import SPECS, FamilySpec
from samplewright.fitting.incomplete_likelihood import RowLayout
from samplewright.fitting.incomplete_sample import IncompleteSample

__all__ = [
    "FAMILY_NAMES",
    "XI_RANGE",
    "check_information",
    "check_support",
    "number",
    "settings",
    "spec_for",
]

FAMILY_NAMES: tuple[str, ...] = tuple(SPECS)
XI_RANGE = (-1.0, 20.0)
Params = dict[str, float]


def spec_for(dist_name: str) -> FamilySpec:
    """The family's fitting recipe, or a MethodError listing the names offered."""
    if dist_name not in SPECS:
        raise MethodError(f"dist_name: expected one of {FAMILY_NAMES}, found {dist_name!r}")
    return SPECS[dist_name]


def number(value: Any, what: str) -> float:
    """``value`` as a finite float, or a MethodError naming ``what``."""
    if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
        raise MethodError(f"{what}: expected a finite number, found {value!r}")
    v = float(value)
    if not np.isfinite(v):
        raise MethodError(f"{what}: expected a finite number, found {v!r}")
    return v


def settings(
    spec: FamilySpec, dist_name: str, sample: IncompleteSample, fixed: Mapping[str, Any] | None
) -> Params:
    """Validated fixed values (settings with their defaults, plus fixed estimated params)."""
    fixed = dict(fixed or {})
    allowed = spec.settings + spec.estimated
    for k in fixed:
        if k not in allowed:
            raise MethodError(f"fixed: {dist_name} has parameters {allowed}, found {k!r}")
    out = {k: number(v, f"fixed[{k!r}] of {dist_name}") for k, v in fixed.items()}
    for k, v in out.items():
        if spec.kinds.get(k) == "log" and not v > 0:
            raise MethodError(f"fixed[{k!r}] of {dist_name}: expected a value > 0, found {v!r}")
        if spec.kinds.get(k) == "xi" and not XI_RANGE[0] <= v <= XI_RANGE[1]:
            raise MethodError(f"fixed['xi'] of {dist_name}: expected a value in {XI_RANGE}")
    if "loc" in spec.settings:
        out.setdefault("loc", 0.0)
    if "xm" in spec.settings:
        if "xm" not in out:
            loc = out["loc"]
            lo, t = sample.lower, sample.truncation
            cand = np.concatenate([lo[np.isfinite(lo) & (lo > loc)], t[t > loc]]) - loc
            if cand.size == 0:
                raise MethodError(
                    f"{dist_name}: no exact value, finite lower end or truncation point lies "
                    f"above loc={loc!r}; give fixed={{'xm': ...}}"
                )
            out["xm"] = float(cand.min())
        elif not out["xm"] > 0:
            raise MethodError(f"fixed['xm'] of {dist_name}: expected a value > 0")
    return out


def check_support(sample: IncompleteSample, dist_name: str, floor: float, closed: bool) -> None:
    """Refuse exact values below ``floor`` (at it too unless ``closed``), upper ends at or below."""
    if floor == -np.inf:
        return
    lo, hi = sample.lower, sample.upper
    exact = lo == hi
    bad = exact & ((lo < floor) if closed else (lo <= floor))
    rel = ">=" if closed else ">"
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise MethodError(
            f"{dist_name} needs every exact value {rel} {floor!r} (its lower end); found "
            f"{float(lo[i])!r} at row {i} ({int(bad.sum())} rows in all)"
        )
    bad = ~exact & (hi <= floor)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise MethodError(
            f"{dist_name} needs every upper end > {floor!r} (its lower end); found "
            f"{float(hi[i])!r} at "
            f"row {i} ({int(bad.sum())} rows in all)"
        )


def check_information(lay: RowLayout, spec: FamilySpec, dist_name: str, floor: float) -> None:
    """Refuse data whose likelihood has no maximum inside the parameter space."""
    lows = np.concatenate([lay.right, np.full(lay.left.size, floor), lay.lo])
    ups = np.concatenate([np.full(lay.right.size, np.inf), lay.left, lay.hi])
    if lay.x.size == 0 and lows.size == 0:
        raise MethodError(
            f"{dist_name}: no row carries information: every row is right-censored at or below "
            "its truncation point (or the family's lower end)"
        )
    if lay.x.size == 0 and np.all(ups == np.inf):
        raise MethodError(
            f"{dist_name}: every informative row is right-censored; the likelihood rises "
            "without bound as the mass moves to +inf"
        )
    if spec.concentrates:
        if lay.x.size:
            x0 = float(lay.x[0])
            if np.all(lay.x == x0) and np.all((lows <= x0) & (x0 <= ups)):
                raise MethodError(
                    f"{dist_name}: the likelihood is unbounded: every exact value equals {x0!r} "
                    "and every censored row admits it (a distribution shrinking onto that point "
                    "wins)"
                )
        elif lows.max() <= ups.min():
            raise MethodError(
                f"{dist_name}: no exact values and every row admits the point(s) in "
                f"[{float(lows.max())!r}, {float(ups.min())!r}]: a distribution shrinking onto a "
                "point there has the largest likelihood, so there is no proper fit"
            )
    elif lay.x.size == 0 and np.all(lows <= floor):
        raise MethodError(
            f"{dist_name}: every informative row is left-censored (lower end at or below "
            f"{floor!r}); the likelihood rises without bound as the mass moves to {floor!r}"
        )
