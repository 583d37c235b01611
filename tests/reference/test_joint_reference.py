"""Reference checks of joint inputs (fit_joint, JointSampler) against statsmodels, scipy and pandas.

Datasets are bundled with registry packages and load offline: arch.data.frenchdata (Fama-French
monthly factors, 1926 on), statsmodels.datasets.macrodata (US quarterly macro series, 1959-2009)
and statsmodels.datasets.fertility (World Bank fertility rates by country, with gaps). Generated
data use fixed seeds.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.datasets
from arch.data import frenchdata
from scipy import stats
from statsmodels.distributions.copula.api import GaussianCopula, StudentTCopula

import samplewright as sw
from samplewright.distributions.joint import JointSampler, spearman_matrix
from samplewright.fitting.copulas import pseudo_observations
from samplewright.fitting.joint import fit_joint

FACTORS = ["Mkt-RF", "SMB", "HML"]


def _french() -> pd.DataFrame:
    """Monthly market, size and value factor returns (arch.data.frenchdata)."""
    return frenchdata.load()[FACTORS]


def _macro_growth() -> pd.DataFrame:
    """Quarterly log growth of real GDP, consumption and investment (statsmodels macrodata)."""
    data = statsmodels.datasets.macrodata.load_pandas().data
    levels = data[["realgdp", "realcons", "realinv"]]
    return pd.DataFrame(np.diff(np.log(levels.to_numpy()), axis=0), columns=list(levels.columns))


@pytest.mark.parametrize("loader", [_french, _macro_growth], ids=["french", "macro"])
def test_gaussian_copula_correlation_matches_statsmodels(loader: object) -> None:
    """fit_joint's Gaussian copula correlation is statsmodels' GaussianCopula.fit_corr_param."""
    df = loader()  # type: ignore[operator]
    s = fit_joint(df, coupling="gaussian_copula")
    expected = GaussianCopula(k_dim=3).fit_corr_param(df.to_numpy())  # source: statsmodels 0.15
    np.testing.assert_allclose(np.asarray(s.correlation), expected, atol=1e-14)


def test_gaussian_joint_draws_keep_the_data_kendall_tau() -> None:
    """Draws of the fitted Gaussian copula have the tau statsmodels' copula gives (the data's)."""
    df = _french()
    s = fit_joint(df, {c: "student_t" for c in FACTORS}, coupling="gaussian_copula")
    x = s.draw(2**13, rng=1, sequence="sobol")
    copula = GaussianCopula(corr=np.asarray(s.correlation), k_dim=3)
    for i, j in [(0, 1), (0, 2), (1, 2)]:
        # source: statsmodels GaussianCopula.tau, (2/pi) arcsin(r), for this pair's correlation
        expected = float(copula.tau(corr=np.asarray(s.correlation)[[i, j]][:, [i, j]]))
        data_tau = stats.kendalltau(df.iloc[:, i], df.iloc[:, j]).statistic  # scipy
        assert expected == pytest.approx(data_tau, abs=1e-12)
        assert stats.kendalltau(x[:, i], x[:, j]).statistic == pytest.approx(expected, abs=0.005)


def test_sum_of_normal_marginals_under_a_gaussian_copula_is_normal() -> None:
    """X + Y with normal marginals and a Gaussian copula passes a KS test against scipy's normal."""
    a = sw.fit([1.0, 2.0, 4.0, 7.0], "normal")
    b = sw.fit([10.0, 20.0, 25.0], "normal")
    r = 0.7
    s = JointSampler(
        ["a", "b"], coupling="gaussian_copula", marginals=[a, b], correlation=[[1.0, r], [r, 1.0]]
    )
    total = s.draw(20_000, rng=2).sum(axis=1)
    # source: a bivariate normal's sum is normal, variance s1^2 + s2^2 + 2 r s1 s2 (textbook)
    sd = math.sqrt(a.var + b.var + 2.0 * r * a.sd * b.sd)
    assert stats.kstest(total, stats.norm(a.mean + b.mean, sd).cdf).pvalue > 0.001


