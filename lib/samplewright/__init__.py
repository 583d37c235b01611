"""samplewright: reproducible input distributions for Monte Carlo models, as pipeline stages.

Fit a sampler to observed data, store it as a verified Parquet artifact, draw from it anywhere::

    >>> import samplewright as sw
    >>> s = sw.fit([3.1, 4.7, 2.2, 8.9, 5.0], method="lognormal")
    >>> s.draw(3, rng=1).round(3).tolist()
    [5.032, 6.301, 4.996]
"""

from __future__ import annotations

__version__ = "0.1.0"

import importlib
from typing import TYPE_CHECKING, Any

from .errors import (
    ArtifactError,
    ConfigError,
    FitError,
    InputDataError,
    IntegrityError,
    KnotsError,
    MethodError,
    SamplewrightError,
)

# Public name -> module that defines it. Loaded on first access (PEP 562), so that
# ``import samplewright`` (done by every Snakemake parse of a workflow) stays cheap.
_LAZY = {
    "EmpiricalSampler": "samplers",
    "GoodnessOfFitResult": "gof",
    "ParametricSampler": "samplers",
    "PiecewiseSampler": "samplers",
    "Sampler": "samplers",
    "fingerprint_arrays": "fingerprint",
    "fingerprint_file": "fingerprint",
    "fit": "fitting",
    "from_knots": "samplers",
    "goodness_of_fit": "gof",
    "known_methods": "fitting",
    "load_sampler": "artifacts",
    "make_rng": "randomness",
    "read_column": "intake",
    "read_knots": "fitting",
    "read_metadata": "artifacts",
    "rules_path": "workflow",
    "stream_rng": "randomness",
    "verify_artifact": "artifacts",
    "write_sampler": "artifacts",
}

if TYPE_CHECKING:  # pragma: no cover
    from .artifacts import load_sampler, read_metadata, verify_artifact, write_sampler
    from .fingerprint import fingerprint_arrays, fingerprint_file
    from .fitting import fit, known_methods, read_knots
    from .gof import GoodnessOfFitResult, goodness_of_fit
    from .intake import read_column
    from .randomness import make_rng, stream_rng
    from .samplers import (
        EmpiricalSampler,
        ParametricSampler,
        PiecewiseSampler,
        Sampler,
        from_knots,
    )
    from .workflow import rules_path


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'samplewright' has no attribute {name!r}")
    value = getattr(importlib.import_module(f"samplewright.{module}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)


__all__ = [
    "ArtifactError",
    "ConfigError",
    "EmpiricalSampler",
    "FitError",
    "GoodnessOfFitResult",
    "InputDataError",
    "IntegrityError",
    "KnotsError",
    "MethodError",
    "ParametricSampler",
    "PiecewiseSampler",
    "Sampler",
    "SamplewrightError",
    "fingerprint_arrays",
    "fingerprint_file",
    "fit",
    "from_knots",
    "goodness_of_fit",
    "known_methods",
    "load_sampler",
    "make_rng",
    "read_column",
    "read_knots",
    "read_metadata",
    "rules_path",
    "stream_rng",
    "verify_artifact",
    "write_sampler",
]
