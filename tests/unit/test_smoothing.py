"""Tests of the kernel-smoothed method (sampler and fit), with outside reference checks.

Reference sources: scipy.stats.gaussian_kde (mixture CDF and density, its bandwidth factors),
statsmodels.nonparametric.bandwidths (Silverman's rule), Silverman (1986, eq. 3.31) and Scott
(1992) for the rules' constants. Data: Engel's household incomes (statsmodels.datasets.engel)
and the progesterone receptor values of the GBSG2 study (lifelines.datasets.load_gbsg2), which
contain zeros.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import integrate, stats

import samplewright as sw
from samplewright.core.errors import MethodError
from samplewright.distributions.smoothed import SmoothedSampler
from samplewright.fitting import smoothed
from samplewright.fitting.catalog import CATALOG
from samplewright.fitting.registry import load_object
from samplewright.fitting.smoothed import bandwidth, fit_smoothed
from samplewright.store.artifacts import load_sampler, write_sampler


@pytest.fixture(scope="module")
def income() -> np.ndarray:
    """Engel's 235 household incomes, shipped with statsmodels."""
    from statsmodels.datasets import engel

    return engel.load_pandas().data["income"].to_numpy(dtype=np.float64)


@pytest.fixture(scope="module")
def progrec() -> np.ndarray:
    """GBSG2 progesterone receptor values (686, some exactly 0), shipped with lifelines."""
    from lifelines.datasets import load_gbsg2

    return load_gbsg2()["progrec"].to_numpy(dtype=np.float64)


def _kde(centres: np.ndarray, h: float, weights: np.ndarray | None = None) -> stats.gaussian_kde:
    """scipy's KDE with kernel sd ``h``: its factor multiplies the data's (weighted) sd."""
    probe = stats.gaussian_kde(centres, weights=weights)
    data_sd = float(np.sqrt(probe.covariance[0, 0])) / probe.factor
    return stats.gaussian_kde(centres, bw_method=h / data_sd, weights=weights)


def test_smoothed_is_registered_and_reached_through_fit(income: np.ndarray) -> None:
    """The catalog names the fitter in samplewright.fitting.smoothed; sw.fit reaches it."""
    assert load_object(CATALOG["smoothed"].fitter) is smoothed.fit_sample
    s = sw.fit(income, method="smoothed", positive="none")
    assert isinstance(s, SmoothedSampler) and s.params["positive"] == "none"


def test_silverman_bandwidth_equals_the_formula_on_both_branches() -> None:
    """h = 0.9 min(sd, IQR/1.34) n^(-1/5), whichever of sd and IQR/1.34 is smaller."""
    rng = np.random.default_rng(3)
    heavy = rng.standard_t(2.0, 500)  # IQR/1.34 < sd
    split = np.concatenate([rng.normal(-5, 1, 250), rng.normal(5, 1, 250)])  # sd < IQR/1.34
    for x, branch in ((heavy, "iqr"), (split, "sd")):
        sd = np.std(x, ddof=1)
        iqr = np.subtract(*np.percentile(x, [75, 25]))
        assert (iqr / 1.34 < sd) == (branch == "iqr")
        # source: Silverman (1986), Density Estimation, eq. 3.31
        assert bandwidth(x) == pytest.approx(0.9 * min(sd, iqr / 1.34) * x.size**-0.2, rel=1e-14)


def test_silverman_bandwidth_matches_statsmodels_up_to_its_iqr_constant(
    income: np.ndarray,
) -> None:
    """statsmodels' bw_silverman agrees, after its IQR divisor 1.349 (ours 1.34) is undone."""
    from statsmodels.nonparametric.bandwidths import bw_silverman

    for x in (income, np.log(income)):
        sd = np.std(x, ddof=1)
        iqr = np.subtract(*np.percentile(x, [75, 25]))
        theirs = float(bw_silverman(x))  # source: statsmodels.nonparametric.bandwidths
        factor = 1.349 / 1.34 if iqr / 1.349 < sd else 1.0
        assert bandwidth(x) == pytest.approx(theirs * factor, rel=1e-12)


