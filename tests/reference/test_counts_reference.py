"""Reference checks of the Poisson dispersion test against outside implementations and data.

Sources: statsmodels (GLM with a Poisson family: Pearson chi-square; discrete Poisson's
dispersion diagnostics, Dean's test; NegativeBinomial for a likelihood-ratio check), scipy.stats
(chi-square distribution, binomial test); count data bundled with statsmodels.datasets that load
offline (randhie 'mdvis': doctor visits in the RAND Health Insurance Experiment; cpunish
'EXECUTIONS': executions by US state in 1997); and Bortkiewicz's (1898) horse-kick table.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import stats
from statsmodels.datasets import cpunish, randhie

from samplewright.check.dispersion import dispersion_check
from samplewright.core.randomness import make_rng
from samplewright.fitting.counts import fit_empirical_pmf


def _mdvis() -> np.ndarray:
    """Doctor visits per person-year (statsmodels.datasets.randhie, column 'mdvis')."""
    return randhie.load_pandas().data["mdvis"].to_numpy(np.float64)


def _executions() -> np.ndarray:
    """Executions per US state, 1997 (statsmodels.datasets.cpunish, column 'EXECUTIONS')."""
    return cpunish.load_pandas().data["EXECUTIONS"].to_numpy(np.float64)


def _poisson_sample() -> np.ndarray:
    """Generated Poisson(3.2) counts, fixed seed."""
    return make_rng(2026).poisson(3.2, 300).astype(np.float64)


DATASETS: dict[str, Callable[[], np.ndarray]] = {
    "randhie_mdvis": _mdvis,
    "cpunish_executions": _executions,
    "generated_poisson": _poisson_sample,
}


def _intercept_only_glm(y: np.ndarray) -> sm.GLM:
    return sm.GLM(y, np.ones((y.size, 1)), family=sm.families.Poisson()).fit()


@pytest.mark.parametrize("name", DATASETS)
def test_statistic_is_the_pearson_chi2_of_an_intercept_only_poisson_glm(name: str) -> None:
    """The dispersion statistic and df equal statsmodels' Pearson chi-square and residual df."""
    y = DATASETS[name]()
    r = dispersion_check(y)
    glm = _intercept_only_glm(y)
    # source: statsmodels GLM(family=Poisson()).fit().pearson_chi2 and .df_resid
    assert r.statistic == pytest.approx(glm.pearson_chi2, rel=1e-11)
    assert r.df == glm.df_resid
    # source: scipy.stats.chi2.sf of statsmodels' Pearson chi-square
    assert r.pvalue == pytest.approx(
        stats.chi2.sf(glm.pearson_chi2, glm.df_resid), rel=1e-9, abs=1e-300
    )


@pytest.mark.parametrize("name", DATASETS)
def test_statistic_agrees_with_deans_normal_form(name: str) -> None:
    """For an intercept-only model Dean's C statistic is (D - n) / sqrt(2 n)."""
    y = DATASETS[name]()
    r = dispersion_check(y)
    fitted = sm.Poisson(y, np.ones((y.size, 1))).fit(disp=0)
    frame = fitted.get_diagnostic().test_dispersion().summary_frame()
    # source: statsmodels Poisson results .get_diagnostic().test_dispersion(), row "Dean C"
    dean_c = float(frame.loc[frame["method"] == "Dean C", "statistic"].iloc[0])
    assert (r.statistic - y.size) / np.sqrt(2 * y.size) == pytest.approx(dean_c, rel=1e-9)


def test_doctor_visits_are_flagged_and_a_negative_binomial_fits_better() -> None:
    """mdvis is over-dispersed; statsmodels' NegativeBinomial beats Poisson by likelihood ratio."""
    y = _mdvis()
    r = dispersion_check(y)
    assert r.overdispersed and r.index > 5  # sample variance 20.3 vs mean 2.86
    x = np.ones((y.size, 1))
    ll_p = sm.Poisson(y, x).fit(disp=0).llf
    ll_nb = sm.NegativeBinomial(y, x).fit(disp=0).llf
    lr = 2.0 * (ll_nb - ll_p)
    # source: statsmodels Poisson / NegativeBinomial log-likelihoods; the boundary LR test uses
    # half a chi-square(1) (Self & Liang, 1987, JASA 82)
    assert 0.5 * stats.chi2.sf(lr, 1) < 1e-10
    assert fit_empirical_pmf(y).diagnostics["dispersion"]["overdispersed"] is True


def test_horse_kick_deaths_are_consistent_with_a_poisson() -> None:
    """Bortkiewicz's horse-kick table (200 corps-years) has index near 1 and is not flagged."""
    # source: Bortkiewicz (1898), Das Gesetz der kleinen Zahlen: deaths 0..4 in 109, 65, 22, 3,
    # 1 corps-years (from memory; the table is widely reproduced)
    deaths, corps_years = np.arange(5.0), np.array([109.0, 65.0, 22.0, 3.0, 1.0])
    r = dispersion_check(deaths, weights=corps_years)
    assert r.mean == pytest.approx(0.61, rel=1e-14)  # 122 deaths / 200 (from the table)
    # hand computation from the table: sum of squares 196, so D = (196 - 200 * 0.61**2) / 0.61
    assert r.statistic == pytest.approx((196 - 200 * 0.61**2) / 0.61, rel=1e-12)
    assert r.index == pytest.approx(1.0016, abs=1e-4)
    assert not r.overdispersed


def test_false_alarm_rate_on_poisson_draws_is_near_alpha() -> None:
    """Over 1000 independent Poisson samples the test flags about alpha = 5% of them."""
    streams = np.random.SeedSequence(20260417).spawn(1000)
    flagged = [dispersion_check(make_rng(s).poisson(4.0, 60)).overdispersed for s in streams]
    k = int(np.sum(flagged))
    # source: scipy.stats.binomtest; a correct level-5% test gives k ~ Binomial(1000, 0.05)
    assert stats.binomtest(k, 1000, 0.05).pvalue > 0.001, k


def test_negative_binomial_draws_are_usually_flagged() -> None:
    """Counts with variance three times the mean are flagged in nearly every sample of 100."""
    streams = np.random.SeedSequence(7).spawn(200)
    # numpy negative_binomial(n, p): mean n(1-p)/p = 4, variance mean/p = 12
    flagged = [
        dispersion_check(make_rng(s).negative_binomial(2.0, 1 / 3, 100)).overdispersed
        for s in streams
    ]
    assert np.mean(flagged) > 0.95  # common practice, no source: power of a large effect
