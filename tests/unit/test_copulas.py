"""Unit tests for fitting.copulas: fitting elliptical copulas and dependent uniforms."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import InputDataError, MethodError
from samplewright.core.uniforms import draw_uniforms
from samplewright.fitting.copulas import (
    copula_correlation,
    copula_log_likelihood,
    fit_gaussian_copula,
    fit_t_copula,
    gaussian_copula_uniforms,
    pseudo_observations,
    t_copula_uniforms,
)

R2 = np.array([[1.0, 0.5], [0.5, 1.0]])
R3 = np.array([[1.0, 0.5, 0.2], [0.5, 1.0, -0.3], [0.2, -0.3, 1.0]])  # invented, PD


def test_pseudo_observations_are_ranks_over_n_plus_one_with_average_ties() -> None:
    """Ranks / (n + 1) per column; tied values share their average rank."""
    x = np.array([[5.0, 1.0], [2.0, 1.0], [9.0, 3.0], [2.0, 4.0]])
    expected = np.array([[3.0, 1.5], [1.5, 1.5], [4.0, 3.0], [1.5, 4.0]]) / 5.0  # by hand
    np.testing.assert_array_equal(pseudo_observations(x), expected)


def test_kendall_correlation_is_sine_of_tau() -> None:
    """The Kendall estimate is sin(pi tau / 2) with scipy's tau-b per pair."""
    x = np.random.default_rng(1).normal(size=(200, 3))
    x[:, 1] += x[:, 0]
    c = copula_correlation(x, method="kendall")
    tau = stats.kendalltau(x[:, 0], x[:, 1]).statistic  # source: scipy.stats.kendalltau
    assert c[0, 1] == pytest.approx(math.sin(math.pi * tau / 2.0), abs=1e-15)
    np.testing.assert_array_equal(c, c.T)


@pytest.mark.parametrize("method", ["kendall", "normal_scores"])
def test_gaussian_copula_fit_recovers_the_correlation(method: str) -> None:
    """Data from a known Gaussian copula (any marginals) give back its correlation within 0.04."""
    u = gaussian_copula_uniforms(R3, draw_uniforms(4000, rng=2, dimension=3))
    data = np.column_stack([stats.expon.ppf(u[:, 0]), stats.gamma.ppf(u[:, 1], 3), u[:, 2]])
    res = fit_gaussian_copula(data, method=method)  # type: ignore[arg-type]
    np.testing.assert_allclose(res.correlation, R3, atol=0.04)
    assert res.kind == "gaussian" and res.df is None and res.n_obs == 4000
    assert res.repair_distance == 0.0
    assert res.log_likelihood > 0  # dependence fits better than independence (log c = 0)


def test_t_copula_fit_recovers_degrees_of_freedom() -> None:
    """Data from a t copula with 4 degrees of freedom give df between 3 and 6."""
    u = t_copula_uniforms(R2, 4.0, draw_uniforms(3000, rng=3, dimension=3))
    res = fit_t_copula(np.column_stack([stats.lognorm.ppf(u[:, 0], 1.0), u[:, 1]]))
    assert res.kind == "student_t" and res.method == "kendall"
    assert res.df is not None and 3.0 < res.df < 6.0
    np.testing.assert_allclose(res.correlation, R2, atol=0.04)
    gauss = fit_gaussian_copula(u[:, :2])
    assert res.log_likelihood > gauss.log_likelihood


def test_t_copula_fit_refuses_when_df_runs_to_the_upper_bound() -> None:
    """A full 40 x 40 grid (the most even independent sample) wants df beyond 200: refused."""
    g = np.arange(1, 41) / 41.0
    grid = np.array([(a, b) for a in g for b in g])
    with pytest.raises(MethodError, match="df: .* upper bound 200 .* beyond a Gaussian"):
        fit_t_copula(grid)


def test_t_copula_fit_refuses_when_df_runs_to_the_lower_bound() -> None:
    """Data with df 2 and a lower bound of 8 leave the maximum at the bound: refused."""
    u = t_copula_uniforms(R2, 2.0, draw_uniforms(2000, rng=4, dimension=3))
    with pytest.raises(MethodError, match="df: .* lower bound 8 of df_bounds"):
        fit_t_copula(u[:, :2], df_bounds=(8.0, 200.0))


def test_kendall_matrix_that_is_not_psd_is_repaired_with_a_warning() -> None:
    """Six rows of four columns give a non-PSD Kendall matrix; the fit repairs and says so."""
    x = np.array(  # invented (normal draws rounded to two decimals)
        [
            [2.04, -2.56, 0.42, -0.57],
            [-0.45, -0.22, -2.02, -0.23],
            [-0.87, 3.32, 0.23, -0.35],
            [-0.28, -0.67, -1.06, -0.39],
            [0.48, -0.24, 0.96, -0.2],
            [0.02, 1.55, 0.55, -0.51],
        ]
    )
    assert np.linalg.eigvalsh(copula_correlation(x))[0] < 0
    with pytest.warns(UserWarning, match="correlation: the kendall estimate is not positive"):
        res = fit_gaussian_copula(x)
    assert res.repair_distance > 0
    assert np.linalg.eigvalsh(res.correlation)[0] > 0
    assert math.isfinite(res.log_likelihood)


def test_independence_has_zero_gaussian_log_likelihood() -> None:
    """With the identity correlation the Gaussian copula density is 1 everywhere."""
    u = draw_uniforms(64, rng=5, dimension=3, sequence="sobol")
    assert copula_log_likelihood(u, np.eye(3)) == pytest.approx(0.0, abs=1e-10)


