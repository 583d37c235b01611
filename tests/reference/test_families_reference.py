"""Maximum-likelihood fits checked against outside implementations and bundled open datasets.

Sources: scipy.stats' generic ``fit`` (Nelder–Mead from its own start, same fixed parameters),
``scipy.stats.fit`` for discrete families, ``scipy.stats.CensoredData`` fitting, lifelines'
parametric fitters, statsmodels' count models; data from statsmodels.datasets (Nile river flow,
strike durations, RAND health insurance visits) and lifelines.datasets (Walton's fruit flies,
Rossi's recidivism study).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import optimize, stats

from samplewright.distributions.families import FAMILIES, get_family
from samplewright.fitting.mle import fit_family, loglik

# family -> (scipy distribution, true parameters for generated data, fixed scipy fit arguments)
CONTINUOUS = {
    "normal": (stats.norm, {"mu": 3.0, "sigma": 2.0}, {}),
    "lognormal": (stats.lognorm, {"mu": 1.0, "sigma": 0.6, "loc": 0.0}, {"floc": 0}),
    "exponential": (stats.expon, {"scale": 2.0, "loc": 0.0}, {"floc": 0}),
    "gamma": (stats.gamma, {"shape": 2.5, "scale": 1.5, "loc": 0.0}, {"floc": 0}),
    "weibull": (stats.weibull_min, {"shape": 1.7, "scale": 3.0, "loc": 0.0}, {"floc": 0}),
    "gumbel": (stats.gumbel_r, {"mu": 5.0, "beta": 2.0}, {}),
    "logistic": (stats.logistic, {"mu": 1.0, "s": 3.0}, {}),
    "loglogistic": (stats.fisk, {"alpha": 2.0, "beta": 3.0, "loc": 0.0}, {"floc": 0}),
    "pareto": (stats.pareto, {"alpha": 2.5, "xm": 1.5, "loc": 0.0}, {"floc": 0}),
    "generalized_pareto": (stats.genpareto, {"xi": 0.3, "sigma": 2.0, "loc": 0.0}, {"floc": 0}),
    "gev": (stats.genextreme, {"mu": 10.0, "sigma": 2.0, "xi": 0.15}, {}),
    "beta": (
        stats.beta,
        {"alpha": 2.0, "beta": 5.0, "lower": 0.0, "upper": 1.0},
        {"floc": 0, "fscale": 1},
    ),
    "uniform": (stats.uniform, {"lower": 2.0, "upper": 7.0}, {}),
    "triangular": (stats.triang, {"lower": 1.0, "mode": 3.0, "upper": 8.0}, {}),
    "inverse_gaussian": (stats.invgauss, {"mu": 2.0, "lambda": 5.0, "loc": 0.0}, {"floc": 0}),
    "student_t": (stats.t, {"mu": 1.0, "sigma": 2.0, "nu": 4.0}, {}),
    "rayleigh": (stats.rayleigh, {"sigma": 2.0, "loc": 0.0}, {"floc": 0}),
}
# family -> (scipy distribution, true parameters, scipy.stats.fit bounds, our options)
DISCRETE = {
    "poisson": (stats.poisson, {"lambda": 3.2}, {"mu": (0.0, 50.0)}, {}),
    "negative_binomial": (
        stats.nbinom,
        {"r": 2.5, "p": 0.3},
        {"n": (0.01, 100.0), "p": (0, 1)},
        {},
    ),
    "geometric": (stats.geom, {"p": 0.3}, {"p": (0.0, 1.0), "loc": (-1, -1)}, {}),
    "binomial": (
        stats.binom,
        {"n_trials": 12, "p": 0.35},
        {"n": (12, 12), "p": (0.0, 1.0)},
        {"n_trials": 12},
    ),
}


def _tol(ll: float) -> float:
    """Tolerance on a log-likelihood: optimiser noise, far below any meaningful difference."""
    return 1e-6 + 1e-9 * abs(ll)


def _scipy_loglik(dist, x, fit_kwargs) -> float:
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        theta = dist.fit(x, **fit_kwargs)
    ll = float(np.sum(dist.logpdf(x, *theta)))
    return ll if np.isfinite(ll) else -np.inf


def test_every_family_is_covered_here():
    """The reference tables below name every registered family exactly once."""
    assert set(CONTINUOUS) | set(DISCRETE) == set(FAMILIES)
    assert not set(CONTINUOUS) & set(DISCRETE)


@pytest.mark.parametrize("name", sorted(CONTINUOUS))
@pytest.mark.parametrize("n", [40, 400])
def test_continuous_loglik_at_least_scipy_generic_fit(name, n):
    """Our maximum reaches at least scipy's generic fit with the same fixed parameters."""
    dist, true, fit_kwargs = CONTINUOUS[name]
    x = get_family(name).draw(true, n, np.random.default_rng(1000 + n))
    ours = fit_family(name, x)
    reference = _scipy_loglik(dist, x, fit_kwargs)  # source: scipy.stats.<dist>.fit
    assert np.isfinite(ours.loglik)
    assert ours.loglik >= reference - _tol(reference)


