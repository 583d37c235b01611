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
    "AveragedSampler": "distributions.averaged",
    "BlockLengthResult": "resample.block_length",
    "BootstrapIntervalResult": "resample.intervals",
    "CandidateSpreadResult": "check.candidate_spread",
    "CheckReportInput": "check.report_model",
    "CheckedSample": "core.checks",
    "EmpiricalPmfSampler": "distributions.empirical_pmf",
    "EmpiricalSampler": "distributions.empirical",
    "EnsembleSampler": "distributions.ensemble",
    "SparseTailWarning": "resample.guards",
    "GoodnessOfFitResult": "check.gof",
    "JointSampler": "distributions.joint",
    "KaplanMeierSampler": "distributions.kaplan_meier",
    "MetalogSampler": "distributions.metalog",
    "MixtureSampler": "distributions.mixture",
    "MonteCarloErrorResult": "check.mc_error",
    "ParametricSampler": "distributions.parametric",
    "PiecewiseSampler": "distributions.piecewise",
    "PointMassSampler": "distributions.point_mass",
    "Sampler": "distributions.base",
    "SmoothedSampler": "distributions.smoothed",
    "SplicedSampler": "distributions.spliced",
    "bootstrap_interval": "resample.intervals",
    "candidate_spread": "check.candidate_spread",
    "check_sample": "core.checks",
    "composite_candidates": "fitting.composite",
    "draw_uniforms": "core.uniforms",
    "estimate_mean": "core.uniforms",
    "fingerprint_arrays": "store.fingerprints",
    "fingerprint_file": "store.fingerprints",
    "fit": "fitting.api",
    "fit_averaged": "fitting.averaged",
    "fit_interval": "fitting.interval_api",
    "fit_joint": "fitting.joint",
    "fit_replicates": "fitting.replicates",
    "from_knots": "distributions.piecewise",
    "from_quantiles": "fitting.expert",
    "from_three_points": "fitting.expert",
    "goodness_of_fit": "check.gof",
    "goodness_of_fit_incomplete": "check.gof_incomplete",
    "IncompleteGofResult": "check.gof_incomplete",
    "known_methods": "fitting.api",
    "load_sampler": "store.artifacts",
    "make_rng": "core.randomness",
    "mc_error": "check.mc_error",
    "optimal_block_length": "resample.block_length",
    "rank_candidates": "check.compare",
    "read_column": "intake.columns",
    "read_knots": "fitting.api",
    "read_metadata": "store.artifacts",
    "read_table": "intake.tables",
    "render_report_html": "check.report_html",
    "rules_path": "pipeline.helpers",
    "stream_rng": "core.randomness",
    "verify_artifact": "store.artifacts",
    "write_sampler": "store.artifacts",
}

if TYPE_CHECKING:  # pragma: no cover
    from samplewright.check.candidate_spread import CandidateSpreadResult, candidate_spread
    from samplewright.check.compare import rank_candidates
    from samplewright.check.gof import GoodnessOfFitResult, goodness_of_fit
    from samplewright.check.gof_incomplete import IncompleteGofResult, goodness_of_fit_incomplete
    from samplewright.check.mc_error import MonteCarloErrorResult, mc_error
    from samplewright.check.report_html import render_report_html
    from samplewright.check.report_model import CheckReportInput
    from samplewright.core.checks import CheckedSample, check_sample
    from samplewright.core.randomness import make_rng, stream_rng
    from samplewright.core.uniforms import draw_uniforms, estimate_mean
    from samplewright.distributions.averaged import AveragedSampler
    from samplewright.distributions.base import Sampler
    from samplewright.distributions.empirical import EmpiricalSampler
    from samplewright.distributions.empirical_pmf import EmpiricalPmfSampler
    from samplewright.distributions.ensemble import EnsembleSampler
    from samplewright.distributions.joint import JointSampler
    from samplewright.distributions.kaplan_meier import KaplanMeierSampler
    from samplewright.distributions.metalog import MetalogSampler
    from samplewright.distributions.mixture import MixtureSampler
    from samplewright.distributions.parametric import ParametricSampler
    from samplewright.distributions.piecewise import PiecewiseSampler, from_knots
    from samplewright.distributions.point_mass import PointMassSampler
    from samplewright.distributions.smoothed import SmoothedSampler
    from samplewright.distributions.spliced import SplicedSampler
    from samplewright.fitting.api import fit, known_methods, read_knots
    from samplewright.fitting.averaged import fit_averaged
    from samplewright.fitting.composite import composite_candidates
    from samplewright.fitting.expert import from_quantiles, from_three_points
    from samplewright.fitting.interval_api import fit_interval
    from samplewright.fitting.joint import fit_joint
    from samplewright.fitting.replicates import fit_replicates
    from samplewright.intake.columns import read_column
    from samplewright.intake.tables import read_table
    from samplewright.pipeline.helpers import rules_path
    from samplewright.resample.block_length import BlockLengthResult, optimal_block_length
    from samplewright.resample.guards import SparseTailWarning
    from samplewright.resample.intervals import BootstrapIntervalResult, bootstrap_interval
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
    "AveragedSampler",
    "BlockLengthResult",
    "BootstrapIntervalResult",
    "CandidateSpreadResult",
    "CheckReportInput",
    "CheckedSample",
    "ConfigError",
    "EmpiricalPmfSampler",
    "EmpiricalSampler",
    "EnsembleSampler",
    "FitError",
    "GoodnessOfFitResult",
    "IncompleteGofResult",
    "InputDataError",
    "IntegrityError",
    "JointSampler",
    "KaplanMeierSampler",
    "KnotsError",
    "MetalogSampler",
    "MethodError",
    "MixtureSampler",
    "MonteCarloErrorResult",
    "ParametricSampler",
    "PiecewiseSampler",
    "PointMassSampler",
    "Sampler",
    "SamplewrightError",
    "SmoothedSampler",
    "SparseTailWarning",
    "SplicedSampler",
    "bootstrap_interval",
    "candidate_spread",
    "check_sample",
    "composite_candidates",
    "draw_uniforms",
    "estimate_mean",
    "fingerprint_arrays",
    "fingerprint_file",
    "fit",
    "fit_averaged",
    "fit_interval",
    "fit_joint",
    "fit_replicates",
    "from_knots",
    "from_quantiles",
    "from_three_points",
    "goodness_of_fit",
    "goodness_of_fit_incomplete",
    "known_methods",
    "load_sampler",
    "make_rng",
    "mc_error",
    "optimal_block_length",
    "rank_candidates",
    "read_column",
    "read_knots",
    "read_metadata",
    "read_table",
    "render_report_html",
    "rules_path",
    "stream_rng",
    "verify_artifact",
    "write_sampler",
]
