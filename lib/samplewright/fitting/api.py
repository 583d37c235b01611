"""From data to a sampler: the ``fit`` entry point.

``fit`` looks the method up in the catalog (:mod:`samplewright.fitting.catalog`, the one
registry), refuses options the method does not take, checks the data once
(:func:`~samplewright.core.checks.check_sample` with the method's minimum, censoring and weights
support), calls the method's fitter (imported on first use) and adds the diagnostics the catalog
names. Methods: ``empirical`` and ``interpolated`` (:mod:`.nonparametric`), every parametric
family (:mod:`.mle`), ``spliced``, ``smoothed``, ``kaplan_meier``, ``empirical_pmf`` and
``auto`` (see :func:`known_methods` and each module).

Incomplete data: with ``truncation`` the rows go to :func:`~.interval_api.fit_truncated`, which
reaches a method that ranks candidates on them (``auto``) through the ``incomplete`` fitter its
catalog entry names; right-censored values without truncation reach the method's own fitter
(``auto`` hands them to the same incomplete-data ranking).

User-drawn CDFs are not fitted: see :func:`samplewright.distributions.piecewise.from_knots` and
:func:`read_knots`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from samplewright.core.errors import KnotsError
from samplewright.distributions.base import Sampler
from samplewright.distributions.piecewise import PiecewiseSampler, from_knots
from samplewright.fitting.catalog import METHODS
from samplewright.fitting.registry import check_options, check_sample_for, fitter, load_object
from samplewright.intake.knots import parse_knots_points, read_knots_points

__all__ = [
    "fit",
    "known_methods",
    "parse_knots_text",
    "read_knots",
]


def known_methods() -> list[str]:
    """Every method name ``fit`` accepts."""
    return list(METHODS)


def fit(
    values: Any,
    method: str = "empirical",
    *,
    weights: Any = None,
    censored: Any = None,
    truncation: Any = None,
    **options: Any,
) -> Sampler:
    """Fit a sampler to observed values.

    Parameters
    ----------
    values : 1-d array of finite observations.
    method : a name from :func:`known_methods` (default ``"empirical"``).
    weights : optional non-negative frequency weights, one per value (rows of weight 0 are
        dropped).
    censored : optional flags (booleans or 0/1), True where the value is right-censored.
    truncation : optional lower truncation point(s): one number or one per value (a deductible,
        a delayed entry; ``-inf`` for none). Values are then known only because they exceeded
        their point, and the likelihood is divided by the probability beyond it (see
        :func:`samplewright.fit_interval` for interval-censored and grouped data).
    **options : method options (e.g. ``loc`` for positive families).

    >>> s = fit([2.0, 4.0, 9.0], method="exponential")
    >>> s.method, s.params["scale"], round(s.loglik, 4)
    ('exponential', 5.0, -7.8283)
    """
    if truncation is not None:
        from samplewright.fitting.interval_api import fit_truncated

        return fit_truncated(
            values, method, censored=censored, truncation=truncation, weights=weights, **options
        )
    spec = check_options(method, options)
    sample = check_sample_for(spec, values, weights, censored)
    sampler = fitter(spec)(sample, method, **options)
    if spec.diagnostics is not None:
        sampler.diagnostics.update(load_object(spec.diagnostics)(sample.values, sample.weights))
    return sampler


def read_knots(
    path: str | Path,
    *,
    separator: str | None = None,
    decimal: str = ".",
    encoding: str | None = None,
) -> PiecewiseSampler:
    """Knots of a user-drawn CDF from a CSV/TSV (columns ``x`` and ``p``) or YAML file.

    YAML forms: ``{x: [...], p: [...]}`` or a list of ``[x, p]`` pairs. The reading options are
    those of :func:`samplewright.intake.knots.read_knots_points`.
    """
    x, p = read_knots_points(path, separator=separator, decimal=decimal, encoding=encoding)
    try:
        return from_knots(x, p)
    except KnotsError as exc:
        raise KnotsError(f"{path}: {exc}") from None


def parse_knots_text(text: str) -> PiecewiseSampler:
    """Knots from command-line text ``"x1:p1,x2:p2,..."``."""
    return from_knots(*parse_knots_points(text))
