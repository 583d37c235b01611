"""EnsembleSampler and fit_replicates: layouts, the mixture, failures, weights and censoring."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.ensemble import EnsembleSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.api import fit
from samplewright.fitting.replicates import fit_replicates

# invented repair hours
HOURS = np.random.default_rng(11).lognormal(1.2, 0.6, 60)


class Given:
    """A uniform source handing out fixed uniforms."""

    def __init__(self, u: np.ndarray) -> None:
        self.u = np.asarray(u, dtype=np.float64)

    def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
        return self.u.reshape(shape)


def _lognormal_ensemble() -> EnsembleSampler:
    reps = [
        ParametricSampler("lognormal", {"mu": mu, "sigma": s, "loc": 0.0})
        for mu, s in [(1.0, 0.5), (1.3, 0.4), (0.8, 0.7)]
    ]
    return EnsembleSampler(reps, method="lognormal", replication="parametric")


def test_parametric_replicates_are_stored_as_one_row_each() -> None:
    """Replicates of one family give the parameters layout: a column per parameter."""
    ens = _lognormal_ensemble()
    assert ens.params["layout"] == "parameters" and ens.params["family"] == "lognormal"
    assert ens.payload()["mu"].tolist() == [1.0, 1.3, 0.8]
    assert ens.replicate(1).params == {"mu": 1.3, "sigma": 0.4, "loc": 0.0}


def test_cdf_and_pdf_are_the_mean_of_the_replicates() -> None:
    """F and f of the ensemble equal the average of scipy's lognormal CDFs and densities."""
    ens = _lognormal_ensemble()
    x = np.array([0.5, 2.0, 3.5, 9.0])
    dists = [stats.lognorm(s, scale=np.exp(m)) for m, s in [(1.0, 0.5), (1.3, 0.4), (0.8, 0.7)]]
    # source: scipy.stats.lognorm, averaged by hand (definition of an equal-weight mixture)
    np.testing.assert_allclose(ens.cdf(x), np.mean([d.cdf(x) for d in dists], axis=0), rtol=1e-13)
    np.testing.assert_allclose(ens.pdf(x), np.mean([d.pdf(x) for d in dists], axis=0), rtol=1e-13)


def test_mean_and_variance_follow_the_law_of_total_variance() -> None:
    """Two normal replicates at -1 and 1 with sd 1: mean 0, variance 1 + 1 = 2."""
    reps = [ParametricSampler("normal", {"mu": m, "sigma": 1.0}) for m in (-1.0, 1.0)]
    ens = EnsembleSampler(reps, method="normal", replication="nonparametric")
    # source: law of total variance, E[Var] + Var[E] = 1 + 1
    assert ens.mean == 0.0 and ens.var == pytest.approx(2.0, rel=1e-14)


@pytest.mark.parametrize("n_levels", [5, 3000])
def test_continuous_quantile_inverts_the_cdf(n_levels: int) -> None:
    """For continuous replicates F(Q(u)) = u to rounding, directly and through the table."""
    ens = _lognormal_ensemble()
    u = np.random.default_rng(3).random(n_levels)
    np.testing.assert_allclose(ens.cdf(ens.quantile(u)), u, rtol=0, atol=4e-15)


def test_empirical_replicates_pool_into_one_step_cdf() -> None:
    """Equal-size empirical replicates: the quantile is the pooled values' type-1 quantile."""
    ens = fit_replicates(HOURS, "empirical", n_replicates=30, rng=5)
    pooled = np.sort(np.concatenate([ens.replicate(i).values for i in range(30)]))
    u = np.random.default_rng(8).random(2000)
    # source: numpy.quantile, method="inverted_cdf" (Hyndman & Fan definition 1)
    assert np.array_equal(ens.quantile(u), np.quantile(pooled, u, method="inverted_cdf"))
    # a level the masses reach exactly, k / 1800, selects the k-th value despite rounding
    k = np.array([1, 306, 900, 1799])
    assert np.array_equal(ens.quantile(k / 1800), pooled[k - 1])


