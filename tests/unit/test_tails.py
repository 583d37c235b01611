"""Unit tests of the spliced (body + generalized Pareto tail) method: its sampler and its fit."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate

import samplewright as sw
from samplewright.core.errors import MethodError
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.piecewise import PiecewiseSampler
from samplewright.distributions.spliced import SplicedSampler
from samplewright.fitting import spliced
from samplewright.fitting.catalog import CATALOG
from samplewright.fitting.registry import load_object
from samplewright.fitting.spliced import (
    MIN_EXCEEDANCES_AUTO,
    STABILITY_PROBABILITIES,
    fit_spliced,
    gpd_fit_excesses,
    scan_thresholds,
)
from samplewright.store.artifacts import load_sampler, write_sampler


@pytest.fixture(scope="module")
def data() -> np.ndarray:
    """Invented heavy-tailed positive data (lognormal body, Pareto-like upper tail)."""
    rng = np.random.default_rng(20260)
    return np.concatenate([rng.lognormal(2.0, 0.5, 1500), 10.0 + 4.0 * rng.pareto(3.0, 500)])


@pytest.fixture(scope="module")
def fitted(data: np.ndarray) -> SplicedSampler:
    """A spliced fit with an empirical body at the 0.9 quantile."""
    return fit_spliced(data, threshold_quantile=0.9)


def test_spliced_is_registered_and_reached_through_fit(data: np.ndarray) -> None:
    """The catalog names samplewright.fitting.spliced's fitter for 'spliced'; sw.fit reaches it."""
    assert load_object(CATALOG["spliced"].fitter) is spliced.fit_sample
    assert "spliced" in sw.known_methods()
    s = sw.fit(data, method="spliced", threshold_quantile=0.9)
    assert isinstance(s, SplicedSampler) and s.method == "spliced"


def test_cdf_quantile_and_mean_of_a_hand_built_sampler() -> None:
    """A small sampler gives the CDF, quantile and mean of the splicing formula."""
    body = EmpiricalSampler([1.0, 2.0, 3.0])
    s = SplicedSampler(body, threshold=3.0, zeta=0.25, xi=0.0, sigma=2.0)
    # hand computation: below u, 0.75 * ECDF; above, 1 - 0.25 * exp(-(x - 3) / 2)
    np.testing.assert_allclose(
        s.cdf([0.5, 1.0, 2.5, 3.0, 5.0]), [0.0, 0.25, 0.5, 0.75, 1.0 - 0.25 * np.exp(-1.0)]
    )
    # hand computation: Q(0.875) = 3 + 2 * log(2); Q(0.3) is the second body value
    np.testing.assert_allclose(s.quantile([0.3, 0.875]), [2.0, 3.0 + 2.0 * np.log(2.0)])
    assert s.mean == pytest.approx(0.75 * 2.0 + 0.25 * 5.0)  # hand computation
    assert s.support == (1.0, np.inf)


def test_cdf_is_continuous_at_the_threshold(fitted: SplicedSampler) -> None:
    """Just above u the CDF equals 1 - zeta, its value at u."""
    u, z = fitted.threshold, fitted.zeta
    assert float(fitted.cdf(u)) == pytest.approx(1.0 - z, abs=1e-15)
    assert float(fitted.cdf(np.nextafter(u, np.inf))) == pytest.approx(1.0 - z, abs=1e-12)


@pytest.mark.parametrize("body", ["empirical", "interpolated", "lognormal"])
def test_quantile_inverts_the_cdf(data: np.ndarray, body: str) -> None:
    """cdf(quantile(p)) == p where F is continuous, and quantile(cdf(x)) == x in the tail."""
    s = fit_spliced(data, body=body, threshold_quantile=0.9)
    p_tail = np.linspace(0.901, 0.999999, 50)
    np.testing.assert_allclose(s.cdf(s.quantile(p_tail)), p_tail, rtol=0, atol=1e-12)
    x_tail = s.threshold + np.linspace(0.1, 200.0, 40)
    np.testing.assert_allclose(s.quantile(s.cdf(x_tail)), x_tail, rtol=1e-9)
    if body != "empirical":
        p_body = np.linspace(0.01, 0.89, 30)
        np.testing.assert_allclose(s.cdf(s.quantile(p_body)), p_body, atol=1e-12)
    else:  # generalised inverse of a step CDF: each body value is its own quantile
        xb = np.sort(data)[:50]
        np.testing.assert_array_equal(s.quantile(s.cdf(xb)), xb)


