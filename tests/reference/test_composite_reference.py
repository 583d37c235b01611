"""Reference checks of the mixture, point-mass and metalog samplers and the expert inputs.

Sources: scipy.stats (component distributions summed by hand, logistic and log-logistic for the
2-term metalog, Kolmogorov-Smirnov and chi-square tests of draws); statsmodels'
ZeroInflatedPoisson and ZeroInflatedNegativeBinomialP ``predict(which="prob")`` and
``test_poisson_zeroinflation_broek`` (van den Broek 1995) on count data bundled with statsmodels
(fair_pt.csv 'naffairs': affairs in the past year, 601 rows; randhie 'mdvis': doctor visits,
20,190 rows); statsmodels.datasets.elnino (monthly sea temperatures, two seasonal modes); the
R package qpd's metalog tests (inst/tinytest/test_metalog.R, as in test_elicit_reference.py);
Malcolm, Roseboom, Clark & Fazar (1959, Operations Research 7(5)) for the PERT mean.
"""

from __future__ import annotations

import importlib.resources
from typing import Any

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy import special, stats
from statsmodels.datasets import elnino, randhie
from statsmodels.discrete.count_model import (
    ZeroInflatedNegativeBinomialP,
    ZeroInflatedPoisson,
)
from statsmodels.discrete.diagnostic import PoissonDiagnostic

from samplewright.core.checks import check_sample
from samplewright.core.randomness import make_rng
from samplewright.distributions.metalog import MetalogSampler
from samplewright.distributions.mixture import MixtureSampler
from samplewright.fitting.composite import (
    fit_hurdle_sample,
    fit_mixture_sample,
    fit_zero_inflated_sample,
    screen_composites,
    zero_inflation_score,
)
from samplewright.fitting.expert import from_quantiles, from_three_points
from samplewright.fitting.mixtures import fit_mixture

KS_LEVEL = 1e-3  # a correct sampler fails a fixed-seed test at this level one time in a thousand


def _elnino() -> np.ndarray:
    """All 732 monthly temperatures of statsmodels' elnino dataset, as one sample."""
    return elnino.load_pandas().data.drop(columns="YEAR").to_numpy(np.float64).ravel()


def _naffairs() -> np.ndarray:
    """Affairs in the past year (statsmodels' fair_pt.csv, column 'naffairs'), 601 rows."""
    path = importlib.resources.files("statsmodels.datasets.fair").joinpath("fair_pt.csv")
    with importlib.resources.as_file(path) as csv:
        return pd.read_csv(csv)["naffairs"].to_numpy(np.float64)


def _mdvis() -> np.ndarray:
    """Doctor visits (statsmodels.datasets.randhie, column 'mdvis'), 20,190 rows."""
    return randhie.load_pandas().data["mdvis"].to_numpy(np.float64)


# --- mixtures -----------------------------------------------------------------------------------


def _scipy_sum(family: str, weights: np.ndarray, params: np.ndarray, what: str, x: Any) -> Any:
    """sum_j w_j scipy.stats.<dist>(params_j).<what>(x), one component at a time."""
    total = np.zeros_like(np.asarray(x, dtype=np.float64))
    for w, (a, b) in zip(weights, params, strict=True):
        dist = {
            "normal": lambda a=a, b=b: stats.norm(loc=a, scale=b),
            "lognormal": lambda a=a, b=b: stats.lognorm(a, scale=b),
            "gamma": lambda a=a, b=b: stats.gamma(a, scale=b),
            "weibull": lambda a=a, b=b: stats.weibull_min(a, scale=b),
        }[family]()
        total = total + w * getattr(dist, what)(x)
    return total


def _sample(family: str) -> np.ndarray:
    """El Nino temperatures for the normal mixture; invented two-group data for the others."""
    g = make_rng(31)
    if family == "normal":
        return _elnino()
    if family == "lognormal":
        return np.concatenate([g.lognormal(0.0, 0.3, 300), g.lognormal(1.5, 0.2, 200)])
    if family == "gamma":
        return np.concatenate([g.gamma(3.0, 1.0, 300), g.gamma(60.0, 0.5, 200)])
    return np.concatenate([2.0 * g.weibull(2.0, 300), 12.0 * g.weibull(8.0, 200)])


@pytest.mark.parametrize("family", ["normal", "lognormal", "gamma", "weibull"])
def test_mixture_sampler_cdf_and_pdf_are_scipy_mixture_sums(family: str) -> None:
    """The fitted sampler's cdf and pdf equal the weighted sums of scipy's components."""
    x = _sample(family)
    r = fit_mixture(x, family=family, max_components=2, rng=7)  # type: ignore[arg-type]
    s = fit_mixture_sample(check_sample(x), family=family, max_components=2, seed=7)
    assert s.n_components == 2
    grid = np.quantile(x, np.linspace(0.01, 0.99, 41))
    # source: scipy.stats norm / lognorm / gamma / weibull_min, summed with the EM weights
    np.testing.assert_allclose(
        s.cdf(grid), _scipy_sum(family, r.weights, r.params, "cdf", grid), rtol=1e-12
    )
    np.testing.assert_allclose(
        s.pdf(grid), _scipy_sum(family, r.weights, r.params, "pdf", grid), rtol=1e-12
    )