@pytest.mark.parametrize("method", ["kaplan_meier", "interpolated", "poisson"])
def test_quantile_with_atoms_is_the_generalised_inverse(method: str) -> None:
    """Replicates with atoms: F(Q(u)) >= u > F(the double just below Q(u))."""
    x = np.round(HOURS) if method == "poisson" else HOURS
    censored = x > 6.0 if method == "kaplan_meier" else None
    ens = fit_replicates(x, method, n_replicates=20, censored=censored, rng=2)
    u = np.random.default_rng(4).random(500)
    q = ens.quantile(u)
    assert np.all(ens.cdf(q) >= u - 2e-16)
    assert np.all(ens.cdf(np.nextafter(q, -np.inf)) < u)


def test_native_draws_follow_the_mixture() -> None:
    """Draws from two normal replicates pass a KS test against the mixture CDF."""
    reps = [ParametricSampler("normal", {"mu": m, "sigma": 1.0}) for m in (-2.0, 2.0)]
    ens = EnsembleSampler(reps, method="normal", replication="parametric")
    x = ens.draw(20_000, rng=8)
    assert stats.kstest(x, ens.cdf).pvalue > 0.001
    assert ens.draw((4, 5), rng=1).shape == (4, 5)


def test_uniform_source_draws_go_through_the_quantile() -> None:
    """A uniform source gives exactly the quantile of its uniforms."""
    ens = fit_replicates(HOURS, "gamma", n_replicates=10, kind="parametric", rng=6)
    u = np.linspace(0.01, 0.99, 9)
    np.testing.assert_array_equal(ens.draw(9, rng=Given(u)), ens.quantile(u))


def test_cycle_gives_every_world_in_turn() -> None:
    """outer='cycle': row i is drawn from replicate i mod n_replicates."""
    reps = [EmpiricalSampler(np.arange(3.0) + 10 * j) for j in range(4)]
    ens = EnsembleSampler(reps, method="empirical", replication="nonparametric")
    rows = ens.draw_nested(8, 50, rng=1, outer="cycle")
    assert [int(r.min() // 10) for r in rows] == [0, 1, 2, 3, 0, 1, 2, 3]


def test_nested_uniforms_pick_the_world_by_the_first_column() -> None:
    """With a uniform source, column 0 picks the replicate and the rest its quantiles."""
    reps = [EmpiricalSampler(np.arange(3.0) + 10 * j) for j in range(4)]
    ens = EnsembleSampler(reps, method="empirical", replication="nonparametric")
    u = np.array([[0.9, 0.1, 0.5], [0.1, 0.9, 0.2]])
    assert ens.draw_nested(2, 2, rng=Given(u)).tolist() == [[30.0, 31.0], [2.0, 0.0]]


def test_failed_replicates_are_counted_and_recorded() -> None:
    """Resamples of all-equal values cannot be fitted: they are recorded, not silently dropped."""
    ens = fit_replicates([1.0, 1.0, 1.0, 2.0], "gamma", n_replicates=40, rng=0)
    p = ens.params
    assert p["n_failed"] > 0 and p["n_replicates"] + p["n_failed"] == p["n_requested"] == 40
    assert len(ens.failures) == p["n_failed"]
    assert "all 4 values equal" in ens.failures[0]["message"]
    assert ens.describe()["failures"] == ens.failures


def test_too_few_successful_replicates_fail_clearly() -> None:
    """When fewer than two refits succeed, a FitError names the first failure."""
    # with seed 0 two of the three resamples of [1, 1, 5] are all equal (found by trying seeds)
    with pytest.raises(FitError, match="1 of 3 replicate fits succeeded.*all 3 values equal"):
        fit_replicates([1.0, 1.0, 5.0], "gamma", n_replicates=3, rng=0)


def test_whole_number_weights_behave_like_repeated_rows() -> None:
    """Frequency weights: a resample draws sum(w) units, so sd(mu*) = sd_plugin(log x) / sqrt(N)."""
    x = np.array([2.0, 3.5, 5.0, 7.5, 11.0, 4.2])
    w = np.array([1, 3, 2, 1, 2, 3])
    ens = fit_replicates(x, "lognormal", weights=w, n_replicates=500, rng=1)
    lx, n_units = np.log(x), w.sum()
    plugin_var = np.sum(w * (lx - np.sum(w * lx) / n_units) ** 2) / n_units
    # source: the bootstrap variance of a mean of N units is the plug-in variance / N (Efron &
    # Tibshirani 1993, ch. 5, from memory); the sd of 500 replicates has relative MC error 3.2%.
    # Resampling the 6 rows with their weights instead would give about 0.19, 37% more.
    sd = np.std(ens.payload()["mu"], ddof=1)
    assert sd == pytest.approx(np.sqrt(plugin_var / n_units), rel=0.12)


def test_parametric_replicates_refuse_fractional_weights() -> None:
    """Parametric replicates simulate one value per unit of weight: 0.5 is refused."""
    with pytest.raises(MethodError, match="weights: .*whole numbers; weight 2 is 0.5"):
        fit_replicates([1.0, 2.0, 3.0], "exponential", weights=[1, 0.5, 2], kind="parametric")


def test_point_fit_and_its_warnings_come_first() -> None:
    """Bad options fail before any replicate; the point fit is the plain fit."""
    with pytest.raises(MethodError, match="unknown option 'shape'"):
        fit_replicates(HOURS, "lognormal", shape=2.0)
    ens = fit_replicates(HOURS, "weibull", n_replicates=5, rng=1)
    assert ens.point is not None and ens.point.params == fit(HOURS, "weibull").params


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"n_replicates": 1}, "n_replicates: expected an int >= 2"),
        ({"kind": "jackknife"}, "kind: expected one of nonparametric, parametric"),
    ],
)
def test_bad_arguments_are_named(kwargs: dict, match: str) -> None:
    """n_replicates and kind are checked with one-line messages."""
    with pytest.raises(MethodError, match=match):
        fit_replicates(HOURS, "normal", **kwargs)


