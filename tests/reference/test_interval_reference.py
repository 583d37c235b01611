"""fit_truncated / fit_interval and the incomplete-data bootstrap against outside references.

lifelines (parametric fitters with entry=, interval and left censoring; Kaplan–Meier with entry;
its NPMLE) on its bundled datasets, scipy's censored fitting, closed forms for losses with
deductibles and limits, and the calibration of the bootstrap p-value under the true model.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import pytest
from lifelines import (
    ExponentialFitter,
    KaplanMeierFitter,
    LogLogisticFitter,
    LogNormalFitter,
    WeibullFitter,
)
from lifelines import datasets as ld
from lifelines.fitters.npmle import npmle
from scipy import stats

from samplewright.check.gof_incomplete import goodness_of_fit_incomplete
from samplewright.distributions.base import Sampler
from samplewright.fitting.incomplete import incomplete_from_flags, incomplete_sample
from samplewright.fitting.interval_api import fit_interval, fit_truncated

INF = np.inf

# lifelines fitter -> (our family, {our parameter: lifelines parameter}); parameterisations as in
# tests/reference/test_incomplete_reference.py (Weibull S = exp(-(t/lambda_)^rho_), exponential
# S = exp(-t/lambda_), log T ~ N(mu_, sigma_), log-logistic S = 1/(1 + (t/alpha_)^beta_))
FITTERS: dict[str, tuple[type, dict[str, str]]] = {
    "weibull": (WeibullFitter, {"scale": "lambda_", "shape": "rho_"}),
    "exponential": (ExponentialFitter, {"scale": "lambda_"}),
    "lognormal": (LogNormalFitter, {"mu": "mu_", "sigma": "sigma_"}),
    "loglogistic": (LogLogisticFitter, {"alpha": "alpha_", "beta": "beta_"}),
}


def _aids(method: str) -> tuple[Sampler, Callable[[Any], Any]]:
    """Multicenter AIDS cohort: entry W (delayed entry = truncation), time T, death D."""
    df = ld.load_multicenter_aids_cohort_study()
    s = fit_truncated(df["T"], method, censored=df["D"] == 0, truncation=df["W"])
    return s, lambda f: f.fit(df["T"], df["D"], entry=df["W"])


def _diabetes(method: str) -> tuple[Sampler, Callable[[Any], Any]]:
    """Diabetes: interval-censored ages (left == right: observed exactly)."""
    df = ld.load_diabetes()
    s = fit_interval(df["left"], df["right"], method)
    return s, lambda f: f.fit_interval_censoring(df["left"], df["right"])


def _nh4(method: str) -> tuple[Sampler, Callable[[Any], Any]]:
    """NH4 concentrations, left-censored at detection limits, written as (0, limit]."""
    df = ld.load_nh4()
    x, c = df["NH4.mg.per.L"].to_numpy(float), df["Censored"].to_numpy()
    s = fit_interval(np.where(c, 0.0, x), x, method)
    return s, lambda f: f.fit_left_censoring(x, ~c)


DATASETS = {"aids_entry": _aids, "diabetes_interval": _diabetes, "nh4_left": _nh4}
CASES = [
    pytest.param(d, f, marks=() if f == "weibull" else pytest.mark.slow, id=f"{d}-{f}")
    for d in DATASETS
    for f in FITTERS
]


@pytest.mark.parametrize(("dataset", "family"), CASES)
def test_family_sampler_matches_lifelines(dataset: str, family: str) -> None:
    """The sampler's parameters, log-likelihood and AIC are lifelines' (1e-3 / 1e-4)."""
    fitter, names = FITTERS[family]
    s, fit = DATASETS[dataset](family)
    ref = fit(fitter())
    # source: lifelines 0.30 univariate fitters (fit with entry=, fit_interval_censoring,
    # fit_left_censoring), their log_likelihood_, AIC_ and params_, on lifelines' datasets
    assert s.loglik == pytest.approx(ref.log_likelihood_, abs=1e-4)  # type: ignore[attr-defined]
    assert s.aic == pytest.approx(ref.AIC_, abs=2e-4)  # type: ignore[attr-defined]
    for ours, theirs in names.items():
        assert s.params[ours] == pytest.approx(ref.params_[theirs], rel=1e-3), ours


@pytest.mark.parametrize("tail", ["at_last", "exponential"])
def test_kaplan_meier_sampler_with_entry_matches_lifelines(tail: str) -> None:
    """CDF of the kaplan_meier sampler with entry = 1 - lifelines' survival; tail rate too."""
    df = ld.load_multicenter_aids_cohort_study()
    s = fit_truncated(df["T"], "kaplan_meier", censored=df["D"] == 0, truncation=df["W"], tail=tail)
    km = KaplanMeierFitter().fit(df["T"], df["D"], entry=df["W"]).survival_function_
    t = km.index.to_numpy(float)
    t = t[t < df["T"].max()]  # beyond the last time the tail rule decides
    # source: lifelines 0.30 KaplanMeierFitter.fit(..., entry=) survival_function_
    np.testing.assert_allclose(s.cdf(t), 1.0 - km.iloc[: t.size, 0].to_numpy(), atol=1e-12)
    if tail == "exponential":
        ref = ExponentialFitter().fit(df["T"], df["D"], entry=df["W"])
        # source: lifelines 0.30 ExponentialFitter with entry=, scale lambda_ = 1 / rate
        assert s.params["tail_rate"] == pytest.approx(1.0 / ref.params_["lambda_"], rel=1e-5)


