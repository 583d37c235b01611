"""Methods beyond plain families and empirical CDFs (tails, smoothing, censoring, model choice).

``EXTENSION_METHODS`` maps a method name to ``fitter(x, weights, censored, **options)`` returning
a :class:`~samplewright.samplers.Sampler`. The modules named in
:data:`samplewright.catalog.EXTENSION_MODULES` register themselves here when imported;
:func:`load_extensions` imports them all (fitting and loading artifacts call it), so that a bare
``import samplewright`` stays cheap.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from typing import Any

__all__ = ["EXTENSION_METHODS", "load_extensions"]

EXTENSION_METHODS: dict[str, Callable[..., Any]] = {}


def load_extensions() -> dict[str, Callable[..., Any]]:
    """Import every extension module (once) and return the registry."""
    from .catalog import EXTENSION_MODULES

    for module in sorted(set(EXTENSION_MODULES.values())):
        importlib.import_module(f"samplewright.{module}")
    return EXTENSION_METHODS
