"""The allowed values of the pipeline's string options, importable without numpy or scipy.

Each tuple mirrors a library tuple that lives in a module importing numpy or scipy (named beside
it); ``tests/unit/test_config_new.py`` checks that they are equal. The configuration schema
(:func:`samplewright.pipeline.config.load_schema` fills its enums from here) and the command
line's ``choices=`` read these, so ``samplewright --help`` and every Snakemake parse stay light.
"""

from __future__ import annotations

__all__ = [
    "CORRELATION_METHODS",
    "COUPLINGS",
    "INTERVAL_METHODS",
    "QUANTILE_FAMILIES",
    "REPLICATIONS",
    "SCHEMES",
    "SEQUENCES",
    "THREE_POINT_FAMILIES",
]

# samplewright.core.uniforms.SEQUENCES
SEQUENCES = ("random", "sobol", "halton", "latin_hypercube")
# samplewright.distributions.joint.COUPLINGS
COUPLINGS = ("rows", "rank_correlation", "gaussian_copula", "t_copula")
# samplewright.fitting.copulas.CORRELATION_METHODS
CORRELATION_METHODS = ("kendall", "normal_scores")
# samplewright.resample.intervals.METHODS
INTERVAL_METHODS = ("percentile", "basic", "bca")
# samplewright.resample.schemes.SCHEMES
SCHEMES = ("iid", "moving", "circular", "stationary")
# samplewright.distributions.ensemble.REPLICATIONS
REPLICATIONS = ("nonparametric", "parametric")
# samplewright.fitting.expert.QUANTILE_METHODS
QUANTILE_FAMILIES = (
    "metalog",
    "normal",
    "logistic",
    "gumbel",
    "exponential",
    "lognormal",
    "gamma",
    "weibull",
    "loglogistic",
    "beta",
)
# samplewright.fitting.expert.THREE_POINT_FAMILIES
THREE_POINT_FAMILIES = ("pert", "triangular")