def test_turnbull_sampler_matches_lifelines_npmle() -> None:
    """The turnbull sampler's CDF at the innermost intervals' right ends is lifelines' NPMLE."""
    df = ld.load_c_botulinum_lag_phase()
    lo, hi = df["lower_bound_days"].to_numpy(float), df["upper_bound_days"].to_numpy(float)
    eps = 1e-9  # lifelines' intervals are closed [l, r], ours (l, r]: same sets on whole numbers
    s = fit_interval(np.where(lo < hi, lo - eps, lo), hi, "turnbull")
    p, intervals = npmle(lo, hi, tol=1e-12)
    right = np.array(intervals, dtype=float)[:, 1]
    finite = np.isfinite(right)
    # source: lifelines 0.30 NPMLE (lifelines.fitters.npmle.npmle)
    np.testing.assert_allclose(s.cdf(right[finite]), np.cumsum(p)[finite], atol=1e-4)


# scipy's fit returns (shape, loc, scale); ours: weibull (shape, scale), lognormal (sigma, e^mu)
SCIPY: dict[str, tuple[Any, Callable[[dict[str, float]], tuple[float, float]]]] = {
    "weibull": (stats.weibull_min, lambda p: (p["shape"], p["scale"])),
    "lognormal": (stats.lognorm, lambda p: (p["sigma"], float(np.exp(p["mu"])))),
    "gamma": (stats.gamma, lambda p: (p["shape"], p["scale"])),
}


@pytest.mark.parametrize("family", list(SCIPY))
def test_interval_and_left_censored_fits_match_scipy(family: str) -> None:
    """On NH4 (left-censored) and grouped rows, the fits are scipy's CensoredData fits."""
    dist, ours = SCIPY[family]
    df = ld.load_nh4()
    x, c = df["NH4.mg.per.L"].to_numpy(float), df["Censored"].to_numpy()
    data = stats.CensoredData(uncensored=x[~c], left=x[c])
    shape, _, scale = dist.fit(data, floc=0)
    s = fit_interval(np.where(c, 0.0, x), x, family)
    # source: scipy 1.17 rv_continuous.fit on CensoredData (location fixed at 0)
    np.testing.assert_allclose(ours(s.params), (shape, scale), rtol=2e-3)
    ref = dist(shape, scale=scale)
    ll = float(np.sum(ref.logpdf(x[~c])) + np.sum(ref.logcdf(x[c])))
    assert s.loglik >= ll - 1e-8 and s.loglik == pytest.approx(ll, abs=1e-3)


# ---------------------------------------------------------------------------------------------
# losses with deductibles and limits: closed forms

# invented ground-up losses, each reported above its deductible, capped at its policy limit
LOSSES = np.array([1450.0, 2300.0, 410.0, 5000.0, 620.0, 10000.0, 1800.0, 875.0, 3050.0, 5000.0])
DEDUCTIBLES = np.array([250.0, 250.0, 100.0, 250.0, 500.0, 500.0, 100.0, 500.0, 250.0, 100.0])
LIMITS = np.array([5000.0, 5000.0, 5000.0, 5000.0, 10000.0, 10000.0, 5000.0, 10000.0, 5000.0, 5e3])
CAPPED = LOSSES == LIMITS
COUNTS = np.array([2.0, 1.0, 3.0, 1.0, 1.0, 1.0, 2.0, 1.0, 1.0, 2.0])  # identical claims


def test_exponential_with_deductibles_limits_and_counts() -> None:
    """Exponential MLE: total payment above the deductibles over the number of uncapped losses."""
    s = fit_truncated(
        LOSSES, "exponential", censored=CAPPED, truncation=DEDUCTIBLES, weights=COUNTS
    )
    # source: closed form for truncated and censored exponential data (Klugman, Panjer & Willmot,
    # Loss Models, the exponential with deductibles and limits; formula from memory):
    # theta = sum w (min(x, u) - d) / sum over uncapped w
    theta = float(np.sum(COUNTS * (LOSSES - DEDUCTIBLES)) / np.sum(COUNTS[~CAPPED]))
    assert s.params["scale"] == pytest.approx(theta, rel=1e-6)
    assert s.diagnostics["incomplete"]["n_right"] == int(CAPPED.sum())