def test_scott_bandwidth_and_scipy_factor_names(income: np.ndarray) -> None:
    """scott is 1.06 sd n^(-1/5); scipy's 'silverman' factor is the exact (4/3)^(1/5) version."""
    n, sd = income.size, np.std(income, ddof=1)
    # source: Scott (1992), Multivariate Density Estimation, normal reference rule
    assert bandwidth(income, rule="scott") == pytest.approx(1.06 * sd * n**-0.2, rel=1e-14)
    # source: scipy.stats.gaussian_kde docs, silverman_factor = (n (d + 2) / 4)^(-1 / (d + 4))
    kde = stats.gaussian_kde(income, bw_method="silverman")
    assert bandwidth(income, rule="scott") / (kde.factor * sd) == pytest.approx(
        1.06 / (4.0 / 3.0) ** 0.2, rel=1e-12
    )


@pytest.mark.parametrize("positive", ["none", "log"])
def test_cdf_and_pdf_equal_scipy_gaussian_kde(income: np.ndarray, positive: str) -> None:
    """The mixture CDF and density equal gaussian_kde's with the same kernel sd."""
    s = fit_smoothed(income, positive=positive)
    # the default log kernels are centred at log x - h^2/2 (module docstring)
    centres = np.log(income) + s.params["log_shift"] if positive == "log" else income
    kde = _kde(centres, s.bandwidth)  # source: scipy.stats.gaussian_kde
    x = np.quantile(income, [0.01, 0.2, 0.5, 0.8, 0.99]) * np.array([0.7, 1, 1, 1, 1.5])
    t = np.log(x) if positive == "log" else x
    jac = 1.0 / x if positive == "log" else 1.0
    ref_pdf = kde(t) * jac
    # kernels beyond 9 bandwidths are skipped (module docstring): absolute slack 1e-15 of the peak
    np.testing.assert_allclose(s.pdf(x), ref_pdf, rtol=1e-10, atol=1e-15 * ref_pdf.max())
    ref = [kde.integrate_box_1d(-np.inf, v) for v in t]
    np.testing.assert_allclose(s.cdf(x), ref, rtol=1e-10, atol=1e-14)


def test_weighted_mixture_equals_weighted_gaussian_kde(income: np.ndarray) -> None:
    """With weights, the mixture uses the normalised weights, as gaussian_kde(weights=...)."""
    w = np.random.default_rng(9).uniform(0.2, 3.0, income.size)
    s = fit_smoothed(income, w, positive="none", bandwidth=90.0)
    kde = _kde(income, 90.0, w)  # source: scipy.stats.gaussian_kde with weights
    x = np.array([300.0, 700.0, 1000.0, 2500.0])
    np.testing.assert_allclose(s.pdf(x), kde(x), rtol=1e-10)
    np.testing.assert_allclose(s.cdf(x), [kde.integrate_box_1d(-np.inf, v) for v in x], rtol=1e-10)


def test_integer_weights_give_the_same_sampler_as_repeated_rows(income: np.ndarray) -> None:
    """Frequency weights: the bandwidth and CDF equal those of the data with rows repeated."""
    w = np.random.default_rng(4).integers(1, 5, income.size)
    a = fit_smoothed(income, w.astype(float))
    b = fit_smoothed(np.repeat(income, w))
    assert a.bandwidth == pytest.approx(b.bandwidth, rel=1e-12)
    x = np.array([400.0, 900.0, 2000.0])
    np.testing.assert_allclose(a.cdf(x), b.cdf(x), rtol=1e-12)


def test_auto_picks_log_reflect_or_none_by_the_sign_of_the_data(
    income: np.ndarray, progrec: np.ndarray
) -> None:
    """auto: log for positive data, reflect when zeros occur, none when negatives occur."""
    assert fit_smoothed(income).params["positive"] == "log"
    assert progrec.min() == 0.0 and fit_smoothed(progrec).params["positive"] == "reflect"
    assert fit_smoothed(income - 500.0).params["positive"] == "none"


def test_positive_data_never_give_negative_draws(income: np.ndarray, progrec: np.ndarray) -> None:
    """Log smoothing draws stay > 0 and reflected draws >= 0 over a million draws."""
    assert fit_smoothed(income).draw(1_000_000, rng=1).min() > 0.0
    reflected = fit_smoothed(progrec, bandwidth="scott")
    assert reflected.draw(1_000_000, rng=2).min() >= 0.0
    plain = fit_smoothed(progrec, positive="none")
    assert plain.draw(100_000, rng=2).min() < 0.0  # the check above can fail


