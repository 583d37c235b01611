"""Unit tests of the mixture, point-mass and metalog sampler kinds and of fitting.composite.

Outside references used here: scipy.stats (component distributions, integrate.quad for moments),
the estimation cores samplewright.fitting.{mixtures, metalog, zero_modified, mle} (themselves
checked against statsmodels and scipy in tests/reference), and brute-force generalised inverses.
Checks against published values and statsmodels live in
tests/reference/test_composite_reference.py.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pytest
from scipy import integrate, stats

from samplewright.core.checks import check_sample
from samplewright.core.errors import MethodError
from samplewright.core.randomness import make_rng
from samplewright.distributions.base import Sampler
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.metalog import MetalogSampler
from samplewright.distributions.mixture import MixtureSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.point_mass import PointMassSampler
from samplewright.fitting.composite import (
    ATOM_SHARE,
    COMPOSITE_METHODS,
    composite_candidates,
    fit_hurdle_sample,
    fit_mixture_sample,
    fit_zero_inflated_sample,
    screen_composites,
)
from samplewright.fitting.metalog import fit_metalog
from samplewright.fitting.mixtures import fit_mixture
from samplewright.fitting.mle import fit_family
from samplewright.fitting.zero_modified import fit_zero_inflated
from samplewright.store.artifacts import load_sampler, write_sampler

U = np.concatenate([[0.0, 1e-9, 1e-4], np.linspace(0.01, 0.99, 41), [1 - 1e-4, 1 - 1e-9, 1.0]])


def _round_trip(s: Sampler) -> Sampler:
    """Rebuild a sampler from its own payload and description (what an artifact stores)."""
    return type(s).from_payload(s.payload(), {"kind": s.kind, **s.describe()})


def _assert_same(a: Sampler, b: Sampler) -> None:
    """Same class, payload (bit for bit), description and quantile function."""
    assert type(a) is type(b)
    pa, pb = a.payload(), b.payload()
    assert pa.keys() == pb.keys()
    for k in pa:
        assert np.array_equal(pa[k], pb[k])
    assert a.describe() == b.describe()
    np.testing.assert_array_equal(a.quantile(U), b.quantile(U))


def _mixture() -> MixtureSampler:
    """An invented two-component lognormal mixture."""
    return MixtureSampler(
        "lognormal",
        [0.35, 0.65],
        {"mu": [0.0, 1.8], "sigma": [0.4, 0.25], "loc": [0.0, 0.0]},
        loglik=-12.5,
        aic=35.0,
        bic=40.0,
    )


def _hurdle() -> PointMassSampler:
    """An invented atom of 0.3 at 0 plus a gamma severity."""
    inner = ParametricSampler("gamma", {"shape": 2.0, "scale": 3.0, "loc": 0.0})
    return PointMassSampler(inner, at=0.0, p0=0.3)


def _zip() -> PointMassSampler:
    """An invented zero-inflated Poisson: 0.25 extra zeros, lambda 3.5."""
    return PointMassSampler(
        ParametricSampler("poisson", {"lambda": 3.5}), at=0.0, p0=0.25, method="zero_inflated"
    )


# --- mixture sampler ----------------------------------------------------------------------------


def test_mixture_quantile_inverts_the_cdf() -> None:
    """F(Q(u)) = u to 1e-12 across (0, 1), and Q(0), Q(1) are the support's ends."""
    s = _mixture()
    q = s.quantile(U)
    assert q[0] == 0.0 and q[-1] == np.inf
    np.testing.assert_allclose(s.cdf(q[1:-1]), U[1:-1], rtol=0, atol=1e-12)


def test_mixture_pdf_is_the_derivative_of_the_cdf() -> None:
    """A central difference of the cdf matches the pdf (the weights enter both alike)."""
    s = _mixture()
    x = np.linspace(0.2, 12.0, 60)
    h = 1e-5
    np.testing.assert_allclose((s.cdf(x + h) - s.cdf(x - h)) / (2 * h), s.pdf(x), rtol=1e-6)


