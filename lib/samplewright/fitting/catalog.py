"""The method catalog: every method ``fit`` knows, as plain data (the one registry).

For each method the catalog says where its fitter lives (loaded on first use), which options it
takes (with a one-line help and the JSON types and words each accepts), how many values it needs,
whether it handles right-censored values and weights, which sampler kind (payload layout) it
returns, which diagnostics ``fit`` adds, and (``incomplete``) where the fitter of a method that
ranks candidates lives for truncated, censored and interval rows. :data:`KINDS` names the class
that rebuilds each kind from an artifact. Everything else reads these tables: ``fit`` dispatches
through them, the fitters and the family fits accept exactly the options listed, planning
validates a workflow's methods and options against them, and the command-line help and config
schema are made from them. Nothing here imports numpy or scipy, so planning (every Snakemake
parse, again in each cluster job) stays cheap.

A fitter named here is called as ``fitter(sample, method, **options)`` with a
:class:`~samplewright.core.checks.CheckedSample` and returns a
:class:`~samplewright.distributions.base.Sampler`; a diagnostics hook as
``hook(values, weights)``, returning sections merged into the sampler's ``diagnostics``; an
``incomplete`` fitter as ``fitter(rows, method, **options)`` with the checked rows
(:class:`~samplewright.fitting.incomplete_sample.IncompleteSample`) of right-censored, truncated
or interval data, returning a sampler whose ``diagnostics["incomplete"]`` describes the rows.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

from samplewright.distributions.choices import BANDWIDTH_RULES, TAIL_RULES

__all__ = [
    "CATALOG",
    "COUNT_FAMILIES",
    "CountFamily",
    "CRITERIA",
    "Criterion",
    "INTEGER_READINGS",
    "IntegerReading",
    "KINDS",
    "LOG_CENTRES",
    "LogCentre",
    "MIXTURE_FAMILIES",
    "MixtureFamily",
    "METHODS",
    "METHOD_OPTIONS",
    "MethodGroup",
    "MethodSpec",
    "OptionSpec",
    "POSITIVE_MODES",
    "PositiveMode",
    "SPLICED_BODIES",
    "SplicedBody",
    "THRESHOLD_RULES",
    "ThresholdRule",
    "ValueType",
]

# --- words options take (Literal types with the tuple of their values) ----------------------

# Information criterion that ranks candidate families.
Criterion = Literal["aic", "bic"]
CRITERIA: tuple[Criterion, ...] = get_args(Criterion)
# How auto reads whole-number data: by the rule of samplewright.check.auto, or as stated.
IntegerReading = Literal["detect", "counts", "measurements"]
INTEGER_READINGS: tuple[IntegerReading, ...] = get_args(IntegerReading)
# What a log-scale smoothed kernel keeps at its observation: its mean (default) or its median.
LogCentre = Literal["mean", "median"]
LOG_CENTRES: tuple[LogCentre, ...] = get_args(LogCentre)
# Where smoothed kernels live; "auto" picks log, reflect or none from the data.
PositiveMode = Literal["auto", "log", "reflect", "none"]
POSITIVE_MODES: tuple[PositiveMode, ...] = get_args(PositiveMode)
# The nonparametric bodies of a spliced sampler (a continuous family name is the other choice).
SplicedBody = Literal["empirical", "interpolated"]
SPLICED_BODIES: tuple[SplicedBody, ...] = get_args(SplicedBody)
# How a spliced sampler's threshold was set (recorded in its diagnostics).
ThresholdRule = Literal["threshold", "threshold_quantile", "stability", "fallback"]
THRESHOLD_RULES: tuple[ThresholdRule, ...] = get_args(ThresholdRule)

# Component family of a finite mixture.
MixtureFamily = Literal["normal", "lognormal", "gamma", "weibull"]
MIXTURE_FAMILIES: tuple[MixtureFamily, ...] = get_args(MixtureFamily)
# Count family under a zero-inflation.
CountFamily = Literal["poisson", "negative_binomial"]
COUNT_FAMILIES: tuple[CountFamily, ...] = get_args(CountFamily)

# The JSON types an option's value may have (as JSON Schema names them).
ValueType = Literal["number", "integer", "string", "array"]
MethodGroup = Literal["nonparametric", "family", "extension"]


@dataclass(frozen=True)
class OptionSpec:
    """One option of a method.

    Attributes
    ----------
    name : str
    summary : str
        One line for help texts.
    types : tuple of str
        JSON types its value may have.
    choices : tuple of str
        The words it accepts when a string is given (empty: any string the method checks,
        e.g. a family name).
    """

    name: str
    summary: str
    types: tuple[ValueType, ...]
    choices: tuple[str, ...] = ()


@dataclass(frozen=True)
class MethodSpec:
    """One method ``fit`` accepts (see the module docstring for how each field is used)."""

    name: str
    group: MethodGroup
    summary: str
    fitter: str
    kind: str
    min_obs: int
    options: tuple[OptionSpec, ...] = ()
    censoring: bool = False
    weights: bool = True
    diagnostics: str | None = None
    incomplete: str | None = None

    @property
    def option_names(self) -> frozenset[str]:
        """The names of the options it takes."""
        return frozenset(o.name for o in self.options)

    @property
    def counts(self) -> bool:
        """Whether it is a family of counts (a probability mass on the integers): the families
        that carry the count diagnostics. Its likelihood is not comparable with a density's."""
        return self.group == "family" and self.diagnostics == _DISPERSION


