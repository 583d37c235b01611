"""Unit tests for samplewright.distributions: the common interface, validation and payloads."""

from __future__ import annotations

import functools
import json

import numpy as np
import pytest
from scipy import stats

import samplewright as sw
from samplewright.core.errors import KnotsError, MethodError
from samplewright.distributions.base import SAMPLER_KINDS, Sampler
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.piecewise import PiecewiseSampler, from_knots
from samplewright.distributions.smoothed import SmoothedSampler
from samplewright.distributions.steps import draw_indices, step_cdf, step_index, step_mass
from samplewright.fitting.registry import load_sampler_kinds


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
    # the payload keeps the frequency weights as given, in the order of the values
    np.testing.assert_array_equal(s.payload()["weight"], [2.0, 1.0, 1.0])
    rebuilt = EmpiricalSampler.from_payload(s.payload(), {"method": "empirical"})
    np.testing.assert_array_equal(rebuilt.cdf([1.0, 2.0, 3.0]), s.cdf([1.0, 2.0, 3.0]))
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
        ([], None, "^empirical needs at least 1 value, found 0$"),
        ([1.0, np.nan], None, "^values: every value must be finite; value 2 is nan$"),
        ([1.0, np.inf], None, "^values: every value must be finite; value 2 is inf$"),
        ([1.0, 2.0], [1.0], "^weights: expected 2 weights, found 1$"),
        ([1.0, 2.0], [0.0, 0.0], "^weights: expected at least one weight > 0, found all 0$"),
        ([1.0, 2.0], [1.0, -1.0], "^weights: expected finite non-negative weights; weight 2 is"),
        ([1.0, 2.0], [1.0, np.nan], "^weights: expected finite non-negative weights; weight 2 is"),
    ],
)
def test_empirical_rejects_bad_input(
    values: list[float], weights: list[float] | None, message: str
) -> None:
    """Empty, non-finite values and bad weights raise MethodError with a precise message."""
    with pytest.raises(MethodError, match=message):
        EmpiricalSampler(values, weights)


def test_empirical_drops_rows_of_weight_zero() -> None:
    """A row of weight 0 is dropped: the sampler equals the one built without it."""
    a = EmpiricalSampler([1.0, 5.0, 2.0, 3.0], [1.0, 0.0, 2.0, 1.0])
    b = EmpiricalSampler([1.0, 2.0, 3.0], [1.0, 2.0, 1.0])
    np.testing.assert_array_equal(a.values, b.values)
    np.testing.assert_array_equal(a.weights, b.weights)  # type: ignore[arg-type]
    assert a.params == b.params == {"n": 3, "weighted": True}


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


# --- draw: one template for every kind ----------------------------------------------------------


class _Fixed:
    """A uniform source that hands out given uniforms (a stand-in for quasi-random points)."""

    def __init__(self, u: np.ndarray) -> None:
        self.u = np.asarray(u, dtype=np.float64)

    def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
        return self.u[: int(np.prod(shape))].reshape(shape)


@functools.cache
def _every_kind() -> list[Sampler]:
    x = np.random.default_rng(4).gamma(2.0, 3.0, 400)
    c = np.random.default_rng(5).random(400) < 0.2
    return [
        sw.fit(x, "empirical"),
        sw.fit(x, "empirical", weights=np.arange(1.0, 401.0)),
        sw.fit(x, "interpolated"),
        sw.fit(x, "gamma"),
        sw.fit(x, "spliced", threshold_quantile=0.9),
        sw.fit(x, "smoothed"),
        sw.fit(x, "kaplan_meier", censored=c),
        sw.fit(np.round(x), "empirical_pmf"),
    ]


def test_every_kind_is_covered_and_none_overrides_draw() -> None:
    """draw is defined once, on the base class; the kinds supply quantile and a native path."""
    assert {s.kind for s in _every_kind()} <= set(load_sampler_kinds())
    samplers = [c for c in load_sampler_kinds().values() if issubclass(c, Sampler)]
    assert len(samplers) >= 7
    for cls in samplers:
        assert "draw" not in cls.__dict__, cls.__name__


@pytest.mark.parametrize("sampler", _every_kind(), ids=lambda s: f"{s.kind}-{s.method}")
def test_a_uniform_source_is_transformed_by_the_quantile(sampler: Sampler) -> None:
    """With a uniform source, draw(size) is quantile of the source's uniforms, in its shape."""
    u = np.random.default_rng(9).random(12)
    d = sampler.draw((3, 4), rng=_Fixed(u))
    assert d.shape == (3, 4)
    np.testing.assert_array_equal(d, np.asarray(sampler.quantile(u)).reshape(3, 4))


def test_sobol_points_through_a_normal_sampler_are_scipys_normal_quantiles() -> None:
    """Scrambled Sobol' points from scipy.stats.qmc become scipy's norm.ppf of the same points."""

    class Sobol:
        def __init__(self, seed: int) -> None:
            self.engine = stats.qmc.Sobol(1, scramble=True, seed=seed)

        def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
            return self.engine.random(int(np.prod(shape))).reshape(shape)

    s = ParametricSampler("normal", {"mu": 10.0, "sigma": 2.0})
    d = s.draw(1024, rng=Sobol(3))
    points = stats.qmc.Sobol(1, scramble=True, seed=3).random(1024).ravel()
    np.testing.assert_array_equal(d, stats.norm(10.0, 2.0).ppf(points))  # source: scipy.stats
    # balanced points: the error is far below the Monte Carlo standard error 2 / sqrt(1024) = 0.06
    assert abs(d.mean() - 10.0) < 0.01