@pytest.mark.parametrize("name", sorted(DISCRETE))
def test_discrete_loglik_at_least_scipy_stats_fit(name):
    """Discrete fits reach at least scipy.stats.fit's (differential evolution) log-likelihood."""
    dist, true, bounds, options = DISCRETE[name]
    x = get_family(name).draw(true, 300, np.random.default_rng(7))

    def optimizer(fun, bounds, *, integrality):
        return optimize.differential_evolution(
            fun, bounds, integrality=integrality, rng=np.random.default_rng(0), tol=1e-10
        )

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = stats.fit(dist, x, bounds=bounds, optimizer=optimizer)
    reference = float(np.sum(dist.logpmf(x, *res.params)))  # source: scipy.stats.fit
    ours = fit_family(name, x, **options)
    assert ours.loglik >= reference - _tol(reference)


# --- open datasets ------------------------------------------------------------------------------


def _nile() -> np.ndarray:
    sm = pytest.importorskip("statsmodels.api")
    return sm.datasets.nile.load_pandas().data["volume"].to_numpy(dtype=float)


def _strikes() -> np.ndarray:
    sm = pytest.importorskip("statsmodels.api")
    return sm.datasets.strikes.load_pandas().data["duration"].to_numpy(dtype=float)


@pytest.mark.parametrize(
    "name",
    [
        "normal",
        "lognormal",
        "gamma",
        "weibull",
        "gumbel",
        "logistic",
        "loglogistic",
        "inverse_gaussian",
        "gev",
        "student_t",
    ],
)
def test_nile_flow_loglik_at_least_scipy(name):
    """Nile annual flow (statsmodels.datasets.nile, 100 years): at least scipy's fit."""
    x = _nile()
    dist, _, fit_kwargs = CONTINUOUS[name]
    reference = _scipy_loglik(dist, x, fit_kwargs)  # source: scipy.stats.<dist>.fit on Nile data
    assert fit_family(name, x).loglik >= reference - _tol(reference)


@pytest.mark.parametrize(
    "name",
    [
        "exponential",
        "weibull",
        "gamma",
        "lognormal",
        "pareto",
        "generalized_pareto",
        "rayleigh",
        "loglogistic",
    ],
)
def test_strike_durations_loglik_at_least_scipy(name):
    """Strike durations (statsmodels.datasets.strikes, 62 strikes): at least scipy's fit."""
    x = _strikes()
    dist, _, fit_kwargs = CONTINUOUS[name]
    reference = _scipy_loglik(dist, x, fit_kwargs)  # source: scipy.stats.<dist>.fit on strikes
    assert fit_family(name, x).loglik >= reference - _tol(reference)


