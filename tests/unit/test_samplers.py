"""Unit tests for samplewright.distributions: the common interface, validation and payloads."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import KnotsError, MethodError
from samplewright.distributions.base import SAMPLER_KINDS
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.piecewise import PiecewiseSampler, from_knots


def _all_samplers() -> list[object]:
    return [
        EmpiricalSampler([3.0, 1.0, 2.0, 2.0]),
        EmpiricalSampler([3.0, 1.0, 2.0], [1.0, 2.0, 1.0]),
        from_knots([0, 1, 1, 3], [0, 0.5, 0.75, 1]),
        ParametricSampler("gamma", {"shape": 2.0, "scale": 1.5, "loc": 0.0}),
    ]


def test_kinds_registry_maps_payload_layouts_to_classes() -> None:
    """Each payload layout name maps to its sampler class."""
    assert SAMPLER_KINDS["empirical"] is EmpiricalSampler
    assert SAMPLER_KINDS["piecewise"] is PiecewiseSampler
    assert SAMPLER_KINDS["parametric"] is ParametricSampler


@pytest.mark.parametrize("sampler", _all_samplers(), ids=lambda s: type(s).__name__)
def test_same_seed_gives_same_draws(sampler: EmpiricalSampler) -> None:
    """A sampler holds no randomness: equal seeds give equal draws, other seeds other draws."""
    a = sampler.draw(50, rng=123)
    np.testing.assert_array_equal(sampler.draw(50, rng=123), a)
    assert not np.array_equal(sampler.draw(50, rng=124), a)


@pytest.mark.parametrize("sampler", _all_samplers(), ids=lambda s: type(s).__name__)
def test_draw_accepts_a_shape(sampler: EmpiricalSampler) -> None:
    """draw(size=(2, 3)) returns a 2-by-3 array inside the support."""
    d = sampler.draw((2, 3), rng=1)
    lo, hi = sampler.support
    assert d.shape == (2, 3) and np.all((d >= lo) & (d <= hi))


@pytest.mark.parametrize("sampler", _all_samplers(), ids=lambda s: type(s).__name__)
@pytest.mark.parametrize("u", [-0.1, 1.1, np.nan])
def test_quantile_rejects_probabilities_outside_0_1(sampler: EmpiricalSampler, u: float) -> None:
    """quantile(u) refuses u < 0, u > 1 and NaN."""
    with pytest.raises(ValueError, match=r"u: probabilities must lie in \[0, 1\]"):
        sampler.quantile(u)


@pytest.mark.parametrize("sampler", _all_samplers(), ids=lambda s: type(s).__name__)
def test_describe_is_plain_json_types(sampler: EmpiricalSampler) -> None:
    """describe() holds method, params, support, mean and sd as plain Python values."""
    d = sampler.describe()
    assert {"method", "params", "support", "mean", "sd"} <= set(d)
    assert all(type(v) in (float, str) for v in d["support"])
    assert isinstance(d["mean"], float) and d["sd"] == pytest.approx(np.sqrt(sampler.var))


def test_describe_writes_infinite_support_as_text() -> None:
    """An infinite end of the support is stored as the text 'inf' / '-inf'."""
    d = ParametricSampler("normal", {"mu": 0.0, "sigma": 1.0}).describe()
    assert d["support"] == ["-inf", "inf"]  # source: README "Artifact format"


def test_empirical_sorts_values_and_keeps_weights_aligned() -> None:
    """Values are stored sorted, each weight normalised and still attached to its value."""
    s = EmpiricalSampler([3.0, 1.0, 2.0], [1.0, 2.0, 1.0])
    np.testing.assert_array_equal(s.values, [1.0, 2.0, 3.0])
    np.testing.assert_allclose(s.weights, [0.5, 0.25, 0.25])  # hand computation: w / sum(w)
    assert s.params == {"n": 3, "weighted": True}
    assert set(s.payload()) == {"value", "weight"}
    assert set(EmpiricalSampler([1.0]).payload()) == {"value"}


def test_empirical_moments_are_the_weighted_sample_moments() -> None:
    """mean and var are the (weighted) population moments of the data."""
    s = EmpiricalSampler([1.0, 2.0, 3.0], [1.0, 1.0, 2.0])
    assert s.mean == pytest.approx(2.25)  # hand computation: (1 + 2 + 6) / 4
    assert s.var == pytest.approx(0.6875)  # hand computation: (1.5625 + 0.0625 + 1.125) / 4
    x = np.array([4.0, 8.0, 1.0, 1.0])
    u = EmpiricalSampler(x)
    assert u.mean == pytest.approx(np.mean(x)) and u.var == pytest.approx(np.var(x))


def test_empirical_pmf_counts_ties() -> None:
    """pmf(x) is the share of observations equal to x."""
    s = EmpiricalSampler([3.0, 1.0, 2.0, 2.0])
    np.testing.assert_allclose(s.pmf([1.0, 2.0, 2.5, 3.0]), [0.25, 0.5, 0.0, 0.25])


@pytest.mark.parametrize(
    ("values", "weights", "message"),
    [
        ([], None, "at least 1 value is needed, found 0"),
        ([1.0, np.nan], None, "every value must be finite"),
        ([1.0, np.inf], None, "every value must be finite"),
        ([1.0, 2.0], [1.0], "expected 2 weights, found 1"),
        ([1.0, 2.0], [1.0, 0.0], "every weight must be finite and > 0"),
        ([1.0, 2.0], [1.0, -1.0], "every weight must be finite and > 0"),
        ([1.0, 2.0], [1.0, np.nan], "every weight must be finite and > 0"),
    ],
)
def test_empirical_rejects_bad_input(
    values: list[float], weights: list[float] | None, message: str
) -> None:
    """Empty, non-finite values and bad weights raise MethodError with a precise message."""
    with pytest.raises(MethodError, match=message):
        EmpiricalSampler(values, weights)


def test_piecewise_counts_knots_and_atoms() -> None:
    """params records the number of knots and of atoms (vertical steps)."""
    s = from_knots([0, 2, 2, 9], [0, 0.5, 0.7, 1])
    assert s.params == {"n_knots": 4, "n_atoms": 1}
    assert s.method == "knots" and set(s.payload()) == {"x", "p"}


def test_piecewise_pdf_is_the_slope_and_excludes_atoms() -> None:
    """pdf is dp/dx on each sloped segment and 0 on flat parts, atoms and outside."""
    s = from_knots([0, 2, 2, 4, 5], [0, 0.5, 0.7, 0.7, 1])
    np.testing.assert_allclose(s.pdf([-1, 1, 3, 4.5, 6]), [0, 0.25, 0, 0.3, 0])
    # hand computation: 0.5 / 2 on [0, 2), flat on [2, 4), 0.3 / 1 on [4, 5)


def test_piecewise_support_skips_leading_and_trailing_flat_parts() -> None:
    """The support runs from the last knot with p=0 to the first knot with p=1."""
    s = from_knots([-5, 0, 1, 3, 8], [0, 0, 0.5, 1, 1])
    assert s.support == (0.0, 3.0)
    assert s.quantile(0.0) == 0.0 and s.quantile(1.0) == 3.0


@pytest.mark.parametrize(
    ("x", "p", "message"),
    [
        ([0, 1, 2], [0, 1], "x has 3 points but p has 2"),
        ([0], [1], "at least 2 points are needed, found 1"),
        (["a", 1], [0, 1], "x and p must be numbers"),
        ([0, np.nan], [0, 1], "point 2 has a non-finite x"),
        ([0, 1], [0, np.inf], "point 2 has a non-finite p"),
        ([0, 2, 1, 3], [0, 0.2, 0.5, 1], r"point 3 \(x=1\) is below point 2 \(x=2\)"),
        ([0, 1, 2, 3], [0, 0.6, 0.4, 1], r"point 3 \(p=0.4\) is below point 2 \(p=0.6\)"),
        ([0, 1, 2], [0, 1, 1.5], "point 3 has p=1.5, outside"),
        ([0, 1], [0.1, 1], "the first point must have p=0, found p=0.1"),
        ([0, 1], [0, 0.9], "the last point must have p=1, found p=0.9"),
    ],
)
def test_bad_knots_name_the_offending_point(x: list[object], p: list[float], message: str) -> None:
    """Each way knots can fail to be a CDF gives a KnotsError naming the point."""
    with pytest.raises(KnotsError, match=message):
        from_knots(x, p)


def test_parametric_matches_its_scipy_distribution() -> None:
    """A gamma sampler's cdf, quantile, pdf, mean and var are scipy.stats.gamma's."""
    s = ParametricSampler("gamma", {"shape": 2.5, "scale": 1.5, "loc": 0.0})
    ref = stats.gamma(a=2.5, scale=1.5)  # source: scipy.stats.gamma
    q = np.array([0.1, 1.0, 4.0, 10.0])
    np.testing.assert_allclose(s.cdf(q), ref.cdf(q), rtol=1e-14)
    np.testing.assert_allclose(s.pdf(q), ref.pdf(q), rtol=1e-14)
    np.testing.assert_allclose(
        s.quantile([0.01, 0.5, 0.99]), ref.ppf([0.01, 0.5, 0.99]), rtol=1e-14
    )
    assert (s.mean, s.var) == pytest.approx((3.75, 5.625))  # source: closed-form gamma moments
    assert s.support == (0.0, np.inf)


def test_parametric_draws_follow_the_distribution() -> None:
    """Draws of a weibull sampler pass a KS test against scipy.stats.weibull_min."""
    s = ParametricSampler("weibull", {"shape": 1.7, "scale": 3.0, "loc": 0.5})
    d = s.draw(20_000, rng=5)
    ref = stats.weibull_min(c=1.7, loc=0.5, scale=3.0)  # source: scipy.stats.weibull_min
    assert stats.kstest(d, ref.cdf).pvalue > 1e-3


def test_parametric_requires_every_parameter() -> None:
    """A missing parameter is a MethodError listing it."""
    with pytest.raises(MethodError, match="parameters missing: scale"):
        ParametricSampler("gamma", {"shape": 2.0, "loc": 0.0})


def test_parametric_unknown_family_is_refused() -> None:
    """An unknown family name is a MethodError."""
    with pytest.raises(MethodError, match="unknown family 'nosuch'"):
        ParametricSampler("nosuch", {})


def test_continuous_parametric_has_no_pmf() -> None:
    """pmf on a continuous family raises AttributeError pointing to pdf."""
    with pytest.raises(AttributeError, match="continuous: use pdf"):
        ParametricSampler("normal", {"mu": 0.0, "sigma": 1.0}).pmf(0.0)


def test_parametric_describe_carries_fit_statistics() -> None:
    """describe() of a fitted sampler includes family, loglik, aic and bic."""
    s = ParametricSampler("exponential", {"scale": 2.0, "loc": 0.0}, loglik=-3.5, aic=9.0, bic=9.5)
    d = s.describe()
    assert (d["family"], d["loglik"], d["aic"], d["bic"]) == ("exponential", -3.5, 9.0, 9.5)
    assert d["params"] == {"scale": 2.0, "loc": 0.0}


def test_repr_names_class_method_and_params() -> None:
    """repr shows the class, method and parameters."""
    assert repr(from_knots([0, 1], [0, 1])) == (
        "<PiecewiseSampler method='knots' params={'n_knots': 2, 'n_atoms': 0}>"
    )
