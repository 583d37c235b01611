"""Incomplete data against lifelines, scipy and textbook closed forms, on lifelines' datasets."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import pandas as pd
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

from samplewright.fitting.incomplete import (
    IncompleteSample,
    fit_incomplete,
    incomplete_from_flags,
    incomplete_sample,
)
from samplewright.fitting.nonparametric_incomplete import estimate_product_limit, estimate_turnbull

INF = np.inf

# lifelines fitter -> (our family, {our parameter: lifelines parameter}). Parameterisations:
# WeibullFitter S = exp(-(t/lambda_)^rho_): weibull scale = lambda_, shape = rho_;
# ExponentialFitter S = exp(-t/lambda_): exponential scale = lambda_;
# LogNormalFitter log T ~ N(mu_, sigma_): lognormal mu = mu_, sigma = sigma_;
# LogLogisticFitter S = 1/(1 + (t/alpha_)^beta_): loglogistic alpha = alpha_, beta = beta_.
FITTERS: dict[str, tuple[type, dict[str, str]]] = {
    "weibull": (WeibullFitter, {"scale": "lambda_", "shape": "rho_"}),
    "exponential": (ExponentialFitter, {"scale": "lambda_"}),
    "lognormal": (LogNormalFitter, {"mu": "mu_", "sigma": "sigma_"}),
    "loglogistic": (LogLogisticFitter, {"alpha": "alpha_", "beta": "beta_"}),
}


def _aids() -> tuple[IncompleteSample, Callable[[Any], Any]]:
    """Multicenter AIDS cohort: entry W (delayed entry), time T, death indicator D."""
    df = ld.load_multicenter_aids_cohort_study()
    s = incomplete_from_flags(df["T"], df["D"].to_numpy() == 0, truncation=df["W"])
    return s, lambda f: f.fit(df["T"], df["D"], entry=df["W"])


def _psychiatric() -> tuple[IncompleteSample, Callable[[Any], Any]]:
    """Psychiatric patients: age at entry (truncation), age at death or censoring."""
    df = ld.load_psychiatric_patients()
    age_out = df["Age"] + df["T"]
    s = incomplete_from_flags(age_out, df["C"].to_numpy() == 0, truncation=df["Age"])
    return s, lambda f: f.fit(age_out, df["C"], entry=df["Age"])


def _diabetes() -> tuple[IncompleteSample, Callable[[Any], Any]]:
    """Diabetes: interval-censored ages (left == right means observed exactly)."""
    df = ld.load_diabetes()
    s = incomplete_sample(df["left"], df["right"])
    return s, lambda f: f.fit_interval_censoring(df["left"], df["right"])


def _nh4() -> tuple[IncompleteSample, Callable[[Any], Any]]:
    """NH4 concentrations, left-censored at detection limits."""
    df = ld.load_nh4()
    x, c = df["NH4.mg.per.L"], df["Censored"].to_numpy()
    s = incomplete_from_flags(x, c, side="left", left_end=0.0)
    return s, lambda f: f.fit_left_censoring(x, ~c)


def _lcd() -> tuple[IncompleteSample, Callable[[Any], Any]]:
    """lifelines' left-censoring example (E = 0: only known to be at most T), lower end -inf."""
    df = ld.load_lcd()
    s = incomplete_from_flags(df["T"], df["E"].to_numpy() == 0, side="left")
    return s, lambda f: f.fit_left_censoring(df["T"], df["E"])


DATASETS = {
    "aids_entry": _aids,
    "psychiatric_entry": _psychiatric,
    "diabetes_interval": _diabetes,
    "nh4_left": _nh4,
    "lcd_left": _lcd,
}


# every dataset with weibull and every family on the small AIDS cohort run by default; the rest
# (lifelines' own fits take most of the time) are marked slow
LIFELINES_CASES = [
    pytest.param(
        d,
        f,
        marks=() if f == "weibull" or d == "aids_entry" else pytest.mark.slow,
        id=f"{d}-{f}",
    )
    for d in DATASETS
    for f in FITTERS
]