def test_doctor_visits_count_models_match_statsmodels():
    """RAND visits (statsmodels.datasets.randhie): Poisson and NB2 intercept-only models agree."""
    sm = pytest.importorskip("statsmodels.api")
    y = sm.datasets.randhie.load_pandas().data["mdvis"].to_numpy(dtype=float)
    const = np.ones((y.size, 1))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        pois = sm.Poisson(y, const).fit(disp=0)
        nb2 = sm.NegativeBinomial(y, const, loglike_method="nb2").fit(disp=0, maxiter=200)
    ours_p = fit_family("poisson", y)
    assert ours_p.params["lambda"] == pytest.approx(np.exp(pois.params[0]), rel=1e-8)
    assert ours_p.loglik == pytest.approx(pois.llf, rel=1e-10)  # source: statsmodels Poisson llf
    ours_nb = fit_family("negative_binomial", y)
    alpha = nb2.params[1]  # statsmodels NB2: var = mu + alpha mu^2, so r = 1 / alpha
    assert ours_nb.params["r"] == pytest.approx(1.0 / alpha, rel=1e-4)
    assert ours_nb.loglik >= nb2.llf - _tol(nb2.llf)  # source: statsmodels NegativeBinomial llf
    # geometric is nb with r = 1: its loglik cannot beat the two-parameter fit.
    assert fit_family("geometric", y).loglik <= ours_nb.loglik


# --- right-censored fits ------------------------------------------------------------------------


def _survival(name: str) -> tuple[np.ndarray, np.ndarray]:
    ld = pytest.importorskip("lifelines.datasets")
    if name == "waltons":
        d = ld.load_waltons()
        return d["T"].to_numpy(dtype=float), d["E"].to_numpy().astype(bool)
    d = ld.load_rossi()
    return d["week"].to_numpy(dtype=float), d["arrest"].to_numpy().astype(bool)


@pytest.mark.parametrize("data", ["waltons", "rossi"])
@pytest.mark.parametrize("name", ["weibull", "exponential", "lognormal", "loglogistic"])
def test_censored_fits_match_lifelines(data, name):
    """Right-censored fits agree with lifelines' parametric fitters on its bundled datasets."""
    lifelines = pytest.importorskip("lifelines")
    t, event = _survival(data)
    fitter = {
        "weibull": lifelines.WeibullFitter,
        "exponential": lifelines.ExponentialFitter,
        "lognormal": lifelines.LogNormalFitter,
        "loglogistic": lifelines.LogLogisticFitter,
    }[name]().fit(t, event)
    ours = fit_family(name, t, censored=~event)
    ref = fitter.params_
    # lifelines parameterisations: Weibull S = exp(-(t/lambda_)^rho_); Exponential mean lambda_;
    # LogNormal mu_, sigma_ of log T; LogLogistic alpha_ scale, beta_ shape.
    names = {
        "weibull": {"scale": "lambda_", "shape": "rho_"},
        "exponential": {"scale": "lambda_"},
        "lognormal": {"mu": "mu_", "sigma": "sigma_"},
        "loglogistic": {"alpha": "alpha_", "beta": "beta_"},
    }[name]
    for key, theirs in names.items():
        assert ours.params[key] == pytest.approx(ref[theirs], rel=1e-4), key  # source: lifelines
    assert ours.loglik >= fitter.log_likelihood_ - _tol(fitter.log_likelihood_)


def test_censored_exponential_is_total_time_over_events():
    """Censored exponential scale is total time on test over the number of events (Rossi)."""
    t, event = _survival("rossi")
    ours = fit_family("exponential", t, censored=~event)
    assert ours.params["scale"] == pytest.approx(t.sum() / event.sum(), rel=1e-12)  # closed form


@pytest.mark.parametrize(
    "name",
    ["weibull", "lognormal", "gamma", "exponential", "normal", "gumbel", "gev", "loglogistic"],
)
def test_censored_loglik_at_least_scipy_censored_data(name):
    """Censored fits reach at least scipy.stats' CensoredData fit on the Rossi data."""
    t, event = _survival("rossi")
    dist, _, fit_kwargs = CONTINUOUS[name]
    data = stats.CensoredData(uncensored=t[event], right=t[~event])
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        theta = dist.fit(data, **fit_kwargs)
        reference = float(
            np.sum(dist.logpdf(t[event], *theta)) + np.sum(dist.logsf(t[~event], *theta))
        )  # source: scipy CensoredData
    ours = fit_family(name, t, censored=~event)
    assert ours.loglik >= reference - _tol(reference)
    assert ours.loglik == pytest.approx(
        loglik(get_family(name), ours.params, t, np.ones_like(t), ~event), rel=1e-12
    )
