"""Unit tests of fitting.mixtures: EM fits, BIC choice, collapse guard, cdf/quantile."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate

from samplewright.core.errors import FitError, MethodError
from samplewright.core.randomness import make_rng
from samplewright.fitting.mixtures import MIXTURE_FAMILIES, fit_mixture


def _two_modes(family: str, seed: int = 5) -> np.ndarray:
    """A clearly two-mode invented sample of 400 values for each family's support."""
    g = make_rng(seed)
    if family == "normal":
        return np.concatenate([g.normal(10.0, 1.0, 240), g.normal(17.0, 1.5, 160)])
    if family == "lognormal":
        return np.concatenate([g.lognormal(0.0, 0.2, 240), g.lognormal(1.5, 0.2, 160)])
    if family == "gamma":
        return np.concatenate([g.gamma(3.0, 1.0, 240), g.gamma(60.0, 0.5, 160)])
    return np.concatenate([2.0 * g.weibull(2.0, 240), 12.0 * g.weibull(8.0, 160)])


def _one_mode(family: str, seed: int = 9) -> np.ndarray:
    """A unimodal invented sample of 400 values drawn from the family itself."""
    g = make_rng(seed)
    if family == "normal":
        return g.normal(4.0, 2.0, 400)
    if family == "lognormal":
        return g.lognormal(1.0, 0.5, 400)
    if family == "gamma":
        return g.gamma(4.0, 2.0, 400)
    return 3.0 * g.weibull(1.8, 400)


@pytest.mark.parametrize("family", MIXTURE_FAMILIES)
def test_bic_picks_two_components_on_a_clear_two_mode_sample(family: str) -> None:
    """Two well separated groups: BIC chooses k = 2 and the weights come out near 0.6 / 0.4."""
    r = fit_mixture(_two_modes(family), family=family, max_components=2, n_starts=3, rng=1)
    assert r.n_components == 2
    # common practice, no source: 240 of 400 values came from the first group
    np.testing.assert_allclose(r.weights, [0.6, 0.4], atol=0.03)
    assert [row.n_components for row in r.by_n_components] == [1, 2]
    chosen = r.by_n_components[1]
    assert r.bic == chosen.bic == min(row.bic for row in r.by_n_components if row.usable)


@pytest.mark.parametrize("family", MIXTURE_FAMILIES)
def test_bic_picks_one_component_on_a_unimodal_sample(family: str) -> None:
    """A sample drawn from the family itself: BIC keeps a single component over a converged two."""
    # a loose tolerance lets the (over-fitted, slowly converging) two-component fit finish
    r = fit_mixture(_one_mode(family), family=family, max_components=2, n_starts=3, rng=2, tol=1e-5)
    assert r.n_components == 1
    assert r.weights.tolist() == [1.0]
    one, two = r.by_n_components
    assert one.converged and two.converged and two.bic > one.bic


def test_result_records_loglik_and_criteria_of_every_k() -> None:
    """aic = 2 n_params - 2 loglik and bic = n_params log(n) - 2 loglik for each k."""
    x = _two_modes("normal")
    r = fit_mixture(x, family="normal", max_components=3, rng=4)
    for row in r.by_n_components:
        assert row.n_params == 3 * row.n_components - 1
        if np.isfinite(row.loglik):
            assert row.aic == pytest.approx(2 * row.n_params - 2 * row.loglik, rel=1e-14)
            assert row.bic == pytest.approx(row.n_params * np.log(x.size) - 2 * row.loglik)
    assert r.n_params == 5 and r.n_obs == x.size


def test_loglik_is_the_sum_of_log_mixture_densities() -> None:
    """The reported log-likelihood equals sum log pdf(x) of the returned mixture."""
    x = _two_modes("gamma")
    r = fit_mixture(x, family="gamma", n_components=2, rng=3)
    assert r.loglik == pytest.approx(float(np.sum(np.log(r.pdf(x)))), rel=1e-12)


@pytest.mark.parametrize("family", MIXTURE_FAMILIES)
def test_integer_weights_behave_like_repeated_rows(family: str) -> None:
    """Frequency weights give the same fit as the data with rows repeated."""
    x = _two_modes(family)[::4]
    w = np.tile([1.0, 2.0, 3.0], x.size)[: x.size]
    weighted = fit_mixture(x, family=family, weights=w, n_components=2, rng=6, tol=1e-13)
    repeated = fit_mixture(
        np.repeat(x, w.astype(int)), family=family, n_components=2, rng=6, tol=1e-13
    )
    assert weighted.n_obs == repeated.n_obs == w.sum()
    assert weighted.loglik == pytest.approx(repeated.loglik, rel=1e-9)
    np.testing.assert_allclose(weighted.params, repeated.params, rtol=1e-5)
    np.testing.assert_allclose(weighted.weights, repeated.weights, rtol=1e-5)


def test_same_seed_same_fit_and_components_ordered_by_mean() -> None:
    """The rng makes fits reproducible; components come out in increasing order of mean."""
    x = _two_modes("lognormal")
    a = fit_mixture(x, family="lognormal", n_components=2, rng=11)
    b = fit_mixture(x, family="lognormal", n_components=2, rng=11)
    np.testing.assert_array_equal(a.params, b.params)
    means = [np.exp(np.log(scale) + s * s / 2) for s, scale in a.params]
    assert means == sorted(means)


def _with_an_atom(family: str = "normal") -> np.ndarray:
    """Continuous values plus 8 copies of one value: a component on the copies has no spread."""
    g = make_rng(11)
    if family == "normal":
        return np.concatenate([g.normal(0.0, 1.0, 300), np.full(8, 5.0)])
    return np.concatenate([g.gamma(4.0, 1.0, 300), np.full(8, 12.0)])


