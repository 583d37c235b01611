"""'auto' on incomplete data and with composite candidates, against outside references.

lifelines 0.30's univariate fitters (WeibullFitter, LogNormalFitter, ExponentialFitter,
LogLogisticFitter; ``fit`` with ``entry=``, ``fit_interval_censoring``, ``fit_left_censoring``)
on lifelines' bundled datasets (multicenter AIDS cohort: delayed entry and right censoring;
diabetes: interval-censored ages; NH4: left-censored concentrations); statsmodels 0.15's
ZeroInflatedNegativeBinomialP and ZeroInflatedPoisson (constant-only) on its bundled randhie
data ('mdvis': doctor visits, 20,190 rows); scipy.stats' lognormal for a mixture's likelihood on
statsmodels' elnino temperatures (two seasonal modes).
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest
from lifelines import (
    ExponentialFitter,
    LogLogisticFitter,
    LogNormalFitter,
    WeibullFitter,
)
from lifelines import datasets as ld
from scipy import stats
from statsmodels.datasets import elnino, randhie
from statsmodels.discrete.count_model import (
    ZeroInflatedNegativeBinomialP,
    ZeroInflatedPoisson,
)

import samplewright as sw
from samplewright.distributions.base import Sampler
from samplewright.distributions.mixture import MixtureSampler
from samplewright.fitting.interval_api import fit_interval

FITTERS = {
    "weibull": WeibullFitter,
    "lognormal": LogNormalFitter,
    "exponential": ExponentialFitter,
    "loglogistic": LogLogisticFitter,
}
CANDIDATES = list(FITTERS)


def _aids() -> tuple[Sampler, Callable[[Any], Any]]:
    """Multicenter AIDS cohort: entry W (delayed entry = truncation), time T, death D."""
    df = ld.load_multicenter_aids_cohort_study()
    s = sw.fit(df["T"], "auto", censored=df["D"] == 0, truncation=df["W"],
               candidates=CANDIDATES, n_resamples=0)  # fmt: skip
    return s, lambda f: f.fit(df["T"], df["D"], entry=df["W"])


def _diabetes() -> tuple[Sampler, Callable[[Any], Any]]:
    """Diabetes: interval-censored ages (left == right: observed exactly)."""
    df = ld.load_diabetes()
    s = fit_interval(df["left"], df["right"], "auto", candidates=CANDIDATES, n_resamples=0)
    return s, lambda f: f.fit_interval_censoring(df["left"], df["right"])


def _nh4() -> tuple[Sampler, Callable[[Any], Any]]:
    """NH4 concentrations, left-censored at detection limits, written as (0, limit]."""
    df = ld.load_nh4()
    x, c = df["NH4.mg.per.L"].to_numpy(float), df["Censored"].to_numpy()
    s = fit_interval(np.where(c, 0.0, x), x, "auto", candidates=CANDIDATES, n_resamples=0)
    return s, lambda f: f.fit_left_censoring(x, ~c)


@pytest.mark.parametrize("dataset", [_aids, _diabetes, _nh4], ids=["aids", "diabetes", "nh4"])
def test_every_candidates_aic_is_lifelines(dataset: Callable[[], Any]) -> None:
    """Each candidate row of auto's ranking has the log-likelihood and AIC of lifelines' fitter
    of that family on the same rows, and the choice is the lowest of lifelines' AICs."""
    s, fit = dataset()
    rows = {r["family"]: r for r in s.diagnostics["auto"]["ranking"]}
    theirs = {}
    for family, fitter in FITTERS.items():
        ref = fit(fitter())
        theirs[family] = ref.AIC_
        # source: lifelines 0.30 univariate fitters on lifelines' bundled datasets
        # (log_likelihood_ and AIC_)
        assert rows[family]["loglik"] == pytest.approx(ref.log_likelihood_, abs=1e-4), family
        assert rows[family]["aic"] == pytest.approx(ref.AIC_, abs=2e-4), family
    assert s.diagnostics["auto"]["chosen"] == min(theirs, key=theirs.__getitem__)


def _mdvis() -> np.ndarray:
    """Doctor visits (statsmodels.datasets.randhie, column 'mdvis'), 20,190 rows."""
    return randhie.load_pandas().data["mdvis"].to_numpy(np.float64)


@pytest.mark.slow
def test_randhie_counts_rank_zero_inflated_models_with_statsmodels_likelihoods() -> None:
    """On mdvis the screen finds excess zeros: the zero-inflated negative binomial and Poisson
    rank with the count families, with statsmodels' constant-only log-likelihoods."""
    y = _mdvis()
    s = sw.fit(y, "auto", n_resamples=0)
    rows = {r["family"]: r for r in s.diagnostics["auto"]["ranking"]}
    assert s.diagnostics["auto"]["composites"]["added"] == [
        "zero_inflated_poisson",
        "zero_inflated_negative_binomial",
    ]
    ones = np.ones((y.size, 1))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # statsmodels' own convergence chatter
        zinb = ZeroInflatedNegativeBinomialP(y, ones, exog_infl=ones, p=2).fit(
            method="bfgs", maxiter=500, disp=0
        )
        zip_ = ZeroInflatedPoisson(y, ones, exog_infl=ones).fit(method="bfgs", maxiter=500, disp=0)
    # source: statsmodels 0.15 ZeroInflatedNegativeBinomialP / ZeroInflatedPoisson .llf on
    # randhie 'mdvis' (constant-only; its inflation runs to logit -15, i.e. pi ~ 0, for the NB)
    assert rows["zero_inflated_negative_binomial"]["loglik"] == pytest.approx(zinb.llf, abs=1e-2)
    assert rows["zero_inflated_poisson"]["loglik"] == pytest.approx(zip_.llf, abs=1e-2)
    # the same likelihood, so AIC ranks them with the plain families: the NB's inflation is 0
    # and its extra parameter costs 2
    assert s.diagnostics["auto"]["chosen"] == "negative_binomial"
    assert rows["zero_inflated_negative_binomial"]["aic"] == pytest.approx(
        rows["negative_binomial"]["aic"] + 2.0, abs=1e-3
    )


def test_elnino_temperatures_are_answered_by_a_mixture_with_scipys_likelihood() -> None:
    """Two seasonal modes: a two-component lognormal mixture wins; its log-likelihood is the sum
    of the log of the weighted scipy lognormal densities, and the single lognormal's is
    scipy's fit with the location at 0."""
    x = elnino.load_pandas().data.drop(columns="YEAR").to_numpy(np.float64).ravel()
    s = sw.fit(x, "auto", n_resamples=0)
    assert isinstance(s, MixtureSampler) and s.diagnostics["auto"]["chosen"] == "mixture_lognormal"
    dens = sum(
        w * stats.lognorm(p["sigma"], scale=np.exp(p["mu"])).pdf(x)
        for w, p in zip(s.weights, s.component_params(), strict=True)
    )
    # source: scipy.stats.lognorm densities, mixed by the fitted weights
    assert s.loglik == pytest.approx(float(np.log(dens).sum()), rel=1e-9)
    shape, _, scale = stats.lognorm.fit(x, floc=0.0)
    single = {r["family"]: r for r in s.diagnostics["auto"]["ranking"]}["lognormal"]
    # source: scipy.stats.lognorm.fit(floc=0) log-likelihood
    ll = float(stats.lognorm(shape, scale=scale).logpdf(x).sum())
    assert single["loglik"] == pytest.approx(ll, rel=1e-7)