def test_mixture_moments_match_integrals_of_the_density() -> None:
    """Mean and variance equal integrals of x f(x) and x^2 f(x) (scipy.integrate.quad)."""
    s = _mixture()

    def moment(r: int) -> float:
        return float(integrate.quad(lambda x: x**r * float(s.pdf(x)), 0, np.inf, limit=200)[0])

    m1, m2 = moment(1), moment(2)
    assert s.mean == pytest.approx(m1, rel=1e-8)
    assert s.var == pytest.approx(m2 - m1 * m1, rel=1e-7)


def test_mixture_native_draws_and_uniform_source_are_reproducible() -> None:
    """Same seed, same draws; a uniform source goes through the quantile function."""

    class Fixed:
        def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
            return np.full(shape, 0.5)

    s = _mixture()
    np.testing.assert_array_equal(s.draw(1000, rng=3), s.draw(1000, rng=3))
    assert s.draw((2, 3), rng=3).shape == (2, 3)
    np.testing.assert_array_equal(s.draw(4, rng=Fixed()), np.full(4, float(s.quantile(0.5))))


def test_mixture_round_trip_is_exact_through_payload_and_artifact(tmp_path: Path) -> None:
    """payload/describe/from_payload and write_sampler/load_sampler rebuild the same sampler."""
    s = _mixture()
    _assert_same(s, _round_trip(s))
    write_sampler(s, tmp_path / "m.parquet")
    loaded = load_sampler(tmp_path / "m.parquet")
    _assert_same(s, loaded)
    assert isinstance(loaded, MixtureSampler) and loaded.bic == 40.0


@pytest.mark.parametrize(
    ("family", "weights", "components", "message"),
    [
        ("poisson", [1.0], {"lambda": [2.0]}, "^family: a mixture needs a continuous"),
        ("normal", [0.5, 0.6], {"mu": [0, 1], "sigma": [1, 1]}, "^weights: expected weights sum"),
        ("normal", [1.5, -0.5], {"mu": [0, 1], "sigma": [1, 1]}, "^weights: expected at least"),
        ("normal", [0.5, 0.5], {"mu": [0, 1]}, "^components: normal takes mu, sigma; missing"),
        ("normal", [0.5, 0.5], {"mu": [0], "sigma": [1]}, "^components: 'mu' needs 2 finite"),
        ("normal", [0.5, 0.5], {"mu": [0, 1], "sigma": [1, -1]}, "^components: component 2"),
        ("nope", [1.0], {}, "^unknown family 'nope'"),
    ],
)
def test_mixture_refuses_bad_input(
    family: str, weights: list[float], components: dict[str, Any], message: str
) -> None:
    """Each malformed mixture raises a MethodError naming the argument."""
    with pytest.raises(MethodError, match=message):
        MixtureSampler(family, weights, components)


# --- point-mass sampler -------------------------------------------------------------------------


def test_point_mass_cdf_jumps_by_p0_at_the_atom() -> None:
    """F(at) - F(at-) = p0 and pmf(at) = p0; elsewhere F = (1 - p0) G."""
    s = _hurdle()
    g = stats.gamma(2.0, scale=3.0)  # source: scipy.stats.gamma
    assert float(s.cdf(0.0)) - float(s.cdf(-1e-12)) == pytest.approx(0.3, abs=1e-15)
    assert float(s.pmf(0.0)) == 0.3 and float(s.pmf(1.0)) == 0.0
    x = np.array([0.5, 2.0, 9.0])
    np.testing.assert_allclose(s.cdf(x), 0.3 + 0.7 * g.cdf(x), rtol=1e-14)
    np.testing.assert_allclose(s.pdf(x), 0.7 * g.pdf(x), rtol=1e-14)


def test_point_mass_quantile_is_the_generalised_inverse() -> None:
    """Levels up to p0 give the atom, higher ones G's quantile of (u - p0) / (1 - p0)."""
    s = _hurdle()
    g = stats.gamma(2.0, scale=3.0)  # source: scipy.stats.gamma
    assert s.quantile([0.0, 0.1, 0.3]).tolist() == [0.0, 0.0, 0.0]
    u = np.array([0.31, 0.5, 0.99])
    np.testing.assert_allclose(s.quantile(u), g.ppf((u - 0.3) / 0.7), rtol=1e-13)
    assert float(s.quantile(1.0)) == np.inf


