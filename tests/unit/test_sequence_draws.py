"""Quasi-random draws through the base sampler: ``draw(size, rng=..., sequence=...)`` on every kind.

Every sampler kind in the catalog gets one invented sampler whose mean has a closed form from
scipy.stats (the reference beside each builder). Checks: scrambled Sobol' draws estimate that mean
with a smaller error than plain Monte Carlo draws of the same size, and their distance to the
sampler's own cdf stays within the one-point-per-stratum bound of a Sobol' net.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import MethodError
from samplewright.core.randomness import make_rng
from samplewright.core.uniforms import UniformSequence
from samplewright.distributions.averaged import AveragedSampler
from samplewright.distributions.base import Sampler
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.empirical_pmf import EmpiricalPmfSampler
from samplewright.distributions.ensemble import EnsembleSampler
from samplewright.distributions.joint import JointSampler
from samplewright.distributions.kaplan_meier import KaplanMeierSampler
from samplewright.distributions.metalog import MetalogSampler
from samplewright.distributions.mixture import MixtureSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.piecewise import PiecewiseSampler
from samplewright.distributions.point_mass import PointMassSampler
from samplewright.distributions.smoothed import SmoothedSampler
from samplewright.distributions.spliced import SplicedSampler
from samplewright.fitting.catalog import KINDS
from samplewright.fitting.registry import sampler_class
from samplewright.pipeline.cli.draws import draw_columns

N = 1 << 12  # points per replicate: a power of two, so Sobol' keeps its balance
N_REPLICATES = 8  # independent scramblings (and as many plain Monte Carlo runs)

# --- one invented sampler per kind, with its mean from scipy.stats --------------------------

_EMPIRICAL = np.array([3.0, 7.0, 7.0, 8.0, 12.0, 15.0, 21.0, 30.0])
_EMPIRICAL_W = np.array([1.0, 2.0, 1.0, 1.0, 3.0, 1.0, 2.0, 1.0])


def _parametric() -> tuple[Sampler, float]:
    s = ParametricSampler("gamma", {"shape": 2.5, "scale": 3.0, "loc": 0.0})
    return s, stats.gamma(2.5, scale=3.0).mean()  # source: scipy.stats.gamma


def _parametric_counts() -> tuple[Sampler, float]:
    s = ParametricSampler("negative_binomial", {"r": 3.0, "p": 0.4})
    return s, stats.nbinom(3.0, 0.4).mean()  # source: scipy.stats.nbinom


def _empirical() -> tuple[Sampler, float]:
    s = EmpiricalSampler(_EMPIRICAL, _EMPIRICAL_W)
    xk, inverse = np.unique(_EMPIRICAL, return_inverse=True)
    pk = np.bincount(inverse, weights=_EMPIRICAL_W) / _EMPIRICAL_W.sum()
    return s, stats.rv_discrete(values=(xk, pk)).mean()  # source: scipy.stats.rv_discrete


def _empirical_pmf() -> tuple[Sampler, float]:
    xk, pk = np.array([0.0, 1.0, 2.0, 4.0, 9.0]), np.array([0.35, 0.25, 0.2, 0.15, 0.05])
    s = EmpiricalPmfSampler(xk, pk, n_obs=20)
    return s, stats.rv_discrete(values=(xk, pk)).mean()  # source: scipy.stats.rv_discrete


def _piecewise() -> tuple[Sampler, float]:
    x, p = np.array([0.0, 2.0, 5.0, 9.0]), np.array([0.0, 0.3, 0.8, 1.0])
    # a piecewise-linear cdf is a mixture of uniforms on its segments
    parts = [stats.uniform(x[i], x[i + 1] - x[i]).mean() for i in range(3)]  # source: scipy
    return PiecewiseSampler(x, p), float(np.dot(np.diff(p), parts))


def _spliced() -> tuple[Sampler, float]:
    body = EmpiricalSampler([1.0, 2.0, 2.0, 4.0, 6.0])
    s = SplicedSampler(body, threshold=6.0, zeta=0.2, xi=0.15, sigma=2.5)
    tail = 6.0 + stats.genpareto(0.15, scale=2.5).mean()  # source: scipy.stats.genpareto
    return s, 0.8 * 3.0 + 0.2 * tail


def _smoothed() -> tuple[Sampler, float]:
    values = np.array([1.0, 4.0, 4.5, 9.0])
    s = SmoothedSampler(values, bandwidth=0.8, positive="none")
    # equal-weight Gaussian kernels
    return s, float(np.mean([stats.norm(v, 0.8).mean() for v in values]))  # source: scipy


def _kaplan_meier() -> tuple[Sampler, float]:
    params = {"tail": "exponential", "tail_rate": 0.5, "last_value": 5.0}
    s = KaplanMeierSampler([2.0, 3.0, 5.0], [0.75, 0.5, 0.2], params)
    atoms = stats.rv_discrete(values=([2, 3, 5], [0.3125, 0.3125, 0.375])).mean()  # 0.25/0.8...
    tail = stats.expon(loc=5.0, scale=2.0).mean()  # source: scipy.stats.expon, rv_discrete
    return s, 0.8 * atoms + 0.2 * tail


def _metalog() -> tuple[Sampler, float]:
    # two terms, lower bound 2: log-logistic, exp(a1 + a2 logit y) + 2
    s = MetalogSampler([1.0, 0.3], lower=2.0)
    return s, stats.fisk(1 / 0.3, loc=2.0, scale=np.e).mean()  # source: scipy.stats.fisk


def _mixture() -> tuple[Sampler, float]:
    w, shape, scale = [0.3, 0.7], [1.5, 3.0], [2.0, 6.0]
    s = MixtureSampler("weibull", w, {"shape": shape, "scale": scale, "loc": [0.0, 0.0]})
    means = [stats.weibull_min(k, scale=c).mean() for k, c in zip(shape, scale, strict=True)]
    return s, float(np.dot(w, means))  # source: scipy.stats.weibull_min


def _point_mass() -> tuple[Sampler, float]:
    inner = ParametricSampler("exponential", {"scale": 4.0, "loc": 0.0})
    s = PointMassSampler(inner, p0=0.3)
    return s, 0.7 * stats.expon(scale=4.0).mean()  # source: scipy.stats.expon (atom at 0)


def _ensemble() -> tuple[Sampler, float]:
    mus, sigmas = [1.0, 1.2, 0.9, 1.1], [0.4, 0.5, 0.45, 0.35]
    reps = [
        ParametricSampler("lognormal", {"mu": m, "sigma": v, "loc": 0.0})
        for m, v in zip(mus, sigmas, strict=True)
    ]
    s = EnsembleSampler(reps, method="lognormal", replication="parametric")
    means = [stats.lognorm(v, scale=np.exp(m)).mean() for m, v in zip(mus, sigmas, strict=True)]
    return s, float(np.mean(means))  # source: scipy.stats.lognorm


def _averaged() -> tuple[Sampler, float]:
    a = ParametricSampler("gamma", {"shape": 2.0, "scale": 2.0, "loc": 0.0})
    b = EmpiricalPmfSampler([1.0, 3.0, 8.0], [0.5, 0.3, 0.2], n_obs=10)
    s = AveragedSampler([a, b], [0.6, 0.4], labels=["gamma", "counts"])
    ref = 0.6 * stats.gamma(2.0, scale=2.0).mean()  # source: scipy.stats.gamma, rv_discrete
    return s, ref + 0.4 * stats.rv_discrete(values=([1, 3, 8], [0.5, 0.3, 0.2])).mean()


BUILDERS: dict[str, Callable[[], tuple[Sampler, float]]] = {
    "parametric": _parametric,
    "parametric_counts": _parametric_counts,
    "empirical": _empirical,
    "empirical_pmf": _empirical_pmf,
    "piecewise": _piecewise,
    "spliced": _spliced,
    "smoothed": _smoothed,
    "kaplan_meier": _kaplan_meier,
    "metalog": _metalog,
    "mixture": _mixture,
    "point_mass": _point_mass,
    "ensemble": _ensemble,
    "averaged": _averaged,
}


def _sup_distance(draws: np.ndarray, cdf: Callable[[Any], Any]) -> float:
    """sup_x |F_n(x) - F(x)|, at each distinct draw and just below it (atoms allowed)."""
    xs = np.sort(draws)
    at = np.unique(xs)
    n = xs.size
    right = np.searchsorted(xs, at, side="right") / n
    left = np.searchsorted(xs, at, side="left") / n
    f_at = np.asarray(cdf(at), dtype=np.float64)
    f_below = np.asarray(cdf(np.nextafter(at, -np.inf)), dtype=np.float64)
    return float(max(np.max(np.abs(right - f_at)), np.max(np.abs(left - f_below))))


def _rmse_of_means(s: Sampler, ref: float, sequence: UniformSequence, seed: int) -> float:
    streams = make_rng(seed).spawn(N_REPLICATES)
    means = np.array([s.draw(N, rng=g, sequence=sequence).mean() for g in streams])
    return float(np.sqrt(np.mean((means - ref) ** 2)))


# --- every kind -----------------------------------------------------------------------------


def test_every_registered_kind_has_a_case() -> None:
    """The cases cover each kind of the catalog; joint samplers draw by their own method."""
    covered = {BUILDERS[name]()[0].kind for name in BUILDERS}
    assert covered == set(KINDS) - {"joint"}
    joint = sampler_class("joint")
    assert joint is JointSampler and not issubclass(joint, Sampler)


@pytest.mark.parametrize("name", sorted(BUILDERS))
def test_sobol_mean_error_is_below_plain_monte_carlo(name: str) -> None:
    """Over 8 scramblings of 4096 points, Sobol' draws miss the scipy mean by under a quarter
    of plain Monte Carlo's error (randomised QMC, Owen 1997; factor 4: common practice, no
    source)."""
    s, ref = BUILDERS[name]()
    assert s.mean == pytest.approx(ref, rel=1e-9)  # the sampler agrees with scipy's mean
    sobol = _rmse_of_means(s, ref, "sobol", seed=101)
    plain = _rmse_of_means(s, ref, "random", seed=101)
    # plain Monte Carlo's error is sd / sqrt(N) (within sampling noise of 8 runs)
    assert 0.3 < plain / (s.sd / np.sqrt(N)) < 2.0
    assert sobol < 0.25 * plain


@pytest.mark.parametrize("name", sorted(BUILDERS))
def test_sobol_draws_fit_the_samplers_cdf(name: str) -> None:
    """Scrambled Sobol' points put one point in each of N strata of (0, 1), so their quantiles
    lie within 1/N of the sampler's cdf everywhere (net property of Sobol' points, t = 0 in one
    dimension; a small slack for numerically inverted cdfs)."""
    s, _ = BUILDERS[name]()
    draws = s.draw(N, rng=7, sequence="sobol")
    assert draws.shape == (N,)
    assert _sup_distance(draws, s.cdf) <= 1.0 / N + 1e-9
    plain = s.draw(N, rng=7)
    assert _sup_distance(plain, s.cdf) > 2.0 / N  # plain draws are not that even


@pytest.mark.parametrize("name", ["parametric", "metalog", "mixture", "smoothed"])
def test_sup_distance_is_scipys_ks_statistic_for_continuous_kinds(name: str) -> None:
    """For continuous samplers the distance above is the KS statistic (source: scipy.stats
    .kstest), so the bound is checked with scipy's own statistic too."""
    s, _ = BUILDERS[name]()
    draws = s.draw(N, rng=8, sequence="sobol")
    res = stats.kstest(draws, s.cdf)
    assert res.statistic == pytest.approx(_sup_distance(draws, s.cdf), abs=1e-12)
    assert res.statistic <= 1.0 / N + 1e-9