def test_el_nino_screen_proposes_a_mixture() -> None:
    """Two seasonal modes in El Nino temperatures give a BIC gain far above 10."""
    r = screen_composites(_elnino())
    assert r.candidates == ("mixture",) and r.bic_gain is not None and r.bic_gain > 10


# --- zero-inflated counts against statsmodels -----------------------------------------------------


def test_zip_pmf_matches_statsmodels_predict_on_affairs() -> None:
    """ZIP probabilities equal statsmodels' predict(which='prob'), at our parameters exactly and
    at statsmodels' own fit to its convergence."""
    y = _naffairs()
    s = fit_zero_inflated_sample(check_sample(y), family="poisson")
    ones = np.ones((y.size, 1))
    model = ZeroInflatedPoisson(y, ones, exog_infl=ones)
    k = np.arange(0, 16)
    ours = np.array([special.logit(s.p0), np.log(s.inner.params["lambda"])])
    # source: statsmodels ZeroInflatedPoisson.predict(params, which="prob")
    theirs = model.predict(ours, exog=ones[:1], exog_infl=ones[:1], which="prob", y_values=k)[0]
    np.testing.assert_allclose(s.pmf(k), theirs, rtol=1e-10)
    fitted = model.fit(disp=0, method="bfgs", maxiter=2000)
    # source: statsmodels ZeroInflatedPoisson(...).fit().predict(which="prob")
    probs = fitted.predict(exog=ones[:1], exog_infl=ones[:1], which="prob", y_values=k)[0]
    np.testing.assert_allclose(s.pmf(k), probs, rtol=1e-4, atol=1e-12)


def test_zinb_pmf_matches_statsmodels_predict_on_affairs() -> None:
    """ZINB (NB2) probabilities equal statsmodels' predict at our parameters."""
    y = _naffairs()
    s = fit_zero_inflated_sample(check_sample(y), family="negative_binomial")
    ones = np.ones((y.size, 1))
    model = ZeroInflatedNegativeBinomialP(y, ones, exog_infl=ones, p=2)
    r, p = s.inner.params["r"], s.inner.params["p"]
    mean = r * (1 - p) / p
    ours = np.array([special.logit(s.p0), np.log(mean), 1.0 / r])
    k = np.arange(0, 16)
    # source: statsmodels ZeroInflatedNegativeBinomialP.predict(params, which="prob")
    theirs = model.predict(ours, exog=ones[:1], exog_infl=ones[:1], which="prob", y_values=k)[0]
    np.testing.assert_allclose(s.pmf(k), theirs, rtol=1e-9)


@pytest.mark.parametrize(
    "data",
    [_naffairs, _mdvis, lambda: make_rng(5).poisson(2.2, 400).astype(np.float64)],
    ids=["naffairs", "mdvis", "generated_poisson"],
)
def test_zero_inflation_score_is_van_den_broeks_as_statsmodels_computes_it(data: Any) -> None:
    """Statistic and one-sided p-value equal statsmodels' test_poisson_zeroinflation_broek."""
    y = data()
    z, pvalue = zero_inflation_score(y, np.ones_like(y))
    res = sm.Poisson(y, np.ones((y.size, 1))).fit(disp=0)
    ref = PoissonDiagnostic(res).test_poisson_zeroinflation(method="broek")
    # source: statsmodels test_poisson_zeroinflation_broek (van den Broek 1995)
    assert z == pytest.approx(ref.statistic, rel=1e-7)
    assert pvalue == pytest.approx(ref.pvalue_smaller, rel=1e-6, abs=1e-300)


def test_affairs_screen_proposes_zero_inflation() -> None:
    """Three quarters of the affairs counts are 0, far more than a Poisson predicts."""
    assert screen_composites(_naffairs()).candidates == ("zero_inflated",)


# --- expert inputs ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("low", "mode", "high"), [(2.0, 5.0, 14.0), (40.0, 55.0, 90.0), (0.0, 0.0, 1.0)]
)
def test_pert_mean_and_variance_are_malcolms(low: float, mode: float, high: float) -> None:
    """Mean (low + 4 mode + high) / 6; variance (mean - low)(high - mean) / 7 at shape 4."""
    s = from_three_points(low, mode, high)
    mean = (low + 4 * mode + high) / 6  # source: Malcolm et al. (1959), PERT mean
    assert s.mean == pytest.approx(mean, rel=1e-13, abs=1e-15)
    # source: the beta variance with alpha + beta = 6 (common practice, no source)
    assert s.var == pytest.approx((mean - low) * (high - mean) / 7, rel=1e-12)


P_QPD = [0.1, 0.5, 0.85]
X_QPD = [4.0, 9.0, 17.0]
# source: qpd inst/tinytest/test_metalog.R (qmetalog(0.12), fmetalog at it, pmetalog(7.11))
QPD = {
    (None, None): (4.3419, 0.0628, 0.3501),
    (0.0, None): (4.3146, 0.0662, 0.3452),
    (None, 50.0): (4.3144, 0.0682, 0.3585),
    (0.0, 50.0): (4.3146, 0.0664, 0.3472),
}


