"""Reference checks of the Kaplan–Meier sampler and censored fits against outside sources.

Sources: lifelines (KaplanMeierFitter, WeibullFitter, ExponentialFitter) and scipy.stats.ecdf on
right-censored data (scipy >= 1.11), on data sets bundled with lifelines that load offline
(load_waltons, load_rossi, load_leukemia); and the published 6-MP remission data of Freireich et
al. (1963), whose Kaplan–Meier values are reproduced in many survival-analysis texts.

The NIST/SEMATECH e-Handbook's product-limit example (section 8.2.1.5) is not used: its numbers
could not be checked here.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pandas as pd
import pytest
from lifelines import ExponentialFitter, KaplanMeierFitter, WeibullFitter
from lifelines.datasets import load_leukemia, load_rossi, load_waltons
from scipy import stats

import samplewright as sw
from samplewright.fitting.kaplan_meier import estimate_survival, fit_kaplan_meier

Data = tuple[np.ndarray, np.ndarray]  # values, event observed (True = not censored)


def _waltons() -> Data:
    """Fruit-fly lifetimes (lifelines.datasets.load_waltons: T, E)."""
    d = load_waltons()
    return d["T"].to_numpy(np.float64), d["E"].to_numpy() == 1


def _rossi() -> Data:
    """Weeks to re-arrest after release, censored at 52 (lifelines.datasets.load_rossi)."""
    d = load_rossi()
    return d["week"].to_numpy(np.float64), d["arrest"].to_numpy() == 1


def _leukemia() -> Data:
    """Weeks of remission, both arms (lifelines.datasets.load_leukemia: t, status)."""
    d = load_leukemia()
    return d["t"].to_numpy(np.float64), d["status"].to_numpy() == 1


def _six_mp() -> Data:
    """The 6-MP arm of Freireich et al. (1963), lifelines.datasets.load_leukemia with Rx == 0."""
    d = load_leukemia()
    d = d[d["Rx"] == 0]
    return d["t"].to_numpy(np.float64), d["status"].to_numpy() == 1


DATASETS: dict[str, Callable[[], Data]] = {
    "waltons": _waltons,
    "rossi": _rossi,
    "leukemia": _leukemia,
    "six_mp": _six_mp,
}


def _lifelines_km(x: np.ndarray, e: np.ndarray, w: np.ndarray | None = None) -> pd.Series:
    km = KaplanMeierFitter().fit(x, event_observed=e, weights=w)
    return km.survival_function_.iloc[:, 0]


@pytest.mark.parametrize("name", DATASETS)
def test_survival_equals_lifelines_at_every_event_time(name: str) -> None:
    """S(t) at every event time equals lifelines' KaplanMeierFitter to 1e-12."""
    x, e = DATASETS[name]()
    ours = estimate_survival(x, ~e)
    at_events = ours.time[ours.n_events > 0]
    # source: lifelines.KaplanMeierFitter.survival_function_
    theirs = _lifelines_km(x, e).reindex(at_events).to_numpy()
    ours_at = ours.survival[ours.n_events > 0]
    np.testing.assert_allclose(ours_at, theirs, rtol=0, atol=1e-12)


@pytest.mark.parametrize("name", DATASETS)
def test_sampler_cdf_equals_lifelines_everywhere(name: str) -> None:
    """The sampler's 1 - CDF equals lifelines' survival function on a grid below the maximum."""
    x, e = DATASETS[name]()
    s = fit_kaplan_meier(x, ~e)
    km = KaplanMeierFitter().fit(x, event_observed=e)
    grid = np.linspace(0.0, x.max(), 997, endpoint=False)
    # source: lifelines.KaplanMeierFitter.survival_function_at_times
    theirs = km.survival_function_at_times(grid).to_numpy()
    np.testing.assert_allclose(1.0 - s.cdf(grid), theirs, rtol=0, atol=1e-12)