@pytest.mark.parametrize("name", sorted(BUILDERS))
def test_random_is_the_native_draw_unchanged(name: str) -> None:
    """sequence='random' gives exactly the draws made without it, from the same stream."""
    s, _ = BUILDERS[name]()
    np.testing.assert_array_equal(s.draw(300, rng=5, sequence="random"), s.draw(300, rng=5))


def test_random_parametric_is_numpys_generator_bit_for_bit() -> None:
    """A gamma sampler's plain draws are numpy's Generator.gamma (source: numpy), so adding
    sequences changed no existing stream."""
    s, _ = _parametric()
    expected = np.random.default_rng(12).gamma(2.5, 3.0, 500)
    np.testing.assert_array_equal(s.draw(500, rng=12), expected)


@pytest.mark.parametrize("name", ["empirical_pmf", "mixture", "point_mass"])
@pytest.mark.parametrize("sequence", ["sobol", "halton", "latin_hypercube"])
def test_quasi_random_draws_are_quantiles_of_draw_uniforms(
    name: str, sequence: UniformSequence
) -> None:
    """Every sequence draws quantile(draw_uniforms(...)) from the same stream, as the CLI's
    draw command does, and is reproducible from the seed."""
    from samplewright.core.uniforms import draw_uniforms

    s, _ = BUILDERS[name]()
    got = s.draw(N, rng=21, sequence=sequence)
    np.testing.assert_array_equal(got, s.quantile(draw_uniforms(N, rng=21, sequence=sequence)))
    np.testing.assert_array_equal(got, draw_columns(s, N, make_rng(21), sequence)["value"])
    np.testing.assert_array_equal(got, s.draw(N, rng=21, sequence=sequence))


