"""Reference checks of the maximum-likelihood fits against closed forms and scipy.stats.

Datasets are bundled with registry packages and load offline: statsmodels.datasets (nile, engel,
strikes) and lifelines.datasets (waltons). Generated data use fixed seeds.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pytest
import statsmodels.datasets
from lifelines.datasets import load_waltons
from scipy import stats

import samplewright as sw
from samplewright.core.errors import MethodError

LL_RTOL = 1e-7  # our log-likelihood may fall short of scipy's by at most this (relative)


def _nile() -> np.ndarray:
    """Annual Nile flow volumes, 1871-1970 (statsmodels.datasets.nile)."""
    return statsmodels.datasets.nile.load_pandas().data["volume"].to_numpy(dtype=np.float64)


def _engel_income() -> np.ndarray:
    """Household incomes of Engel's food-expenditure data (statsmodels.datasets.engel)."""
    return statsmodels.datasets.engel.load_pandas().data["income"].to_numpy(dtype=np.float64)


def _engel_foodexp() -> np.ndarray:
    """Household food expenditures of Engel's data (statsmodels.datasets.engel)."""
    return statsmodels.datasets.engel.load_pandas().data["foodexp"].to_numpy(dtype=np.float64)


def _strikes() -> np.ndarray:
    """Durations in days of US strikes, Kennan (1985) (statsmodels.datasets.strikes)."""
    return statsmodels.datasets.strikes.load_pandas().data["duration"].to_numpy(dtype=np.float64)


def _waltons() -> np.ndarray:
    """Fruit-fly lifetimes, Waltons data (lifelines.datasets.load_waltons, column 'T')."""
    return load_waltons()["T"].to_numpy(dtype=np.float64)


def _generated_gamma() -> np.ndarray:
    return np.random.default_rng(2026).gamma(2.5, 3.0, 800)


def _generated_weibull() -> np.ndarray:
    return 4.0 * np.random.default_rng(2027).weibull(1.6, 800)


DATASETS: dict[str, Callable[[], np.ndarray]] = {
    "nile": _nile,
    "engel_income": _engel_income,
    "engel_foodexp": _engel_foodexp,
    "strikes_duration": _strikes,
    "waltons_T": _waltons,
    "generated_gamma": _generated_gamma,
    "generated_weibull": _generated_weibull,
}
SCIPY = {"gamma": stats.gamma, "weibull": stats.weibull_min}


def _scipy_params(fitted: tuple[float, float, float]) -> dict[str, float]:
    """scipy's (shape, loc, scale) as samplewright's parameter names."""
    shape, loc, scale = fitted
    return {"shape": shape, "scale": scale, "loc": loc}


# --- closed forms -------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["nile", "engel_income", "waltons_T"])
def test_normal_mle_is_mean_and_population_sd(name: str) -> None:
    """Normal MLE: mu is the mean, sigma the standard deviation with divisor n."""
    x = DATASETS[name]()
    s = sw.fit(x, method="normal")
    assert s.params["mu"] == pytest.approx(np.mean(x), rel=1e-13)  # source: closed-form MLE
    assert s.params["sigma"] == pytest.approx(np.std(x, ddof=0), rel=1e-12)  # closed-form MLE
    ref = stats.norm.fit(x)  # source: scipy.stats.norm.fit (also closed form)
    assert (s.params["mu"], s.params["sigma"]) == pytest.approx(ref, rel=1e-12)
    ll = stats.norm.logpdf(x, np.mean(x), np.std(x)).sum()  # source: scipy.stats.norm.logpdf
    assert s.loglik == pytest.approx(ll, rel=1e-12)


@pytest.mark.parametrize("name", ["nile", "engel_foodexp", "strikes_duration"])
def test_lognormal_mle_is_moments_of_the_logs(name: str) -> None:
    """Lognormal MLE: mu and sigma are the mean and sd (divisor n) of log x."""
    x = DATASETS[name]()
    s = sw.fit(x, method="lognormal")
    lx = np.log(x)
    assert s.params["mu"] == pytest.approx(lx.mean(), rel=1e-13)  # source: closed-form MLE
    assert s.params["sigma"] == pytest.approx(lx.std(ddof=0), rel=1e-12)  # closed-form MLE
    assert s.params["loc"] == 0.0
    ref_s, ref_loc, ref_scale = stats.lognorm.fit(x, floc=0)  # source: scipy.stats.lognorm.fit
    assert s.params["sigma"] == pytest.approx(ref_s, rel=1e-10)
    assert np.exp(s.params["mu"]) == pytest.approx(ref_scale, rel=1e-10)
    ll = stats.lognorm.logpdf(x, ref_s, 0, ref_scale).sum()
    assert s.loglik == pytest.approx(ll, rel=1e-10)


