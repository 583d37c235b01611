"""Bootstrap intervals, block lengths and block schemes against scipy, arch, theory and a textbook.

Sources: scipy.stats.bootstrap (1.17), arch.bootstrap (IIDBootstrap.conf_int,
optimal_block_length), Efron & Tibshirani (1993) *An Introduction to the Bootstrap* (law school
and mouse data), the long-run variance of an AR(1) process, statsmodels' and arch's bundled
datasets.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
from arch.bootstrap import IIDBootstrap
from arch.bootstrap import optimal_block_length as arch_block_length
from scipy import stats
from scipy.signal import lfilter

from samplewright.resample.block_length import optimal_block_length
from samplewright.resample.intervals import (
    IntervalMethod,
    bootstrap_interval,
    interval_from_distribution,
)

METHODS = ("percentile", "basic", "bca")

# source: Efron & Tibshirani (1993), Table 3.1, the 15 law schools (LSAT, GPA) -- from memory;
# they give the correlation 0.776, which these numbers reproduce (0.7764)
LSAT = np.array([576, 635, 558, 578, 666, 580, 555, 661, 651, 605, 653, 575, 545, 572, 594.0])
GPA = np.array(
    [3.39, 3.30, 2.81, 3.03, 3.44, 3.07, 3.00, 3.43, 3.36, 3.13, 3.12, 2.74, 2.76, 2.88, 2.96]
)
# source: Efron & Tibshirani (1993), Table 2.1, mouse survival data, treatment group -- from
# memory; they print mean 86.86 and standard error 25.24, which these numbers reproduce
MOUSE_TREATMENT = np.array([94, 197, 16, 38, 99, 141, 23.0])
# invented: 20 distinct repair durations (hours) with how often each was logged (20 to 60 times)
DURATIONS = np.round(np.random.default_rng(20).gamma(3.0, 1.2, 20), 2)
TIMES_LOGGED = np.random.default_rng(21).integers(20, 61, 20).astype(float)


def _f_quantile_90(sample: np.ndarray, axis: int = -1) -> np.ndarray:
    return np.quantile(sample, 0.9, axis=axis, method="inverted_cdf")


@pytest.mark.parametrize("method", METHODS)
@pytest.mark.parametrize(("name", "func"), [("mean", np.mean), ("std", np.std)])
def test_identical_to_scipy_on_the_same_resamples(method: str, name: str, func) -> None:
    """Same seed and batch: the resamples, distribution and interval of scipy.stats.bootstrap."""
    x = np.random.default_rng(0).lognormal(size=250)
    ours = bootstrap_interval(x, name, method=method, n_resamples=1999, batch=300, rng=42)
    ref = stats.bootstrap(
        (x,), func, method=method, n_resamples=1999, batch=300, rng=np.random.default_rng(42)
    )
    np.testing.assert_allclose(ours.bootstrap_distribution, ref.bootstrap_distribution, rtol=1e-13)
    assert ours.low == pytest.approx(ref.confidence_interval.low, rel=1e-12)
    assert ours.high == pytest.approx(ref.confidence_interval.high, rel=1e-12)
    assert ours.standard_error == pytest.approx(ref.standard_error, rel=1e-12)


@pytest.mark.parametrize("method", ["percentile", "basic"])
def test_quantile_interval_matches_scipy_given_our_distribution(method: str) -> None:
    """scipy, handed our bootstrap distribution, forms the same quantile interval."""
    x = np.random.default_rng(1).exponential(size=300)
    ours = bootstrap_interval(x, "quantile:0.9", method=method, n_resamples=2999, rng=3)
    # scipy reads only this attribute of a previous result (its documented reuse path)
    prior = SimpleNamespace(bootstrap_distribution=ours.bootstrap_distribution)
    ref = stats.bootstrap(
        (x,), _f_quantile_90, method=method, n_resamples=0, bootstrap_result=prior, rng=0
    )
    assert (ours.low, ours.high) == pytest.approx(
        (ref.confidence_interval.low, ref.confidence_interval.high), rel=1e-14
    )


def test_bca_from_distribution_matches_scipy_jackknife() -> None:
    """BCa ends from our z0 and closed-form a equal scipy's literal O(n^2) jackknife ones."""
    x = np.random.default_rng(2).gamma(0.7, size=400)
    ours = bootstrap_interval(x, "mean", n_resamples=4999, rng=9)
    # scipy reads only this attribute of a previous result (its documented reuse path)
    prior = SimpleNamespace(bootstrap_distribution=ours.bootstrap_distribution)
    ref = stats.bootstrap((x,), np.mean, method="bca", n_resamples=0, bootstrap_result=prior)
    lo, hi = interval_from_distribution(
        ours.bootstrap_distribution, ours.estimate, method="bca", acceleration=ours.acceleration
    )
    assert (lo, hi) == pytest.approx(
        (ref.confidence_interval.low, ref.confidence_interval.high), rel=1e-12
    )