@pytest.mark.parametrize("sequence", ["halton", "latin_hypercube"])
def test_halton_and_latin_hypercube_also_beat_plain_monte_carlo(sequence: UniformSequence) -> None:
    """In one dimension both are stratified too: their mean error is below plain Monte
    Carlo's (scipy.stats.gamma mean; factor 4: common practice, no source)."""
    s, ref = _parametric()
    assert _rmse_of_means(s, ref, sequence, seed=5) < 0.25 * _rmse_of_means(s, ref, "random", 5)


def test_generator_advances_and_size_shapes() -> None:
    """One Generator gives new scramblings on each call; a tuple size gives that shape."""
    s, _ = _point_mass()
    gen = np.random.default_rng(3)
    first = s.draw(64, rng=gen, sequence="sobol")
    second = s.draw(64, rng=gen, sequence="sobol")
    assert not np.array_equal(first, second)
    np.testing.assert_array_equal(first, s.draw(64, rng=3, sequence="sobol"))
    assert s.draw((4, 16), rng=3, sequence="sobol").shape == (4, 16)
    assert s.draw(0, rng=3, sequence="halton").shape == (0,)


def test_sobol_size_not_a_power_of_two_warns() -> None:
    """A Sobol' size that is not a power of two warns, naming the nearest powers."""
    s, _ = _empirical()
    with pytest.warns(UserWarning, match=r"size 100 is not a power of two.*64 and 128"):
        out = s.draw(100, rng=1, sequence="sobol")
    assert out.shape == (100,)


