"""Reference checks of EM mixture fits against independent optimisers and bundled data.

Sources: statsmodels.datasets.elnino (monthly sea surface temperatures 1950-2010: a cold and a
warm season, two clear modes) and statsmodels.datasets.nile (annual Nile flow 1871-1970, one
mode); scipy.optimize on the full mixture likelihood; scipy.stats fits of single families; a
plain textbook EM for normal mixtures written out below (Dempster, Laird & Rubin 1977). No
Old Faithful data ships with the installed registry packages, so El Nino stands in for it.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize, special, stats
from statsmodels.datasets import elnino, nile

from samplewright.fitting.mixtures import fit_mixture


def _elnino() -> np.ndarray:
    """All 732 monthly temperatures of statsmodels' elnino dataset, as one sample."""
    return elnino.load_pandas().data.drop(columns="YEAR").to_numpy(np.float64).ravel()


def _nile() -> np.ndarray:
    """Annual Nile volumes (statsmodels.datasets.nile, column 'volume')."""
    return nile.load_pandas().data["volume"].to_numpy(np.float64)


def _textbook_normal_em(x: np.ndarray, iterations: int = 5000) -> tuple[np.ndarray, ...]:
    """Two-component normal EM, written out plainly: a slow, obviously correct reference."""
    split = np.median(x)
    lo, hi = x[x <= split], x[x > split]
    w = np.array([0.5, 0.5])
    mu = np.array([lo.mean(), hi.mean()])
    sd = np.array([lo.std(), hi.std()])
    for _ in range(iterations):
        dens = np.empty((x.size, 2))
        for j in range(2):
            dens[:, j] = (
                w[j] * np.exp(-0.5 * ((x - mu[j]) / sd[j]) ** 2) / (sd[j] * np.sqrt(2 * np.pi))
            )
        resp = dens / dens.sum(axis=1, keepdims=True)
        for j in range(2):
            r = resp[:, j]
            w[j] = r.mean()
            mu[j] = np.sum(r * x) / r.sum()
            sd[j] = np.sqrt(np.sum(r * (x - mu[j]) ** 2) / r.sum())
    loglik = float(np.sum(np.log(dens.sum(axis=1))))
    return w, mu, sd, np.array(loglik)


def test_bic_picks_two_components_for_el_nino_and_one_for_the_nile() -> None:
    """Seasonal temperatures have two modes by BIC; Nile flows have one."""
    warm_cold = fit_mixture(_elnino(), family="normal", max_components=3, rng=2026)
    assert warm_cold.n_components == 2
    flows = fit_mixture(_nile(), family="normal", max_components=2, rng=2026)
    assert flows.n_components == 1


def test_el_nino_normal_mixture_matches_textbook_em() -> None:
    """Weights, means, sds and log-likelihood agree with the plain EM written in this file."""
    x = _elnino()
    r = fit_mixture(x, family="normal", n_components=2, rng=1, tol=1e-13)
    w, mu, sd, loglik = _textbook_normal_em(x)
    order = np.argsort(mu)
    # source: _textbook_normal_em above (5000 plain EM steps from a median split)
    # the likelihood is flat near its maximum: a 1e-11 relative agreement of the log-likelihood
    # pins the parameters only to about 1e-5
    np.testing.assert_allclose(r.weights, w[order], rtol=1e-5)
    np.testing.assert_allclose(r.params[:, 0], mu[order], rtol=1e-6)
    np.testing.assert_allclose(r.params[:, 1], sd[order], rtol=1e-5)
    assert r.loglik == pytest.approx(float(loglik), rel=1e-11)