@pytest.mark.parametrize("method", METHODS)
def test_close_to_arch_within_monte_carlo_error(method: IntervalMethod) -> None:
    """Intervals agree with arch's IIDBootstrap.conf_int to within Monte Carlo error."""
    x = np.random.default_rng(4).lognormal(sigma=0.8, size=120)
    ours = bootstrap_interval(x, "mean", method=method, n_resamples=9999, rng=5)
    boot = IIDBootstrap(x, seed=np.random.default_rng(6))
    ref = boot.conf_int(np.mean, reps=9999, method=method, size=0.95)
    # each end is a bootstrap quantile: its MC sd is about 0.03 SE at B = 9999, two
    # independent runs differ by about 0.04 SE; allow 4 of those
    tol = 0.16 * ours.standard_error
    assert ours.low == pytest.approx(float(ref[0, 0]), abs=tol)
    assert ours.high == pytest.approx(float(ref[1, 0]), abs=tol)


def test_law_school_correlation_standard_error() -> None:
    """Efron & Tibshirani's law school correlation: 0.776 with bootstrap SE about 0.132."""

    # source: Efron & Tibshirani (1993), Table 6.1: SE 0.132 at B = 3200 -- from memory
    def corr(idx: np.ndarray, axis: int = -1) -> np.ndarray:
        i = np.moveaxis(idx, axis, -1).astype(np.intp)
        a, b = LSAT[i], GPA[i]
        a = a - a.mean(axis=-1, keepdims=True)
        b = b - b.mean(axis=-1, keepdims=True)
        with np.errstate(invalid="ignore", divide="ignore"):
            r = (a * b).sum(-1) / np.sqrt((a * a).sum(-1) * (b * b).sum(-1))
        return np.nan_to_num(r)  # a resample of one school repeated: no correlation, 0

    rows = np.arange(15.0)  # resample rows; the statistic looks the pairs up
    r = bootstrap_interval(rows, corr, method="percentile", n_resamples=20_000, rng=7)
    assert r.estimate == pytest.approx(0.776, abs=5e-4)
    assert r.standard_error == pytest.approx(0.132, abs=0.008)


def test_mouse_data_mean_and_ideal_bootstrap_standard_error() -> None:
    """Mouse treatment group: mean 86.86; bootstrap SE tends to sqrt((n-1)/n) * 25.24 = 23.36."""
    # source: Efron & Tibshirani (1993), Table 2.1 (mean 86.86, SE 25.24) -- from memory; the
    # ideal bootstrap SE of a mean is the plug-in sd over sqrt(n) (ch. 5 there)
    r = bootstrap_interval(MOUSE_TREATMENT, "mean", n_resamples=40_000, rng=8)
    assert r.estimate == pytest.approx(86.86, abs=0.005)
    assert MOUSE_TREATMENT.std(ddof=1) / np.sqrt(7) == pytest.approx(25.24, abs=0.005)
    assert r.standard_error == pytest.approx(25.24 * np.sqrt(6 / 7), rel=0.015)


def _bundled_series() -> dict[str, np.ndarray]:
    from arch.data import sp500
    from statsmodels.datasets import macrodata, nile, sunspots

    macro = macrodata.load_pandas().data
    returns = sp500.load()["Adj Close"].pct_change().dropna().to_numpy()
    return {
        "macrodata infl": macro["infl"].to_numpy(),
        "macrodata unemp": macro["unemp"].to_numpy(),
        "macrodata realgdp growth": np.diff(np.log(macro["realgdp"].to_numpy())),
        "sunspots": sunspots.load_pandas().data["SUNACTIVITY"].to_numpy(),
        "nile": nile.load_pandas().data["volume"].to_numpy(),
        "sp500 returns": returns,
        "sp500 squared returns": returns**2,
    }


def test_optimal_block_length_matches_arch_on_bundled_series() -> None:
    """Politis-White block lengths equal arch.bootstrap.optimal_block_length to 1e-8."""
    for name, x in _bundled_series().items():
        ours = optimal_block_length(x)
        ref = arch_block_length(x)
        assert ours.stationary == pytest.approx(float(ref["stationary"].iloc[0]), rel=1e-8), name
        assert ours.circular == pytest.approx(float(ref["circular"].iloc[0]), rel=1e-8), name