# --- bad input -----------------------------------------------------------------------------


def test_unknown_sequence_is_refused() -> None:
    """An unknown sequence name is a MethodError naming the option and the allowed ones."""
    s, _ = _parametric()
    with pytest.raises(MethodError, match=r"^sequence: expected one of random, sobol.*'Sobol'"):
        s.draw(8, rng=1, sequence="Sobol")  # type: ignore[arg-type]


def test_sequence_with_a_uniform_source_is_refused() -> None:
    """A uniform source brings its own uniforms: asking for a sequence as well is refused."""

    class Mid:
        def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
            return np.full(shape, 0.5)

    s, _ = _piecewise()
    assert s.draw(2, rng=Mid()).tolist() == [float(s.quantile(0.5))] * 2
    with pytest.raises(MethodError, match=r"^sequence: 'sobol' needs a seed-like rng.*Mid"):
        s.draw(2, rng=Mid(), sequence="sobol")


class _NoQuantile(Sampler):
    """A sampler with a native draw only (its quantile is not written)."""

    def __init__(self) -> None:
        super().__init__(method="demo", params={})

    def cdf(self, x: Any) -> np.ndarray:
        return np.clip(np.asarray(x, dtype=np.float64), 0.0, 1.0)

    def quantile(self, u: Any) -> np.ndarray:
        raise NotImplementedError

    def _draw_native(self, size: Any, gen: np.random.Generator) -> np.ndarray:
        return gen.random(size)

    mean = 0.5
    var = 1.0 / 12.0
    support = (0.0, 1.0)

    def payload(self) -> dict[str, np.ndarray]:
        return {}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        return cls()


# set after the class is made, so this test kind is not registered for loading artifacts
_NoQuantile.kind = "native_only_demo"


def test_kind_without_quantile_is_refused_by_name() -> None:
    """A kind with a native draw but no quantile draws plain random numbers and refuses a
    sequence with a one-line MethodError naming the kind."""
    s = _NoQuantile()
    assert s.draw(3, rng=1).shape == (3,)
    with pytest.raises(MethodError, match=r"^sequence: sampler kind 'native_only_demo'") as err:
        s.draw(4, rng=1, sequence="halton")
    assert "\n" not in str(err.value)
