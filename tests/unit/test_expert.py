"""Unit tests of samplewright.fitting.expert: from_quantiles and from_three_points.

Outside references: scipy.stats (the distribution each least-squares fit names, beta and
triangular), the estimation cores fit_metalog / fit_quantiles / pert_parameters (checked against
the R package qpd and Malcolm et al. 1959 in tests/reference). Published PERT and metalog values
are in tests/reference/test_composite_reference.py.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import MethodError
from samplewright.distributions.metalog import MetalogSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.elicit import QUANTILE_FAMILIES, fit_metalog, fit_quantiles
from samplewright.fitting.expert import (
    QUANTILE_METHODS,
    THREE_POINT_FAMILIES,
    from_quantiles,
    from_three_points,
)
from samplewright.store.artifacts import load_sampler, write_sampler

P = [0.1, 0.5, 0.9]
X = [40.0, 55.0, 90.0]


def test_metalog_is_the_default_and_passes_through_every_point() -> None:
    """Three points, three terms: Q(p_i) = x_i and F(x_i) = p_i, misses recorded as ~0."""
    s = from_quantiles(P, X)
    assert isinstance(s, MetalogSampler) and s.method == "quantiles"
    np.testing.assert_allclose(s.quantile(P), X, rtol=1e-12)
    np.testing.assert_allclose(s.cdf(X), P, atol=1e-12)
    d = s.diagnostics["elicited"]
    assert d["family"] == "metalog" and d["fit"] == "exact" and d["n_terms"] == 3
    assert d["probabilities"] == P and d["values"] == X
    assert d["max_abs_miss"] < 1e-10
    np.testing.assert_allclose(d["cdf_at_values"], P, atol=1e-12)


@pytest.mark.parametrize("bounds", [(0.0, None), (None, 120.0), (30.0, 120.0)])
def test_bounded_metalog_keeps_its_support(bounds: tuple[float | None, float | None]) -> None:
    """Bounds become the support; the points are still met exactly."""
    s = from_quantiles(P, X, lower=bounds[0], upper=bounds[1])
    lo = -np.inf if bounds[0] is None else bounds[0]
    hi = np.inf if bounds[1] is None else bounds[1]
    assert s.support == (lo, hi)
    np.testing.assert_allclose(s.quantile(P), X, rtol=1e-12)


def test_fewer_metalog_terms_give_least_squares_misses() -> None:
    """Five points and three terms: the misses are fit_metalog's least-squares misses."""
    p = [0.05, 0.25, 0.5, 0.75, 0.95]
    x = [10.0, 16.0, 20.0, 26.0, 41.0]
    s = from_quantiles(p, x, lower=0.0, n_terms=3)
    m = fit_metalog(p, x, lower=0.0, n_terms=3)
    d = s.diagnostics["elicited"]
    assert d["fit"] == "least_squares" and d["n_terms"] == 3
    np.testing.assert_allclose(d["misses"], m.misses, rtol=1e-10, atol=1e-12)
    assert d["max_abs_miss"] > 0.01


# points for each named family (lower bound 0 for positive ones, [0, 1] for beta)
POINTS: dict[str, tuple[list[float], list[float], dict[str, float]]] = {
    "normal": ([0.1, 0.5, 0.9], [8.0, 10.0, 12.5], {}),
    "logistic": ([0.1, 0.5, 0.9], [8.0, 10.0, 12.5], {}),
    "gumbel": ([0.1, 0.5, 0.9], [8.0, 10.0, 12.5], {}),
    "exponential": ([0.25, 0.5, 0.9], [2.0, 4.5, 15.0], {}),
    "lognormal": ([0.1, 0.5, 0.9], [4.0, 9.0, 25.0], {}),
    "gamma": ([0.1, 0.5, 0.9], [4.0, 9.0, 25.0], {}),
    "weibull": ([0.1, 0.5, 0.9], [4.0, 9.0, 25.0], {}),
    "loglogistic": ([0.1, 0.5, 0.9], [4.0, 9.0, 25.0], {}),
    "beta": ([0.1, 0.5, 0.9], [0.15, 0.4, 0.7], {"lower": 0.0, "upper": 1.0}),
}


def test_every_named_quantile_family_is_offered() -> None:
    """The methods are the metalog plus every family fit_quantiles knows."""
    assert set(QUANTILE_METHODS) == {"metalog", *QUANTILE_FAMILIES} == {"metalog", *POINTS}


