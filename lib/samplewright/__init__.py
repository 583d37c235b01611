"""samplewright: reproducible input distributions for Monte Carlo models, as pipeline stages.

Fit a sampler to observed data, store it as a verified Parquet artifact, draw from it anywhere::

    >>> import samplewright as sw
    >>> s = sw.fit([3.1, 4.7, 2.2, 8.9, 5.0], method="lognormal")
    >>> s.draw(3, rng=1).round(3).tolist()
    [5.032, 6.301, 4.996]
"""

from __future__ import annotations

__version__ = "0.1.0"

from .artifacts import load_sampler, read_metadata, verify_artifact, write_sampler
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
from .fingerprint import fingerprint_arrays, fingerprint_file
from .fitting import fit, known_methods, read_knots
from .gof import GoodnessOfFitResult, goodness_of_fit
from .intake import read_column
from .randomness import make_rng, stream_rng
from .samplers import EmpiricalSampler, ParametricSampler, PiecewiseSampler, Sampler, from_knots
from .workflow import rules_path

# Modules that register extra methods (and sampler kinds) when imported.
from . import censoring, counts, model_choice  # noqa: E402, F401  isort: skip

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