def test_constructor_refuses_mixed_methods_and_bad_indices() -> None:
    """Replicates must share the method; replicate(i) names the valid range."""
    a = ParametricSampler("normal", {"mu": 0.0, "sigma": 1.0})
    b = ParametricSampler("logistic", {"mu": 0.0, "s": 1.0})
    with pytest.raises(MethodError, match="expected samplers of 'normal', found 'logistic'"):
        EnsembleSampler([a, b], method="normal", replication="parametric")
    ens = EnsembleSampler([a, a], method="normal", replication="parametric")
    with pytest.raises(MethodError, match=r"replicate index in 0\.\.1, found 2"):
        ens.replicate(2)
    with pytest.raises(MethodError, match="outer: expected one of random, cycle"):
        ens.draw_nested(2, 2, outer="each")


def test_mixed_families_are_stacked_and_round_trip() -> None:
    """auto's replicates may differ in family: stacked layout, rebuilt exactly."""
    reps = [
        ParametricSampler("gamma", {"shape": 2.0, "scale": 1.0, "loc": 0.0}, method="auto"),
        ParametricSampler("weibull", {"shape": 1.5, "scale": 2.0, "loc": 0.0}, method="auto"),
    ]
    ens = EnsembleSampler(reps, method="auto", replication="nonparametric")
    assert ens.params["layout"] == "stacked" and ens.payload()["replicate"].size == 0
    back = EnsembleSampler.from_payload(ens.payload(), ens.describe())
    assert back.describe() == ens.describe()
    np.testing.assert_array_equal(back.draw(100, rng=4), ens.draw(100, rng=4))


def test_artifact_round_trip_through_the_store(tmp_path) -> None:
    """write_sampler/load_sampler keep an ensemble, whatever its layout."""
    from samplewright.store.artifacts import load_sampler, write_sampler

    for method in ("lognormal", "empirical"):
        ens = fit_replicates(HOURS, method, n_replicates=12, rng=9)
        path = tmp_path / f"{method}.parquet"
        write_sampler(ens, path, diagnostics=ens.diagnostics)
        back = load_sampler(path)
        assert isinstance(back, EnsembleSampler) and back.describe() == ens.describe()
        np.testing.assert_array_equal(back.draw_nested(3, 4, rng=2), ens.draw_nested(3, 4, rng=2))
