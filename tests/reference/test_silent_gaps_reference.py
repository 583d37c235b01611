"""Fixed parameters on truncated, censored and interval data, against outside references.

Sources:

* The truncated and censored likelihood of loss modelling (Klugman, Panjer & Willmot, *Loss
  Models: From Data to Decisions*, the likelihood for modified data): an exact value ``x``
  observed above a truncation point ``d`` contributes ``f(x) / S(d)``, a value censored at
  ``u`` contributes ``S(u) / S(d)``, a value known to lie in ``(l, r]`` contributes
  ``F(r) - F(l)``. Each test writes that likelihood with scipy.stats and maximises it over the
  free parameter with scipy.optimize, the fixed one held: an independent maximisation.
* lifelines (0.30): its WeibullFitter cannot hold the shape ``rho_`` fixed (both parameters are
  always estimated), so it is no reference for a fixed shape in general; but a weibull with
  shape fixed at 1 is the exponential, which lifelines' ExponentialFitter fits with delayed
  entry (left truncation), right censoring and interval censoring.
* Data bundled with lifelines, loaded offline: the Multicenter AIDS Cohort Study
  (``load_multicenter_aids_cohort_study``: time ``T``, death ``D``, delayed entry ``W``) and
  the interval-censored diabetes data (``load_diabetes``: ``left``, ``right``).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import pytest
from lifelines import ExponentialFitter
from lifelines.datasets import load_diabetes, load_multicenter_aids_cohort_study
from scipy import optimize, stats

import samplewright as sw
from samplewright.fitting.interval_api import fit_interval, fit_truncated


def _macs() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(time, event, entry) of the MACS data (lifelines.datasets)."""
    d = load_multicenter_aids_cohort_study()
    return (
        d["T"].to_numpy(np.float64),
        d["D"].to_numpy() == 1,
        d["W"].to_numpy(np.float64),
    )


def _diabetes() -> tuple[np.ndarray, np.ndarray]:
    """(left, right) of the diabetes data (lifelines.datasets): exact where equal."""
    d = load_diabetes()
    return d["left"].to_numpy(np.float64), d["right"].to_numpy(np.float64)


def _maximise(negll: Callable[[float], float], guess: float) -> float:
    """The scale maximising a likelihood of one free positive parameter (scipy.optimize on
    its logarithm, bracketed a factor 100 either side of ``guess``)."""
    res = optimize.minimize_scalar(
        lambda z: negll(float(np.exp(z))),
        bounds=(np.log(guess) - 4.6, np.log(guess) + 4.6),
        method="bounded",
        options={"xatol": 1e-12},
    )
    assert res.success
    return float(np.exp(res.x))


def _truncated_censored_negll(dist: Callable[[float], object]) -> Callable[[float], float]:
    """Minus the Loss Models likelihood of the MACS rows under ``dist(scale)``."""
    t, event, entry = _macs()

    def negll(scale: float) -> float:
        d: Any = dist(scale)
        ll = np.sum(d.logpdf(t[event])) + np.sum(d.logsf(t[~event])) - np.sum(d.logsf(entry))
        return -float(ll)

    return negll


@pytest.mark.parametrize(
    ("family", "fixed", "free", "dist"),
    [
        ("gamma", {"shape": 2.0}, "scale", lambda s: stats.gamma(2.0, scale=s)),
        ("weibull", {"shape": 1.5}, "scale", lambda s: stats.weibull_min(1.5, scale=s)),
        ("lognormal", {"sigma": 0.5}, "mu", lambda s: stats.lognorm(0.5, scale=s)),
    ],
)
def test_truncated_censored_fit_with_a_fixed_parameter_matches_scipy(
    family: str, fixed: dict[str, float], free: str, dist: Callable[[float], object]
) -> None:
    """Delayed entry and right censoring with one parameter fixed: the other equals the
    maximiser of the textbook likelihood (source: Loss Models' likelihood, maximised here with
    scipy.optimize), and so does the log-likelihood."""
    t, event, entry = _macs()
    s = fit_truncated(t, family, censored=~event, truncation=entry, **fixed)
    negll = _truncated_censored_negll(dist)
    scale = _maximise(negll, 10.0)
    for k, v in fixed.items():
        assert s.params[k] == v
    got = float(np.exp(s.params["mu"])) if free == "mu" else s.params[free]
    assert got == pytest.approx(scale, rel=1e-6)
    assert s.loglik == pytest.approx(-negll(scale), abs=1e-6)
    assert s.aic == pytest.approx(2.0 - 2.0 * s.loglik)  # one estimated parameter


