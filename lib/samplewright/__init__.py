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

from samplewright.core.errors import (
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
    "EmpiricalSampler": "distributions.empirical",
    "GoodnessOfFitResult": "check.gof",
    "ParametricSampler": "distributions.parametric",
    "PiecewiseSampler": "distributions.piecewise",
    "Sampler": "distributions.base",
    "fingerprint_arrays": "store.fingerprints",
    "fingerprint_file": "store.fingerprints",
    "fit": "fitting.api",
    "from_knots": "distributions.piecewise",
    "goodness_of_fit": "check.gof",
    "known_methods": "fitting.api",
    "load_sampler": "store.artifacts",
    "make_rng": "core.randomness",
    "rank_candidates": "check.compare",
    "read_column": "intake.columns",
    "read_knots": "fitting.api",
    "read_metadata": "store.artifacts",
    "rules_path": "pipeline.plan",
    "stream_rng": "core.randomness",
    "verify_artifact": "store.artifacts",
    "write_sampler": "store.artifacts",
}

if TYPE_CHECKING:  # pragma: no cover
    from samplewright.check.compare import rank_candidates
    from samplewright.check.gof import GoodnessOfFitResult, goodness_of_fit
    from samplewright.core.randomness import make_rng, stream_rng
    from samplewright.distributions.base import Sampler
    from samplewright.distributions.empirical import EmpiricalSampler
    from samplewright.distributions.parametric import ParametricSampler
    from samplewright.distributions.piecewise import PiecewiseSampler, from_knots
    from samplewright.fitting.api import fit, known_methods, read_knots
    from samplewright.intake.columns import read_column
    from samplewright.pipeline.plan import rules_path
    from samplewright.store.artifacts import (
        load_sampler,
        read_metadata,
        verify_artifact,
        write_sampler,
    )
    from samplewright.store.fingerprints import fingerprint_arrays, fingerprint_file


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
    "rank_candidates",
    "read_column",
    "read_knots",
    "read_metadata",
    "rules_path",
    "stream_rng",
    "verify_artifact",
    "write_sampler",
]