@pytest.mark.parametrize("name", ["strikes_duration", "waltons_T", "nile"])
def test_exponential_mle_scale_is_the_mean(name: str) -> None:
    """Exponential MLE: the scale is the sample mean; loglik is -n(1 + log mean)."""
    x = DATASETS[name]()
    s = sw.fit(x, method="exponential")
    assert s.params["scale"] == pytest.approx(x.mean(), rel=1e-13)  # source: closed-form MLE
    expected_ll = -x.size * (1.0 + np.log(x.mean()))  # source: closed-form MLE log-likelihood
    assert s.loglik == pytest.approx(expected_ll, rel=1e-12)
    _, ref_scale = stats.expon.fit(x, floc=0)  # source: scipy.stats.expon.fit
    assert s.params["scale"] == pytest.approx(ref_scale, rel=1e-12)


def test_aic_and_bic_follow_their_definitions() -> None:
    """AIC = 2k - 2 loglik and BIC = k log n - 2 loglik, loc fixed so not counted."""
    x = _waltons()
    s = sw.fit(x, method="gamma")
    k = 2  # shape and scale; loc is fixed at 0
    assert s.aic == pytest.approx(2 * k - 2 * s.loglik)  # source: Akaike (1974) definition
    assert s.bic == pytest.approx(k * np.log(x.size) - 2 * s.loglik)  # source: Schwarz (1978)


# --- gamma and weibull against scipy.stats.<dist>.fit(floc=0) -----------------------------


@pytest.mark.parametrize("family", ["gamma", "weibull"])
@pytest.mark.parametrize("name", list(DATASETS))
def test_fit_is_at_least_as_likely_as_scipy(family: str, name: str) -> None:
    """gamma/weibull with loc 0: loglik >= scipy's (1e-7 relative) and parameters close."""
    x = DATASETS[name]()
    s = sw.fit(x, method=family)
    dist = SCIPY[family]
    ref = _scipy_params(dist.fit(x, floc=0))  # source: scipy.stats.<dist>.fit(floc=0)
    ref_ll = dist.logpdf(x, ref["shape"], 0.0, ref["scale"]).sum()
    assert s.loglik >= ref_ll - LL_RTOL * abs(ref_ll)
    assert s.params["loc"] == 0.0
    assert s.params["shape"] == pytest.approx(ref["shape"], rel=1e-4)
    assert s.params["scale"] == pytest.approx(ref["scale"], rel=1e-4)
    # the stored loglik is the log-likelihood of the stored parameters
    own = dist.logpdf(x, s.params["shape"], 0.0, s.params["scale"]).sum()
    assert s.loglik == pytest.approx(own, rel=1e-12)


@pytest.mark.parametrize("family", ["gamma", "weibull"])
def test_fit_is_a_stationary_point(family: str) -> None:
    """Moving either parameter by 0.1% lowers the Waltons log-likelihood (a local maximum)."""
    x = _waltons()
    s = sw.fit(x, method=family)
    dist = SCIPY[family]
    k, theta = s.params["shape"], s.params["scale"]
    best = dist.logpdf(x, k, 0.0, theta).sum()
    for dk, dt in ((1.001, 1), (0.999, 1), (1, 1.001), (1, 0.999)):
        assert dist.logpdf(x, k * dk, 0.0, theta * dt).sum() < best  # definition of a maximum


def test_gamma_generated_data_recover_true_parameters() -> None:
    """On 800 gamma(2.5, 3) draws the fit lands near the truth (large-sample consistency)."""
    s = sw.fit(_generated_gamma(), method="gamma")
    assert s.params["shape"] == pytest.approx(2.5, rel=0.15)  # common practice, no source
    assert s.params["scale"] == pytest.approx(3.0, rel=0.15)  # common practice, no source


# --- weights ------------------------------------------------------------------------------