# --- options shared by several methods ------------------------------------------------------

_LOC_FREE = OptionSpec(
    "loc",
    "location: a number (fixed, the fit is made on x - loc; default 0) or 'free' (estimated)",
    ("number", "string"),
    ("free",),
)
_LOC_NUMBER = OptionSpec("loc", "location (threshold): a number, default 0", ("number",))
_XM = OptionSpec(
    "xm", "pareto minimum of x - loc: a number (default: smallest x - loc)", ("number",)
)
_LOWER_01 = OptionSpec("lower", "lower bound, fixed (default 0)", ("number",))
_UPPER_01 = OptionSpec("upper", "upper bound, fixed (default 1)", ("number",))
_LOWER = OptionSpec("lower", "lower bound, fixed (default: estimated)", ("number",))
_UPPER = OptionSpec("upper", "upper bound, fixed (default: estimated)", ("number",))
_N_TRIALS = OptionSpec("n_trials", "number of trials (required), an int >= 1", ("integer",))


def _fix(*params: str) -> tuple[OptionSpec, ...]:
    """Options that fix family parameters: each parameter's name takes a number (one spelling
    for every family; fixed parameters are not counted in AIC/BIC)."""
    return tuple(
        OptionSpec(p, f"fixes parameter {p} at this number (default: estimated)", ("number",))
        for p in params
    )


_DISPERSION = "samplewright.check.dispersion:count_diagnostics"
_PARAMETRIC = "samplewright.fitting.mle:fit_parametric"


def _family(
    name: str,
    summary: str,
    min_obs: int,
    options: tuple[OptionSpec, ...] = (),
    *,
    censoring: bool = True,
    counts: bool = False,
) -> MethodSpec:
    return MethodSpec(
        name,
        "family",
        summary,
        _PARAMETRIC,
        "parametric",
        min_obs,
        options,
        censoring=censoring and not counts,
        diagnostics=_DISPERSION if counts else None,
    )