@pytest.mark.parametrize("scheme", ["moving", "circular", "stationary"])
def test_block_bootstrap_se_of_ar1_mean_matches_long_run_variance(scheme: str) -> None:
    """AR(1), phi = 0.5: block-bootstrap SE of the mean near sqrt(lrv / n); iid's far below."""
    # source: long-run variance of AR(1) with unit innovations is 1 / (1 - phi)^2 (textbook)
    phi, n = 0.5, 4000
    want = np.sqrt(1 / (1 - phi) ** 2 / n)
    ratios, iid = [], []
    for seq in np.random.SeedSequence(10).spawn(6):
        e = np.random.default_rng(seq).standard_normal(n + 200)
        x = lfilter([1.0], [1.0, -phi], e)[200:]
        r = bootstrap_interval(
            x,
            "mean",
            method="percentile",
            scheme=scheme,
            block_length="auto",
            n_resamples=400,
            rng=seq.spawn(1)[0],
        )
        ratios.append((r.standard_error / want) ** 2)
        iid.append(
            (
                bootstrap_interval(
                    x, "mean", method="percentile", n_resamples=400, rng=1
                ).standard_error
                / want
            )
            ** 2
        )
    # block-bootstrap variance carries an O(1/block_length) downward bias
    assert 0.75 < np.mean(ratios) < 1.1
    # source: iid sees only Var(x) = 1 / (1 - phi^2): ratio (1 - phi) / (1 + phi) = 1/3
    assert np.mean(iid) == pytest.approx(1 / 3, rel=0.15)


@pytest.mark.parametrize("method", METHODS)
def test_weighted_rows_agree_with_scipy_on_the_repeated_rows(method: str) -> None:
    """Frequency weights: the interval of the mean on 20 weighted rows agrees, within Monte
    Carlo error, with scipy.stats.bootstrap on the same rows repeated by np.repeat."""
    expanded = np.repeat(DURATIONS, TIMES_LOGGED.astype(int))
    ours = bootstrap_interval(
        DURATIONS, "mean", weights=TIMES_LOGGED, method=method, n_resamples=9999, rng=30
    )
    ref = stats.bootstrap(
        (expanded,), np.mean, method=method, n_resamples=9999, rng=np.random.default_rng(31)
    )
    # source: scipy.stats.bootstrap (1.17) on the repeated rows; two independent runs of
    # 9,999 resamples: ends differ by about 0.04 SE (see the arch test above), allow 4 of those
    tol = 0.16 * ref.standard_error
    assert ours.estimate == pytest.approx(expanded.mean(), rel=1e-12)
    assert ours.low == pytest.approx(ref.confidence_interval.low, abs=tol)
    assert ours.high == pytest.approx(ref.confidence_interval.high, abs=tol)
    # the SE estimates each carry 1/sqrt(2 * 9999) = 0.7% Monte Carlo error
    assert ours.standard_error == pytest.approx(ref.standard_error, rel=0.03)
    # rows treated as 20 draws (sampling probabilities) would give about sqrt(m / 20) = 6x more
    assert ours.standard_error < 0.3 * expanded.std() / np.sqrt(20)


def test_weighted_quantile_agrees_with_scipy_on_the_repeated_rows() -> None:
    """quantile:0.9 on weighted rows: percentile interval and SE as scipy's on the repeated
    rows (inverted-CDF quantile), within Monte Carlo error."""
    expanded = np.repeat(DURATIONS, TIMES_LOGGED.astype(int))
    ours = bootstrap_interval(
        DURATIONS, "quantile:0.9", weights=TIMES_LOGGED, method="percentile",
        n_resamples=9999, rng=32,
    )  # fmt: skip
    ref = stats.bootstrap(
        (expanded,), _f_quantile_90, method="percentile", n_resamples=9999,
        rng=np.random.default_rng(33),
    )  # fmt: skip
    # source: scipy.stats.bootstrap (1.17) on the repeated rows; the ends are data values, so
    # they agree exactly or by one neighbouring value (scipy's ends carry rounding: 6.79 + 1e-15)
    values = np.unique(DURATIONS)
    for a, b in (
        (ours.low, ref.confidence_interval.low),
        (ours.high, ref.confidence_interval.high),
    ):
        assert abs(np.argmin(abs(values - a)) - np.argmin(abs(values - b))) <= 1
    assert ours.standard_error == pytest.approx(ref.standard_error, rel=0.06)


def test_weighted_bca_equals_scipy_jackknife_of_the_repeated_rows() -> None:
    """BCa on weighted rows: given our bootstrap distribution, scipy's BCa on the repeated rows
    (its literal jackknife) gives our interval: the weighted acceleration is exact for the mean."""
    expanded = np.repeat(DURATIONS, TIMES_LOGGED.astype(int))
    ours = bootstrap_interval(DURATIONS, "mean", weights=TIMES_LOGGED, n_resamples=4999, rng=34)
    # scipy reads only this attribute of a previous result (its documented reuse path)
    prior = SimpleNamespace(bootstrap_distribution=ours.bootstrap_distribution)
    ref = stats.bootstrap((expanded,), np.mean, method="bca", n_resamples=0, bootstrap_result=prior)
    assert (ours.low, ours.high) == pytest.approx(
        (ref.confidence_interval.low, ref.confidence_interval.high), rel=1e-10
    )