def test_a_uniform_source_of_the_wrong_shape_is_refused() -> None:
    """A source that returns another shape than asked is refused, naming rng."""

    class Short:
        def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
            return np.full(3, 0.5)

    with pytest.raises(ValueError, match=r"^rng: the uniform source gave shape \(3,\), expected"):
        EmpiricalSampler([1.0, 2.0]).draw(5, rng=Short())


def test_native_draws_are_numpys_own_generators() -> None:
    """With a Generator, unweighted empirical draws are numpy's integers and a normal's numpy's
    normal: the native paths (reference: numpy.random.Generator)."""
    values = np.array([4.0, 1.0, 3.0, 2.0])
    got = EmpiricalSampler(values).draw(1000, rng=7)
    expected = np.sort(values).take(np.random.default_rng(7).integers(0, 4, 1000))
    np.testing.assert_array_equal(got, expected)
    normal = ParametricSampler("normal", {"mu": 1.0, "sigma": 3.0}).draw(1000, rng=7)
    np.testing.assert_array_equal(normal, np.random.default_rng(7).normal(1.0, 3.0, 1000))


# --- the shared step CDF and index draws ---------------------------------------------------------


def _first_at_or_above(cum: np.ndarray, u: float) -> int:
    """Slow reference of the tie rule: the first row whose cumulative mass reaches u."""
    for i, c in enumerate(cum):
        if c >= u:
            return i
    return cum.size - 1


def test_index_rule_takes_the_first_row_whose_mass_reaches_u() -> None:
    """At exact cumulative levels (ties) and between them, the index is the first cum[i] >= u."""
    cum = np.array([0.25, 0.5, 0.5, 1.0])  # row 2 has no mass
    u = np.array([0.0, 0.1, 0.25, 0.3, 0.5, 0.5000001, 0.99, 1.0])
    expected = [_first_at_or_above(cum, v) for v in u]
    assert step_index(cum, u).tolist() == expected == [0, 0, 0, 1, 1, 3, 3, 3]


def test_weighted_index_draws_follow_the_rule_for_empirical_and_smoothed() -> None:
    """Weighted empirical and smoothed draws pick rows by the same rule from the same uniforms."""

    class Uniforms:  # a Generator stand-in whose uniforms sit exactly on the cumulative levels
        def random(self, size: int) -> np.ndarray:
            return np.array([0.25, 0.5, 0.75, 1.0 - 2.0**-53])[:size]

    cum = np.array([0.25, 0.5, 0.75, 1.0])
    assert draw_indices(4, 4, Uniforms(), cum).tolist() == [0, 1, 2, 3]  # type: ignore[arg-type]
    values, w = np.array([1.0, 2.0, 3.0, 4.0]), np.array([1.0, 1.0, 1.0, 1.0])
    empirical = EmpiricalSampler(values, w).draw(2000, rng=11)
    idx = step_index(cum, np.random.default_rng(11).random(2000))
    np.testing.assert_array_equal(empirical, values[idx])
    smoothed = SmoothedSampler(values, w, bandwidth=0.5, positive="none").draw(2000, rng=11)
    gen = np.random.default_rng(11)
    rows = step_index(cum, gen.random(2000))
    np.testing.assert_allclose(smoothed, values[rows] + 0.5 * gen.standard_normal(2000), rtol=0)


def test_step_cdf_and_mass_agree_with_a_direct_count() -> None:
    """The shared step CDF and atom mass equal direct sums over tied atoms."""
    atoms = np.array([1.0, 2.0, 2.0, 5.0])
    mass = np.array([0.125, 0.25, 0.125, 0.5])
    cum = np.cumsum(mass)
    q = np.array([0.0, 1.0, 1.5, 2.0, 4.9, 5.0, 9.0])
    np.testing.assert_array_equal(step_cdf(atoms, cum, q), [mass[atoms <= v].sum() for v in q])
    np.testing.assert_array_equal(step_mass(atoms, cum, q), [mass[atoms == v].sum() for v in q])


# --- declared attributes -------------------------------------------------------------------------


@pytest.mark.parametrize("sampler", _every_kind(), ids=lambda s: f"{s.kind}-{s.method}")
def test_fitted_samplers_carry_only_what_their_constructor_sets(sampler: Sampler) -> None:
    """A fitted sampler has the same attributes as one rebuilt from its payload (nothing stuck
    on after construction), and its diagnostics are plain JSON."""
    rebuilt = type(sampler).from_payload(
        sampler.payload(), {"kind": sampler.kind, **sampler.describe()}
    )
    assert set(vars(sampler)) == set(vars(rebuilt))
    json.dumps(sampler.diagnostics, allow_nan=False)
