"""Tests of samplewright.fitting.zero_modified: point masses and zero-inflated counts.

Reference sources: statsmodels.discrete.count_model.ZeroInflatedPoisson and
ZeroInflatedNegativeBinomialP (intercept only), statsmodels.discrete.discrete_model
.NegativeBinomial, on count data bundled with statsmodels: randhie 'mdvis' (doctor visits, RAND
Health Insurance Experiment) and fair_pt.csv 'naffairs' (Fair 1978, affairs in the past year,
75% zeros), read from the installed package without network.
"""

from __future__ import annotations

import importlib.resources

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy import special, stats
from statsmodels.datasets import randhie
from statsmodels.discrete.count_model import (
    ZeroInflatedNegativeBinomialP,
    ZeroInflatedPoisson,
)

from samplewright.core.errors import MethodError
from samplewright.core.randomness import make_rng
from samplewright.fitting.zero_modified import (
    fit_zero_inflated,
    point_mass_cdf,
    point_mass_quantile,
    split_point_mass,
)

# --- point mass + continuous part --------------------------------------------------------------


def test_split_point_mass_with_weights() -> None:
    """p0 is the weighted share at the atom; the rest keeps its values and weights."""
    r = split_point_mass([0.0, 3.0, 0.0, 5.0], weights=[1.0, 2.0, 3.0, 4.0])
    assert r.p0 == pytest.approx(0.4) and r.n_at == 4.0 and r.n_total == 10.0
    assert r.values.tolist() == [3.0, 5.0] and r.weights.tolist() == [2.0, 4.0]
    other = split_point_mass([1.0, 2.0, 1.0], at=1.0)
    assert other.p0 == pytest.approx(2 / 3) and other.values.tolist() == [2.0]


def test_split_point_mass_refuses_data_all_at_the_atom() -> None:
    """Nothing left for the continuous part is a one-line MethodError naming values."""
    with pytest.raises(MethodError, match="^values: every value equals at=0"):
        split_point_mass([0.0, 0.0])
    with pytest.raises(MethodError, match="^at: expected a finite number"):
        split_point_mass([0.0, 1.0], at=np.nan)


CASES = {
    # name: (atom, p0, continuous part)
    "inside": (0.5, 0.3, stats.norm(0.0, 1.0)),
    "lower_edge": (0.0, 0.25, stats.expon(scale=2.0)),
    "below": (-1.0, 0.2, stats.expon(scale=2.0)),
    "above": (2.0, 0.4, stats.uniform(0.0, 1.0)),
    "upper_edge": (1.0, 0.1, stats.uniform(0.0, 1.0)),
}


def _brute_quantile(u: np.ndarray, at: float, p0: float, dist: object) -> np.ndarray:
    """inf{x : F(x) >= u} by searching a fine grid that includes the atom (slow reference)."""
    lo, hi = dist.ppf(1e-9), dist.ppf(1 - 1e-9)  # type: ignore[attr-defined]
    grid = np.union1d(np.linspace(min(lo, at) - 1, max(hi, at) + 1, 200001), [at])
    f = p0 * (grid >= at) + (1 - p0) * dist.cdf(grid)  # type: ignore[attr-defined]
    idx = np.searchsorted(f, u - 1e-12, side="left")
    return grid[np.minimum(idx, grid.size - 1)]


@pytest.mark.parametrize("case", list(CASES))
def test_point_mass_quantile_is_the_generalised_inverse(case: str) -> None:
    """Q(u) = inf{x : F(x) >= u}, checked against a brute-force grid search."""
    at, p0, dist = CASES[case]
    u = np.linspace(0.01, 0.99, 99)
    q = point_mass_quantile(u, at=at, p0=p0, cdf=dist.cdf, quantile=dist.ppf)
    grid_step = (max(dist.ppf(1 - 1e-9), at) - min(dist.ppf(1e-9), at) + 2) / 200000
    np.testing.assert_allclose(q, _brute_quantile(u, at, p0, dist), atol=2 * grid_step)
    f = point_mass_cdf(q, at=at, p0=p0, cdf=dist.cdf)
    assert np.all(f >= u - 1e-12)
    on_atom = (q == at).mean()
    assert on_atom == pytest.approx(p0, abs=0.011)