def test_point_mass_inside_a_continuous_support() -> None:
    """An atom at 1 inside a normal: levels below (1-p0)G(1) fall below it, then the atom."""
    inner = ParametricSampler("normal", {"mu": 0.0, "sigma": 1.0})
    s = PointMassSampler(inner, at=1.0, p0=0.2)
    below = 0.8 * stats.norm.cdf(1.0)  # source: scipy.stats.norm
    u = np.array([0.1, below, below + 0.1, below + 0.2, 0.99])
    want = [
        stats.norm.ppf(0.1 / 0.8),
        1.0,
        1.0,
        1.0,
        stats.norm.ppf((0.99 - 0.2) / 0.8),
    ]
    np.testing.assert_allclose(s.quantile(u), want, rtol=1e-12)
    assert s.support == (-np.inf, np.inf)


def test_point_mass_with_a_count_family_is_discrete() -> None:
    """Zero-inflated Poisson: pmf sums to 1, cdf is its running sum, no density."""
    s = _zip()
    k = np.arange(0, 60)
    pmf = s.pmf(k)
    f = stats.poisson(3.5).pmf(k)  # source: scipy.stats.poisson
    np.testing.assert_allclose(pmf, 0.25 * (k == 0) + 0.75 * f, rtol=1e-14)
    assert pmf.sum() == pytest.approx(1.0, abs=1e-14)
    np.testing.assert_allclose(s.cdf(k), np.cumsum(pmf), atol=1e-14)
    with pytest.raises(AttributeError):
        s.pdf(1.0)


def test_point_mass_count_quantile_matches_a_brute_force_search() -> None:
    """Q(u) is the smallest count k with F(k) >= u, found by scanning k = 0, 1, 2, ..."""
    s = _zip()
    cum = np.cumsum(s.pmf(np.arange(0, 80)))
    u = np.linspace(0.001, 0.999, 301)
    brute = np.array([np.flatnonzero(cum >= v - 1e-15)[0] for v in u], dtype=np.float64)
    np.testing.assert_array_equal(s.quantile(u), brute)


def test_point_mass_moments_match_closed_forms() -> None:
    """ZIP mean (1 - pi) lambda and variance (1 - pi) lambda (1 + pi lambda); hurdle moments
    from scipy's gamma moments."""
    z = _zip()
    # source: Lambert (1992), Technometrics 34(1), moments of the ZIP (from memory)
    assert z.mean == pytest.approx(0.75 * 3.5, rel=1e-14)
    assert z.var == pytest.approx(0.75 * 3.5 * (1 + 0.25 * 3.5), rel=1e-13)
    h = _hurdle()
    m, v = stats.gamma(2.0, scale=3.0).stats("mv")  # source: scipy.stats.gamma
    mean = 0.7 * float(m)
    assert h.mean == pytest.approx(mean, rel=1e-14)
    assert h.var == pytest.approx(0.7 * (float(v) + float(m) ** 2) - mean**2, rel=1e-13)


@pytest.mark.parametrize(
    "inner",
    [
        ParametricSampler("lognormal", {"mu": 1.0, "sigma": 0.5, "loc": 0.0}),
        EmpiricalSampler([1.5, 2.5, 2.5, 7.0], [1.0, 2.0, 1.0, 3.0]),
        PointMassSampler(ParametricSampler("exponential", {"scale": 2.0, "loc": 0.0}), p0=0.1),
    ],
    ids=["parametric", "empirical", "nested"],
)
def test_point_mass_round_trip_prefixes_the_inner_payload(inner: Sampler, tmp_path: Path) -> None:
    """The inner payload is stored under inner_ columns and everything rebuilds exactly."""
    s = PointMassSampler(inner, at=-1.0, p0=0.4, loglik=-3.0)
    assert set(s.payload()) == {"inner_" + k for k in inner.payload()}
    assert s.describe()["inner"]["kind"] == inner.kind
    _assert_same(s, _round_trip(s))
    write_sampler(s, tmp_path / "pm.parquet")
    _assert_same(s, load_sampler(tmp_path / "pm.parquet"))