@pytest.mark.parametrize(("dataset", "family"), LIFELINES_CASES)
def test_fit_matches_lifelines(dataset: str, family: str) -> None:
    """Log-likelihood within 1e-4 and parameters within 1e-3 relative of lifelines' fitters."""
    sample, fit = DATASETS[dataset]()
    fitter, names = FITTERS[family]
    ref = fit(fitter())
    r = fit_incomplete(sample, family)
    # source: lifelines 0.30 parametric univariate fitters (fit with entry=, fit_interval_censoring,
    # fit_left_censoring) on lifelines' bundled datasets
    assert r.loglik == pytest.approx(ref.log_likelihood_, abs=1e-4)
    for ours, theirs in names.items():
        assert r.params[ours] == pytest.approx(ref.params_[theirs], rel=1e-3), ours
    assert r.converged


# scipy's fit returns (shape, loc, scale); our names for shape and scale (lognormal: sigma and
# exp(mu); loglogistic: beta and alpha)
SCIPY_FAMILIES: dict[str, tuple[Any, Callable[[dict[str, float]], tuple[float, float]]]] = {
    "weibull": (stats.weibull_min, lambda p: (p["shape"], p["scale"])),
    "lognormal": (stats.lognorm, lambda p: (p["sigma"], float(np.exp(p["mu"])))),
    "gamma": (stats.gamma, lambda p: (p["shape"], p["scale"])),
    "loglogistic": (stats.fisk, lambda p: (p["beta"], p["alpha"])),
}


@pytest.mark.parametrize("family", list(SCIPY_FAMILIES))
def test_right_censored_fit_matches_scipy(family: str) -> None:
    """On the Waltons data (right-censored) the fit matches scipy's fit with CensoredData."""
    dist, ours = SCIPY_FAMILIES[family]
    df = ld.load_waltons()
    t, cens = df["T"].to_numpy(float), df["E"].to_numpy() == 0
    shape, _, scale = dist.fit(stats.CensoredData.right_censored(t, cens), floc=0)
    ref = dist(shape, scale=scale)
    r = fit_incomplete(incomplete_from_flags(t, cens), family)
    # source: scipy 1.17 rv_continuous.fit on CensoredData (location fixed at 0); its
    # log-likelihood written out with scipy's own logpdf and logsf
    ll_ref = float(np.sum(ref.logpdf(t[~cens])) + np.sum(ref.logsf(t[cens])))
    assert r.loglik == pytest.approx(ll_ref, abs=1e-4)
    assert r.loglik >= ll_ref - 1e-8  # scipy's optimiser stops a little short, never beyond
    np.testing.assert_allclose(ours(r.params), (shape, scale), rtol=1e-3)


# ---------------------------------------------------------------------------------------------
# textbook closed forms for losses with deductibles and policy limits

# invented ground-up losses, each reported above its deductible; 1000 is the policy limit
LOSSES = np.array([150.0, 230.0, 410.0, 1000.0, 620.0, 1000.0, 180.0, 875.0, 305.0, 1000.0])
DEDUCTIBLES = np.array([100.0, 100.0, 100.0, 100.0, 250.0, 250.0, 100.0, 250.0, 100.0, 100.0])
CAPPED = LOSSES == 1000.0


def _losses() -> IncompleteSample:
    return incomplete_from_flags(LOSSES, CAPPED, truncation=DEDUCTIBLES)


def test_exponential_with_deductible_and_limit_closed_form() -> None:
    """Exponential MLE: total payment above the deductibles over the number of uncapped losses."""
    r = fit_incomplete(_losses(), "exponential")
    # source: closed form for truncated and censored exponential data (Klugman, Panjer & Willmot,
    # Loss Models, common textbook result): theta = sum(min(x, u) - d) / (number uncensored)
    theta = float(np.sum(LOSSES - DEDUCTIBLES) / np.sum(~CAPPED))
    assert r.params["scale"] == pytest.approx(theta, rel=1e-6)
    assert (r.n_exact, r.n_right, r.n_truncated) == (7, 3, 10)


def test_weibull_with_known_shape_closed_form() -> None:
    """Weibull with the shape fixed: scale^k = sum(min(x, u)^k - d^k) / number uncensored."""
    k = 2.0
    r = fit_incomplete(_losses(), "weibull", fixed={"shape": k})
    # source: same derivation as the exponential (x^k is exponential), common textbook result
    scale = float((np.sum(LOSSES**k - DEDUCTIBLES**k) / np.sum(~CAPPED)) ** (1 / k))
    assert r.params["scale"] == pytest.approx(scale, rel=1e-6)


