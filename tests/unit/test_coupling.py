"""Unit tests for samplewright.fitting.coupling: nearest correlation matrix and Iman-Conover."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import InputDataError, MethodError
from samplewright.fitting.coupling import iman_conover, nearest_correlation

# not positive semi-definite (eigenvalues -0.12, 1.17, 1.95); invented
NOT_PSD = np.array([[1.0, 0.9, -0.5], [0.9, 1.0, 0.2], [-0.5, 0.2, 1.0]])
TARGET = np.array([[1.0, 0.6, 0.3], [0.6, 1.0, -0.4], [0.3, -0.4, 1.0]])  # PSD; invented


def _random_symmetric(rng: np.random.Generator, d: int) -> np.ndarray:
    """A symmetric matrix with unit diagonal and entries uniform in [-1, 1]."""
    a = rng.uniform(-1.0, 1.0, size=(d, d))
    a = np.triu(a, 1)
    a = a + a.T
    np.fill_diagonal(a, 1.0)
    return a


def _random_correlation(rng: np.random.Generator, d: int) -> np.ndarray:
    """A random correlation matrix (the correlation of a small Gaussian sample)."""
    return np.asarray(np.corrcoef(rng.normal(size=(d + 3, d)), rowvar=False))


def test_valid_correlation_returned_unchanged() -> None:
    """A matrix that is already a correlation matrix needs no repair: distance 0, no sweeps."""
    res = nearest_correlation(TARGET)
    np.testing.assert_array_equal(res.correlation, TARGET)
    assert res.distance == 0.0 and res.n_iterations == 0


@pytest.mark.parametrize("seed", range(5))
def test_repair_is_a_correlation_matrix_at_the_reported_distance(seed: int) -> None:
    """The repaired matrix is symmetric, unit-diagonal, PSD, and the distance is its norm gap."""
    rng = np.random.default_rng(seed)
    a = _random_symmetric(rng, 6)
    assert np.linalg.eigvalsh(a)[0] < 0  # these draws are not PSD
    res = nearest_correlation(a)
    x = res.correlation
    np.testing.assert_array_equal(x, x.T)
    np.testing.assert_array_equal(np.diag(x), np.ones(6))
    assert np.linalg.eigvalsh(x)[0] > -1e-10
    assert res.distance == pytest.approx(np.linalg.norm(x - a), rel=1e-12)
    assert res.n_iterations > 0


@pytest.mark.parametrize("seed", range(3))
def test_repair_is_nearer_than_any_other_correlation_matrix_tried(seed: int) -> None:
    """Moving from the answer toward other correlation matrices only increases the distance.

    The set of correlation matrices is convex, so (1 - t) X + t K stays in it; at the nearest
    point X the distance can only grow along such a path (projection onto a convex set).
    """
    rng = np.random.default_rng(100 + seed)
    a = _random_symmetric(rng, 5)
    res = nearest_correlation(a, tol=1e-13)
    for _ in range(20):
        k = _random_correlation(rng, 5)
        for t in (1e-3, 1e-2, 0.1, 0.5):
            other = (1.0 - t) * res.correlation + t * k
            assert np.linalg.norm(other - a) >= res.distance - 1e-9


def test_min_eigenvalue_floor_is_honoured() -> None:
    """With min_eigenvalue the answer stays invertible (smallest eigenvalue near the floor)."""
    res = nearest_correlation(NOT_PSD, min_eigenvalue=1e-3)
    lowest = np.linalg.eigvalsh(res.correlation)[0]
    assert lowest == pytest.approx(1e-3, rel=1e-2)
    assert res.distance > nearest_correlation(NOT_PSD).distance


@pytest.mark.parametrize(
    ("matrix", "match"),
    [
        (np.ones((2, 3)), r"rank_correlation: expected a square matrix, found shape \(2, 3\)"),
        ([[1.0, 0.2], [0.3, 1.0]], "rank_correlation: expected a symmetric matrix"),
        ([[1.0, 0.2], [0.2, 0.9]], r"rank_correlation: expected 1 on the diagonal, found \[1, 1\]"),
        ([[1.0, 1.5], [1.5, 1.0]], r"rank_correlation: expected entries in \[-1, 1\]"),
        ([[1.0, np.nan], [np.nan, 1.0]], "rank_correlation: expected finite entries"),
        ([["a", "b"], ["c", "d"]], "rank_correlation: expected a numeric square matrix"),
    ],
)
def test_nearest_correlation_refuses_what_is_not_a_correlation_matrix(
    matrix: object, match: str
) -> None:
    """Shape, symmetry, diagonal and range errors are refused with the option named."""
    with pytest.raises(MethodError, match=match):
        nearest_correlation(matrix)  # type: ignore[arg-type]


def test_nearest_correlation_names_the_given_argument() -> None:
    """The name in messages can be set by the caller."""
    with pytest.raises(MethodError, match="^correlation: expected a symmetric"):
        nearest_correlation([[1.0, 0.2], [0.3, 1.0]], name="correlation")  # type: ignore[arg-type]


def _independent_samples(n: int, seed: int) -> np.ndarray:
    """Three independent, differently shaped inputs (lognormal, gamma, uniform)."""
    rng = np.random.default_rng(seed)
    return np.column_stack([rng.lognormal(size=n), rng.gamma(2.0, size=n), rng.uniform(size=n)])


def test_iman_conover_keeps_every_marginal() -> None:
    """Each output column is a permutation of the input column (sorted columns equal)."""
    x = _independent_samples(2000, 1)
    out = iman_conover(x, TARGET, rng=2)
    np.testing.assert_array_equal(np.sort(out, axis=0), np.sort(x, axis=0))


def test_iman_conover_keeps_ties() -> None:
    """Heavily tied columns keep exactly their values and counts."""
    rng = np.random.default_rng(3)
    x = np.column_stack([rng.integers(0, 4, 1000), np.round(rng.exponential(size=1000), 1)])
    out = iman_conover(x.astype(float), [[1.0, 0.7], [0.7, 1.0]], rng=4)
    for j in range(2):
        values, counts = np.unique(x[:, j], return_counts=True)
        out_values, out_counts = np.unique(out[:, j], return_counts=True)
        np.testing.assert_array_equal(out_values, values)
        np.testing.assert_array_equal(out_counts, counts)
    assert stats.spearmanr(out).statistic > 0.5  # the reordering did happen


@pytest.mark.parametrize("seed", range(3))
def test_iman_conover_reaches_the_target_spearman(seed: int) -> None:
    """At n = 5000 the achieved Spearman correlation is within 0.03 of the target."""
    x = _independent_samples(5000, 10 + seed)
    out = iman_conover(x, TARGET, rng=seed)
    achieved = stats.spearmanr(out).statistic
    np.testing.assert_allclose(achieved, TARGET, atol=0.03)


def test_spearman_target_is_closer_than_the_original_score_target() -> None:
    """Calibrating the scores (target='spearman') beats Iman & Conover's own ('scores')."""
    x = _independent_samples(5000, 20)
    target = np.array([[1.0, 0.6], [0.6, 1.0]])
    errors = {}
    for mode in ("spearman", "scores"):
        errs = [
            abs(stats.spearmanr(iman_conover(x[:, :2], target, rng=s, target=mode)).statistic - 0.6)
            for s in range(5)
        ]
        errors[mode] = float(np.mean(errs))
    assert errors["spearman"] < errors["scores"]
    assert errors["spearman"] < 0.01