_METHODS = (
    MethodSpec(
        "empirical",
        "nonparametric",
        "the data's own (weighted) distribution; never draws a value not seen",
        "samplewright.fitting.nonparametric:fit_empirical",
        "empirical",
        1,
    ),
    MethodSpec(
        "interpolated",
        "nonparametric",
        "piecewise-linear CDF through the sorted data (type-7 sample quantiles)",
        "samplewright.fitting.nonparametric:fit_interpolated",
        "piecewise",
        2,
        weights=False,
    ),
    _family("normal", "normal distribution (maximum likelihood)", 2, _fix("mu", "sigma")),
    _family("lognormal", "lognormal distribution", 2, (_LOC_FREE, *_fix("mu", "sigma"))),
    _family("exponential", "exponential distribution", 1, (_LOC_FREE, *_fix("scale"))),
    _family("gamma", "gamma distribution", 2, (_LOC_FREE, *_fix("shape", "scale"))),
    _family("weibull", "weibull distribution", 2, (_LOC_FREE, *_fix("shape", "scale"))),
    _family("gumbel", "gumbel distribution (maxima)", 2, _fix("mu", "beta")),
    _family("logistic", "logistic distribution", 2, _fix("mu", "s")),
    _family("loglogistic", "log-logistic distribution", 2, (_LOC_FREE, *_fix("alpha", "beta"))),
    _family("pareto", "pareto distribution", 2, (_LOC_NUMBER, _XM, *_fix("alpha"))),
    _family(
        "generalized_pareto",
        "generalized pareto distribution",
        2,
        (_LOC_NUMBER, *_fix("xi", "sigma")),
    ),
    _family("gev", "generalized extreme value distribution", 3, _fix("mu", "sigma", "xi")),
    _family(
        "beta",
        "beta distribution on [lower, upper]",
        2,
        (_LOWER_01, _UPPER_01, *_fix("alpha", "beta")),
    ),
    _family("uniform", "uniform distribution", 2, (_LOWER, _UPPER), censoring=False),
    _family(
        "triangular",
        "triangular distribution",
        3,
        (_LOWER, _UPPER, *_fix("mode")),
        censoring=False,
    ),
    _family(
        "inverse_gaussian",
        "inverse gaussian distribution",
        2,
        (_LOC_FREE, *_fix("mu", "lambda")),
    ),
    _family(
        "student_t",
        "student t distribution (location, scale, degrees of freedom)",
        3,
        _fix("mu", "sigma", "nu"),
    ),
    _family("rayleigh", "rayleigh distribution", 1, (_LOC_FREE, *_fix("sigma"))),
    _family("poisson", "poisson counts", 1, _fix("lambda"), counts=True),
    _family(
        "negative_binomial",
        "negative binomial counts (over-dispersed)",
        2,
        _fix("r", "p"),
        counts=True,
    ),
    _family(
        "geometric",
        "geometric counts (failures before the first success)",
        1,
        _fix("p"),
        counts=True,
    ),
    _family("binomial", "binomial counts", 1, (_N_TRIALS, *_fix("p")), counts=True),
    MethodSpec(
        "spliced",
        "extension",
        "a body up to a threshold joined to a generalized pareto tail above it",
        "samplewright.fitting.spliced:fit_sample",
        "spliced",
        1,
        (
            OptionSpec(
                "body",
                "below the threshold: 'empirical' (default), 'interpolated' or a continuous family",
                ("string",),
            ),
            OptionSpec("threshold", "the threshold in data units", ("number",)),
            OptionSpec(
                "threshold_quantile", "the threshold as a probability in (0, 1)", ("number",)
            ),
        ),
    ),
    MethodSpec(
        "smoothed",
        "extension",
        "gaussian kernels around the data (a smoothed bootstrap)",
        "samplewright.fitting.smoothed:fit_sample",
        "smoothed",
        1,
        (
            OptionSpec(
                "bandwidth",
                "kernel standard deviation: 'silverman' (default), 'scott' or a positive number",
                ("number", "string"),
                BANDWIDTH_RULES,
            ),
            OptionSpec(
                "positive",
                "kernel scale: 'auto' (default: log, reflect or none by the data), 'log', "
                "'reflect' or 'none'",
                ("string",),
                POSITIVE_MODES,
            ),
            OptionSpec(
                "log_centre",
                "on the log scale, what each kernel keeps at its observation: 'mean' (default: "
                "the sampler keeps the sample mean) or 'median' (mean raised by exp(h^2/2))",
                ("string",),
                LOG_CENTRES,
            ),
        ),
    ),
    MethodSpec(
        "kaplan_meier",
        "extension",
        "product-limit estimate of right-censored data, atoms at the event times",
        "samplewright.fitting.kaplan_meier:fit_sample",
        "kaplan_meier",
        1,
        (
            OptionSpec(
                "tail",
                "survival left after the largest value: 'at_last' (default) or 'exponential'",
                ("string",),
                TAIL_RULES,
            ),
        ),
        censoring=True,
    ),
    MethodSpec(
        "empirical_pmf",
        "extension",
        "the observed counts' own pmf; never draws a count not seen",
        "samplewright.fitting.counts:fit_sample",
        "empirical_pmf",
        1,
        diagnostics=_DISPERSION,
    ),
    MethodSpec(
        "auto",
        "extension",
        "the candidate family with the lowest AIC (or BIC), with goodness-of-fit p-values; "
        "mixtures, zero-inflated counts and point masses join when the data call for them; "
        "censored, truncated and interval rows ranked by their own likelihood",
        "samplewright.check.auto:fit_sample",
        "parametric",
        1,
        (
            OptionSpec("candidates", "family names to compare (default: by the data)", ("array",)),
            OptionSpec("criterion", "'aic' (default) or 'bic'", ("string",), CRITERIA),
            OptionSpec(
                "n_resamples",
                "bootstrap replicates per candidate (on censored, truncated or interval data: of "
                "the chosen family only), 0 for none (default 99)",
                ("integer",),
            ),
            OptionSpec(
                "seed",
                "seed of the bootstrap stream, an int >= 0 (default: derived from the data; a "
                "pipeline passes one from its root seed and the dataset and label)",
                ("integer",),
            ),
            OptionSpec(
                "integers",
                "whole numbers >= 0 read as: 'detect' (default: counts when dense on the "
                "integers, else measurements), 'counts' or 'measurements'",
                ("string",),
                INTEGER_READINGS,
            ),
        ),
        censoring=True,
        incomplete="samplewright.check.auto_incomplete:fit_rows",
    ),
    MethodSpec(
        "mixture",
        "extension",
        "a finite mixture of one family fitted by EM, the number of components chosen by BIC",
        "samplewright.fitting.composite:fit_mixture_sample",
        "mixture",
        6,
        (
            OptionSpec(
                "family",
                "component family: lognormal, gamma, weibull or normal (default: lognormal when "
                "every value is > 0, else normal)",
                ("string",),
                MIXTURE_FAMILIES,
            ),
            OptionSpec(
                "max_components",
                "most components BIC may choose, an int >= 1 (default 3)",
                ("integer",),
            ),
            OptionSpec(
                "n_starts",
                "EM starts per number of components, an int >= 1 (default 5)",
                ("integer",),
            ),
            OptionSpec(
                "seed", "seed of the random EM starts, an int >= 0 (default 0)", ("integer",)
            ),
        ),
    ),
    MethodSpec(
        "hurdle",
        "extension",
        "a point mass at one value (default 0) plus a continuous family fitted to the other values",
        "samplewright.fitting.composite:fit_hurdle_sample",
        "point_mass",
        3,
        (
            OptionSpec("at", "where the point mass sits, a number (default 0)", ("number",)),
            OptionSpec(
                "body",
                "continuous family fitted to the other values (default lognormal)",
                ("string",),
            ),
        ),
    ),
    MethodSpec(
        "zero_inflated",
        "extension",
        "zero-inflated poisson or negative binomial counts (Lambert 1992)",
        "samplewright.fitting.composite:fit_zero_inflated_sample",
        "point_mass",
        2,
        (
            OptionSpec(
                "family",
                "'poisson' (default) or 'negative_binomial'",
                ("string",),
                COUNT_FAMILIES,
            ),
        ),
        diagnostics=_DISPERSION,
    ),
    MethodSpec(
        "turnbull",
        "extension",
        "Turnbull's nonparametric estimate for interval-censored, grouped and truncated data; "
        "mass spread evenly within each interval",
        "samplewright.fitting.interval_api:fit_sample",
        "piecewise",
        1,
        (
            OptionSpec(
                "tail",
                "mass beyond the largest finite point: 'at_last' (default) or 'exponential'",
                ("string",),
                TAIL_RULES,
            ),
        ),
        censoring=True,
    ),
    MethodSpec(
        "averaged",
        "extension",
        "the candidate families mixed by Akaike weights (model averaging), weights recorded",
        "samplewright.fitting.averaged:fit_sample",
        "averaged",
        2,
        (
            OptionSpec(
                "candidates", "family names to average (default: by the data's sign)", ("array",)
            ),
            OptionSpec("criterion", "'aic' (default) or 'bic'", ("string",), CRITERIA),
        ),
        censoring=True,
    ),
)