def test_single_parameter_pareto_above_deductibles_closed_form() -> None:
    """Pareto (type I) with every deductible above xm: alpha = n uncensored / sum log(x / d)."""
    r = fit_incomplete(_losses(), "pareto", fixed={"xm": 50.0})
    # source: closed form, common textbook result (the truncated pareto is a pareto from d):
    # alpha = (number uncensored) / sum log(min(x, u) / d)
    alpha = float(np.sum(~CAPPED) / np.sum(np.log(LOSSES / DEDUCTIBLES)))
    assert r.params["alpha"] == pytest.approx(alpha, rel=1e-6)


# ---------------------------------------------------------------------------------------------
# nonparametric


def _km_reference(
    df: pd.DataFrame, t: str, e: str, entry: str, weights: np.ndarray | None
) -> tuple[IncompleteSample, pd.DataFrame]:
    s = incomplete_from_flags(df[t], df[e].to_numpy() == 0, truncation=df[entry], weights=weights)
    km = KaplanMeierFitter().fit(df[t], df[e], entry=df[entry], weights=weights)
    return s, km.survival_function_


@pytest.mark.parametrize("weighted", [False, True])
def test_product_limit_with_entry_matches_lifelines(weighted: bool) -> None:
    """Survival with delayed entry equals lifelines' KaplanMeierFitter(entry=...) to 1e-12."""
    df = ld.load_multicenter_aids_cohort_study()
    w = np.random.default_rng(2).integers(1, 4, len(df)).astype(float) if weighted else None
    s, ref = _km_reference(df, "T", "D", "W", w)
    r = estimate_product_limit(s)
    # source: lifelines 0.30 KaplanMeierFitter.fit(..., entry=, weights=) survival_function_
    np.testing.assert_allclose(r.survival_at(ref.index.values), ref.iloc[:, 0].values, atol=1e-12)


def test_product_limit_with_entry_ages_matches_lifelines() -> None:
    """On ages at entry and exit (psychiatric patients) the estimate equals lifelines' too."""
    df = ld.load_psychiatric_patients()
    df = df.assign(exit=df["Age"] + df["T"])
    s, ref = _km_reference(df, "exit", "C", "Age", None)
    r = estimate_product_limit(s)
    # source: lifelines 0.30 KaplanMeierFitter.fit(..., entry=) survival_function_
    np.testing.assert_allclose(r.survival_at(ref.index.values), ref.iloc[:, 0].values, atol=1e-12)


def test_turnbull_with_entry_matches_lifelines_product_limit() -> None:
    """Turnbull's EM on right-censored rows with entry reproduces lifelines' Kaplan–Meier."""
    df = ld.load_multicenter_aids_cohort_study()
    s, ref = _km_reference(df, "T", "D", "W", None)
    r = estimate_turnbull(s)
    # source: lifelines 0.30 KaplanMeierFitter.fit(..., entry=) survival_function_
    np.testing.assert_allclose(1.0 - r.cdf(ref.index.values), ref.iloc[:, 0].values, atol=1e-8)


@pytest.mark.parametrize(
    ("loader", "lower", "upper"),
    [
        (ld.load_diabetes, "left", "right"),
        (ld.load_c_botulinum_lag_phase, "lower_bound_days", "upper_bound_days"),
    ],
)
def test_turnbull_matches_lifelines_npmle(
    loader: Callable[[], Any], lower: str, upper: str
) -> None:
    """Interval masses and the CDF at interval ends agree with lifelines' NPMLE within 1e-4."""
    df = loader()
    lo, hi = df[lower].to_numpy(float), df[upper].to_numpy(float)
    # lifelines treats [l, r] as closed, we treat (l, r] as half-open: moving each interval's
    # lower end down by 1e-9 makes the same sets on these whole-number data
    eps = 1e-9
    r = estimate_turnbull(incomplete_sample(np.where(lo < hi, lo - eps, lo), hi))
    # source: lifelines 0.30 NPMLE (lifelines.fitters.npmle.npmle, the routine behind
    # KaplanMeierFitter.fit_interval_censoring), run to a tight tolerance
    p, intervals = npmle(lo, hi, tol=1e-12)
    iv = np.array(intervals, dtype=float)
    np.testing.assert_allclose(r.right, iv[:, 1])
    np.testing.assert_allclose(r.left, np.where(iv[:, 0] < iv[:, 1], iv[:, 0] - eps, iv[:, 0]))
    np.testing.assert_allclose(r.mass, p, atol=1e-4)
    finite = np.isfinite(iv[:, 1])
    np.testing.assert_allclose(r.cdf(iv[finite, 1]), np.cumsum(p)[finite], atol=1e-4)