def test_draws_exceed_the_largest_value_with_the_tail_probability(
    data: np.ndarray, fitted: SplicedSampler
) -> None:
    """The share of draws above max(x) matches 1 - F(max x) = zeta * S_G(max x - u)."""
    n = 400_000
    draws = fitted.draw(n, rng=11)
    expected = float(1.0 - fitted.cdf(data.max()))
    assert expected > 1e-4
    share = float(np.mean(draws > data.max()))
    # common practice, no source: binomial standard error, 5 sigma
    assert abs(share - expected) < 5.0 * np.sqrt(expected * (1.0 - expected) / n)


def test_draws_follow_the_cdf_in_the_body_and_tail(fitted: SplicedSampler) -> None:
    """Draw frequencies below several points match the CDF (body and tail)."""
    draws = fitted.draw(200_000, rng=5)
    points = fitted.quantile([0.2, 0.5, 0.9, 0.95, 0.99])
    for q, p in zip(points, fitted.cdf(points), strict=True):
        # common practice, no source: binomial standard error, 5 sigma
        assert abs(np.mean(draws <= q) - p) < 5.0 * np.sqrt(p * (1 - p) / draws.size)


@pytest.mark.parametrize("body", ["interpolated", "gamma"])
def test_moments_equal_numerical_integration(data: np.ndarray, body: str) -> None:
    """mean and var equal integrals of the quantile function over (0, 1)."""
    s = fit_spliced(data, body=body, threshold_quantile=0.85)
    assert s.xi < 0.5
    split = 1.0 - s.zeta
    # body: midpoint rule on a fine grid (the quantile is piecewise linear or smooth there)
    n = 2_000_000
    qb = s.quantile((np.arange(n) + 0.5) / n * split)
    m_body, m2_body = split * qb.mean(), split * np.mean(qb * qb)
    # tail: adaptive quadrature of the closed-form GPD quantile
    m_tail = integrate.quad(lambda p: float(s.quantile(p)), split, 1.0, limit=200)[0]
    m2_tail = integrate.quad(lambda p: float(s.quantile(p)) ** 2, split, 1.0, limit=200)[0]
    m, m2 = m_body + m_tail, m2_body + m2_tail
    assert s.mean == pytest.approx(m, rel=1e-7)
    assert s.var == pytest.approx(m2 - m * m, rel=1e-6)


def test_heavy_tails_have_infinite_moments() -> None:
    """mean is infinite for xi >= 1 and var for xi >= 0.5 (GPD moment conditions)."""
    body = EmpiricalSampler([1.0, 2.0])
    assert SplicedSampler(body, threshold=2.0, zeta=0.1, xi=1.0, sigma=1.0).mean == np.inf
    s = SplicedSampler(body, threshold=2.0, zeta=0.1, xi=0.6, sigma=1.0)
    assert np.isfinite(s.mean) and s.var == np.inf


def test_negative_shape_bounds_the_support() -> None:
    """With xi < 0 the upper end is u + sigma / (-xi), where the CDF reaches 1."""
    s = SplicedSampler(EmpiricalSampler([0.0, 1.0]), threshold=1.0, zeta=0.2, xi=-0.5, sigma=2.0)
    assert s.support == (0.0, 5.0)  # hand computation: 1 + 2 / 0.5
    assert float(s.cdf(5.0)) == 1.0 and float(s.quantile(1.0)) == 5.0
    assert float(s.cdf(4.9)) < 1.0


def test_interpolated_body_pdf_and_pmf_hold_all_the_mass(data: np.ndarray) -> None:
    """The continuous density integrates to 1 for an interpolated body without ties."""
    s = fit_spliced(data, body="interpolated", threshold=20.0)
    assert isinstance(s.body, PiecewiseSampler)
    knots = s.body.x
    lo = float(knots[0])
    inside = sum(
        integrate.quad(lambda v: float(s.pdf(v)), a, b)[0]
        for a, b in zip(knots[:-1], knots[1:], strict=True)
    )
    tail = integrate.quad(lambda v: float(s.pdf(v)), 20.0, np.inf)[0]
    assert inside + tail == pytest.approx(1.0, abs=1e-9)
    assert float(s.cdf(lo)) == 0.0 and float(s.cdf(20.0)) == pytest.approx(1.0 - s.zeta)
    assert np.all(s.pmf(knots) == 0.0)


def test_parametric_body_is_truncated_at_the_threshold(data: np.ndarray) -> None:
    """A family body is renormalised below u: F(u) = 1 - zeta and no body draw exceeds u."""
    s = fit_spliced(data, body="lognormal", threshold_quantile=0.9)
    assert isinstance(s.body, ParametricSampler)
    assert float(s.cdf(s.threshold)) == pytest.approx(1.0 - s.zeta, abs=1e-14)
    assert float(s.quantile(1.0 - s.zeta)) == pytest.approx(s.threshold)
    assert {"body_mu", "body_sigma", "body_loc"} <= set(s.params)


