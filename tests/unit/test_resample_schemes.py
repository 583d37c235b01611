"""Index schemes: shapes, batching, block structure, weighted draws and input checks."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import InputDataError, MethodError
from samplewright.resample.schemes import (
    BATCH_ELEMENTS,
    IIDScheme,
    alias_table,
    default_batch,
    draw_indices,
    make_scheme,
)


def runs(row: np.ndarray, n: int) -> list[int]:
    """Lengths of the runs in which each index follows the previous one by +1 (mod n)."""
    steps = np.remainder(np.diff(row), n) == 1
    breaks = np.flatnonzero(~steps)
    edges = np.concatenate([[0], breaks + 1, [row.size]])
    return np.diff(edges).tolist()


def test_iid_batches_cover_n_resamples_in_order() -> None:
    """Batches have the requested size, the last one the remainder, and indices lie in range."""
    shapes = [b.shape for b in draw_indices(50, 23, rng=0, batch=10)]
    assert shapes == [(10, 50), (10, 50), (3, 50)]
    idx = np.concatenate(list(draw_indices(50, 23, rng=0, batch=10)))
    assert idx.dtype == np.int64 and idx.min() >= 0 and idx.max() <= 49


def test_iid_is_batch_invariant_and_matches_numpy_integers() -> None:
    """Unweighted iid draws are rng.integers(0, n, (B, n)) whatever the batch (scipy's draw)."""
    expected = np.random.default_rng(11).integers(0, 40, (25, 40))
    for batch in (1, 7, 25):
        got = np.concatenate(list(draw_indices(40, 25, rng=11, batch=batch)))
        np.testing.assert_array_equal(got, expected)


def test_same_seed_same_indices_for_every_scheme() -> None:
    """A fixed seed reproduces the indices of every scheme."""
    for scheme, bl in (("moving", 3), ("circular", 3), ("stationary", 2.5)):
        a = np.concatenate(list(draw_indices(30, 9, scheme=scheme, block_length=bl, rng=4)))
        b = np.concatenate(list(draw_indices(30, 9, scheme=scheme, block_length=bl, rng=4)))
        np.testing.assert_array_equal(a, b)


def test_default_batch_bounds_memory() -> None:
    """Without a batch, one batch of n = 1e6 rows holds at most 2**23 indices."""
    assert default_batch(1_000_000, 9999) * 1_000_000 <= BATCH_ELEMENTS
    assert default_batch(10, 5) == 5
    assert default_batch(10**8, 9999) == 1


def test_moving_blocks_are_contiguous_and_never_wrap() -> None:
    """Moving blocks are runs of block_length consecutive rows, each starting at most n - L."""
    n, length = 23, 5
    idx = next(iter(draw_indices(n, 200, scheme="moving", block_length=length, rng=1)))
    blocks = idx[:, :20].reshape(200, 4, length)  # the first 4 whole blocks of each row
    np.testing.assert_array_equal(np.diff(blocks, axis=2), 1)
    assert blocks[:, :, 0].max() == n - length and blocks[:, :, 0].min() == 0
    tail = idx[:, 20:]  # the truncated fifth block: consecutive too
    np.testing.assert_array_equal(np.diff(tail, axis=1), 1)


def test_circular_blocks_wrap_around() -> None:
    """Circular blocks are runs modulo n, some of them wrapping from the last row to the first."""
    n, length = 10, 4
    idx = next(iter(draw_indices(n, 500, scheme="circular", block_length=length, rng=2)))
    blocks = idx[:, :8].reshape(500, 2, length)
    np.testing.assert_array_equal(np.remainder(np.diff(blocks, axis=2), n), 1)
    wrapped = np.any(np.diff(blocks, axis=2) < 0, axis=2)
    assert wrapped.mean() > 0.2  # starts 7, 8, 9 wrap: 3 of 10
    # every row equally likely (the point of wrapping): counts flat within binomial noise
    counts = np.bincount(idx.ravel(), minlength=n)
    assert stats.chisquare(counts).pvalue > 1e-3


def test_stationary_block_lengths_are_geometric_with_mean_block_length() -> None:
    """Stationary runs have geometric lengths: mean block_length, P(1) = 1 / block_length."""
    n, mean_length = 10_000, 8.0
    idx = next(iter(draw_indices(n, 20, scheme="stationary", block_length=mean_length, rng=3)))
    lengths = np.concatenate([runs(row, n)[:-1] for row in idx])  # the last run is cut short
    # a new block continues the previous one by chance with probability 1/n: negligible here
    se = np.sqrt((1 - 1 / mean_length) * mean_length**2 / lengths.size)
    assert abs(lengths.mean() - mean_length) < 4 * se
    share_one = np.mean(lengths == 1)
    assert abs(share_one - 1 / mean_length) < 4 * np.sqrt(0.125 * 0.875 / lengths.size)
    assert any(np.any(np.diff(row) < 0) for row in idx)  # wraps or jumps back somewhere


def test_alias_table_reproduces_the_weights_exactly() -> None:
    """Keep-or-alias probabilities add back up to the normalised weights (to rounding)."""
    rng = np.random.default_rng(5)
    cases = [
        rng.exponential(size=1000),
        rng.pareto(0.8, 500) + 1e-3,
        np.r_[1e6, np.ones(50)],
        np.array([1.0, 2.0, 3.0, 4.0, 10.0]),  # a cell of scaled weight exactly 1
        np.array([3.0, 2.0, 4.0, 1.0, 4.0, 2.0, 3.0, 4.0, 4.0]),  # rounding met both ways once
        rng.integers(1, 4, 300).astype(float),  # many ties at scaled weight 1
    ]
    for w in cases:
        keep, alias = alias_table(w)
        n = w.size
        prob = keep / n + np.bincount(alias, weights=(1 - keep) / n, minlength=n)
        np.testing.assert_allclose(prob, w / w.sum(), rtol=1e-9, atol=1e-15)


def test_weighted_iid_draws_follow_the_weights() -> None:
    """Weighted draws land on each row in proportion to its weight (chi-square, fixed seed)."""
    w = np.array([1.0, 2.0, 3.0, 4.0, 10.0])
    idx = np.concatenate(list(draw_indices(5, 20_000, weights=w, rng=6)))
    counts = np.bincount(idx.ravel(), minlength=5)
    assert stats.chisquare(counts, counts.sum() * w / w.sum()).pvalue > 1e-3


def test_equal_weights_are_no_weights() -> None:
    """All-one weights give exactly the unweighted draws (weights count observations, so all-3
    weights would mean the data tripled)."""
    a = np.concatenate(list(draw_indices(12, 6, weights=np.ones(12), rng=7)))
    b = np.concatenate(list(draw_indices(12, 6, rng=7)))
    np.testing.assert_array_equal(a, b)


def test_resample_batches_gather_values() -> None:
    """Resampled values are the values at the drawn indices."""
    sch = IIDScheme([10.0, 20.0, 30.0])
    vals = next(sch.resample_batches(4, rng=8))
    idx = next(sch.index_batches(4, rng=8))
    np.testing.assert_array_equal(vals, np.array([10.0, 20.0, 30.0])[idx])


@pytest.mark.parametrize(
    ("kwargs", "error", "word"),
    [
        ({"scheme": "blocky"}, MethodError, "scheme"),
        ({"scheme": "moving"}, MethodError, "block_length"),
        ({"scheme": "moving", "block_length": 2.5}, MethodError, "block_length"),
        ({"scheme": "circular", "block_length": 0}, MethodError, "block_length"),
        ({"scheme": "stationary", "block_length": 11}, MethodError, "block_length"),
        ({"scheme": "iid", "block_length": 3}, MethodError, "block_length"),
        ({"scheme": "moving", "block_length": 2, "weights": np.ones(10)}, MethodError, "weights"),
        ({"weights": -np.ones(10)}, InputDataError, "weights"),
        ({"weights": np.ones(9)}, InputDataError, "weights"),
        ({"weights": np.r_[0.0, np.ones(9)]}, InputDataError, "weights"),
    ],
)
def test_bad_scheme_options_name_the_argument(kwargs: dict, error: type, word: str) -> None:
    """Bad scheme options raise one-line errors naming the argument."""
    with pytest.raises(error, match=word):
        make_scheme(np.arange(10.0), **kwargs)


def test_bad_values_and_counts_are_refused() -> None:
    """Non-finite or too few values, and non-positive counts, raise clear errors."""
    with pytest.raises(InputDataError, match="values: expected finite.*position 1"):
        IIDScheme([1.0, np.nan, 2.0])
    with pytest.raises(InputDataError, match="at least 2"):
        IIDScheme([1.0])
    with pytest.raises(MethodError, match="n_resamples"):
        list(draw_indices(5, 0))
    with pytest.raises(MethodError, match="batch"):
        list(draw_indices(5, 3, batch=0))
