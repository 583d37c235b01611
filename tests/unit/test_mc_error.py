"""Monte Carlo error: standard errors against known formulas, interval coverage, input checks."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from samplewright.check.mc_error import mc_error
from samplewright.core.errors import InputDataError, MethodError
from samplewright.resample.statistics import parse_statistic


def test_mean_error_is_s_over_root_n() -> None:
    """Mean: SE = s / sqrt(n) and a normal interval (central limit theorem)."""
    x = np.random.default_rng(0).exponential(2.0, 5000)
    r = mc_error(x, "mean", confidence_level=0.9)
    se = x.std(ddof=1) / np.sqrt(x.size)
    assert r.standard_error == pytest.approx(se, rel=1e-12)
    z = stats.norm.ppf(0.95)
    assert (r.low, r.high) == pytest.approx((x.mean() - z * se, x.mean() + z * se))
    assert r.n_draws == 5000 and r.n_draws_needed is None and r.statistic == "mean"


def test_std_error_matches_the_normal_formula() -> None:
    """std of normal draws: delta-method SE close to sigma / sqrt(2 n)."""
    # source: Var(s) ~ sigma^2 / (2n) for normal samples (textbook large-sample result)
    x = np.random.default_rng(1).normal(0.0, 3.0, 200_000)
    r = mc_error(x, "std")
    assert r.estimate == pytest.approx(x.std())
    assert r.standard_error == pytest.approx(3.0 / np.sqrt(2 * x.size), rel=0.02)


def test_std_error_is_right_by_simulation() -> None:
    """std of skewed draws: the SE matches the spread of the estimate over repetitions."""
    rng = np.random.default_rng(2)
    reps = rng.gamma(2.0, size=(2000, 2000))
    spread = reps.std(axis=1).std(ddof=1)
    se = np.median([mc_error(row, "std").standard_error for row in reps[:50]])
    assert se == pytest.approx(spread, rel=0.08)  # MC error of the spread ~1/sqrt(2*2000) = 1.6%


def test_quantile_interval_covers_as_the_binomial_says() -> None:
    """Order-statistic intervals cover at least 95%, as exactly as the binomial predicts."""
    rng = np.random.default_rng(3)
    n, p, reps = 400, 0.9, 4000
    samples = [(rng.uniform(size=(reps, n)), p), (rng.standard_cauchy(size=(reps, n)), None)]
    hits = 0
    ranks = set()
    for draws, true_q in samples:
        true_q = stats.cauchy.ppf(p) if true_q is None else true_q
        srt = np.sort(draws, axis=1)
        for row, row_sorted in zip(draws[:100], srt[:100], strict=True):
            r = mc_error(row, f"quantile:{p}")
            # 0-based ranks of the ends: the same for every sample of this size
            ranks.add(
                (int(np.searchsorted(row_sorted, r.low)), int(np.searchsorted(row_sorted, r.high)))
            )
        lo, hi = next(iter(ranks))
        hits += int(np.sum((srt[:, lo] <= true_q) & (true_q <= srt[:, hi])))
    assert len(ranks) == 1
    lo, hi = ranks.pop()
    # source: P(X_(l) <= q_p <= X_(u)) = P(l <= Binomial(n, p) <= u - 1), 1-based l, u
    exact = stats.binom.cdf(hi, n, p) - stats.binom.cdf(lo, n, p)
    assert exact >= 0.95
    sd = np.sqrt(exact * (1 - exact) / (2 * reps))
    assert abs(hits / (2 * reps) - exact) < 4 * sd


def test_quantile_error_matches_the_density_formula() -> None:
    """The SE from the interval is close to sqrt(p(1-p)/n) / f(q) on normal draws."""
    x = np.random.default_rng(4).normal(size=100_000)
    r = mc_error(x, "quantile:0.95")
    q = stats.norm.ppf(0.95)
    want = np.sqrt(0.95 * 0.05 / x.size) / stats.norm.pdf(q)
    assert r.estimate == np.quantile(x, 0.95, method="inverted_cdf")
    assert r.standard_error == pytest.approx(want, rel=0.1)


def test_tail_mean_error_matches_the_asymptotic_variance() -> None:
    """Expected shortfall of normal draws: SE from the known asymptotic variance."""
    # source: Var(ES_hat) ~ (Var(X | X > q) + p (ES - q)^2) / (n (1 - p)), the standard
    # influence-function result for expected shortfall; standard normal tail moments exact
    p, n = 0.99, 400_000
    q = stats.norm.ppf(p)
    es = stats.norm.pdf(q) / (1 - p)
    var_tail = 1 + q * es - es**2
    want = np.sqrt((var_tail + p * (es - q) ** 2) / (n * (1 - p)))
    x = np.random.default_rng(5).normal(size=n)
    r = mc_error(x, f"tail_mean:{p}")
    assert r.estimate == pytest.approx(es, abs=4 * want)
    assert r.standard_error == pytest.approx(want, rel=0.05)


def test_tail_mean_error_is_right_by_simulation() -> None:
    """Expected shortfall: the SE matches the spread of the estimate over repetitions."""
    reps = np.random.default_rng(6).lognormal(size=(400, 20_000))
    estimates = parse_statistic("tail_mean:0.95")(reps)
    se = np.median([mc_error(row, "tail_mean:0.95").standard_error for row in reps[:40]])
    assert se == pytest.approx(estimates.std(ddof=1), rel=0.15)  # spread known to ~3.5%


def test_exceedance_uses_the_exact_binomial_interval() -> None:
    """Exceedance: binomial SE and the Clopper-Pearson interval of scipy's binomtest."""
    x = np.random.default_rng(7).normal(size=1000)
    r = mc_error(x, "exceedance:1.5")
    k = int(np.sum(x > 1.5))
    ci = stats.binomtest(k, 1000).proportion_ci(0.95, method="exact")
    assert r.estimate == k / 1000
    assert (r.low, r.high) == pytest.approx((ci.low, ci.high), rel=1e-10)
    assert r.standard_error == pytest.approx(np.sqrt(k / 1000 * (1 - k / 1000) / 1000))
    none = mc_error(x, "exceedance:100")
    assert (none.estimate, none.low) == (0.0, 0.0) and 0 < none.high < 0.004