def test_point_mass_draws_put_p0_at_the_atom() -> None:
    """The share of draws at the atom is p0 within 4 binomial standard errors."""
    s = _hurdle()
    x = s.draw(200_000, rng=11)
    share = float(np.mean(x == 0.0))
    assert abs(share - 0.3) < 4 * np.sqrt(0.3 * 0.7 / x.size)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"p0": 1.0}, r"^p0: expected a probability in \[0, 1\)"),
        ({"p0": -0.1}, r"^p0: expected a probability"),
        ({"p0": 0.1, "at": float("inf")}, "^at: expected a finite number"),
        ({"p0": "0.1"}, "^p0: expected a number, found str"),
    ],
)
def test_point_mass_refuses_bad_input(kwargs: dict[str, Any], message: str) -> None:
    """Bad atoms and probabilities raise a MethodError naming the argument."""
    with pytest.raises(MethodError, match=message):
        PointMassSampler(ParametricSampler("normal", {"mu": 0.0, "sigma": 1.0}), **kwargs)


def test_point_mass_refuses_an_unknown_inner_kind() -> None:
    """A description whose inner kind is unknown is refused by name."""
    described = {"kind": "point_mass", **_hurdle().describe()}
    described["inner"] = {**described["inner"], "kind": "no_such_kind"}
    with pytest.raises(MethodError, match="^inner: sampler kind 'no_such_kind' is not known"):
        PointMassSampler.from_payload({}, described)


# --- metalog sampler ----------------------------------------------------------------------------

BOUNDS = [(None, None), (0.0, None), (None, 50.0), (0.0, 50.0)]


@pytest.mark.parametrize("bounds", BOUNDS)
def test_metalog_sampler_agrees_with_the_fitted_metalog(
    bounds: tuple[float | None, float | None],
) -> None:
    """Quantile, cdf, pdf, mean and variance equal the estimation core's MetalogResult."""
    m = fit_metalog([0.1, 0.3, 0.5, 0.9], [4.0, 7.0, 9.0, 17.0], lower=bounds[0], upper=bounds[1])
    s = MetalogSampler(m.coefficients, lower=m.lower, upper=m.upper)
    np.testing.assert_allclose(s.quantile(U), m.quantile(U), rtol=1e-14)
    x = m.quantile(np.linspace(0.005, 0.995, 25))
    np.testing.assert_allclose(s.cdf(x), m.cdf(x), atol=1e-13)
    np.testing.assert_allclose(s.pdf(x), m.pdf(x), rtol=1e-10)
    assert s.mean == pytest.approx(m.mean, rel=1e-12)
    assert s.var == pytest.approx(m.var, rel=1e-10)
    assert s.support == m.support


def test_metalog_round_trip_is_exact(tmp_path: Path) -> None:
    """A bounded metalog rebuilds bit for bit from its payload and from an artifact."""
    s = MetalogSampler([2.1972, 0.3678, -0.0032], lower=0.0)
    _assert_same(s, _round_trip(s))
    write_sampler(s, tmp_path / "ml.parquet")
    _assert_same(s, load_sampler(tmp_path / "ml.parquet"))


def test_metalog_heavy_semi_bounded_tail_has_no_mean() -> None:
    """Lower-bounded 2 terms with a2 >= 1 is a log-logistic with shape <= 1: infinite mean."""
    s = MetalogSampler([0.0, 1.2], lower=0.0)
    assert s.mean == np.inf and s.var == np.inf


