"""AveragedSampler and the ``averaged`` method: mixture, layout, Akaike weights, refusals."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import MethodError
from samplewright.distributions.averaged import AveragedSampler
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.api import fit
from samplewright.fitting.averaged import (
    DEFAULT_POSITIVE,
    DEFAULT_REAL_LINE,
    akaike_weights,
    fit_averaged,
)

# invented claim sizes (thousands)
CLAIMS = np.random.default_rng(21).gamma(2.5, 1.8, 80)


def _two_families() -> AveragedSampler:
    a = ParametricSampler("lognormal", {"mu": 1.0, "sigma": 0.5, "loc": 0.0})
    b = ParametricSampler("gamma", {"shape": 2.0, "scale": 1.5, "loc": 0.0})
    return AveragedSampler([a, b], [0.3, 0.7], labels=["lognormal", "gamma"])


def test_cdf_and_pdf_are_weighted_sums() -> None:
    """F and f equal 0.3 lognormal + 0.7 gamma as scipy computes them."""
    s = _two_families()
    x = np.array([0.4, 1.0, 3.0, 8.0])
    ln, ga = stats.lognorm(0.5, scale=np.e), stats.gamma(2.0, scale=1.5)
    # source: scipy.stats.lognorm and scipy.stats.gamma, weighted by hand
    np.testing.assert_allclose(s.cdf(x), 0.3 * ln.cdf(x) + 0.7 * ga.cdf(x), rtol=1e-13)
    np.testing.assert_allclose(s.pdf(x), 0.3 * ln.pdf(x) + 0.7 * ga.pdf(x), rtol=1e-13)
    # source: the mixture's mean is the weighted mean of the means
    assert s.mean == pytest.approx(0.3 * ln.mean() + 0.7 * ga.mean(), rel=1e-14)


def test_quantile_inverts_a_continuous_mixture() -> None:
    """F(Q(u)) = u to rounding for a mixture of two continuous families."""
    s = _two_families()
    u = np.random.default_rng(1).random(400)
    np.testing.assert_allclose(s.cdf(s.quantile(u)), u, rtol=0, atol=4e-15)


def test_quantile_of_an_empirical_and_a_parametric_component() -> None:
    """With an atom-bearing component, Q is the generalised inverse to the double."""
    e = EmpiricalSampler([1.0, 2.0, 2.0, 6.0])
    p = ParametricSampler("exponential", {"scale": 2.0, "loc": 0.0})
    s = AveragedSampler([e, p], [0.5, 0.5], labels=["data", "exp"])
    u = np.linspace(0.01, 0.99, 99)
    q = s.quantile(u)
    assert np.all(s.cdf(q) >= u) and np.all(s.cdf(np.nextafter(q, -np.inf)) < u)
    assert 2.0 in q  # the atom at 2 carries 0.25 of the mass: some levels land on it exactly
    with pytest.raises(AttributeError):
        s.pdf(1.0)  # the empirical component has no density


def test_draws_pick_components_by_weight() -> None:
    """Components with disjoint supports are drawn in proportion to their weights."""
    a = ParametricSampler("uniform", {"lower": 0.0, "upper": 1.0})
    b = ParametricSampler("uniform", {"lower": 10.0, "upper": 11.0})
    s = AveragedSampler([a, b], [0.2, 0.8], labels=["a", "b"])
    x = s.draw(10_000, rng=3)
    share = float(np.mean(x > 5.0))
    # source: binomial(10000, 0.8); 4 standard deviations is 0.016
    assert abs(share - 0.8) < 0.016
    assert stats.kstest(x, s.cdf).pvalue > 0.001


def test_payload_nests_each_component_under_a_prefix() -> None:
    """Payload columns are c<j>:<column>, padded with NaN; the description nests each kind."""
    e = EmpiricalSampler([1.0, 2.0, 4.0])
    sm = fit(np.array([1.0, 1.5, 2.5, 3.0, 4.5]), "smoothed")
    p = ParametricSampler("normal", {"mu": 2.0, "sigma": 1.0})
    s = AveragedSampler([e, sm, p], [0.2, 0.3, 0.5], labels=["e", "s", "n"])
    pay = s.payload()
    assert sorted(pay) == ["c0:value", "c1:value"]
    assert np.isnan(pay["c0:value"][3:]).all() and pay["c1:value"].size == 5
    kinds = [c["sampler"]["kind"] for c in s.describe()["components"]]
    assert kinds == ["empirical", "smoothed", "parametric"]
    back = AveragedSampler.from_payload(pay, s.describe())
    assert back.describe() == s.describe()
    np.testing.assert_array_equal(back.draw(200, rng=5), s.draw(200, rng=5))


@pytest.mark.parametrize(
    ("weights", "labels", "match"),
    [
        ([0.5, 0.6], ["a", "b"], "weights summing to 1"),
        ([1.0, 0.0], ["a", "b"], "weights > 0"),
        ([0.5, 0.5], ["a", "a"], "distinct labels"),
        ([1.0], ["a", "b"], "expected 2 weights"),
    ],
)
def test_bad_weights_and_labels_are_refused(weights: list, labels: list, match: str) -> None:
    """Weights must be positive and sum to 1; labels must be distinct, one per component."""
    a = ParametricSampler("normal", {"mu": 0.0, "sigma": 1.0})
    with pytest.raises(MethodError, match=match):
        AveragedSampler([a, a], weights, labels=labels)


def test_weights_follow_the_criterion_differences() -> None:
    """fit_averaged's weights are exp(-delta/2) normalised over the candidates' AIC or BIC."""
    for criterion in ("aic", "bic"):
        s = fit_averaged(CLAIMS, candidates=["gamma", "weibull", "lognormal"], criterion=criterion)
        table = s.diagnostics["averaged"]["candidates"]
        ic = np.array([row[criterion] for row in table])
        expected = akaike_weights(ic)
        got = [row["weight"] for row in table]
        np.testing.assert_allclose(got, expected, rtol=1e-12)
        assert s.params["criterion"] == criterion and s.params["labels"] == [
            row["family"] for row in table
        ]


def test_default_candidates_by_the_sign_of_the_data() -> None:
    """Positive data get the positive families; data with values <= 0 the real-line ones."""
    assert fit_averaged(CLAIMS).params["labels"] == list(DEFAULT_POSITIVE)
    assert fit_averaged(CLAIMS - 3.0).params["labels"] == list(DEFAULT_REAL_LINE)


def test_candidates_that_fail_are_recorded_with_weight_zero() -> None:
    """A family that cannot take censored data is listed with its error and weight 0."""
    censored = CLAIMS > 6.0
    s = fit_averaged(CLAIMS, censored=censored, candidates=["uniform", "gamma", "weibull"])
    rows = {r["family"]: r for r in s.diagnostics["averaged"]["candidates"]}
    assert rows["uniform"]["weight"] == 0.0 and "censored" in rows["uniform"]["error"]
    assert s.labels == ("gamma", "weibull")


@pytest.mark.parametrize(
    ("options", "match"),
    [
        ({"candidates": ["poisson", "gamma"]}, "count families .poisson. and continuous"),
        ({"candidates": ["gama"]}, "unknown family 'gama'"),
        ({"candidates": "gamma"}, "expected a list of family names"),
        ({"criterion": "hqic"}, "expected 'aic' or 'bic', found 'hqic'"),
        ({"smooth": True}, "unknown option 'smooth' for averaged"),
    ],
)
def test_bad_options_are_refused(options: dict, match: str) -> None:
    """Candidates and criterion are checked; counts and densities are never mixed."""
    with pytest.raises(MethodError, match=match):
        fit_averaged(np.round(CLAIMS) + 1.0, **options)


def test_count_families_average_among_themselves() -> None:
    """Count candidates alone are allowed and the mixture has a pmf summing to 1."""
    counts = np.random.default_rng(2).negative_binomial(3, 0.4, 120).astype(float)
    s = fit_averaged(counts, candidates=["poisson", "negative_binomial"])
    k = np.arange(0, 200)
    assert s.pmf(k).sum() == pytest.approx(1.0, abs=1e-12)
    assert s.weights[s.labels.index("negative_binomial")] > 0.99


def test_artifact_round_trip_through_the_store(tmp_path) -> None:
    """write_sampler/load_sampler rebuild the averaged sampler, weights and components."""
    from samplewright.store.artifacts import load_sampler, write_sampler

    s = fit_averaged(CLAIMS, candidates=["gamma", "weibull", "lognormal"])
    write_sampler(s, tmp_path / "avg.parquet", diagnostics=s.diagnostics)
    back = load_sampler(tmp_path / "avg.parquet")
    assert isinstance(back, AveragedSampler) and back.describe() == s.describe()
    np.testing.assert_array_equal(back.draw(300, rng=6), s.draw(300, rng=6))