def test_iman_conover_is_reproducible() -> None:
    """Same rng, same reordering; another seed, another one."""
    x = _independent_samples(300, 5)
    np.testing.assert_array_equal(iman_conover(x, TARGET, rng=8), iman_conover(x, TARGET, rng=8))
    assert not np.array_equal(iman_conover(x, TARGET, rng=8), iman_conover(x, TARGET, rng=9))


def test_iman_conover_repairs_a_non_psd_target_with_a_warning() -> None:
    """A non-PSD target is replaced by the nearest correlation matrix; the warning gives the gap."""
    x = _independent_samples(3000, 6)
    distance = nearest_correlation(NOT_PSD).distance
    with pytest.warns(UserWarning, match="rank_correlation: not positive semi-definite") as rec:
        out = iman_conover(x, NOT_PSD, rng=1, target="scores")
    assert f"Frobenius distance {distance:.4g}" in str(rec[0].message)
    np.testing.assert_array_equal(np.sort(out, axis=0), np.sort(x, axis=0))


def test_iman_conover_spearman_target_repair_reports_rank_distance() -> None:
    """With target='spearman' the repair is made to the scores and reported once."""
    x = _independent_samples(3000, 7)
    with pytest.warns(UserWarning, match="nearest reachable rank correlation") as rec:
        out = iman_conover(x, NOT_PSD, rng=1)
    assert len(rec) == 1
    achieved = stats.spearmanr(out).statistic
    assert np.linalg.eigvalsh(achieved)[0] > 0  # a real rank correlation matrix came out
    assert np.abs(achieved - NOT_PSD).max() < 0.15


def test_iman_conover_perfect_correlation() -> None:
    """A target of 1 (singular, still valid) gives comonotone columns."""
    x = _independent_samples(500, 8)[:, :2]
    out = iman_conover(x, [[1.0, 1.0], [1.0, 1.0]], rng=3)
    assert stats.spearmanr(out).statistic == pytest.approx(1.0, abs=1e-12)


def test_iman_conover_single_column_is_a_copy() -> None:
    """One column has nothing to couple: the output equals the input."""
    x = np.arange(5.0).reshape(5, 1)
    np.testing.assert_array_equal(iman_conover(x, [[1.0]], rng=1), x)


@pytest.mark.parametrize(
    ("samples", "target", "error", "match"),
    [
        (np.ones(5), [[1.0]], InputDataError, r"samples: expected a 2-D array"),
        (np.ones((2, 3)), np.eye(3), InputDataError, "samples: expected more rows than columns"),
        (
            np.array([[1.0, 2.0], [np.inf, 1.0], [3.0, 4.0]]),
            np.eye(2),
            InputDataError,
            r"samples: expected finite values, found 1 non-finite \(first at row 1, column 0",
        ),
        (np.ones((5, 2)), np.eye(3), MethodError, r"rank_correlation: expected a 2x2 matrix"),
    ],
)
def test_iman_conover_refuses_bad_input(
    samples: np.ndarray, target: object, error: type[Exception], match: str
) -> None:
    """Wrong shapes, non-finite values and a mismatched target are refused by name."""
    with pytest.raises(error, match=match):
        iman_conover(samples, target, rng=1)  # type: ignore[arg-type]


def test_iman_conover_refuses_unknown_target_mode() -> None:
    """The target option is a closed list."""
    with pytest.raises(MethodError, match="target: expected one of spearman, scores"):
        iman_conover(np.ones((5, 2)), np.eye(2), target="pearson")  # type: ignore[arg-type]