def test_weighted_survival_equals_lifelines_with_weights() -> None:
    """Rows collapsed to (time, flag) with counts as weights give lifelines' weighted estimate."""
    x, e = _rossi()
    table = pd.DataFrame({"x": x, "e": e}).value_counts().reset_index()
    xs, es, ws = (
        table["x"].to_numpy(np.float64),
        table["e"].to_numpy(),
        table["count"].to_numpy(np.float64),
    )
    ours = estimate_survival(xs, ~es, weights=ws)
    keep = ours.n_events > 0
    # source: lifelines.KaplanMeierFitter(weights=...)
    theirs = _lifelines_km(xs, es, ws).reindex(ours.time[keep]).to_numpy()
    np.testing.assert_allclose(ours.survival[keep], theirs, rtol=0, atol=1e-12)


@pytest.mark.parametrize("name", DATASETS)
def test_survival_equals_scipy_censored_ecdf(name: str) -> None:
    """S(t) equals scipy.stats.ecdf on CensoredData.right_censored to 1e-12."""
    x, e = DATASETS[name]()
    ours = estimate_survival(x, ~e)
    # source: scipy.stats.ecdf(scipy.stats.CensoredData.right_censored(x, censored)).sf
    res = stats.ecdf(stats.CensoredData.right_censored(x, ~e))
    np.testing.assert_allclose(ours.survival, res.sf.evaluate(ours.time), rtol=0, atol=1e-12)


def test_six_mp_arm_matches_the_published_estimates() -> None:
    """The 6-MP arm's Kaplan–Meier estimates match the published three-decimal values."""
    x, e = _six_mp()
    assert x.size == 21 and int(e.sum()) == 9  # source: Freireich et al. (1963), 21 patients
    r = estimate_survival(x, ~e)
    times = [6.0, 7.0, 10.0, 13.0, 16.0, 22.0, 23.0]
    # source: Freireich et al. (1963) 6-MP data; Kaplan–Meier values as tabulated in survival
    # texts, e.g. Kleinbaum & Klein, "Survival Analysis: A Self-Learning Text" (from memory)
    published = [0.857, 0.807, 0.753, 0.690, 0.627, 0.538, 0.448]
    got = r.survival[np.searchsorted(r.time, times)]
    np.testing.assert_allclose(got, published, rtol=0, atol=5e-4)


@pytest.mark.parametrize("name", ["waltons", "rossi", "leukemia"])
def test_censored_weibull_fit_equals_lifelines(name: str) -> None:
    """fit(method='weibull', censored=...) gives WeibullFitter's rho (shape) and lambda."""
    x, e = DATASETS[name]()
    s = sw.fit(x, method="weibull", censored=~e)
    wf = WeibullFitter().fit(x, event_observed=e)
    # source: lifelines.WeibullFitter, S(t) = exp(-(t / lambda_) ** rho_); its optimiser stops
    # at a gradient tolerance, hence rtol 1e-5
    assert s.params["shape"] == pytest.approx(wf.rho_, rel=1e-5)
    assert s.params["scale"] == pytest.approx(wf.lambda_, rel=1e-5)
    assert s.loglik == pytest.approx(wf.log_likelihood_, rel=1e-9)


@pytest.mark.parametrize("name", ["waltons", "rossi", "leukemia"])
def test_exponential_tail_rate_equals_lifelines_exponential_fit(name: str) -> None:
    """The exponential tail's rate is 1 / lifelines ExponentialFitter's lambda (its scale)."""
    x, e = DATASETS[name]()
    s = fit_kaplan_meier(x, ~e, tail="exponential")
    ef = ExponentialFitter().fit(x, event_observed=e)
    # source: lifelines.ExponentialFitter, S(t) = exp(-t / lambda_); fitted numerically by
    # lifelines (ours is the closed form), hence rtol 1e-5
    assert s.params["tail_rate"] == pytest.approx(1.0 / ef.lambda_, rel=1e-5)