def test_draws_needed_scale_with_the_squared_ratio() -> None:
    """n_draws_needed = n (se / (target |estimate|))^2, rounded up."""
    x = np.random.default_rng(8).normal(5.0, 1.0, 4000)
    r = mc_error(x, "mean", target_relative_error=0.001)
    assert r.n_draws_needed == int(np.ceil(4000 * (r.standard_error / (0.001 * r.estimate)) ** 2))
    assert r.n_draws_needed > 4000 > mc_error(x, "mean", target_relative_error=0.1).n_draws_needed


@pytest.mark.parametrize(
    ("args", "kwargs", "error", "word"),
    [
        (("quantile:0.999",), {}, MethodError, "draws: 1000 draws are too few"),
        (("quantile:1",), {}, MethodError, "statistic"),
        (("tail_mean:0.999",), {}, MethodError, "draws: tail_mean"),
        (("median",), {}, MethodError, "statistic"),
        (("mean",), {"confidence_level": 0.0}, MethodError, "confidence_level"),
        (("mean",), {"target_relative_error": -1.0}, MethodError, "target_relative_error"),
        (("exceedance:99",), {"target_relative_error": 0.1}, MethodError, "target_relative"),
    ],
)
def test_bad_requests_raise_clear_errors(args: tuple, kwargs: dict, error: type, word: str) -> None:
    """Too few draws for the statistic, bad names or options: one-line errors naming them."""
    x = np.random.default_rng(9).normal(size=1000)
    with pytest.raises(error, match=word):
        mc_error(x, *args, **kwargs)
    with pytest.raises(InputDataError, match="^draws"):
        mc_error([1.0, np.nan], "mean")