@pytest.mark.parametrize("family", ["normal", "lognormal", "exponential", "gamma", "weibull"])
def test_integer_weights_equal_repeated_observations(family: str) -> None:
    """Frequency weights give the same fit as repeating each value that many times."""
    x = _nile()[:40]
    w = np.random.default_rng(5).integers(1, 5, x.size)
    weighted = sw.fit(x, method=family, weights=w.astype(float))
    repeated = sw.fit(np.repeat(x, w), method=family)  # definition of frequency weights
    for key, value in repeated.params.items():
        assert weighted.params[key] == pytest.approx(value, rel=1e-9, abs=1e-12)
    assert weighted.loglik == pytest.approx(repeated.loglik, rel=1e-9)
    assert weighted.bic == pytest.approx(repeated.bic, rel=1e-9)


# --- the loc option ------------------------------------------------------------------------


@pytest.mark.parametrize("family", ["gamma", "weibull"])
def test_loc_option_matches_scipy_with_that_floc(family: str) -> None:
    """loc=<number> fits the shifted data: it agrees with scipy's fit(..., floc=<number>)."""
    x = _nile()
    loc = 400.0
    s = sw.fit(x, method=family, loc=loc)
    dist = SCIPY[family]
    ref = _scipy_params(dist.fit(x, floc=loc))  # source: scipy.stats.<dist>.fit(floc)
    ref_ll = dist.logpdf(x, ref["shape"], loc, ref["scale"]).sum()
    assert s.params["loc"] == loc
    assert s.loglik >= ref_ll - LL_RTOL * abs(ref_ll)
    assert s.params["shape"] == pytest.approx(ref["shape"], rel=1e-4)
    assert s.cdf(loc) == 0.0 and s.support[0] == loc


def test_loc_option_for_lognormal_and_exponential() -> None:
    """lognormal and exponential with loc use the closed forms on x - loc."""
    x = _strikes()
    ln = sw.fit(x, method="lognormal", loc=0.5)
    assert ln.params["mu"] == pytest.approx(np.log(x - 0.5).mean())  # source: closed-form MLE
    ex = sw.fit(x, method="exponential", loc=1.0)
    assert ex.params["scale"] == pytest.approx((x - 1.0).mean())  # source: closed-form MLE


@pytest.mark.parametrize("family", ["gamma", "weibull", "lognormal"])
@pytest.mark.parametrize("loc", [1.0, 2.0])
def test_values_at_or_below_loc_are_refused(family: str, loc: float) -> None:
    """A value equal to or below loc (here the minimum 1) is a MethodError naming the location."""
    x = _strikes()  # minimum duration 1 day
    assert x.min() == 1.0
    with pytest.raises(MethodError, match=f"{family} needs every value > {loc:g}"):
        sw.fit(x, method=family, loc=loc)


def test_exponential_refuses_values_below_loc() -> None:
    """Exponential allows values equal to loc (density is positive there) but not below."""
    x = _strikes()
    assert sw.fit(x, method="exponential", loc=1.0).params["loc"] == 1.0
    with pytest.raises(MethodError, match="exponential needs every value >= 2"):
        sw.fit(x, method="exponential", loc=2.0)


@pytest.mark.parametrize("family", ["gamma", "weibull", "lognormal", "exponential"])
def test_default_loc_refuses_non_positive_values(family: str) -> None:
    """With loc left at 0, a negative value is refused."""
    with pytest.raises(MethodError, match="needs every value"):
        sw.fit(np.array([-1.0, 2.0, 3.0]), method=family)


def test_loc_must_be_a_number() -> None:
    """loc given as text is refused with a MethodError naming the option."""
    with pytest.raises(MethodError, match="loc"):
        sw.fit(_strikes(), method="gamma", loc="zero")


@pytest.mark.parametrize(
    ("family", "n"), [("gamma", 1), ("weibull", 1), ("normal", 1), ("lognormal", 1)]
)
def test_too_few_values_are_refused(family: str, n: int) -> None:
    """A two-parameter family needs at least two values."""
    with pytest.raises(MethodError, match=f"{family} needs at least 2 values, found {n}"):
        sw.fit(np.array([3.0] * n), method=family)


def test_constant_data_cannot_be_fitted() -> None:
    """All-equal data have no spread: gamma refuses them with a MethodError."""
    with pytest.raises(MethodError, match="all 5 values equal"):
        sw.fit(np.full(5, 2.0), method="gamma")