@pytest.mark.parametrize(
    ("family", "fixed", "dist"),
    [
        ("weibull", {"shape": 1.5}, lambda s: stats.weibull_min(1.5, scale=s)),
        ("loglogistic", {"beta": 4.0}, lambda s: stats.fisk(4.0, scale=s)),
    ],
)
def test_interval_fit_with_a_fixed_shape_matches_scipy(
    family: str, fixed: dict[str, float], dist: Callable[[float], object]
) -> None:
    """Interval-censored rows with the shape fixed: the scale maximises the sum of log
    probabilities of the intervals and log densities of the exact rows (source: Loss Models'
    likelihood, maximised here with scipy.optimize)."""
    lo, hi = _diabetes()
    exact = lo == hi

    def negll(scale: float) -> float:
        d: Any = dist(scale)
        ll = np.sum(d.logpdf(hi[exact])) + np.sum(np.log(d.cdf(hi[~exact]) - d.cdf(lo[~exact])))
        return -float(ll)

    s = fit_interval(lo, hi, family, **fixed)
    scale = _maximise(negll, 15.0)
    name = "scale" if family == "weibull" else "alpha"
    assert s.params[next(iter(fixed))] == next(iter(fixed.values()))
    assert s.params[name] == pytest.approx(scale, rel=1e-6)
    assert s.loglik == pytest.approx(-negll(scale), abs=1e-6)


def test_weibull_with_shape_one_matches_lifelines_exponential_with_delayed_entry() -> None:
    """weibull with shape fixed at 1 on left-truncated, right-censored rows is lifelines'
    ExponentialFitter with ``entry`` (source: lifelines 0.30, lambda_ is the scale)."""
    t, event, entry = _macs()
    s = fit_truncated(t, "weibull", censored=~event, truncation=entry, shape=1.0)
    ref = ExponentialFitter().fit(t, event, entry=entry)
    assert s.params["shape"] == 1.0
    assert s.params["scale"] == pytest.approx(float(ref.lambda_), rel=1e-5)
    assert s.loglik == pytest.approx(float(ref.log_likelihood_), abs=1e-4)


def test_weibull_with_shape_one_matches_lifelines_exponential_on_intervals() -> None:
    """weibull with shape fixed at 1 on interval-censored rows is lifelines' ExponentialFitter
    fitted with fit_interval_censoring (source: lifelines 0.30)."""
    lo, hi = _diabetes()
    s = fit_interval(lo, hi, "weibull", shape=1.0)
    ref = ExponentialFitter().fit_interval_censoring(lo, hi)
    assert s.params["scale"] == pytest.approx(float(ref.lambda_), rel=1e-5)
    assert s.loglik == pytest.approx(float(ref.log_likelihood_), abs=1e-4)


def test_fit_with_truncation_routes_the_fixed_shape() -> None:
    """samplewright.fit(values, "gamma", truncation=..., shape=2.0) is the truncated fit with
    the shape held (the same answer as fit_truncated, checked against scipy above)."""
    t, event, entry = _macs()
    a = sw.fit(t, "gamma", censored=~event, truncation=entry, shape=2.0)
    b = fit_truncated(t, "gamma", censored=~event, truncation=entry, shape=2.0)
    assert a.params == b.params and a.params["shape"] == 2.0