def test_reflection_keeps_all_mass_at_or_above_zero(progrec: np.ndarray) -> None:
    """A reflected kernel has CDF 0 at 0 and a density integrating to 1 over [0, inf)."""
    s = fit_smoothed(progrec, positive="reflect")
    assert float(s.cdf(0.0)) == 0.0 and float(s.cdf(-5.0)) == 0.0 and s.support == (0.0, np.inf)
    edges = np.concatenate([[0.0], np.unique(progrec)[1::40], [np.inf]])  # progrec[0] is 0
    total = sum(
        integrate.quad(lambda v: float(s.pdf(v)), a, b, limit=200)[0]
        for a, b in zip(edges[:-1], edges[1:], strict=True)
    )
    assert total == pytest.approx(1.0, abs=1e-8)
    # common practice, no source: density at 0 doubles the unreflected kernel sum there
    plain = SmoothedSampler(progrec, bandwidth=s.bandwidth, positive="none")
    assert float(s.pdf(0.0)) == pytest.approx(2.0 * float(plain.pdf(0.0)), rel=1e-12)


@pytest.mark.parametrize("positive", ["none", "log", "reflect"])
def test_quantile_inverts_the_cdf_to_1e10(progrec: np.ndarray, positive: str) -> None:
    """cdf(quantile(u)) returns u within 1e-10, from 1e-12 to 1 - 1e-12, in the input's shape."""
    x = progrec[progrec > 0] if positive == "log" else progrec
    s = fit_smoothed(x, positive=positive)
    u = np.concatenate([[1e-12, 1e-8], np.linspace(0.001, 0.999, 998), [1 - 1e-8, 1 - 1e-12]])
    q = s.quantile(u.reshape(3, -1))
    assert q.shape == (3, 334)
    np.testing.assert_allclose(s.cdf(q).ravel(), u, rtol=0, atol=1e-10)
    lo, hi = s.support
    assert float(s.quantile(0.0)) == lo and float(s.quantile(1.0)) == hi


@pytest.mark.parametrize("positive", ["none", "log", "reflect"])
def test_mean_and_var_equal_integrals_of_the_density(positive: str) -> None:
    """The exact mixture moments equal numerical integrals of x f(x) and x^2 f(x)."""
    rng = np.random.default_rng(12)
    x = rng.gamma(1.5, 2.0, 80)
    w = rng.uniform(0.5, 2.0, x.size)
    s = fit_smoothed(x, w, positive=positive)
    lo = s.support[0] if positive != "none" else -np.inf
    kw = {"limit": 400, "epsabs": 1e-12, "epsrel": 1e-11}
    m = integrate.quad(lambda v: v * float(s.pdf(v)), lo, np.inf, **kw)[0]
    m2 = integrate.quad(lambda v: v * v * float(s.pdf(v)), lo, np.inf, **kw)[0]
    assert s.mean == pytest.approx(m, rel=1e-8)
    assert s.var == pytest.approx(m2 - m * m, rel=1e-7)


def test_draws_follow_the_cdf(income: np.ndarray) -> None:
    """The fast draw path (index plus noise) has the distribution given by cdf."""
    w = np.random.default_rng(6).uniform(0.5, 2.0, income.size)
    for s in (fit_smoothed(income), fit_smoothed(income, w, positive="none")):
        d = s.draw(200_000, rng=3)
        pts = s.quantile([0.05, 0.3, 0.6, 0.9, 0.99])
        p = s.cdf(pts)
        # common practice, no source: binomial standard error, 5 sigma
        assert np.all(
            np.abs([np.mean(d <= v) for v in pts] - p) < 5 * np.sqrt(p * (1 - p) / d.size)
        )
    np.testing.assert_array_equal(s.draw(10, rng=7), s.draw(10, rng=7))