def _neg_loglik(family: str, x: np.ndarray) -> object:
    """Negative two-component log-likelihood over (logit w, a1, log b1, a2, log b2), with the
    shape a on the log scale for gamma and weibull; densities written out with numpy."""
    lx = np.log(x)

    def logpdf(a: float, b: float) -> np.ndarray:
        if family == "normal":
            return -0.5 * ((x - a) / b) ** 2 - np.log(b) - 0.5 * np.log(2 * np.pi)
        if family == "gamma":
            return (a - 1) * lx - x / b - a * np.log(b) - special.gammaln(a)
        z = lx - np.log(b)
        return np.log(a / b) + (a - 1) * z - np.exp(a * z)

    def f(theta: np.ndarray) -> float:
        w = special.expit(theta[0])
        a1 = theta[1] if family == "normal" else np.exp(theta[1])
        a2 = theta[3] if family == "normal" else np.exp(theta[3])
        one = np.log(w) + logpdf(a1, np.exp(theta[2]))
        two = np.log1p(-w) + logpdf(a2, np.exp(theta[4]))
        return -float(np.sum(np.logaddexp(one, two)))

    return f


def _scipy_best(family: str, x: np.ndarray) -> float:
    """Best maximum log-likelihood scipy.optimize finds from moment starts on two halves."""
    split = np.median(x)
    halves = (x[x <= split], x[x > split])
    starts = []
    for shift in (0.0, 0.4, -0.4):
        theta = [shift]
        for h in halves:
            m, v = h.mean(), h.var()
            if family == "normal":
                theta += [m, 0.5 * np.log(v)]
            elif family == "gamma":
                theta += [np.log(m * m / v), np.log(v / m)]
            else:
                c = np.pi / (np.sqrt(6) * np.log(h).std())
                theta += [np.log(c), np.log(m)]
        starts.append(np.array(theta))
    f = _neg_loglik(family, x)
    best = np.inf
    for start in starts:
        fit = optimize.minimize(f, start, method="BFGS", options={"gtol": 1e-8, "maxiter": 2000})
        fit = optimize.minimize(
            f, fit.x, method="Nelder-Mead", options={"xatol": 1e-10, "fatol": 1e-12, "maxfev": 6000}
        )
        best = min(best, float(fit.fun))
    return -best


@pytest.mark.parametrize("family", ["normal", "gamma", "weibull"])
def test_em_reaches_the_likelihood_maximum_scipy_optimize_finds(family: str) -> None:
    """EM's log-likelihood is at least scipy.optimize's on the full likelihood, less 1e-6."""
    x = _elnino()
    r = fit_mixture(x, family=family, n_components=2, rng=3)
    # source: scipy.optimize.minimize (BFGS, then Nelder-Mead) on the full mixture likelihood
    theirs = _scipy_best(family, x)
    assert r.loglik >= theirs - 1e-6
    assert r.loglik == pytest.approx(theirs, abs=1e-4)


@pytest.mark.parametrize("family", ["normal", "lognormal", "gamma", "weibull"])
def test_single_component_is_the_family_mle(family: str) -> None:
    """k = 1 reproduces the maximum-likelihood fit of the family (location fixed at 0)."""
    x = _nile()
    r = fit_mixture(x, family=family, n_components=1)
    if family == "normal":
        expected = (x.mean(), x.std())  # source: closed-form normal MLE
        ref = stats.norm(*expected)
    elif family == "lognormal":
        expected = (np.log(x).std(), np.exp(np.log(x).mean()))  # source: closed form on log x
        ref = stats.lognorm(expected[0], scale=expected[1])
    elif family == "gamma":
        a, _, scale = stats.gamma.fit(x, floc=0)  # source: scipy.stats.gamma.fit, loc fixed
        expected, ref = (a, scale), stats.gamma(a, scale=scale)
    else:
        c, _, scale = stats.weibull_min.fit(x, floc=0)  # source: scipy.stats.weibull_min.fit
        expected, ref = (c, scale), stats.weibull_min(c, scale=scale)
    np.testing.assert_allclose(r.params[0], expected, rtol=1e-5)
    assert r.loglik >= float(np.sum(ref.logpdf(x))) - 1e-8
