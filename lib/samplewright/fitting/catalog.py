"""The names of every method and the options each family accepts, without importing them.

Planning a workflow validates method names and options on every Snakemake parse (and each
cluster job parses again), so this module is plain data: importing it costs nothing, while the
implementations pull in scipy. A test checks it against the implementations.
"""

from __future__ import annotations

__all__ = [
    "EXTENSION_MODULES",
    "EXTENSION_OPTIONS",
    "FAMILY_OPTIONS",
    "METHODS",
    "METHOD_OPTIONS",
    "NONPARAMETRIC",
]

# family -> fit options it accepts (see samplewright.distributions.families)
FAMILY_OPTIONS: dict[str, frozenset[str]] = {
    "normal": frozenset(),
    "lognormal": frozenset({"loc"}),
    "exponential": frozenset({"loc"}),
    "gamma": frozenset({"loc"}),
    "weibull": frozenset({"loc"}),
    "gumbel": frozenset(),
    "logistic": frozenset(),
    "loglogistic": frozenset({"loc"}),
    "pareto": frozenset({"loc", "xm"}),
    "generalized_pareto": frozenset({"loc"}),
    "gev": frozenset(),
    "beta": frozenset({"lower", "upper"}),
    "uniform": frozenset({"lower", "upper"}),
    "triangular": frozenset({"lower", "upper"}),
    "inverse_gaussian": frozenset({"loc"}),
    "student_t": frozenset(),
    "rayleigh": frozenset({"loc"}),
    "poisson": frozenset(),
    "negative_binomial": frozenset(),
    "geometric": frozenset(),
    "binomial": frozenset({"n_trials"}),
}
NONPARAMETRIC = ("empirical", "interpolated")
# extension method -> module that registers it (imported on first use)
EXTENSION_MODULES: dict[str, str] = {
    "auto": "samplewright.check.auto",
    "spliced": "samplewright.fitting.spliced",
    "smoothed": "samplewright.fitting.smoothed",
    "kaplan_meier": "samplewright.fitting.kaplan_meier",
    "empirical_pmf": "samplewright.fitting.counts",
}
EXTENSION_OPTIONS: dict[str, frozenset[str]] = {
    "auto": frozenset({"candidates", "criterion", "n_resamples", "seed"}),
    "spliced": frozenset({"body", "threshold", "threshold_quantile"}),
    "smoothed": frozenset({"bandwidth", "positive"}),
    "kaplan_meier": frozenset({"tail"}),
    "empirical_pmf": frozenset(),
}
# every method -> the options it accepts
METHOD_OPTIONS: dict[str, frozenset[str]] = {
    **FAMILY_OPTIONS,
    **{name: frozenset() for name in NONPARAMETRIC},
    **EXTENSION_OPTIONS,
}
METHODS: tuple[str, ...] = tuple(sorted(METHOD_OPTIONS))