@pytest.mark.parametrize(
    ("coefficients", "kwargs", "message"),
    [
        ([1.0], {}, "^coefficients: expected 2 to 16 finite numbers"),
        ([1.0, -1.0], {}, "^coefficients: not a distribution"),
        ([9.0, 1.0, 8.0], {}, "^coefficients: not a distribution"),
        ([1.0, 1.0], {"lower": 2.0, "upper": 1.0}, "^lower, upper: expected lower < upper"),
        ([1.0, 1.0], {"lower": float("nan")}, "^lower: expected a finite number or None"),
    ],
)
def test_metalog_refuses_bad_input(
    coefficients: list[float], kwargs: dict[str, Any], message: str
) -> None:
    """Coefficients that are not a distribution, and bad bounds, raise a MethodError."""
    with pytest.raises(MethodError, match=message):
        MetalogSampler(coefficients, **kwargs)


# --- fitters ------------------------------------------------------------------------------------


def _two_modes(n: int = 400, seed: int = 5) -> np.ndarray:
    """Invented positive data with two clear modes."""
    g = make_rng(seed)
    return np.concatenate([g.lognormal(0.0, 0.25, 3 * n // 5), g.lognormal(1.6, 0.2, 2 * n // 5)])


def test_mixture_fitter_is_the_em_fit_as_a_sampler() -> None:
    """The sampler's cdf equals fit_mixture's; BIC rows and the chosen k are recorded."""
    x = _two_modes()
    s = fit_mixture_sample(check_sample(x), family="lognormal", seed=4)
    r = fit_mixture(x, family="lognormal", rng=4)
    grid = np.linspace(0.3, 9.0, 40)
    np.testing.assert_allclose(s.cdf(grid), r.cdf(grid), rtol=1e-13, atol=1e-15)
    assert s.loglik == r.loglik and s.bic == r.bic and s.n_components == 2
    d = s.diagnostics["mixture"]
    assert d["family"] == "lognormal" and [row["n_components"] for row in d["by_n_components"]] == [
        1,
        2,
        3,
    ]


def test_mixture_fitter_default_family_follows_the_sign_of_the_data() -> None:
    """Default family: lognormal when every value is > 0, normal otherwise."""
    x = _two_modes(200)
    assert fit_mixture_sample(check_sample(x)).family.name == "lognormal"
    assert fit_mixture_sample(check_sample(x - 2.0)).family.name == "normal"


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"family": "beta"}, "^option 'family' of mixture: expected one of normal, lognormal"),
        ({"family": "gamma", "shift": True}, "^option 'family' of mixture: gamma needs every"),
        ({"max_components": 0}, "^option 'max_components' of mixture: expected an integer >= 1"),
        ({"seed": -1}, "^option 'seed' of mixture: expected an integer >= 0"),
        ({"n_starts": 2.5}, "^option 'n_starts' of mixture: expected an integer >= 1"),
    ],
)
def test_mixture_fitter_refuses_bad_options(options: dict[str, Any], message: str) -> None:
    """Bad option values raise a MethodError naming the option."""
    x = _two_modes(100)
    if options.pop("shift", False):
        x = x - 1.0
    with pytest.raises(MethodError, match=message):
        fit_mixture_sample(check_sample(x), **options)


def _claims(seed: int = 8) -> np.ndarray:
    """Invented claims: 120 exact zeros and 280 lognormal amounts."""
    g = make_rng(seed)
    return g.permutation(np.concatenate([np.zeros(120), g.lognormal(2.0, 0.8, 280)]))


def test_hurdle_is_the_zero_share_plus_the_body_fit_of_the_rest() -> None:
    """p0 is the share at 0; the body is fit_family on the rest; the loglik adds both parts."""
    x = _claims()
    s = fit_hurdle_sample(check_sample(x))
    body = fit_family("lognormal", x[x != 0])
    assert s.p0 == 0.3 and s.inner.params == body.params
    assert s.loglik == pytest.approx(120 * np.log(0.3) + 280 * np.log(0.7) + body.loglik)
    assert s.aic == pytest.approx(2 * 3 - 2 * s.loglik)
    assert s.bic == pytest.approx(3 * np.log(400) - 2 * s.loglik)
    assert s.diagnostics["hurdle"]["n_at"] == 120.0