@pytest.mark.parametrize("case", list(CASES))
def test_point_mass_draws_have_the_atom_share(case: str) -> None:
    """Inverse-transform draws put share p0 on the atom and the rest on the continuous part."""
    at, p0, dist = CASES[case]
    u = make_rng(5).random(200_000)
    q = point_mass_quantile(u, at=at, p0=p0, cdf=dist.cdf, quantile=dist.ppf)
    share = np.mean(q == at)
    assert share == pytest.approx(p0, abs=4 * np.sqrt(p0 * (1 - p0) / u.size))
    rest = q[q != at]
    # source: scipy.stats.kstest of the off-atom draws against the continuous part
    assert stats.kstest(rest, dist.cdf).pvalue > 1e-3


def test_point_mass_quantile_ends() -> None:
    """Q(0) is the lower end of the whole support and Q(1) its upper end."""
    ex = stats.expon()
    assert point_mass_quantile(
        [0.0, 1.0], at=-1.0, p0=0.3, cdf=ex.cdf, quantile=ex.ppf
    ).tolist() == [-1.0, np.inf]
    un = stats.uniform()
    assert point_mass_quantile(
        [0.0, 1.0], at=2.0, p0=0.3, cdf=un.cdf, quantile=un.ppf
    ).tolist() == [0.0, 2.0]
    assert point_mass_quantile(
        [0.2, 0.9], at=2.0, p0=1.0, cdf=un.cdf, quantile=un.ppf
    ).tolist() == [2.0, 2.0]


def test_point_mass_bad_p0() -> None:
    """p0 outside [0, 1] is refused naming p0."""
    with pytest.raises(MethodError, match="^p0: expected a probability"):
        point_mass_cdf([1.0], at=0.0, p0=1.5, cdf=stats.norm.cdf)


# --- zero-inflated counts: behaviour -----------------------------------------------------------


def _zip_sample(seed: int = 3, n: int = 20_000) -> np.ndarray:
    """Invented zero-inflated Poisson counts: pi = 0.3, mu = 2.5."""
    g = make_rng(seed)
    return np.where(g.random(n) < 0.3, 0, g.poisson(2.5, n)).astype(np.float64)


def test_zip_recovers_generating_parameters() -> None:
    """On 20,000 simulated counts pi and mu land within a few standard errors."""
    r = fit_zero_inflated(_zip_sample(), family="poisson")
    assert r.pi == pytest.approx(0.3, abs=0.02)
    assert r.params["mu"] == pytest.approx(2.5, abs=0.05)
    assert not r.pi_at_bound and r.n_params == 2


def _zinb_sample(seed: int = 4, n: int = 5_000) -> np.ndarray:
    """Invented zero-inflated negative binomial counts: pi = 0.3, n = 2, p = 0.4."""
    g = make_rng(seed)
    return np.where(g.random(n) < 0.3, 0, g.negative_binomial(2.0, 0.4, n)).astype(np.float64)


def test_zinb_recovers_generating_parameters() -> None:
    """On 5,000 simulated counts pi, n and p land near the values that made them."""
    r = fit_zero_inflated(_zinb_sample(), family="negative_binomial")
    # common practice, no source: tolerances of a few standard errors at n = 5,000
    assert r.pi == pytest.approx(0.3, abs=0.05)
    assert r.params["n"] == pytest.approx(2.0, rel=0.3)
    assert r.params["p"] == pytest.approx(0.4, rel=0.15)
    assert r.n_params == 3


