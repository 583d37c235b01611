"""Warnings about a fitted family: where its support or its tail disagrees with the data's nature.

Every family fit records them in its sampler's diagnostics under ``"warnings"``: a list of
``{"kind", "message"}`` entries, empty when nothing was found. The kinds:

``support_below_zero``
    Every value is >= 0 (durations, amounts) but the fitted distribution puts more than
    :data:`NEGATIVE_MASS` (0.1%) of its mass below 0: draws will include impossible negative
    values. Typical for a normal, logistic, gumbel, gev or student_t fitted to positive data.
``support_beyond_data``
    A value lies outside the fitted support. A maximum-likelihood fit never records it (its
    support must contain the data, or the fit fails); it is for parameters set another way and
    checked against data (:func:`fit_warnings` takes any parameters).
``infinite_mean`` / ``infinite_variance``
    The fitted tail is so heavy that the mean (or variance) is infinite or undefined, so sample
    means of draws never settle: pareto ``alpha <= 1`` (``<= 2``), generalized_pareto and gev
    ``xi >= 1`` (``>= 1/2``), student_t ``nu <= 1`` (``<= 2``), loglogistic ``beta <= 1``
    (``<= 2``). The other families have every moment finite.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from samplewright.distributions.families import Family, get_family

__all__ = [
    "NEGATIVE_MASS",
    "TAIL_LIMITS",
    "WARNING_KINDS",
    "FitWarning",
    "WarningKind",
    "fit_warnings",
]

WarningKind = Literal[
    "support_below_zero", "support_beyond_data", "infinite_mean", "infinite_variance"
]
WARNING_KINDS: tuple[WarningKind, ...] = get_args(WarningKind)
NEGATIVE_MASS = 1e-3
# family -> (tail parameter, the mean is finite when it is ..., the variance when it is ...):
# (">", a, b) reads "mean finite iff param > a, variance finite iff param > b"
TAIL_LIMITS: dict[str, tuple[str, str, float, float]] = {
    "pareto": ("alpha", ">", 1.0, 2.0),
    "loglogistic": ("beta", ">", 1.0, 2.0),
    "student_t": ("nu", ">", 1.0, 2.0),
    "generalized_pareto": ("xi", "<", 1.0, 0.5),
    "gev": ("xi", "<", 1.0, 0.5),
}


@dataclass(frozen=True)
class FitWarning:
    """One warning about a fit.

    Attributes
    ----------
    kind : str
        One of :data:`WARNING_KINDS`.
    message : str
        One line for people, naming the family, the numbers and what they mean.
    """

    kind: WarningKind
    message: str

    def as_dict(self) -> dict[str, str]:
        """The plain-JSON form stored in diagnostics."""
        return {"kind": self.kind, "message": self.message}


def _tail(family: Family, params: Mapping[str, float]) -> list[FitWarning]:
    rule = TAIL_LIMITS.get(family.name)
    if rule is None:
        return []
    key, sense, mean_limit, var_limit = rule
    v = float(params[key])
    out = []
    for kind, limit, what in (
        ("infinite_mean", mean_limit, "mean"),
        ("infinite_variance", var_limit, "variance"),
    ):
        finite = v > limit if sense == ">" else v < limit
        if not finite:
            bad = "<=" if sense == ">" else ">="
            out.append(
                FitWarning(
                    kind,  # type: ignore[arg-type]
                    f"{family.name} with {key} = {v:.4g} ({bad} {limit:g}) has no finite {what}: "
                    f"sample {what}s of its draws do not settle",
                )
            )
    return out


def fit_warnings(
    family: str | Family, params: Mapping[str, float], values: np.ndarray
) -> tuple[FitWarning, ...]:
    """Warnings about ``family(params)`` as a model of ``values`` (see the module docstring).

    Parameters
    ----------
    family : str or Family
        The family (name or record).
    params : mapping
        Its parameters.
    values : numpy.ndarray
        The data it was fitted to (1-d, finite; censored values count as values).

    Returns
    -------
    tuple of FitWarning
        In the order support, then tail; empty when nothing was found.

    Examples
    --------
    >>> x = np.array([0.5, 1.0, 2.0, 4.0])
    >>> [w.kind for w in fit_warnings("normal", {"mu": 1.875, "sigma": 1.4}, x)]
    ['support_below_zero']
    >>> fit_warnings("pareto", {"alpha": 0.8, "xm": 0.5, "loc": 0.0}, x)[0].kind
    'infinite_mean'
    """
    fam = family if isinstance(family, Family) else get_family(family)
    x = np.asarray(values, dtype=np.float64)
    lo_x, hi_x = float(x.min()), float(x.max())
    lo, hi = fam.support(params)
    out: list[FitWarning] = []
    if lo_x < lo or hi_x > hi:
        out.append(
            FitWarning(
                "support_beyond_data",
                f"{fam.name}: the values span {lo_x!r} to {hi_x!r}, beyond the fitted support "
                f"[{lo!r}, {hi!r}]",
            )
        )
    if lo_x >= 0 and lo < 0 and not fam.discrete:
        with np.errstate(all="ignore"):
            p = float(fam.bound(params).cdf(0.0))
        if p > NEGATIVE_MASS:
            out.append(
                FitWarning(
                    "support_below_zero",
                    f"{fam.name} puts {p:.2%} of its mass below 0, but every value is >= 0 "
                    f"(smallest {lo_x!r}): draws will include negative values",
                )
            )
    out += _tail(fam, params)
    return tuple(out)
