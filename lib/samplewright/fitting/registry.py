"""Reading the catalog: method lookup, option and data checks, and lazy loading by name.

Fitters, diagnostics hooks and sampler kinds are named in :mod:`samplewright.fitting.catalog` as
``"module:attribute"`` and imported on first use, so ``import samplewright`` and planning stay
cheap and a method implemented in a later stage (``auto`` ranks with goodness of fit) is reached
without an import running against the stage order.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING, Any

from samplewright.core.errors import MethodError
from samplewright.fitting.catalog import CATALOG, KINDS, METHODS, MethodSpec

if TYPE_CHECKING:  # pragma: no cover
    from samplewright.core.checks import CheckedSample
    from samplewright.distributions.base import Sampler

__all__ = [
    "check_options",
    "check_sample_for",
    "fitter",
    "load_extensions",
    "load_object",
    "load_sampler_kinds",
    "method_spec",
    "sampler_class",
]


def load_object(ref: str) -> Any:
    """The object a catalog reference ``"package.module:name"`` names (imported now)."""
    module, _, name = ref.partition(":")
    return getattr(importlib.import_module(module), name)


def method_spec(method: str) -> MethodSpec:
    """The catalog entry of ``method``; an unknown name raises a MethodError listing them all."""
    spec = CATALOG.get(method) if isinstance(method, str) else None
    if spec is None:
        raise MethodError(f"unknown method {method!r}; expected one of: {', '.join(METHODS)}")
    return spec


def check_options(method: str, options: Mapping[str, Any]) -> MethodSpec:
    """Refuse option names ``method`` does not take (naming the first and the allowed ones)."""
    spec = method_spec(method)
    unknown = sorted(set(options) - spec.option_names)
    if unknown:
        allowed = ", ".join(sorted(spec.option_names)) or "none"
        raise MethodError(f"unknown option {unknown[0]!r} for {method} (allowed: {allowed})")
    return spec


def check_sample_for(
    spec: MethodSpec, values: Any, weights: Any = None, censored: Any = None
) -> CheckedSample:
    """The checked sample for ``spec``: :func:`~samplewright.core.checks.check_sample` with its
    minimum, then refusing censored values or weights the method does not handle."""
    from samplewright.core.checks import check_sample

    sample = check_sample(values, weights, censored, min_n=spec.min_obs, what=spec.name)
    if sample.any_censored and not spec.censoring:
        raise MethodError(
            f"censored: method {spec.name!r} does not handle censored data; use a family that "
            "offers right-censored fits or 'kaplan_meier'"
        )
    if sample.weights is not None and not spec.weights:
        raise MethodError(f"weights: method {spec.name!r} does not take weights; use 'empirical'")
    return sample


def fitter(spec: MethodSpec) -> Callable[..., Sampler]:
    """The fitter of a catalog entry (imported on first use)."""
    return load_object(spec.fitter)  # type: ignore[no-any-return]


def sampler_class(kind: str) -> type[Sampler] | None:
    """The class that rebuilds sampler kind ``kind`` (importing only its module), or None."""
    ref = KINDS.get(kind) if isinstance(kind, str) else None
    return None if ref is None else load_object(ref)  # type: ignore[no-any-return]


def load_sampler_kinds() -> dict[str, type[Sampler]]:
    """Import every sampler kind's module; kind -> class."""
    out = {kind: sampler_class(kind) for kind in KINDS}
    return {k: v for k, v in out.items() if v is not None}


def load_extensions() -> dict[str, type[Sampler]]:
    """Import every sampler kind (kept for :mod:`samplewright.store.artifacts` until it calls
    :func:`sampler_class`; remove then)."""
    return load_sampler_kinds()