def test_zero_inflated_functions_are_consistent() -> None:
    """pmf sums to 1, cdf is its running sum, quantile inverts cdf, mean and var from pmf."""
    r = fit_zero_inflated(_zinb_sample(), family="negative_binomial")
    k = np.arange(0, 400)
    pmf = r.pmf(k)
    assert pmf.sum() == pytest.approx(1.0, abs=1e-12)
    np.testing.assert_allclose(r.cdf(k), np.cumsum(pmf), rtol=1e-10, atol=1e-14)
    mean = float(k @ pmf)
    assert r.mean == pytest.approx(mean, rel=1e-10)
    assert r.var == pytest.approx(float(k**2 @ pmf) - mean**2, rel=1e-9)
    u = np.linspace(0.0, 0.999, 200)
    q = r.quantile(u)
    assert np.all(r.cdf(q) >= u - 1e-12)
    assert np.all((q == 0) | (r.cdf(q - 1) < u))
    assert r.quantile([1.0]).tolist() == [np.inf]


@pytest.mark.parametrize("family", ["poisson", "negative_binomial"])
def test_zero_inflated_integer_weights_equal_repeated_rows(family: str) -> None:
    """Frequency weights give exactly the fit of the repeated data."""
    x = (_zip_sample if family == "poisson" else _zinb_sample)(n=400)
    w = np.tile([1.0, 3.0], 200)
    a = fit_zero_inflated(x, family=family, weights=w)
    b = fit_zero_inflated(np.repeat(x, w.astype(int)), family=family)
    assert a.loglik == pytest.approx(b.loglik, rel=1e-12)
    assert a.pi == pytest.approx(b.pi, rel=1e-9)
    for name, value in a.params.items():
        assert value == pytest.approx(b.params[name], rel=1e-6)


def test_fewer_zeros_than_poisson_puts_pi_at_zero() -> None:
    """Counts with a deficit of zeros get pi = 0 and the plain Poisson MLE (the mean)."""
    x = np.array([0, 1, 1, 1, 1, 2, 2, 1, 1, 1], dtype=float)  # Poisson(1.1) expects 3.3 zeros
    r = fit_zero_inflated(x, family="poisson")
    assert r.pi == 0.0 and r.pi_at_bound
    assert r.params["mu"] == pytest.approx(x.mean(), rel=1e-14)
    # source: scipy.stats.poisson log-likelihood at the sample mean
    assert r.loglik == pytest.approx(stats.poisson.logpmf(x, x.mean()).sum(), rel=1e-13)


@pytest.mark.parametrize(
    ("counts", "family", "message"),
    [
        ([0, 0, 0], "poisson", "^counts: every count is 0"),
        ([0, 1.5, 2], "poisson", "^counts: expected non-negative integer counts"),
        ([0, -1, 2], "poisson", "^counts: expected non-negative integer counts"),
        ([0, 1, 2], "binomial", "^family: expected one of poisson, negative_binomial"),
        ([1, 2, 1, 2, 1, 2, 0], "negative_binomial", "^counts: the positive counts are no more"),
        ([0, 1, 1, 2, 1, 2, 1], "negative_binomial", "^counts: the positive counts are no more"),
        ([0, 1, 1, 2, 1, 3, 1], "negative_binomial", "^counts: variance 0.*not over-dispersed"),
    ],
)
def test_zero_inflated_bad_input(counts: list[float], family: str, message: str) -> None:
    """Bad counts, family or under-dispersed counts for the NB raise a MethodError."""
    with pytest.raises(MethodError, match=message):
        fit_zero_inflated(counts, family=family)  # type: ignore[arg-type]


# --- zero-inflated counts: statsmodels references ----------------------------------------------


def _mdvis() -> np.ndarray:
    """Doctor visits (statsmodels.datasets.randhie, column 'mdvis'), 20,190 rows."""
    return randhie.load_pandas().data["mdvis"].to_numpy(np.float64)


