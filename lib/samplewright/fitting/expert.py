"""Samplers from expert judgement: elicited quantiles and three-point estimates.

* :func:`from_quantiles` passes a distribution through elicited quantiles (P10/P50/P90 or more):
  the metalog family (Keelin 2016), which passes through every point exactly, optionally bounded
  (:func:`~samplewright.fitting.metalog.fit_metalog`), or a named family fitted by least squares
  on the quantile function (:func:`~samplewright.fitting.elicit_quantiles.fit_quantiles`).
  Either way the sampler's diagnostics record, under ``"elicited"``, the points, the fitted
  quantiles at their levels, the misses ``Q(p_i) - x_i`` and the fitted CDF at each value.
* :func:`from_three_points` turns (low, mode, high) into a beta-PERT distribution (Malcolm,
  Roseboom, Clark & Fazar 1959: shape parameters ``1 + shape (mode - low) / (high - low)`` and
  ``1 + shape (high - mode) / (high - low)``, mean ``(low + shape mode + high) / (shape + 2)``;
  the classic weight of the mode is ``shape = 4``) or a triangular distribution. Diagnostics
  record the three points under ``"three_points"``.

The samplers carry ``method="quantiles"`` or ``method="three_points"``; the family is the
sampler's (``metalog`` kind, or the parametric family ``beta``/``triangular``/...).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, Literal, get_args

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.metalog import MetalogSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.elicit import (
    fit_metalog,
    fit_quantiles,
    pert_parameters,
    triangular_parameters,
)

__all__ = [
    "QUANTILE_METHODS",
    "THREE_POINT_FAMILIES",
    "ElicitedFamily",
    "ThreePointFamily",
    "from_quantiles",
    "from_three_points",
]

ElicitedFamily = Literal[
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
]
QUANTILE_METHODS: tuple[ElicitedFamily, ...] = get_args(ElicitedFamily)
ThreePointFamily = Literal["pert", "triangular"]
THREE_POINT_FAMILIES: tuple[ThreePointFamily, ...] = get_args(ThreePointFamily)
PERT_SHAPE = 4.0

# scipy keyword arguments of fit_quantiles -> the family's parameters (trade names)
_TRADE: dict[str, Callable[[dict[str, float]], dict[str, float]]] = {
    "normal": lambda k: {"mu": k["loc"], "sigma": k["scale"]},
    "logistic": lambda k: {"mu": k["loc"], "s": k["scale"]},
    "gumbel": lambda k: {"mu": k["loc"], "beta": k["scale"]},
    "exponential": lambda k: {"scale": k["scale"], "loc": k["loc"]},
    "lognormal": lambda k: {"mu": float(np.log(k["scale"])), "sigma": k["s"], "loc": k["loc"]},
    "gamma": lambda k: {"shape": k["a"], "scale": k["scale"], "loc": k["loc"]},
    "weibull": lambda k: {"shape": k["c"], "scale": k["scale"], "loc": k["loc"]},
    "loglogistic": lambda k: {"alpha": k["scale"], "beta": k["c"], "loc": k["loc"]},
    "beta": lambda k: {"alpha": k["a"], "beta": k["b"], "lower": k["loc"], "upper": k["upper"]},
}


def _elicited(
    sampler: MetalogSampler | ParametricSampler,
    p: np.ndarray,
    x: np.ndarray,
    family: str,
    exact: bool,
    lower: float | None,
    upper: float | None,
) -> dict[str, Any]:
    """The ``elicited`` diagnostics section, measured on the sampler itself."""
    fitted = np.asarray(sampler.quantile(p), dtype=np.float64)
    misses = fitted - x
    return {
        "family": family,
        "fit": "exact" if exact else "least_squares",
        "lower": lower,
        "upper": upper,
        "probabilities": p.tolist(),
        "values": x.tolist(),
        "fitted": fitted.tolist(),
        "misses": misses.tolist(),
        "max_abs_miss": float(np.max(np.abs(misses))),
        "cdf_at_values": np.asarray(sampler.cdf(x), dtype=np.float64).tolist(),
    }


def from_quantiles(
    probabilities: Any,
    values: Any,
    *,
    family: ElicitedFamily = "metalog",
    lower: float | None = None,
    upper: float | None = None,
    n_terms: int | None = None,
) -> MetalogSampler | ParametricSampler:
    """A sampler through elicited quantiles ``(p_i, x_i)``.

    Parameters
    ----------
    probabilities, values : array_like
        Levels strictly between 0 and 1 and the values at them (values increase with the
        level; at least 2 points for the metalog, as many as the family's free parameters
        otherwise).
    family : str
        ``"metalog"`` (default: passes through every point) or a family of
        :data:`~samplewright.fitting.elicit_quantiles.QUANTILE_FAMILIES` (least squares on the
        quantile function, scaled by the range of the values).
    lower, upper : float, optional
        Metalog: bounds of the support (one, both or none). Positive families: the fixed
        location ``lower`` (default 0). Beta: both bounds, required.
    n_terms : int, optional
        Metalog only: number of terms (default: the number of points; fewer give the least
        squares metalog).

    Returns
    -------
    MetalogSampler or ParametricSampler
        With ``diagnostics["elicited"]`` recording the points, fitted quantiles and misses.

    Raises
    ------
    MethodError
        Bad points, bounds or options, or points that no valid metalog passes through (the
        message names the points between which the quantile function would decrease).

    Examples
    --------
    >>> s = from_quantiles([0.1, 0.5, 0.9], [40.0, 55.0, 90.0], lower=0.0)
    >>> s.quantile([0.1, 0.5, 0.9]).round(9).tolist(), s.diagnostics["elicited"]["fit"]
    ([40.0, 55.0, 90.0], 'exact')
    """
    if family not in QUANTILE_METHODS:
        raise MethodError(
            f"family: expected one of {', '.join(QUANTILE_METHODS)}, found {family!r}"
        )
    sampler: MetalogSampler | ParametricSampler
    extra: dict[str, Any] = {}
    if family == "metalog":
        m = fit_metalog(probabilities, values, lower=lower, upper=upper, n_terms=n_terms)
        sampler = MetalogSampler(m.coefficients, lower=m.lower, upper=m.upper, method="quantiles")
        p, x, exact = m.probabilities, m.values, m.n_terms == m.probabilities.size
        extra["n_terms"] = m.n_terms
    else:
        if n_terms is not None:
            raise MethodError(f"n_terms: only the metalog family takes it, found family {family!r}")
        r = fit_quantiles(probabilities, values, family=family, lower=lower, upper=upper)
        kwargs = dict(r.params)
        if family == "beta":
            kwargs["upper"] = float(upper)  # type: ignore[arg-type]  # fit_quantiles required it
        sampler = ParametricSampler(family, _TRADE[family](kwargs), method="quantiles")
        p, x, exact = r.probabilities, r.values, False
    section = _elicited(sampler, p, x, family, exact, lower, upper)
    sampler.diagnostics["elicited"] = {**section, **extra}
    return sampler


def from_three_points(
    low: float,
    mode: float,
    high: float,
    *,
    family: ThreePointFamily = "pert",
    shape: float = PERT_SHAPE,
) -> ParametricSampler:
    """A beta-PERT (default) or triangular distribution through (low, mode, high).

    Parameters
    ----------
    low, mode, high : float
        Minimum, most likely and maximum value: ``low <= mode <= high``, ``low < high``.
    family : {"pert", "triangular"}
        ``"pert"``: the beta distribution on [low, high] of Malcolm et al. (1959);
        ``"triangular"``: the triangular distribution with these corners.
    shape : float
        PERT only: the weight of the mode, > 0 (default 4, the classic PERT; larger values
        concentrate the distribution around the mode).

    Returns
    -------
    ParametricSampler
        Family ``beta`` (parameters alpha, beta, lower, upper) or ``triangular`` (lower, mode,
        upper), with ``diagnostics["three_points"]`` recording the inputs.

    Examples
    --------
    >>> s = from_three_points(40.0, 55.0, 90.0)
    >>> s.family.name, round(s.mean, 10), s.params["alpha"]
    ('beta', 58.3333333333, 2.2)
    """
    if family not in THREE_POINT_FAMILIES:
        raise MethodError(
            f"family: expected one of {', '.join(THREE_POINT_FAMILIES)}, found {family!r}"
        )
    section: dict[str, Any]
    if family == "pert":
        r = pert_parameters(low, mode, high, shape=shape)
        params = {"alpha": r.alpha, "beta": r.beta, "lower": r.low, "upper": r.high}
        sampler = ParametricSampler("beta", params, method="three_points")
        section = {"family": family, "low": r.low, "mode": r.mode, "high": r.high, "shape": r.shape}
    else:
        if isinstance(shape, bool) or shape != PERT_SHAPE:
            raise MethodError(
                f"shape: only family 'pert' takes a shape, found shape={shape!r} with "
                "family 'triangular'"
            )
        t = triangular_parameters(low, mode, high)
        params = {"lower": t.low, "mode": t.mode, "upper": t.high}
        sampler = ParametricSampler("triangular", params, method="three_points")
        section = {"family": family, "low": t.low, "mode": t.mode, "high": t.high}
    section["mean"] = float(sampler.mean)
    sampler.diagnostics["three_points"] = section
    return sampler