@pytest.mark.parametrize("point", [[0.3, 0.5, 0.7], [0.05, 0.05, 0.05], [0.9, 0.2, 0.6]])
def test_t_copula_joint_draws_match_the_multivariate_t_cdf(point: list[float]) -> None:
    """The share of joint draws below the marginal quantiles of a point is the t copula's cdf."""
    corr = np.array([[1.0, 0.5, 0.2], [0.5, 1.0, -0.3], [0.2, -0.3, 1.0]])  # invented, PD
    df = 3.0
    marginals = [
        sw.fit([1.0, 2.0, 4.0], "normal"),
        sw.fit([3.0, 5.0, 6.0], "lognormal"),
        sw.fit([0.5, 1.5, 4.0], "gamma"),
    ]
    s = JointSampler(
        ["a", "b", "c"], coupling="t_copula", marginals=marginals, correlation=corr, df=df
    )
    x = s.draw(2**16, rng=3, sequence="sobol")
    limits = [float(m.quantile(p)) for m, p in zip(marginals, point, strict=True)]
    share = float(np.mean(np.all(x <= limits, axis=1)))
    # source: scipy.stats.multivariate_t.cdf at the t quantiles of the point
    expected = stats.multivariate_t(shape=corr, df=df).cdf(
        stats.t.ppf(point, df), random_state=np.random.default_rng(0)
    )
    assert share == pytest.approx(float(expected), abs=1e-3)


def test_t_copula_df_is_the_statsmodels_likelihood_maximum() -> None:
    """fit_joint's t-copula df maximises statsmodels' StudentTCopula log-likelihood (0.01 grid)."""
    df = _french()
    s = fit_joint(df, coupling="t_copula")
    assert s.df is not None and s.correlation is not None
    u = pseudo_observations(df.to_numpy())

    def sm_loglik(nu: float) -> float:
        return float(StudentTCopula(corr=s.correlation, df=nu, k_dim=3).logpdf(u).sum())

    grid = np.arange(s.df - 0.3, s.df + 0.3, 0.01)
    values = np.array([sm_loglik(g) for g in grid])
    assert sm_loglik(s.df) >= values.max() - 1e-9  # source: statsmodels StudentTCopula.logpdf
    assert s.diagnostics["coupling"]["log_likelihood"] == pytest.approx(sm_loglik(s.df), rel=1e-10)


def test_rank_correlation_fit_reproduces_the_data_spearman() -> None:
    """Iman-Conover draws of fitted macro marginals have scipy's Spearman matrix of the data."""
    df = _macro_growth()
    s = fit_joint(df, {c: "normal" for c in df.columns})
    expected = stats.spearmanr(df.to_numpy()).statistic  # source: scipy.stats.spearmanr
    np.testing.assert_allclose(np.asarray(s.rank_correlation), expected, atol=1e-12)
    x = s.draw(2**14, rng=4, sequence="sobol")
    np.testing.assert_allclose(spearman_matrix(x), expected, atol=0.01)


def test_rows_with_gaps_are_dropped_as_pandas_dropna() -> None:
    """Complete rows of three fertility years are those pandas' dropna keeps; draws are rows."""
    data = statsmodels.datasets.fertility.load_pandas().data
    years = ["1960", "1990", "2010"]
    s = fit_joint(data, dict.fromkeys(years, "empirical"), coupling="rows")
    kept = data[years].dropna()  # source: pandas DataFrame.dropna
    np.testing.assert_array_equal(np.asarray(s.rows), kept.to_numpy(dtype=np.float64))
    assert s.diagnostics["rows"]["dropped"] == {"missing": len(data) - len(kept)}
    seen = {tuple(r) for r in kept.to_numpy(dtype=np.float64)}
    assert {tuple(r) for r in s.draw(2000, rng=5)} <= seen