def test_default_threshold_follows_the_stability_rule(data: np.ndarray) -> None:
    """The automatic threshold is the smallest candidate meeting the documented criterion."""
    scan = scan_thresholds(data)
    fitted = np.isfinite(scan.xi) & np.isfinite(scan.xi_se)
    # slow, obviously correct re-implementation of the rule in the module docstring
    expected = []
    for k in range(scan.xi.size):
        higher = [
            j for j in range(scan.xi.size) if fitted[j] and scan.thresholds[j] > scan.thresholds[k]
        ]
        ok = (
            fitted[k]
            and scan.n_exceedances[k] >= MIN_EXCEEDANCES_AUTO
            and len(higher) >= 3
            and all(abs(scan.xi[k] - scan.xi[j]) <= scan.xi_se[j] for j in higher)
        )
        expected.append(bool(ok))
    np.testing.assert_array_equal(scan.stable, expected)
    assert scan.stable.any() and scan.rule == "stability"
    assert scan.threshold == scan.thresholds[int(np.argmax(scan.stable))]
    s = fit_spliced(data)
    assert s.threshold == scan.threshold
    assert s.diagnostics["threshold_choice"]["rule"] == "stability"


def test_default_threshold_falls_back_to_the_090_quantile() -> None:
    """With too few values for 50 exceedances anywhere, the threshold is the 0.90 quantile."""
    x = np.random.default_rng(4).exponential(3.0, 200)  # 40 exceedances at the 0.80 quantile
    s = fit_spliced(x)
    assert s.diagnostics["threshold_choice"]["rule"] == "fallback"
    assert s.threshold == float(EmpiricalSampler(x).quantile(0.9))
    assert s.params["n_exceedances"] == 20


def test_threshold_quantile_is_the_lower_sample_quantile(data: np.ndarray) -> None:
    """threshold_quantile=q gives u = inf{x : F_n(x) >= q} and zeta the share above it."""
    s = fit_spliced(data, threshold_quantile=0.95)
    xs = np.sort(data)
    assert s.threshold == xs[int(np.ceil(0.95 * xs.size)) - 1]  # hand computation, no ties
    assert s.zeta == pytest.approx(np.mean(data > s.threshold))


def test_gpd_parameters_are_the_fit_to_the_excesses(data: np.ndarray) -> None:
    """xi and sigma equal a direct GPD fit to x - u above u, and modified scale is sigma - xi u."""
    s = fit_spliced(data, threshold=18.0)
    xi, sigma, _, _ = gpd_fit_excesses(data[data > 18.0] - 18.0)
    assert (s.xi, s.sigma) == (xi, sigma)
    table = s.diagnostics["parameter_stability"]
    k = table["probability"].index(0.9)
    u = table["threshold"][k]
    xi_k, sigma_k, _, _ = gpd_fit_excesses(data[data > u] - u)
    assert table["xi"][k] == pytest.approx(xi_k)
    assert table["modified_scale"][k] == pytest.approx(sigma_k - xi_k * u)


def test_integer_weights_match_repeated_rows() -> None:
    """Frequency weights give the same threshold, zeta and tail fit as repeating the rows."""
    rng = np.random.default_rng(8)
    x = rng.lognormal(1.0, 0.8, 600)
    w = rng.integers(1, 4, x.size).astype(float)
    a = fit_spliced(x, w, threshold_quantile=0.9)
    b = fit_spliced(np.repeat(x, w.astype(int)), threshold_quantile=0.9)
    assert a.threshold == b.threshold and a.zeta == pytest.approx(b.zeta)
    assert a.xi == pytest.approx(b.xi, abs=1e-6) and a.sigma == pytest.approx(b.sigma, rel=1e-6)
    np.testing.assert_allclose(
        a.cdf([1.0, 3.0, 9.0, 30.0]), b.cdf([1.0, 3.0, 9.0, 30.0]), atol=1e-9
    )


def test_diagnostics_are_plain_json_with_the_documented_tables(
    fitted: SplicedSampler, data: np.ndarray
) -> None:
    """Diagnostics serialise without NaN and hold the mean-excess and stability tables."""
    d = json.loads(json.dumps(fitted.diagnostics, allow_nan=False))
    assert d["threshold_choice"]["rule"] == "threshold_quantile"
    me = d["mean_excess"]
    assert len(me["threshold"]) == len(me["mean_excess"]) == len(me["n_exceedances"]) == 25
    u = me["threshold"][10]
    assert me["mean_excess"][10] == pytest.approx(np.mean(data[data > u] - u))
    assert me["n_exceedances"][10] == int(np.sum(data > u))
    st = d["parameter_stability"]
    assert st["probability"] == list(STABILITY_PROBABILITIES)
    assert all(v is None or v > 0 for v in st["xi_se"] + st["modified_scale_se"])