@pytest.mark.parametrize("family", list(POINTS))
def test_named_family_sampler_is_the_scipy_distribution_fitted(family: str) -> None:
    """The sampler's quantiles are those of scipy's distribution with fit_quantiles' params."""
    p, x, bounds = POINTS[family]
    s = from_quantiles(p, x, family=family, **bounds)  # type: ignore[arg-type]
    r = fit_quantiles(p, x, family=family, **bounds)  # type: ignore[arg-type]
    assert isinstance(s, ParametricSampler) and s.family.name == family
    ref = getattr(stats, r.scipy_name)(**r.params)  # source: scipy.stats
    u = np.linspace(0.01, 0.99, 21)
    np.testing.assert_allclose(s.quantile(u), ref.ppf(u), rtol=1e-12)
    d = s.diagnostics["elicited"]
    assert d["fit"] == "least_squares" and d["family"] == family
    np.testing.assert_allclose(d["misses"], r.misses, rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize(
    ("args", "kwargs", "message"),
    [
        ((P, X), {"family": "pareto"}, "^family: expected one of metalog, normal"),
        ((P, X), {"family": "gamma", "n_terms": 3}, "^n_terms: only the metalog family"),
        ((P, X), {"family": "beta"}, "^lower, upper: family 'beta' needs both bounds"),
        ((P, [40.0, 30.0, 90.0]), {}, "^values: must increase with probability"),
        ((P, X), {"lower": 50.0}, "^values: expected every value > lower=50"),
        (
            ([0.1, 0.5, 0.6, 0.9], [1.0, 2.0, 9.0, 9.5]),
            {},
            "^probabilities, values: no valid 4-term metalog passes through",
        ),
    ],
)
def test_from_quantiles_refuses_bad_input(
    args: tuple[Any, Any], kwargs: dict[str, Any], message: str
) -> None:
    """Unknown families, misplaced options, bad points and infeasible metalogs are refused."""
    with pytest.raises(MethodError, match=message):
        from_quantiles(*args, **kwargs)


def test_pert_is_the_beta_of_malcolm_et_al() -> None:
    """(2, 5, 14) with shape 4 gives beta(2, 4) on [2, 14]: scipy's beta with those numbers."""
    s = from_three_points(2.0, 5.0, 14.0)
    assert s.family.name == "beta" and s.method == "three_points"
    assert s.params == {"alpha": 2.0, "beta": 4.0, "lower": 2.0, "upper": 14.0}
    ref = stats.beta(2.0, 4.0, loc=2.0, scale=12.0)  # source: scipy.stats.beta
    x = np.linspace(2.0, 14.0, 13)
    np.testing.assert_allclose(s.cdf(x), ref.cdf(x), rtol=1e-14)
    assert s.diagnostics["three_points"] == {
        "family": "pert",
        "low": 2.0,
        "mode": 5.0,
        "high": 14.0,
        "shape": 4.0,
        "mean": pytest.approx(6.0),
    }


def test_pert_shape_moves_mass_towards_the_mode() -> None:
    """A larger shape gives a smaller variance and a mean closer to the mode."""
    wide = from_three_points(40.0, 55.0, 90.0, shape=2.0)
    narrow = from_three_points(40.0, 55.0, 90.0, shape=10.0)
    assert narrow.var < wide.var
    assert abs(narrow.mean - 55.0) < abs(wide.mean - 55.0)


def test_triangular_through_three_points() -> None:
    """The triangular sampler is scipy's triang with c = (mode - low) / (high - low)."""
    s = from_three_points(1.0, 2.0, 5.0, family="triangular")
    assert s.family.name == "triangular"
    ref = stats.triang(0.25, loc=1.0, scale=4.0)  # source: scipy.stats.triang
    u = np.linspace(0.0, 1.0, 11)
    np.testing.assert_allclose(s.quantile(u), ref.ppf(u), rtol=1e-14)
    assert s.diagnostics["three_points"]["family"] == "triangular"


@pytest.mark.parametrize(
    ("args", "kwargs", "message"),
    [
        ((1.0, 2.0, 5.0), {"family": "uniform"}, "^family: expected one of pert, triangular"),
        ((1.0, 2.0, 5.0), {"family": "triangular", "shape": 6.0}, "^shape: only family 'pert'"),
        ((1.0, 6.0, 5.0), {}, "^mode: expected a value from low=1 to high=5"),
        ((5.0, 5.0, 5.0), {}, "^low, high: expected low < high"),
        ((1.0, 2.0, 5.0), {"shape": 0.0}, "^shape: expected a number > 0"),
    ],
)
def test_from_three_points_refuses_bad_input(
    args: tuple[float, float, float], kwargs: dict[str, Any], message: str
) -> None:
    """Bad points, families and shapes raise a MethodError naming the argument."""
    with pytest.raises(MethodError, match=message):
        from_three_points(*args, **kwargs)


def test_three_point_families() -> None:
    """The three-point families are pert and triangular."""
    assert THREE_POINT_FAMILIES == ("pert", "triangular")


@pytest.mark.parametrize(
    "make",
    [
        lambda: from_quantiles(P, X, lower=0.0, upper=150.0),
        lambda: from_quantiles(P, X, family="gamma"),
        lambda: from_three_points(40.0, 55.0, 90.0),
    ],
    ids=["metalog", "gamma", "pert"],
)
def test_expert_samplers_round_trip_through_artifacts(make: Any, tmp_path: Path) -> None:
    """Written with their diagnostics, they load as the same sampler with the same records."""
    s = make()
    write_sampler(s, tmp_path / "e.parquet", diagnostics=s.diagnostics)
    loaded = load_sampler(tmp_path / "e.parquet")
    assert type(loaded) is type(s) and loaded.describe() == s.describe()
    u = np.linspace(0.0, 1.0, 17)
    np.testing.assert_array_equal(loaded.quantile(u), s.quantile(u))
    assert loaded.diagnostics == s.diagnostics
