"""The fast quantile of piecewise-linear CDFs (arithmetic index, guide table) against plain ones."""

from __future__ import annotations

import numpy as np
import pytest

from samplewright.distributions import piecewise
from samplewright.distributions.piecewise import PiecewiseSampler, from_knots


def _textbook_quantile(x: np.ndarray, p: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Binary search for the first knot with p >= u, then the linear blend (slow reference)."""
    k = np.clip(np.searchsorted(p, u, side="left"), 1, x.size - 1)
    x0, x1, p0, p1 = x[k - 1], x[k], p[k - 1], p[k]
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(p1 > p0, (u - p0) / (p1 - p0), 1.0)
    lo = x[np.flatnonzero(p <= 0)[-1]]
    return np.where(u <= 0, lo, x0 + (x1 - x0) * frac)


def _unequal_knots(rng: np.random.Generator, m: int) -> tuple[np.ndarray, np.ndarray]:
    """Knots crowded at both ends (beta(0.5, 0.5) positions), with flats, atoms and end runs."""
    p = np.sort(np.concatenate([[0.0, 0.0, 1.0, 1.0], rng.beta(0.5, 0.5, m - 4)]))
    p[m // 3 : m // 3 + 5] = p[m // 3]  # a flat run of p: an atom at each repeated x below
    x = np.sort(rng.gamma(2.0, 3.0, m))
    x[m // 2 : m // 2 + 3] = x[m // 2]  # repeated x with rising p: an atom
    return x, p


def test_equal_knots_draw_the_arithmetic_blend_bit_for_bit() -> None:
    """Equally spaced p: draws equal floor(u m) and the linear blend on the same uniforms."""
    x = np.sort(np.random.default_rng(0).lognormal(0.0, 1.0, 5001))
    m = x.size - 1
    s = PiecewiseSampler(x, np.arange(m + 1) / m, method="interpolated")
    n = 3 * piecewise._BLOCK + 17  # several blocks and a ragged end
    got = s.draw(n, rng=4)
    t = np.random.default_rng(4).random(n) * m
    j = np.minimum(np.floor(t), m - 1).astype(np.intp)
    # common practice, no source: the linear-interpolation quantile (Hyndman & Fan type 7)
    np.testing.assert_array_equal(got, x[j] + (x[j + 1] - x[j]) * (t - j))


def test_equal_knots_agree_with_numpy_quantile() -> None:
    """The interpolated quantile of sorted data is numpy's default ("linear") quantile."""
    data = np.random.default_rng(1).normal(5.0, 2.0, 801)
    m = data.size - 1
    s = PiecewiseSampler(np.sort(data), np.arange(m + 1) / m)
    u = np.random.default_rng(2).random(1000)
    # source: numpy.quantile, method="linear" (reference library)
    np.testing.assert_allclose(s.quantile(u), np.quantile(data, u), rtol=1e-12, atol=1e-12)


def test_guide_table_finds_the_same_segment_as_a_binary_search() -> None:
    """Unequal knots: the guide-table quantile equals the binary-search one bit for bit."""
    rng = np.random.default_rng(3)
    x, p = _unequal_knots(rng, 20_000)
    s = PiecewiseSampler(x, p)
    u = np.concatenate([rng.random(200_000), p, np.nextafter(p, 2.0).clip(0, 1), [0.0, 1.0]])
    np.testing.assert_array_equal(s.quantile(u), _textbook_quantile(x, p, u))


def test_guide_table_draws_equal_the_quantile_of_the_same_uniforms() -> None:
    """draw(n, rng) is quantile(rng.random(n)) for unequal knots too (same stream, same values)."""
    x, p = _unequal_knots(np.random.default_rng(5), 3000)
    s = PiecewiseSampler(x, p)
    n = 2 * piecewise._BLOCK + 5
    u = np.random.default_rng(6).random(n)
    np.testing.assert_array_equal(s.draw(n, rng=6), _textbook_quantile(x, p, u))


def test_crowded_buckets_fall_back_to_the_binary_search() -> None:
    """Many knots within one guide bucket (p spacing 1e-9) still give the textbook quantile."""
    p = np.concatenate([[0.0], 0.5 + 1e-9 * np.arange(1, 200), [1.0]])
    x = np.arange(p.size, dtype=float)
    s = from_knots(x, p)
    assert s._lookup_tables()[1][:, 3].max() > 2  # the fallback is exercised
    u = np.concatenate([p, 0.5 + 1e-9 * (np.arange(1, 200) - 0.5), np.linspace(0, 1, 101)])
    np.testing.assert_array_equal(s.quantile(u), _textbook_quantile(x, p, u))


def test_strictly_rising_knots_agree_with_numpy_interp() -> None:
    """With p strictly rising the quantile is linear interpolation of x against p."""
    rng = np.random.default_rng(7)
    p = np.sort(np.concatenate([[0.0, 1.0], rng.random(4000)]))
    x = np.sort(rng.normal(0.0, 1.0, p.size))
    u = rng.random(50_000)
    # source: numpy.interp (reference library)
    np.testing.assert_allclose(from_knots(x, p).quantile(u), np.interp(u, p, x), rtol=0, atol=1e-12)


def test_quantile_keeps_the_shape_and_leaves_its_argument_alone() -> None:
    """A 2-d argument gives a 2-d answer and is not overwritten by the in-place arithmetic."""
    s = from_knots([0.0, 1.0, 4.0], [0.0, 0.25, 1.0])
    u = np.array([[0.0, 0.25], [0.5, 1.0]])
    before = u.copy()
    got = s.quantile(u)
    np.testing.assert_array_equal(u, before)
    # hand computation from the knots (0, 0), (1, 0.25), (4, 1)
    np.testing.assert_allclose(got, [[0.0, 1.0], [2.0, 4.0]], rtol=1e-15)


def test_bad_probabilities_are_refused() -> None:
    """quantile still refuses probabilities outside [0, 1] and NaN."""
    s = from_knots([0.0, 1.0, 3.0], [0.0, 0.4, 1.0])
    for bad in ([1.5], [-0.1], [np.nan]):
        with pytest.raises(ValueError, match="probabilities"):
            s.quantile(bad)


def test_equal_knots_map_the_ends_of_the_unit_interval_to_the_end_knots() -> None:
    """u = 0 and u = 1 give the smallest and the largest knot exactly (the support's ends)."""
    x = np.sort(np.random.default_rng(8).normal(0.0, 1.0, 1001))
    s = PiecewiseSampler(x, np.arange(1001) / 1000)
    # the support of the piecewise-linear CDF (common practice, no source)
    assert s.quantile([0.0, 1.0]).tolist() == [x[0], x[-1]]