# method name -> its entry
CATALOG: dict[str, MethodSpec] = {m.name: m for m in _METHODS}
# payload layout -> "module:Class" that rebuilds it from an artifact
KINDS: dict[str, str] = {
    "empirical": "samplewright.distributions.empirical:EmpiricalSampler",
    "piecewise": "samplewright.distributions.piecewise:PiecewiseSampler",
    "parametric": "samplewright.distributions.parametric:ParametricSampler",
    "spliced": "samplewright.distributions.spliced:SplicedSampler",
    "smoothed": "samplewright.distributions.smoothed:SmoothedSampler",
    "kaplan_meier": "samplewright.distributions.kaplan_meier:KaplanMeierSampler",
    "empirical_pmf": "samplewright.distributions.empirical_pmf:EmpiricalPmfSampler",
    "joint": "samplewright.distributions.joint:JointSampler",
    "metalog": "samplewright.distributions.metalog:MetalogSampler",
    "mixture": "samplewright.distributions.mixture:MixtureSampler",
    "point_mass": "samplewright.distributions.point_mass:PointMassSampler",
    "ensemble": "samplewright.distributions.ensemble:EnsembleSampler",
    "averaged": "samplewright.distributions.averaged:AveragedSampler",
}
# every method name, sorted
METHODS: tuple[str, ...] = tuple(sorted(CATALOG))
# every method -> the option names it accepts
METHOD_OPTIONS: dict[str, frozenset[str]] = {m: CATALOG[m].option_names for m in METHODS}
