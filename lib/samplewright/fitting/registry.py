"""Methods beyond plain families and empirical CDFs (tails, smoothing, censoring, model choice).

``EXTENSION_METHODS`` maps a method name to ``fitter(x, weights, censored, **options)`` returning
a :class:`~samplewright.distributions.base.Sampler`. The modules named in
:data:`samplewright.fitting.catalog.EXTENSION_MODULES` register themselves here when imported;
:func:`load_extensions` imports them all (fitting and loading artifacts call it), so that a bare
``import samplewright`` stays cheap.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from typing import Any

__all__ = ["EXTENSION_METHODS", "check_values", "load_extensions"]

EXTENSION_METHODS: dict[str, Callable[..., Any]] = {}


def check_values(values: Any, weights: Any) -> tuple[Any, Any]:
    """``values`` as a non-empty 1-d float array of finite numbers and ``weights`` (or None) as
    matching finite positive floats; MethodError naming the argument otherwise."""
    import numpy as np

    from samplewright.core.errors import MethodError

    x = np.asarray(values, dtype=np.float64)
    if x.ndim != 1 or x.size == 0 or not np.all(np.isfinite(x)):
        raise MethodError("values: expected a non-empty 1-d array of finite values")
    w = None if weights is None else np.asarray(weights, dtype=np.float64)
    if w is not None and (w.shape != x.shape or not np.all(np.isfinite(w) & (w > 0))):
        raise MethodError(f"weights: expected {x.size} finite weights > 0")
    return x, w


def load_extensions() -> dict[str, Callable[..., Any]]:
    """Import every extension module (once) and return the registry."""
    from samplewright.fitting.catalog import EXTENSION_MODULES

    for module in sorted(set(EXTENSION_MODULES.values())):
        importlib.import_module(module)
    return EXTENSION_METHODS