def test_single_parameter_pareto_with_deductibles_and_limits() -> None:
    """Pareto (type I) with every deductible above xm: alpha = uncapped / sum log(x / d)."""
    s = fit_truncated(
        LOSSES, "pareto", censored=CAPPED, truncation=DEDUCTIBLES, weights=COUNTS, xm=50.0
    )
    # source: closed form (Loss Models, single-parameter Pareto above a deductible; from
    # memory): alpha = sum over uncapped w / sum w log(min(x, u) / d)
    alpha = float(np.sum(COUNTS[~CAPPED]) / np.sum(COUNTS * np.log(LOSSES / DEDUCTIBLES)))
    assert s.params["alpha"] == pytest.approx(alpha, rel=1e-6) and s.params["xm"] == 50.0


def test_kaplan_meier_of_losses_with_deductibles_by_hand() -> None:
    """The product-limit estimate of the losses, risk sets counted by hand with the entries."""
    x = np.array([300.0, 450.0, 450.0, 700.0, 1000.0, 1200.0])
    capped = np.array([False, False, True, False, True, False])
    d = np.array([100.0, 100.0, 400.0, 500.0, 100.0, 500.0])
    s = fit_truncated(x, "kaplan_meier", censored=capped, truncation=d)
    # source: product-limit with entry (Loss Models' risk-set rule d < t <= x, common
    # practice), counted by hand: at 300 rows 0, 1, 4 are at risk (rows 2, 3, 5 enter later),
    # 1 event; at 450 rows 1, 2, 4 (the capped 450 still at risk), 1 event; at 700 rows 3, 4,
    # 5, 1 event; 1000 is capped; at 1200 row 5 alone, 1 event
    expected = 1.0 - np.cumprod([2 / 3, 2 / 3, 2 / 3, 0.0])
    np.testing.assert_allclose(s.cdf([300.0, 450.0, 700.0, 1200.0]), expected, rtol=1e-14)


# ---------------------------------------------------------------------------------------------
# calibration of the bootstrap p-value


def _exponential_claims(rng: np.random.Generator) -> tuple[Any, np.ndarray]:
    n = 60
    d = rng.choice([0.0, 2.0, 5.0], n)
    x = d + rng.exponential(8.0, n)  # memoryless: above d the excess is exponential too
    limit = rng.choice([15.0, 25.0], n)
    s = incomplete_from_flags(np.minimum(x, limit), x > limit, truncation=np.where(d > 0, d, -INF))
    return s, limit


def _grouped_gamma(rng: np.random.Generator) -> tuple[Any, np.ndarray]:
    edges = np.array([0.0, 2.0, 4.0, 6.0, 8.0, 10.0, 15.0, 20.0, 30.0])
    counts = np.histogram(rng.gamma(2.0, 4.0, 80), np.append(edges, INF))[0]
    keep = counts > 0
    s = incomplete_sample(
        edges[keep], np.append(edges[1:], INF)[keep], weights=counts[keep].astype(float)
    )
    return s, edges


@pytest.mark.slow
@pytest.mark.parametrize("case", ["exponential_claims", "grouped_gamma"])
def test_bootstrap_pvalue_is_roughly_uniform_under_the_true_model(case: str) -> None:
    """Over 30 data sets from the fitted family the p-values look uniform (KS p > 0.001)."""
    pvalues = []
    for seq in np.random.SeedSequence(20260611).spawn(30):
        rng = np.random.default_rng(seq)
        if case == "exponential_claims":
            s, limit = _exponential_claims(rng)
            r = goodness_of_fit_incomplete(
                s, "exponential", n_resamples=29, rng=rng, censor_at=limit
            )
        else:
            s, edges = _grouped_gamma(rng)
            r = goodness_of_fit_incomplete(s, "gamma", n_resamples=29, rng=rng, inspection=edges)
        assert r.n_failed == 0
        pvalues.append(r.pvalue)
    p = np.array(pvalues)
    # source: a valid test's p-value is uniform under the null (common practice, no source);
    # with 30 data sets and 29 replicates each only gross miscalibration can be detected
    assert stats.kstest(p, "uniform").pvalue > 1e-3
    assert np.mean(p <= 0.1) <= 0.25 and 0.3 <= p.mean() <= 0.7