def test_hurdle_at_another_value_with_a_gamma_body() -> None:
    """The atom can sit anywhere; the body family is the one named."""
    x = _claims() + 5.0
    s = fit_hurdle_sample(check_sample(x), at=5.0, body="gamma")
    assert s.at == 5.0 and s.p0 == 0.3 and s.inner.family.name == "gamma"
    assert s.inner.params == fit_family("gamma", x[x != 5.0]).params


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"body": "poisson"}, "^option 'body' of hurdle: expected a continuous family"),
        ({"body": "nope"}, "^option 'body' of hurdle: expected a continuous family name"),
        ({"body": 3}, "^option 'body' of hurdle: expected a continuous family name"),
        ({"at": "zero"}, "^option 'at' of hurdle: expected a finite number"),
        ({"at": 1000.0}, "^hurdle body 'lognormal': "),
    ],
)
def test_hurdle_refuses_bad_options(options: dict[str, Any], message: str) -> None:
    """Count bodies, unknown families and bad atoms raise a MethodError naming the option."""
    x = _claims()
    if options.get("at") == 1000.0:
        x = np.concatenate([x, [-1.0]])  # a negative value the lognormal body cannot take
    with pytest.raises(MethodError, match=message):
        fit_hurdle_sample(check_sample(x), **options)


def test_hurdle_needs_enough_values_away_from_the_atom() -> None:
    """One value besides the zeros is too few for a two-parameter body."""
    with pytest.raises(MethodError, match="^values: hurdle with body 'lognormal' needs at least 2"):
        fit_hurdle_sample(check_sample([0.0, 0.0, 0.0, 3.0]))


@pytest.mark.parametrize("family", ["poisson", "negative_binomial"])
def test_zero_inflated_fitter_is_the_ml_fit_as_a_sampler(family: str) -> None:
    """pi and the count parameters equal fit_zero_inflated's, the pmf is Lambert's formula."""
    g = make_rng(12)
    n = 600
    base = g.poisson(3.0, n) if family == "poisson" else g.negative_binomial(2.0, 0.4, n)
    y = np.where(g.random(n) < 0.3, 0, base).astype(np.float64)
    s = fit_zero_inflated_sample(check_sample(y), family=family)
    r = fit_zero_inflated(y, family=family)  # type: ignore[arg-type]
    assert s.p0 == r.pi and s.loglik == r.loglik and s.aic == r.aic
    k = np.arange(0, 30)
    np.testing.assert_allclose(s.pmf(k), r.pmf(k), rtol=1e-13, atol=1e-300)
    assert s.diagnostics["zero_inflated"]["family"] == family


def test_zero_inflated_fitter_refuses_other_families_and_non_counts() -> None:
    """family must be poisson or negative_binomial; values must be counts."""
    with pytest.raises(MethodError, match="^option 'family' of zero_inflated: expected one of"):
        fit_zero_inflated_sample(check_sample([0.0, 1.0, 2.0]), family="geometric")
    with pytest.raises(MethodError, match="^counts: expected non-negative integer counts"):
        fit_zero_inflated_sample(check_sample([0.0, 1.5, 2.0]))


def test_integer_weights_equal_repeated_rows_for_every_fitter() -> None:
    """Frequency weights give the same samplers as the rows repeated that many times."""
    g = make_rng(21)
    claims = np.round(_claims()[:150], 3)
    w = g.integers(1, 4, claims.size).astype(np.float64)
    rep = np.repeat(claims, w.astype(int))
    a = fit_hurdle_sample(check_sample(claims, w))
    b = fit_hurdle_sample(check_sample(rep))
    assert a.p0 == pytest.approx(b.p0, rel=1e-14)
    assert a.loglik == pytest.approx(b.loglik, rel=1e-12)
    for k, v in a.inner.params.items():
        assert v == pytest.approx(b.inner.params[k], rel=1e-10)

    counts = np.where(g.random(200) < 0.3, 0, g.poisson(2.5, 200)).astype(np.float64)
    wc = g.integers(1, 4, counts.size).astype(np.float64)
    a = fit_zero_inflated_sample(check_sample(counts, wc))
    b = fit_zero_inflated_sample(check_sample(np.repeat(counts, wc.astype(int))))
    assert a.p0 == pytest.approx(b.p0, rel=1e-10) and a.loglik == pytest.approx(b.loglik)

    x = _two_modes(120)
    wx = g.integers(1, 4, x.size).astype(np.float64)
    a = fit_mixture_sample(check_sample(x, wx), family="lognormal", seed=1)
    b = fit_mixture_sample(check_sample(np.repeat(x, wx.astype(int))), family="lognormal", seed=1)
    assert a.n_components == b.n_components == 2
    assert a.loglik == pytest.approx(b.loglik, rel=1e-9)
    np.testing.assert_allclose(a.weights, b.weights, rtol=1e-5)


