"""Parameter and model uncertainty against outside sources.

Sources: Burnham & Anderson (2002), *Model Selection and Multimodel Inference*, 2nd ed., section
2.9 (Akaike weights) with scipy's own fits; the closed-form sampling variance of the lognormal
``mu`` estimate (the mean of ``n`` normal log-values, ``sigma^2 / n``); the exponential's
censored-data information ``d / theta^2`` (d = expected number of events, a standard result,
from memory); ``scipy.stats.bootstrap`` (1.17) and samplewright's own ``bootstrap_interval``
on the same resamples.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from samplewright.distributions.ensemble import EnsembleSampler
from samplewright.fitting.averaged import fit_averaged
from samplewright.fitting.replicates import fit_replicates
from samplewright.resample.intervals import bootstrap_interval

# invented repair durations (hours) and daily claim amounts
REPAIRS = np.random.default_rng(2024).lognormal(1.5, 0.55, 50)
CLAIMS = np.random.default_rng(7).gamma(1.8, 2.5, 150)


def test_akaike_weights_match_a_hand_computation_from_scipy_fits() -> None:
    """fit_averaged's weights equal exp(-delta/2)/sum from scipy's own MLE log-likelihoods."""
    fams = {
        "lognormal": stats.lognorm,
        "gamma": stats.gamma,
        "weibull": stats.weibull_min,
    }
    aic = {}
    for name, dist in fams.items():
        shape, loc, scale = dist.fit(CLAIMS, floc=0)
        ll = float(np.sum(dist.logpdf(CLAIMS, shape, loc=loc, scale=scale)))
        aic[name] = 2 * 2 - 2 * ll  # two estimated parameters, loc fixed at 0
    delta = {k: v - min(aic.values()) for k, v in aic.items()}
    total = sum(math.exp(-d / 2) for d in delta.values())
    # source: Burnham & Anderson (2002), section 2.9: w_i = exp(-delta_i/2) / sum_r exp(-delta_r/2)
    expected = [math.exp(-delta[k] / 2) / total for k in fams]
    s = fit_averaged(CLAIMS, candidates=list(fams))
    assert s.params["labels"] == list(fams)
    np.testing.assert_allclose(s.params["weights"], expected, rtol=1e-5, atol=1e-9)


def test_parametric_spread_of_lognormal_mu_is_sigma_over_root_n() -> None:
    """Parametric replicates' sd of mu equals sigma/sqrt(n) within Monte Carlo error."""
    ens = fit_replicates(REPAIRS, "lognormal", n_replicates=1000, kind="parametric", rng=31)
    mu = ens.payload()["mu"]
    sigma = ens.point.params["sigma"]
    # source: closed form, the MLE of mu is the mean of n normal log-values: sd = sigma/sqrt(n);
    # the sd of 1,000 replicates has relative MC error 1/sqrt(2 * 999) = 2.2%: allow 3.2 of it
    assert np.std(mu, ddof=1) == pytest.approx(sigma / math.sqrt(REPAIRS.size), rel=0.07)
    # and the replicates centre on the point estimate: mean within 4 MC standard errors
    assert abs(mu.mean() - ens.point.params["mu"]) < 4 * sigma / math.sqrt(50 * 1000)


def test_parametric_censoring_is_reproduced_at_the_observed_times() -> None:
    """Exponential with censoring: replicate sd of the scale is theta / sqrt(expected events)."""
    rng = np.random.default_rng(5)
    life, limit = rng.exponential(4.0, 300), rng.uniform(0.0, 6.0, 300)
    x, censored = np.minimum(life, limit), life > limit
    ens = fit_replicates(
        x, "exponential", censored=censored, n_replicates=800, kind="parametric", rng=6
    )
    theta = ens.point.params["scale"]
    # rows observed exactly stay uncensored; a row censored at c is an event with P(Y <= c)
    events = np.count_nonzero(~censored) + np.sum(1 - np.exp(-x[censored] / theta))
    # source: censored exponential, Fisher information d / theta^2 (from memory); relative MC
    # error of the sd of 800 replicates 2.5%, plus the asymptotic approximation: allow 8%
    sd = np.std(ens.payload()["scale"], ddof=1)
    assert sd == pytest.approx(theta / math.sqrt(events), rel=0.08)
    # ignoring the censoring would give theta / sqrt(300), about 20% smaller: far outside
    assert sd > 1.1 * theta / math.sqrt(x.size)


def test_nonparametric_mean_spread_equals_the_bootstrap_standard_error() -> None:
    """Replicate means of 'empirical' are bootstrap_interval's and scipy's distribution."""
    ens = fit_replicates(REPAIRS, "empirical", n_replicates=999, rng=17)
    means = np.array([ens.replicate(i).mean for i in range(999)])
    ours = bootstrap_interval(REPAIRS, "mean", method="percentile", n_resamples=999, rng=17)
    ref = stats.bootstrap(
        (REPAIRS,), np.mean, method="percentile", n_resamples=999, rng=np.random.default_rng(17)
    )
    # source: scipy.stats.bootstrap draws rng.integers(0, n, (999, n)), the same resamples
    np.testing.assert_allclose(means, ours.bootstrap_distribution, rtol=1e-12)
    assert np.std(means, ddof=1) == pytest.approx(ref.standard_error, rel=1e-12)


def test_draw_nested_rows_each_come_from_one_replicate() -> None:
    """(n_outer, n_inner) draws; every row's values are values of a single replicate."""
    ens = fit_replicates(REPAIRS[:12], "empirical", n_replicates=40, rng=3)
    rows = ens.draw_nested(25, 30, rng=np.random.default_rng(4))
    assert rows.shape == (25, 30)
    sets = [set(ens.replicate(i).values.tolist()) for i in range(40)]
    for row in rows:
        assert any(set(row.tolist()) <= s for s in sets)
    # with random outer picks the rows' own sets differ (several worlds are used)
    assert len({frozenset(r.tolist()) for r in rows}) > 1


@pytest.mark.parametrize("method", ["gamma", "smoothed"])
def test_round_trip_and_seed_reproduce_the_same_draws(method: str) -> None:
    """payload + describe rebuild identical draws; the same rng gives the same ensemble."""
    a = fit_replicates(CLAIMS, method, n_replicates=15, rng=np.random.default_rng(99))
    b = fit_replicates(CLAIMS, method, n_replicates=15, rng=99)
    for k, col in a.payload().items():
        np.testing.assert_array_equal(col, b.payload()[k])
    back = EnsembleSampler.from_payload(a.payload(), a.describe())
    assert back.describe() == a.describe()
    np.testing.assert_array_equal(back.draw(500, rng=1), a.draw(500, rng=1))
    np.testing.assert_array_equal(back.draw_nested(4, 6, rng=2), a.draw_nested(4, 6, rng=2))
    other = fit_replicates(CLAIMS, method, n_replicates=15, rng=100)
    assert not np.array_equal(other.draw(50, rng=1), a.draw(50, rng=1))
