"""The spliced method's tail and body fits checked against outside implementations and data.

Sources: scipy.stats.genpareto (its generic ``fit`` with the location fixed at 0, its CDF and
quantile), statsmodels' numerical Hessian (``GenericLikelihoodModel.hessian``),
scipy.stats.truncnorm with scipy.optimize for a truncated body, and the large-sample variance
of the GPD estimates (from memory, see the test). Data: the progesterone receptor column of the
German Breast Cancer Study Group 2 data (``lifelines.datasets.load_gbsg2``, 686 patients) and
Engel's household income data (``statsmodels.datasets.engel``, 235 households), both shipped
inside the packages.

Coles (2001), *An Introduction to Statistical Modeling of Extreme Values*, section 4.4 (daily
rainfall, threshold 30 mm) is not checked: its data set is not shipped by any package installed
here, and its figures are not quoted from memory.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize, stats

from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.fitting.spliced import fit_spliced, gpd_fit_excesses


def _progrec() -> np.ndarray:
    from lifelines.datasets import load_gbsg2

    return load_gbsg2()["progrec"].to_numpy(dtype=np.float64)


def _engel_income() -> np.ndarray:
    from statsmodels.datasets import engel

    return engel.load_pandas().data["income"].to_numpy(dtype=np.float64)


@pytest.mark.parametrize(
    ("loader", "prob", "n_exc"),
    [
        (_progrec, 0.90, 67),  # source: lifelines.datasets.load_gbsg2, column progrec
        (_engel_income, 0.80, 47),  # source: statsmodels.datasets.engel, column income
    ],
)
def test_gpd_fit_is_at_least_as_likely_as_scipy_genpareto_fit(
    loader: object, prob: float, n_exc: int
) -> None:
    """Our GPD fit of the excesses reaches scipy's log-likelihood (or higher), same parameters."""
    x = loader()  # type: ignore[operator]
    u = float(EmpiricalSampler(x).quantile(prob))
    y = x[x > u] - u
    assert y.size == n_exc  # counted from the bundled data
    xi, sigma, ll, _ = gpd_fit_excesses(y)
    c, _, scale = stats.genpareto.fit(y, floc=0)  # source: scipy.stats.genpareto.fit
    ll_scipy = float(np.sum(stats.genpareto.logpdf(y, c, 0.0, scale)))
    assert ll == pytest.approx(float(np.sum(stats.genpareto.logpdf(y, xi, 0.0, sigma))), rel=1e-12)
    assert ll >= ll_scipy - 1e-9 * abs(ll_scipy)
    assert xi == pytest.approx(c, abs=1e-4)
    assert sigma == pytest.approx(scale, rel=1e-4)


def test_spliced_tail_is_scipy_genpareto_scaled_by_zeta() -> None:
    """Above u the spliced CDF and quantile equal scipy's genpareto, scaled by zeta."""
    x = _progrec()
    s = fit_spliced(x, threshold_quantile=0.9)
    g = stats.genpareto(c=s.xi, loc=s.threshold, scale=s.sigma)  # source: scipy.stats.genpareto
    v = s.threshold + np.array([1.0, 50.0, 400.0, 2000.0, 1e5])
    np.testing.assert_allclose(s.cdf(v), 1.0 - s.zeta * g.sf(v), rtol=1e-14)
    p = np.array([0.91, 0.95, 0.99, 0.9999])
    np.testing.assert_allclose(s.quantile(p), g.ppf(1.0 - (1.0 - p) / s.zeta), rtol=1e-10)


def test_standard_errors_match_statsmodels_numerical_hessian() -> None:
    """se(xi), se(sigma) and their covariance equal the inverse of statsmodels' Hessian."""
    from statsmodels.base.model import GenericLikelihoodModel

    x = _progrec()
    y = x[x > 312.0] - 312.0  # 312 is the lower 0.9 quantile of progrec (see above)
    xi, sigma, _, cov = gpd_fit_excesses(y)

    class Excesses(GenericLikelihoodModel):  # type: ignore[misc]
        def loglike(self, params: np.ndarray) -> float:
            return float(np.sum(stats.genpareto.logpdf(self.endog, params[0], 0.0, params[1])))

    hess = Excesses(y, np.ones_like(y)).hessian(np.array([xi, sigma]))
    expected = np.linalg.inv(-hess)  # source: statsmodels.tools.numdiff via GenericLikelihoodModel
    assert cov is not None
    np.testing.assert_allclose(cov, expected, rtol=1e-4)


def test_standard_errors_approach_the_large_sample_formula() -> None:
    """On a large GPD sample the observed-information errors match the expected-information ones."""
    xi0, n = 0.2, 20_000
    y = stats.genpareto(c=xi0, scale=1.0).rvs(n, random_state=np.random.default_rng(1))
    xi, sigma, _, cov = gpd_fit_excesses(y)
    assert cov is not None
    # from memory: inverse expected information of the GPD (Smith 1984; Davison & Smith 1990):
    # var(xi) = (1 + xi)^2 / n, var(sigma) = 2 sigma^2 (1 + xi) / n, cov = -sigma (1 + xi) / n
    assert np.sqrt(cov[0, 0]) == pytest.approx((1 + xi) / np.sqrt(n), rel=0.05)
    assert np.sqrt(cov[1, 1]) == pytest.approx(sigma * np.sqrt(2 * (1 + xi) / n), rel=0.05)
    assert cov[0, 1] == pytest.approx(-sigma * (1 + xi) / n, rel=0.1)


def test_truncated_normal_body_matches_scipy_truncnorm_fit() -> None:
    """A normal body truncated at u is the maximum of scipy's truncnorm likelihood."""
    x = _engel_income()
    s = fit_spliced(x, body="normal", threshold_quantile=0.9)
    xb = x[x <= s.threshold]

    def nll(p: np.ndarray) -> float:
        mu, sd = p
        if sd <= 0:
            return np.inf
        b = (s.threshold - mu) / sd
        # source: scipy.stats.truncnorm (normal truncated above at b standard units)
        return -float(np.sum(stats.truncnorm.logpdf(xb, -np.inf, b, loc=mu, scale=sd)))

    start = np.array([xb.mean(), xb.std()])
    res = optimize.minimize(
        nll, start, method="Nelder-Mead", options={"xatol": 1e-8, "fatol": 1e-10, "maxiter": 5000}
    )
    ours = np.array([s.params["body_mu"], s.params["body_sigma"]])
    assert -nll(ours) >= -float(res.fun) - 1e-7
    np.testing.assert_allclose(ours, res.x, rtol=1e-4)