# --- when auto should consider them -------------------------------------------------------------


def test_screen_proposes_a_mixture_for_two_modes_only() -> None:
    """Two clear modes give a large BIC gain; one lognormal sample gives none."""
    two = screen_composites(_two_modes())
    assert two.candidates == ("mixture",) and two.bic_gain is not None and two.bic_gain > 100
    one = screen_composites(make_rng(3).lognormal(1.0, 0.6, 400))
    assert one.candidates == () and one.bic_gain is not None and one.bic_gain < 10


def test_screen_proposes_a_hurdle_from_five_percent_zeros() -> None:
    """An atom at 0 holding 5 % of the weight makes a hurdle candidate; 4.5 % does not."""
    pos = make_rng(4).lognormal(0.0, 1.0, 190)
    assert composite_candidates(np.concatenate([np.zeros(10), pos])) == ("hurdle",)
    w = np.concatenate([np.full(10, 0.9), np.ones(190)])
    r = screen_composites(np.concatenate([np.zeros(10), pos]), w)
    assert r.zero_share < ATOM_SHARE and "hurdle" not in r.candidates


def test_screen_offers_no_hurdle_when_other_values_are_signed() -> None:
    """The default lognormal body cannot take negative values, so no hurdle is proposed."""
    x = np.concatenate([np.zeros(40), make_rng(5).normal(0.0, 3.0, 160)])
    assert "hurdle" not in composite_candidates(x)


def test_screen_proposes_zero_inflation_for_extra_zeros_only() -> None:
    """Zero-inflated Poisson counts are flagged; plain Poisson counts are not."""
    g = make_rng(6)
    plain = g.poisson(2.0, 500).astype(np.float64)
    inflated = np.where(g.random(500) < 0.25, 0.0, plain)
    assert composite_candidates(plain) == ()
    r = screen_composites(inflated)
    assert r.candidates == ("zero_inflated",) and r.zero_inflation_pvalue is not None
    assert r.counts and r.zero_inflation_pvalue < 1e-6


def test_screen_with_integer_weights_equals_repeated_rows() -> None:
    """Every number of the screen is the same for weights and for repeated rows."""
    g = make_rng(7)
    for x in (_two_modes(300), g.poisson(1.0, 300).astype(np.float64), _claims()):
        w = g.integers(1, 4, x.size).astype(np.float64)
        a = screen_composites(x, w)
        b = screen_composites(np.repeat(x, w.astype(int)))
        assert a.candidates == b.candidates and a.counts == b.counts
        assert a.zero_share == pytest.approx(b.zero_share, rel=1e-14)
        for u, v in ((a.zero_inflation_z, b.zero_inflation_z), (a.bic_gain, b.bic_gain)):
            assert (u is None and v is None) or u == pytest.approx(v, rel=1e-9)


def test_screen_candidates_are_composite_methods_and_small_data_give_none() -> None:
    """Candidates come from COMPOSITE_METHODS; under 20 distinct values no mixture is tried."""
    r = screen_composites(_two_modes()[::25])
    assert r.candidates == () and r.bic_gain is None
    assert set(COMPOSITE_METHODS) == {"mixture", "hurdle", "zero_inflated"}