def _naffairs() -> np.ndarray:
    """Affairs in the past year (statsmodels' fair_pt.csv, column 'naffairs'), 601 rows."""
    path = importlib.resources.files("statsmodels.datasets.fair").joinpath("fair_pt.csv")
    with importlib.resources.as_file(path) as csv:
        return pd.read_csv(csv)["naffairs"].to_numpy(np.float64)


@pytest.mark.parametrize("data", [_mdvis, _naffairs], ids=["mdvis", "naffairs"])
def test_zip_matches_statsmodels(data: object) -> None:
    """Intercept-only ZIP: pi, mu and log-likelihood agree with statsmodels to 1e-4 or better."""
    y = data()  # type: ignore[operator]
    r = fit_zero_inflated(y, family="poisson")
    ones = np.ones((y.size, 1))
    model = ZeroInflatedPoisson(y, ones, exog_infl=ones)
    res = model.fit(disp=0, method="bfgs", maxiter=2000)
    # statsmodels' parameters: [logit(pi), log(mu)]
    # source: statsmodels ZeroInflatedPoisson(...).fit() params and llf
    assert r.pi == pytest.approx(special.expit(res.params[0]), rel=1e-4)
    assert r.params["mu"] == pytest.approx(np.exp(res.params[1]), rel=1e-4)
    assert r.loglik >= res.llf - 1e-6
    ours_in_theirs = model.loglike(np.array([special.logit(r.pi), np.log(r.params["mu"])]))
    assert r.loglik == pytest.approx(ours_in_theirs, rel=1e-12)


def test_zinb_matches_statsmodels_on_affairs() -> None:
    """Intercept-only ZINB (NB2): pi, n, p and log-likelihood agree with statsmodels."""
    y = _naffairs()
    r = fit_zero_inflated(y, family="negative_binomial")
    assert not r.pi_at_bound
    ones = np.ones((y.size, 1))
    model = ZeroInflatedNegativeBinomialP(y, ones, exog_infl=ones, p=2)
    with np.errstate(all="ignore"):  # statsmodels' own line searches overflow on the way
        res = model.fit(disp=0, method="bfgs", maxiter=5000, gtol=1e-10)
    infl, const, alpha = res.params
    # NB2: var = mu + alpha mu^2, so scipy's nbinom has n = 1/alpha and p = n / (n + mu)
    n = 1.0 / alpha
    p = n / (n + np.exp(const))
    # source: statsmodels ZeroInflatedNegativeBinomialP(..., p=2).fit() params and llf
    assert r.pi == pytest.approx(special.expit(infl), rel=1e-4)
    assert r.params["n"] == pytest.approx(n, rel=1e-4)
    assert r.params["p"] == pytest.approx(p, rel=1e-4)
    assert r.loglik >= res.llf - 1e-6
    mu = r.params["n"] * (1 - r.params["p"]) / r.params["p"]
    ours = np.array([special.logit(r.pi), np.log(mu), 1.0 / r.params["n"]])
    assert r.loglik == pytest.approx(model.loglike(ours), rel=1e-12)


def test_zinb_without_excess_zeros_is_statsmodels_negative_binomial() -> None:
    """Doctor visits need no inflation beyond NB2: pi = 0 and (n, p) are statsmodels' NB fit."""
    y = _mdvis()
    r = fit_zero_inflated(y, family="negative_binomial")
    assert r.pi == 0.0 and r.pi_at_bound
    res = sm.NegativeBinomial(y, np.ones((y.size, 1))).fit(disp=0, maxiter=500)
    const, alpha = res.params
    n = 1.0 / alpha
    # source: statsmodels NegativeBinomial (NB2) intercept-only fit; n = 1/alpha, mean = exp(b0)
    assert r.params["n"] == pytest.approx(n, rel=1e-4)
    assert r.params["p"] == pytest.approx(n / (n + np.exp(const)), rel=1e-4)
    assert r.loglik == pytest.approx(res.llf, rel=1e-9)