@pytest.mark.parametrize("family", ["normal", "weibull"])
def test_collapse_guard_abandons_degenerate_starts(family: str) -> None:
    """Starts whose component shrinks onto the repeated value are counted and never returned."""
    x = _with_an_atom(family)
    r = fit_mixture(x, family=family, max_components=2, rng=0)
    row2 = r.by_n_components[1]
    assert row2.n_collapsed > 0
    assert np.isfinite(r.loglik)
    y = x if family == "normal" else np.log(x)
    sd = r.params[:, 1] if family == "normal" else np.pi / (np.sqrt(6) * r.params[:, 0])
    assert np.all(sd > 1e-3 * np.std(y))


def test_collapse_guard_refuses_when_every_start_collapses() -> None:
    """Asking for exactly two components on that sample fails clearly instead of degenerating."""
    with pytest.raises(FitError, match="no start converged without collapsing"):
        fit_mixture(_with_an_atom(), family="normal", n_components=2, rng=0)


def test_minimum_weight_guard() -> None:
    """A tiny separate group below min_weight cannot become a component of its own."""
    g = make_rng(21)
    x = np.concatenate([g.normal(0.0, 1.0, 995), g.normal(40.0, 1.0, 5)])
    r = fit_mixture(x, family="normal", max_components=2, min_weight=0.01, rng=0)
    assert np.all(r.weights >= 0.01)
    loose = fit_mixture(x, family="normal", max_components=2, min_weight=0.001, rng=0)
    assert loose.n_components == 2 and loose.weights.min() == pytest.approx(0.005, abs=1e-9)


@pytest.mark.parametrize("family", MIXTURE_FAMILIES)
def test_mixture_functions_are_consistent(family: str) -> None:
    """quantile inverts cdf, pdf integrates to 1 and is the cdf's slope, moments match pdf."""
    r = fit_mixture(_two_modes(family), family=family, n_components=2, rng=1)
    u = np.concatenate([[1e-10, 1e-4], np.linspace(0.01, 0.99, 25), [1 - 1e-6]])
    q = r.quantile(u)
    np.testing.assert_allclose(r.cdf(q), u, rtol=1e-9, atol=1e-15)
    lo, hi = r.support
    assert r.quantile([0.0, 1.0]).tolist() == [lo, hi]
    a, b = r.quantile([1e-12, 1 - 1e-12])
    breaks = list(r.quantile(np.linspace(0.05, 0.95, 19)))
    area = integrate.quad(lambda v: r.pdf(np.array([v]))[0], a, b, points=breaks, limit=200)[0]
    assert area == pytest.approx(1.0, abs=1e-8)
    mean = integrate.quad(lambda v: v * r.pdf(np.array([v]))[0], a, b, points=breaks, limit=200)
    assert r.mean == pytest.approx(mean[0], rel=1e-7)
    xs = r.quantile(np.linspace(0.1, 0.9, 9))
    h = 1e-6 * np.abs(xs)
    np.testing.assert_allclose(r.pdf(xs), (r.cdf(xs + h) - r.cdf(xs - h)) / (2 * h), rtol=1e-6)


def test_component_params_are_scipy_keywords() -> None:
    """component_params names each column as scipy does (gamma: a, scale)."""
    r = fit_mixture(_two_modes("gamma"), family="gamma", n_components=2, rng=1)
    comps = r.component_params()
    assert [sorted(c) for c in comps] == [["a", "scale"], ["a", "scale"]]
    assert comps[0]["a"] == r.params[0, 0]


@pytest.mark.parametrize(
    ("values", "kwargs", "error", "message"),
    [
        ([1.0, 2.0, -1.0, 4.0], {"family": "gamma"}, MethodError, "^values: expected finite"),
        ([1.0, np.nan, 3.0], {"family": "normal"}, MethodError, "^values: expected finite"),
        ([1.0, 2.0, 3.0], {"family": "cauchy"}, MethodError, "^family: expected one of"),
        ([2.0, 2.0, 2.0], {"family": "normal"}, MethodError, "^values: expected at least 2"),
        (
            [1.0, 2.0, 3.0, 4.0],
            {"family": "normal", "n_components": 2},
            MethodError,
            "^values: a 2-component mixture needs at least 6 distinct values, found 4",
        ),
        (
            [1.0, 2.0, 3.0],
            {"family": "normal", "weights": [1.0, 2.0]},
            MethodError,
            "^weights: expected 3 weights",
        ),
        (
            [1.0, 2.0, 3.0],
            {"family": "normal", "weights": [1.0, -2.0, 1.0]},
            MethodError,
            "^weights: expected finite weights >= 0",
        ),
        ([1.0, 2.0, 3.0], {"family": "normal", "n_starts": 0}, MethodError, "^n_starts:"),
        ([1.0, 2.0, 3.0], {"family": "normal", "tol": 0.0}, MethodError, "^tol:"),
        ([1.0, 2.0, 3.0], {"family": "normal", "min_weight": 1.5}, MethodError, "^min_weight:"),
        ([1.0, 2.0, 3.0], {"family": "normal", "n_components": 0}, MethodError, "^n_components:"),
    ],
)
def test_bad_input_names_the_argument(
    values: list[float], kwargs: dict, error: type[Exception], message: str
) -> None:
    """Bad values, weights or options raise a one-line error naming the argument."""
    with pytest.raises(error, match=message):
        fit_mixture(values, **kwargs)


def test_max_iter_bound_reports_non_convergence() -> None:
    """With max_iter too small for any start to settle, a clear FitError says so."""
    with pytest.raises(FitError, match="not converged"):
        fit_mixture(_two_modes("normal"), family="normal", n_components=2, max_iter=2, rng=0)