def test_round_trip_keeps_cdf_and_quantile_identical(income: np.ndarray, tmp_path: Path) -> None:
    """Writing and loading an artifact rebuilds the same CDF and quantile, bit for bit."""
    w = np.random.default_rng(1).uniform(0.5, 2.0, income.size)
    u = np.linspace(0.0, 1.0, 101)
    x = np.linspace(-100.0, 5000.0, 101)
    for i, s in enumerate([fit_smoothed(income), fit_smoothed(income, w, positive="reflect")]):
        meta = write_sampler(s, tmp_path / f"s{i}.parquet")
        t = load_sampler(tmp_path / f"s{i}.parquet")
        assert isinstance(t, SmoothedSampler) and t.params == s.params
        np.testing.assert_array_equal(t.cdf(x), s.cdf(x))
        np.testing.assert_array_equal(t.quantile(u), s.quantile(u))
        again = write_sampler(t, tmp_path / f"r{i}.parquet")
        assert again["content_hash"] == meta["content_hash"]


@pytest.mark.parametrize(
    ("values", "options", "message"),
    [
        ([1.0, 2.0, 3.0], {"kernel": "epanechnikov"}, "unknown option 'kernel' for smoothed"),
        ([1.0, 2.0, 3.0], {"positive": "yes"}, "option 'positive' of smoothed: expected one of"),
        ([1.0, 2.0, 3.0], {"bandwidth": -1.0}, "option 'bandwidth' of smoothed: expected a posit"),
        ([1.0, 2.0, 3.0], {"bandwidth": True}, "option 'bandwidth' of smoothed: expected a posit"),
        ([1.0, 2.0, 3.0], {"bandwidth": "isj"}, "option 'bandwidth' of smoothed: expected a posit"),
        ([0.0, 2.0, 3.0], {"positive": "log"}, "'log' needs every value > 0, smallest is 0.0"),
        ([-1.0, 2.0, 3.0], {"positive": "reflect"}, "'reflect' needs every value >= 0"),
        ([2.0, 2.0, 2.0], {}, "all values equal 2.0, so rule 'silverman' gives 0"),
        ([2.0], {"positive": "none"}, "needs a total weight of at least 2, found 1"),
        ([1.0, 2.0, 3.0], {"log_centre": "mode"}, "option 'log_centre' of smoothed: expected one"),
    ],
)
def test_bad_input_raises_one_line_method_errors(
    values: list[float], options: dict, message: str
) -> None:
    """Each bad option or unusable data stops with a MethodError naming the option."""
    with pytest.raises(MethodError, match=message):
        fit_smoothed(np.array(values), **options)


def test_censored_data_are_refused_and_fixed_bandwidth_needs_one_value() -> None:
    """Censored values raise MethodError; a numeric bandwidth works even for a single value."""
    with pytest.raises(MethodError, match="'smoothed' does not handle censored data"):
        sw.fit([1.0, 2.0, 3.0], method="smoothed", censored=[False, True, False])
    s = fit_smoothed([4.0], positive="none", bandwidth=1.0)
    assert s.mean == 4.0 and s.var == 1.0 and float(s.cdf(4.0)) == 0.5


def test_log_centre_is_recorded_and_survives_an_artifact_round_trip(
    income: np.ndarray, tmp_path: Path
) -> None:
    """The log-scale shift is a parameter: -h^2/2 by default, 0 for 'median', kept on reload."""
    kept = fit_smoothed(income)
    old = fit_smoothed(income, log_centre="median")
    h = kept.bandwidth
    assert kept.params["log_shift"] == -0.5 * h * h and old.params["log_shift"] == 0.0
    # source: the sample mean of Engel's incomes (statsmodels.datasets.engel)
    assert kept.mean == pytest.approx(float(np.mean(income)), rel=1e-13)
    for i, s in enumerate((kept, old)):
        write_sampler(s, tmp_path / f"c{i}.parquet")
        t = load_sampler(tmp_path / f"c{i}.parquet")
        assert t.params == s.params and t.mean == s.mean
    plain = fit_smoothed(income, positive="none", log_centre="median")
    assert plain.params["log_shift"] == 0.0  # the option only acts on the log scale
    with pytest.raises(MethodError, match="log_shift: expected 0 unless positive is 'log'"):
        SmoothedSampler(income, bandwidth=1.0, positive="none", log_shift=-0.1)