def test_round_trip_keeps_cdf_and_quantile_identical(data: np.ndarray, tmp_path: Path) -> None:
    """Writing and loading an artifact rebuilds the same CDF and quantile, bit for bit."""
    rng = np.random.default_rng(2)
    w = rng.uniform(0.5, 2.0, data.size)
    grid_x = np.linspace(0.0, 80.0, 301)
    grid_p = np.linspace(0.0, 1.0, 301)
    cases = [
        ({"body": "empirical"}, None),
        ({"body": "interpolated"}, None),
        ({"body": "weibull"}, None),
        ({"body": "empirical"}, w),
    ]
    for i, (opts, weights) in enumerate(cases):
        s = fit_spliced(data, weights, threshold_quantile=0.9, **opts)
        path = tmp_path / f"s{i}.parquet"
        meta = write_sampler(s, path, diagnostics=s.diagnostics)
        t = load_sampler(path)
        assert isinstance(t, SplicedSampler) and t.params == s.params
        np.testing.assert_array_equal(t.cdf(grid_x), s.cdf(grid_x))
        np.testing.assert_array_equal(t.quantile(grid_p), s.quantile(grid_p))
        again = write_sampler(t, tmp_path / f"r{i}.parquet", diagnostics=s.diagnostics)
        assert again["content_hash"] == meta["content_hash"]


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"tail": 3}, "unknown option 'tail' for spliced"),
        (
            {"threshold": 10.0, "threshold_quantile": 0.9},
            "options 'threshold' and 'threshold_quantile' of spliced: pass at most one",
        ),
        (
            {"threshold_quantile": 1.0},
            "option 'threshold_quantile' of spliced: expected a "
            "probability in \\(0, 1\\), found 1.0",
        ),
        ({"threshold": "high"}, "option 'threshold' of spliced: expected a finite number"),
        ({"threshold": True}, "option 'threshold' of spliced: expected a finite number"),
        ({"body": "poisson"}, "option 'body' of spliced: expected 'empirical', 'interpolated'"),
        (
            {"threshold": 120.0},
            "option 'threshold' of spliced: 3 exceedances above 120.0, at least 10 needed",
        ),
        ({"threshold": -1.0}, "option 'threshold' of spliced: no value at or below"),
    ],
)
def test_bad_options_raise_one_line_method_errors(options: dict, message: str) -> None:
    """Each bad option stops with a MethodError naming the option."""
    x = np.concatenate([np.linspace(1.0, 100.0, 197), [130.0, 150.0, 170.0]])
    with pytest.raises(MethodError, match=message):
        fit_spliced(x, **options)


def test_censored_data_and_weighted_interpolated_body_are_refused() -> None:
    """Censored values and weights with an interpolated body raise MethodError."""
    x = np.random.default_rng(0).exponential(1.0, 300)
    with pytest.raises(MethodError, match="'spliced' does not handle censored data"):
        sw.fit(x, method="spliced", censored=np.arange(300) % 7 == 0)
    with pytest.raises(MethodError, match="'interpolated' does not take weights"):
        fit_spliced(x, np.ones(300), body="interpolated")
    s = fit_spliced(x, censored=np.zeros(300, dtype=bool), threshold_quantile=0.9)
    assert s.params["n_exceedances"] == 30  # all-False flags are not censoring


def test_empirical_body_quantile_equals_the_searched_generalised_inverse(
    fitted: SplicedSampler,
) -> None:
    """The fast body quantile equals inf{x : F(x) >= p} found by binary search, at every edge."""
    split = 1.0 - fitted.zeta
    cum = split * fitted.body._cum  # the products cdf uses
    p = np.concatenate(
        [
            np.random.default_rng(1).uniform(0.0, split, 20_000),
            cum[:-1],
            np.nextafter(cum[:-1], 0.0),
            np.nextafter(cum[:-1], 1.0),
            [0.0, split],
        ]
    )
    p = p[p <= split]
    # slow, obviously correct reference: binary search on the cumulative masses
    ref = fitted.body.values[np.minimum(np.searchsorted(cum, p, side="left"), cum.size - 1)]
    np.testing.assert_array_equal(fitted.quantile(p), ref)
    np.testing.assert_array_equal(fitted.quantile(p.reshape(-1, 1)).ravel(), ref)
