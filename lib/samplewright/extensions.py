"""Methods beyond plain families and empirical CDFs (tails, smoothing, censoring, model choice).

``EXTENSION_METHODS`` maps a method name to ``fitter(x, weights, censored, **options)`` returning
a :class:`~samplewright.samplers.Sampler`. Modules that add methods register them here.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

__all__ = ["EXTENSION_METHODS"]

EXTENSION_METHODS: dict[str, Callable[..., Any]] = {}
