"""The batched replicate engine of the parametric bootstrap (samplewright.resample.replicates)."""

from __future__ import annotations

import numpy as np
import pytest

from samplewright.core.errors import FitError
from samplewright.resample.replicates import MIN_BATCHES, ReplicatesResult, parametric_replicates


def _simulate(shape: tuple[int, int], gen: np.random.Generator) -> np.ndarray:
    return gen.exponential(2.0, shape)


def _mean_and_sd(row: np.ndarray) -> np.ndarray:
    return np.array([row.mean(), row.std()])


def test_replicates_equal_a_plain_loop_over_one_stream() -> None:
    """Batched results equal a slow loop drawing one replicate at a time from the same stream."""
    out = parametric_replicates(
        _simulate, _mean_and_sd, size=30, n_resamples=25, n_statistics=2, rng=5, batch=70
    )
    gen = np.random.default_rng(5)
    slow = np.array([_mean_and_sd(gen.exponential(2.0, 30)) for _ in range(25)])
    assert isinstance(out, ReplicatesResult) and out.n_failed == 0
    np.testing.assert_array_equal(out.values, slow)


def test_batch_size_does_not_change_row_by_row_results() -> None:
    """Replicates simulated in batches of any size are the same numbers."""
    runs = [
        parametric_replicates(
            _simulate, _mean_and_sd, size=40, n_resamples=33, n_statistics=2, rng=2, batch=b
        ).values
        for b in (40, 130, 1 << 20)
    ]
    np.testing.assert_array_equal(runs[0], runs[1])
    np.testing.assert_array_equal(runs[0], runs[2])


def test_a_vectorised_evaluation_is_used_when_offered_and_matches_the_rows() -> None:
    """evaluate_batch replaces the row loop; where it returns None the rows are evaluated."""
    calls = {"rows": 0}

    def row(r: np.ndarray) -> np.ndarray:
        calls["rows"] += 1
        return _mean_and_sd(r)

    def whole(sims: np.ndarray) -> np.ndarray:
        return np.stack([sims.mean(axis=1), sims.std(axis=1)], axis=1)

    kwargs = {"size": 20, "n_resamples": 12, "n_statistics": 2, "rng": 8}
    fast = parametric_replicates(_simulate, row, evaluate_batch=whole, **kwargs)  # type: ignore[arg-type]
    assert calls["rows"] == 0
    slow = parametric_replicates(_simulate, row, evaluate_batch=lambda s: None, **kwargs)  # type: ignore[arg-type]
    assert calls["rows"] == 12
    np.testing.assert_allclose(fast.values, slow.values, rtol=1e-14)


def test_failed_refits_are_counted_and_left_as_nan() -> None:
    """A replicate whose evaluation raises a fit failure is recorded, not fatal."""

    def picky(r: np.ndarray) -> np.ndarray:
        if r.mean() > 2.0:
            raise FitError("test: refused on purpose")
        return _mean_and_sd(r)

    out = parametric_replicates(_simulate, picky, size=10, n_resamples=200, n_statistics=2, rng=3)
    failed_rows = np.isnan(out.values).all(axis=1)
    assert 0 < out.n_failed == failed_rows.sum() < 200
    assert np.all(out.values[~failed_rows, 0] <= 2.0)


def test_other_errors_are_not_swallowed() -> None:
    """An error that is not a fit failure stops the run."""

    def broken(r: np.ndarray) -> np.ndarray:
        raise ZeroDivisionError("a bug, not a failed fit")

    with pytest.raises(ZeroDivisionError):
        parametric_replicates(_simulate, broken, size=5, n_resamples=3, n_statistics=1, rng=0)


def test_replicate_means_spread_like_the_sampling_distribution() -> None:
    """The replicate means of exponential(2) samples of 50 have sd 2 / sqrt(50) (within 5%)."""
    out = parametric_replicates(
        _simulate, _mean_and_sd, size=50, n_resamples=4000, n_statistics=2, rng=12
    )
    # sd of a mean of n iid values is sigma / sqrt(n) (common practice, no source);
    # the sd of 4000 replicates is within 5% of it with probability above 0.998
    assert out.values[:, 0].std() == pytest.approx(2.0 / np.sqrt(50), rel=0.05)


def test_declined_rows_are_evaluated_one_by_one_and_their_failures_counted() -> None:
    """Rows the batch evaluation answers with NaN go to the row evaluation, which may fail."""
    seen: list[float] = []

    def whole(sims: np.ndarray) -> np.ndarray:
        out = np.stack([sims.mean(axis=1), sims.std(axis=1)], axis=1)
        out[sims.mean(axis=1) > 2.0] = np.nan  # declined
        return out

    def picky(r: np.ndarray) -> np.ndarray:
        seen.append(float(r.mean()))
        if r.mean() > 2.2:
            raise FitError("test: refused on purpose")
        return _mean_and_sd(r)

    kwargs = {"size": 10, "n_resamples": 300, "n_statistics": 2, "rng": 4}
    out = parametric_replicates(_simulate, picky, evaluate_batch=whole, **kwargs)  # type: ignore[arg-type]
    assert len(seen) == 300 - out.n_batched and all(m > 2.0 for m in seen)
    plain = parametric_replicates(_simulate, picky, **kwargs)  # type: ignore[arg-type]
    assert out.n_batched == int(np.sum(plain.values[:, 0] <= 2.0))
    assert out.n_failed == plain.n_failed > 0
    np.testing.assert_allclose(out.values, plain.values, rtol=1e-13)


def test_worker_threads_do_not_change_the_results() -> None:
    """One worker or two: the same replicates, statistics, failures and batch counts."""

    def whole(sims: np.ndarray) -> np.ndarray:
        out = np.stack([sims.mean(axis=1), sims.std(axis=1)], axis=1)
        out[::7] = np.nan
        return out

    def picky(r: np.ndarray) -> np.ndarray:
        if r.mean() > 2.3:
            raise FitError("test: refused on purpose")
        return _mean_and_sd(r)

    runs = [
        parametric_replicates(
            _simulate,
            picky,
            evaluate_batch=whole,
            size=25,
            n_resamples=203,
            n_statistics=2,
            rng=9,
            batch=250,
            workers=w,
        )
        for w in (1, 2, 3)
    ]
    for other in runs[1:]:
        np.testing.assert_array_equal(other.values, runs[0].values)
        assert (other.n_failed, other.n_batched) == (runs[0].n_failed, runs[0].n_batched)


def test_replicates_are_split_into_enough_batches_for_the_workers() -> None:
    """Even when one batch would hold them all, the replicates come in MIN_BATCHES batches."""
    shapes: list[tuple[int, int]] = []

    def simulate(shape: tuple[int, int], gen: np.random.Generator) -> np.ndarray:
        shapes.append(shape)
        return gen.exponential(2.0, shape)

    parametric_replicates(simulate, _mean_and_sd, size=10, n_resamples=99, n_statistics=2, rng=1)
    assert len(shapes) == MIN_BATCHES and sum(b for b, _ in shapes) == 99
