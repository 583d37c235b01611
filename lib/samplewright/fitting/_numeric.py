"""Numerical helpers shared by the elicitation, mixture and zero-modified fitters.

One job each: :func:`check_sample` turns raw values and optional frequency weights into checked
float arrays; :func:`check_probabilities` checks an array of probability levels;
:func:`check_elicited_points` checks elicited (probability, value) pairs;
:func:`solve_increasing` inverts an increasing function elementwise by safeguarded Newton steps
inside a bracket (bisection whenever a Newton step would leave it), so it always converges.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError

__all__ = [
    "check_elicited_points",
    "check_probabilities",
    "check_sample",
    "solve_increasing",
]

ArrayFn = Callable[[np.ndarray], np.ndarray]


def check_sample(
    values: Any,
    weights: Any = None,
    *,
    name: str = "values",
    positive: bool = False,
    integer: bool = False,
) -> tuple[np.ndarray, np.ndarray]:
    """Return ``values`` as a non-empty 1-d float array and ``weights`` as matching floats.

    Weights are frequency weights (an integer weight behaves exactly like repeated rows); missing
    weights become ones. A MethodError names the argument, what was expected and what was found.
    """
    x = np.asarray(values, dtype=np.float64)
    if x.ndim != 1:
        raise MethodError(f"{name}: expected a 1-d array, found {x.ndim} dimensions")
    if x.size == 0:
        raise MethodError(f"{name}: expected at least 1 value, found 0")
    bad = ~np.isfinite(x)
    what = "finite values"
    if positive:
        bad |= x <= 0
        what = "finite values > 0"
    if integer:
        bad |= (x < 0) | (x != np.floor(x))
        what = "non-negative integer counts"
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        raise MethodError(
            f"{name}: expected {what}; {int(bad.sum())} of {x.size} are not "
            f"(first at position {i}: {float(x[i])!r})"
        )
    if weights is None:
        return x, np.ones_like(x)
    w = np.asarray(weights, dtype=np.float64)
    if w.shape != x.shape:
        raise MethodError(f"weights: expected {x.size} weights (one per value), found {w.size}")
    bad_w = ~(np.isfinite(w) & (w >= 0))
    if np.any(bad_w):
        i = int(np.flatnonzero(bad_w)[0])
        raise MethodError(
            f"weights: expected finite weights >= 0; weight at position {i} is {float(w[i])!r}"
        )
    if not np.any(w > 0):
        raise MethodError("weights: expected at least one weight > 0, found all zero")
    keep = w > 0
    return x[keep], w[keep]


def check_probabilities(u: Any, name: str = "u") -> np.ndarray:
    """``u`` as a float array with every entry in [0, 1]; MethodError naming ``name`` otherwise."""
    arr = np.asarray(u, dtype=np.float64)
    bad = ~((arr >= 0) & (arr <= 1))
    if np.any(bad):
        first = float(arr[bad].ravel()[0])
        raise MethodError(f"{name}: probabilities must lie in [0, 1], found {first!r}")
    return arr


def check_elicited_points(
    probabilities: Any, values: Any, *, min_points: int = 2
) -> tuple[np.ndarray, np.ndarray]:
    """Elicited (p, x) points sorted by p: levels distinct in (0, 1), values finite, increasing."""
    p = np.asarray(probabilities, dtype=np.float64)
    x = np.asarray(values, dtype=np.float64)
    if p.ndim != 1 or x.ndim != 1 or p.size != x.size:
        raise MethodError(
            f"probabilities, values: expected two 1-d arrays of equal length, found shapes "
            f"{p.shape} and {x.shape}"
        )
    if p.size < min_points:
        raise MethodError(
            f"probabilities: expected at least {min_points} elicited points, found {p.size}"
        )
    if not np.all((p > 0) & (p < 1)):
        raise MethodError(f"probabilities: expected levels strictly between 0 and 1, found {p}")
    if not np.all(np.isfinite(x)):
        raise MethodError(f"values: expected finite numbers, found {x}")
    order = np.argsort(p, kind="stable")
    p, x = p[order], x[order]
    same = np.flatnonzero(np.diff(p) == 0)
    if same.size:
        raise MethodError(f"probabilities: level {p[same[0]]} is given twice")
    down = np.flatnonzero(np.diff(x) <= 0)
    if down.size:
        i = int(down[0])
        raise MethodError(
            f"values: must increase with probability; (p={p[i]:g}, x={x[i]:g}) and "
            f"(p={p[i + 1]:g}, x={x[i + 1]:g}) do not"
        )
    return p, x


def solve_increasing(
    func: ArrayFn,
    deriv: ArrayFn,
    target: np.ndarray,
    lo: np.ndarray,
    hi: np.ndarray,
    *,
    start: np.ndarray | None = None,
    xtol: float = 1e-13,
    max_iter: int = 200,
) -> np.ndarray:
    """Solve ``func(x) = target`` elementwise for an increasing ``func`` with a root in [lo, hi].

    ``func`` and ``deriv`` take a 1-d array of points and return arrays of the same shape. Newton
    steps are taken while they stay strictly inside the current bracket; otherwise the bracket is
    halved. Each bisection at least halves the bracket, so ``max_iter`` (200) steps reach float
    resolution for any finite bracket; elements still unsettled then get the bracket's midpoint.
    """
    t = np.asarray(target, dtype=np.float64).ravel()
    a = np.broadcast_to(np.asarray(lo, dtype=np.float64), t.shape).ravel().copy()
    b = np.broadcast_to(np.asarray(hi, dtype=np.float64), t.shape).ravel().copy()
    x = 0.5 * (a + b) if start is None else np.clip(np.asarray(start, float).ravel(), a, b)
    x = x.copy()
    active = np.flatnonzero(b > a)
    for _ in range(max_iter):
        if active.size == 0:
            break
        xa = x[active]
        f = func(xa) - t[active]
        d = deriv(xa)
        below = f < 0
        a[active] = np.where(below, xa, a[active])
        b[active] = np.where(below, b[active], xa)
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = xa - f / d
        aa, bb = a[active], b[active]
        ok = np.isfinite(newton) & (newton > aa) & (newton < bb)
        new = np.where(ok, newton, 0.5 * (aa + bb))
        step = np.abs(new - xa)
        x[active] = new
        scale = np.maximum(np.abs(new), 1.0)
        done = (f == 0) | (step <= xtol * scale) | (bb - aa <= xtol * scale)
        x[active[f == 0]] = xa[f == 0]
        active = active[~done]
    return x.reshape(np.shape(target))