def test_t_log_likelihood_tends_to_gaussian_as_df_grows() -> None:
    """At df = 1e7 the t copula log-likelihood equals the Gaussian one to 1e-4."""
    u = gaussian_copula_uniforms(R3, draw_uniforms(500, rng=6, dimension=3))
    gauss = copula_log_likelihood(u, R3)
    assert copula_log_likelihood(u, R3, df=1e7) == pytest.approx(gauss, abs=1e-4)


@pytest.mark.parametrize("sequence", ["random", "sobol"])
def test_gaussian_copula_uniforms_have_uniform_marginals_and_the_right_tau(sequence: str) -> None:
    """Each column is uniform; Kendall's tau is (2/pi) asin(rho) (Lindskog et al. 2003)."""
    u = gaussian_copula_uniforms(
        R3,
        draw_uniforms(2**13, rng=7, dimension=3, sequence=sequence),  # type: ignore[arg-type]
    )
    for j in range(3):
        assert stats.kstest(u[:, j], "uniform").pvalue > 0.01
    tau = stats.kendalltau(u[:, 0], u[:, 1]).statistic
    assert tau == pytest.approx(2.0 / math.pi * math.asin(0.5), abs=0.02)


def test_t_copula_has_heavier_joint_tails_than_gaussian() -> None:
    """Same correlation, df 3: both in the lowest 1% together far more often than Gaussian."""
    base = draw_uniforms(2**16, rng=8, dimension=3, sequence="sobol")
    g = gaussian_copula_uniforms(R2, base[:, :2])
    t = t_copula_uniforms(R2, 3.0, base)
    joint_g = np.mean((g[:, 0] < 0.01) & (g[:, 1] < 0.01))
    joint_t = np.mean((t[:, 0] < 0.01) & (t[:, 1] < 0.01))
    assert joint_t > 1.5 * joint_g
    tau = stats.kendalltau(t[:, 0], t[:, 1]).statistic
    assert tau == pytest.approx(2.0 / math.pi * math.asin(0.5), abs=0.02)


def test_copula_uniforms_stay_strictly_inside_unit_interval() -> None:
    """Extreme inputs (1e-300, 1 - 1e-16) give outputs that are neither 0 nor 1."""
    u = np.array([[1e-300, 1e-300, 0.5], [1 - 1e-16, 1 - 1e-16, 1e-300]])
    g = gaussian_copula_uniforms(R2, u[:, :2])
    t = t_copula_uniforms(R2, 3.0, u)
    for out in (g, t):
        assert out.min() > 0.0 and out.max() < 1.0


def test_copula_uniforms_are_deterministic_in_their_input() -> None:
    """No hidden randomness: the same uniforms in give the same uniforms out."""
    base = draw_uniforms(64, rng=9, dimension=3)
    np.testing.assert_array_equal(t_copula_uniforms(R2, 5, base), t_copula_uniforms(R2, 5, base))


def test_non_psd_correlation_for_drawing_is_repaired_with_a_warning() -> None:
    """A non-PSD correlation given for drawing is repaired, and the warning says so."""
    bad = np.array([[1.0, 0.9, -0.5], [0.9, 1.0, 0.2], [-0.5, 0.2, 1.0]])
    with pytest.warns(UserWarning, match="correlation: not positive semi-definite"):
        out = gaussian_copula_uniforms(bad, draw_uniforms(16, rng=1, dimension=3))
    assert out.shape == (16, 3)


@pytest.mark.parametrize(
    ("call", "error", "match"),
    [
        (
            lambda: gaussian_copula_uniforms(R2, [[0.0, 0.5]]),
            InputDataError,
            r"u_independent: expected values strictly inside \(0, 1\), found 1 outside",
        ),
        (
            lambda: gaussian_copula_uniforms(R3, [[0.2, 0.5]]),
            MethodError,
            "correlation: expected a 2x2 matrix",
        ),
        (
            lambda: t_copula_uniforms(R2, 3.0, [[0.2, 0.5]]),
            MethodError,
            r"correlation: expected a 1x1 matrix",
        ),
        (
            lambda: t_copula_uniforms(R2, 0.0, [[0.2, 0.5, 0.5]]),
            MethodError,
            "df: expected a positive finite number, found 0.0",
        ),
        (
            lambda: t_copula_uniforms(R2, True, [[0.2, 0.5, 0.5]]),
            MethodError,
            "df: expected a positive number, found True",
        ),
        (
            lambda: fit_gaussian_copula(np.ones((10, 1))),
            InputDataError,
            "data: expected a 2-D array with at least 3 rows and 2 columns",
        ),
        (
            lambda: fit_gaussian_copula(np.column_stack([np.arange(5.0), np.ones(5)])),
            InputDataError,
            "data: column 1 is constant",
        ),
        (
            lambda: fit_gaussian_copula(np.eye(3), method="spearman"),
            MethodError,
            "method: expected one of kendall, normal_scores",
        ),
        (
            lambda: fit_t_copula(np.eye(3), df_bounds=(5.0, 2.0)),
            MethodError,
            r"df_bounds: expected 0 < low < high < inf, found \(5.0, 2.0\)",
        ),
        (
            lambda: copula_log_likelihood([[0.5, 0.5]], [[1.0, 1.0], [1.0, 1.0]]),
            MethodError,
            "correlation: expected a positive definite matrix",
        ),
    ],
)
def test_bad_input_is_refused_by_name(call: object, error: type[Exception], match: str) -> None:
    """Out-of-range uniforms, mismatched shapes, bad df, constant columns are named."""
    with pytest.raises(error, match=match):
        call()  # type: ignore[operator]