@pytest.mark.parametrize("bounds", list(QPD))
def test_metalog_sampler_matches_qpd(bounds: tuple[float | None, float | None]) -> None:
    """The sampler from elicited points gives qpd's Q(0.12), density and F(7.11), and passes
    through the points."""
    q12, density12, cdf711 = QPD[bounds]
    s = from_quantiles(P_QPD, X_QPD, lower=bounds[0], upper=bounds[1])
    np.testing.assert_allclose(s.quantile(P_QPD), X_QPD, rtol=1e-12)
    assert float(s.quantile(0.12)) == pytest.approx(q12, abs=5e-5)
    assert float(s.pdf(s.quantile(0.12))) == pytest.approx(density12, abs=5e-5)
    assert float(s.cdf(7.11)) == pytest.approx(cdf711, abs=5e-5)


def test_two_term_metalog_samplers_are_logistic_and_log_logistic() -> None:
    """Keelin (2016): 2 terms unbounded is logistic(a1, a2); lower-bounded at b is
    b + log-logistic(shape 1/a2, scale exp(a1)); all functions and moments as scipy's."""
    u = np.linspace(0.001, 0.999, 37)
    plain = MetalogSampler([3.0, 0.8])
    ref = stats.logistic(loc=3.0, scale=0.8)  # source: scipy.stats.logistic
    x = ref.ppf(u)
    np.testing.assert_allclose(plain.quantile(u), x, rtol=1e-13)
    np.testing.assert_allclose(plain.cdf(x), u, atol=1e-13)
    np.testing.assert_allclose(plain.pdf(x), ref.pdf(x), rtol=1e-10)
    assert plain.mean == pytest.approx(ref.mean(), rel=1e-10)
    assert plain.var == pytest.approx(ref.var(), rel=1e-9)
    low = MetalogSampler([1.0, 0.3], lower=2.0)
    ref = stats.fisk(1.0 / 0.3, loc=2.0, scale=np.exp(1.0))  # source: scipy.stats.fisk
    x = ref.ppf(u)
    np.testing.assert_allclose(low.quantile(u), x, rtol=1e-13)
    np.testing.assert_allclose(low.cdf(x), u, atol=1e-13)
    np.testing.assert_allclose(low.pdf(x), ref.pdf(x), rtol=1e-10)
    assert low.mean == pytest.approx(ref.mean(), rel=1e-9)
    assert low.var == pytest.approx(ref.var(), rel=1e-8)


# --- draws against the samplers' own distribution functions --------------------------------------


def _ks_pvalue(draws: np.ndarray, cdf: Any) -> float:
    return float(stats.kstest(draws, cdf).pvalue)  # source: scipy.stats.kstest


def test_metalog_draws_follow_its_cdf() -> None:
    """KS test of 20,000 draws against the sampler's own cdf."""
    s = from_quantiles([0.1, 0.5, 0.9, 0.99], [40.0, 55.0, 90.0, 160.0], lower=0.0)
    assert _ks_pvalue(s.draw(20_000, rng=101), s.cdf) > KS_LEVEL


def test_mixture_native_draws_follow_its_cdf() -> None:
    """KS test of 20,000 component-then-family draws against the mixture cdf."""
    s = MixtureSampler(
        "gamma", [0.4, 0.6], {"shape": [3.0, 40.0], "scale": [1.0, 0.5], "loc": [0.0, 0.0]}
    )
    assert _ks_pvalue(s.draw(20_000, rng=102), s.cdf) > KS_LEVEL


def test_hurdle_draws_follow_the_atom_and_the_body() -> None:
    """The atom share passes a binomial test; the other draws pass KS against the body cdf."""
    g = make_rng(9)
    x = np.concatenate([np.zeros(150), g.lognormal(1.0, 0.7, 350)])
    s = fit_hurdle_sample(check_sample(x))
    d = s.draw(20_000, rng=103)
    at = d == 0.0
    # source: scipy.stats.binomtest
    assert stats.binomtest(int(at.sum()), d.size, s.p0).pvalue > KS_LEVEL
    assert _ks_pvalue(d[~at], s.inner.cdf) > KS_LEVEL


def test_zero_inflated_draws_follow_the_pmf() -> None:
    """A chi-square test of 20,000 draws against the pmf (counts from the 99 % quantile up
    pooled, so that every expected count is at least 5)."""
    s = fit_zero_inflated_sample(check_sample(_naffairs()), family="poisson")
    d = s.draw(20_000, rng=104)
    top = int(s.quantile(0.99))
    k = np.arange(0, top)
    observed = np.append(np.bincount(d.astype(int), minlength=top)[:top], np.sum(d >= top))
    expected = np.append(s.pmf(k), 1.0 - s.cdf(top - 1.0)) * d.size
    assert expected.min() >= 5
    # source: scipy.stats.chisquare
    assert stats.chisquare(observed, expected).pvalue > KS_LEVEL
