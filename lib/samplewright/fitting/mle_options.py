"""Options that fix a family's parameters: each parameter's own name takes a number.

``fit(x, "weibull", shape=1.5)`` holds the shape at 1.5 and fits the rest (the catalog,
:mod:`samplewright.fitting.catalog`, declares every parameter of every family as an option). A
fixed value is checked here, once: scales, shapes, rates and ``r`` must be > 0, ``p`` in (0, 1),
``xi`` >= -1, student_t's ``nu`` at most :data:`~samplewright.fitting.mle_student_t.NU_MAX`;
any other parameter any finite number. ``loc`` (which may be ``"free"``), ``n_trials`` (an int)
and the bounds ``lower``/``upper`` are checked by the fitters, against the data.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.families import get_family
from samplewright.fitting.mle_student_t import NU_MAX

__all__ = ["fixed_options"]

# parameters that must be > 0 when fixed; "p" lies in (0, 1); "xi" >= -1; the rest any number
_POSITIVE = frozenset({"sigma", "scale", "shape", "s", "alpha", "beta", "xm", "lambda", "nu", "r"})


def _param_value(name: str, key: str, v: Any) -> float:
    """The checked value of an option fixing parameter ``key`` of family ``name``."""
    if isinstance(v, bool) or not isinstance(v, int | float | np.integer | np.floating):
        raise MethodError(f"option {key!r} of {name}: expected a finite number, found {v!r}")
    x = float(v)
    ok, want = bool(np.isfinite(x)), "a finite number"
    if key in _POSITIVE:
        ok, want = ok and x > 0, "a number > 0"
    if key == "p":
        ok, want = ok and 0 < x < 1, "a number in (0, 1)"
    if key == "xi":
        ok, want = ok and x >= -1, "a number >= -1"
    if key == "nu" and name == "student_t":
        ok, want = ok and 0 < x <= NU_MAX, f"a number in (0, {NU_MAX:g}]"
    if not ok:
        raise MethodError(f"option {key!r} of {name}: expected {want}, found {v!r}")
    return x


def fixed_options(name: str, options: Mapping[str, Any]) -> dict[str, Any]:
    """``options`` with each option that fixes a parameter checked and made a float.

    >>> fixed_options("weibull", {"shape": 2})
    {'shape': 2.0}
    """
    out = dict(options)
    if not out:
        return out
    for key in get_family(name).param_names:
        if key in out and key not in ("loc", "n_trials", "lower", "upper"):
            out[key] = _param_value(name, key, out[key])
    return out
