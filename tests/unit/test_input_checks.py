"""One input check everywhere: the same rules and messages for values, weights and flags.

Behaviour tests of samplewright.core.checks and of every entry point that takes data; the data
are invented (common practice, no source).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest

import samplewright as sw
from samplewright.check.compare import rank_candidates
from samplewright.check.dispersion import dispersion_check
from samplewright.check.gof import goodness_of_fit
from samplewright.core.checks import CheckedSample, check_sample
from samplewright.core.errors import MethodError
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.smoothed import SmoothedSampler
from samplewright.fitting.kaplan_meier import estimate_survival
from samplewright.fitting.mle import fit_family

X = np.array([3.0, 1.0, 4.0, 1.0, 5.0, 9.0, 2.0, 6.0, 5.0, 3.0, 5.0, 8.0])
W = np.array([1.0, 2.0, 0.0, 1.0, 3.0, 1.0, 0.0, 2.0, 1.0, 1.0, 2.0, 1.0])
KEEP = W > 0

# every entry point that takes values and weights, called on (values, weights)
ENTRY_POINTS: dict[str, Callable[[Any, Any], Any]] = {
    "fit empirical": lambda x, w: sw.fit(x, "empirical", weights=w),
    "fit gamma": lambda x, w: sw.fit(x, "gamma", weights=w),
    "fit smoothed": lambda x, w: sw.fit(x, "smoothed", weights=w),
    "fit kaplan_meier": lambda x, w: sw.fit(x, "kaplan_meier", weights=w),
    "fit empirical_pmf": lambda x, w: sw.fit(x, "empirical_pmf", weights=w),
    "fit_family": lambda x, w: fit_family("weibull", x, w),
    "goodness_of_fit": lambda x, w: goodness_of_fit(x, "normal", weights=w, n_resamples=9, rng=1),
    "rank_candidates": lambda x, w: rank_candidates(x, ["normal"], weights=w),
    "EmpiricalSampler": lambda x, w: EmpiricalSampler(x, w),
    "SmoothedSampler": lambda x, w: SmoothedSampler(x, w, bandwidth=1.0),
    "dispersion_check": lambda x, w: dispersion_check(x, weights=w),
    "estimate_survival": lambda x, w: estimate_survival(x, weights=w),
}


def _same(a: Any, b: Any) -> None:
    """Two results of an entry point agree in everything they report."""
    if isinstance(a, sw.Sampler):
        assert a.params == b.params and a.describe() == b.describe()
        for key, col in a.payload().items():
            np.testing.assert_array_equal(col, b.payload()[key])
    elif isinstance(a, tuple):
        assert [dataclasses.asdict(c) for c in a] == [dataclasses.asdict(c) for c in b]
    else:
        da, db = dataclasses.asdict(a), dataclasses.asdict(b)
        assert da.keys() == db.keys()
        for key in da:
            np.testing.assert_array_equal(da[key], db[key])


@pytest.mark.parametrize("entry", sorted(ENTRY_POINTS))
def test_rows_of_weight_zero_are_dropped_everywhere(entry: str) -> None:
    """Every entry point gives the same answer with and without the rows of weight 0."""
    call = ENTRY_POINTS[entry]
    _same(call(X, W), call(X[KEEP], W[KEEP]))


@pytest.mark.parametrize("entry", sorted(ENTRY_POINTS))
def test_bad_weights_are_refused_with_one_message_everywhere(entry: str) -> None:
    """Negative, non-finite, all-zero and misaligned weights get the same one-line refusal."""
    call = ENTRY_POINTS[entry]
    bad = W.copy()
    bad[3] = -1.0
    with pytest.raises(
        MethodError, match=r"^weights: expected finite non-negative weights; weight 4 is -1.0$"
    ):
        call(X, bad)
    bad[3] = np.inf
    with pytest.raises(
        MethodError, match=r"^weights: expected finite non-negative weights; weight 4 is inf$"
    ):
        call(X, bad)
    with pytest.raises(
        MethodError, match=r"^weights: expected at least one weight > 0, found all 0$"
    ):
        call(X, np.zeros(X.size))
    with pytest.raises(MethodError, match=rf"^weights: expected {X.size} weights, found 3$"):
        call(X, W[:3])


@pytest.mark.parametrize("entry", sorted(ENTRY_POINTS))
def test_bad_values_are_refused_with_one_message_everywhere(entry: str) -> None:
    """A non-finite value or a 2-d array gets the same one-line refusal naming 'values'."""
    call = ENTRY_POINTS[entry]
    x = X.copy()
    x[6] = np.nan
    with pytest.raises(MethodError, match=r"^values: every value must be finite; value 7 is nan$"):
        call(x, None)
    with pytest.raises(MethodError, match=r"^values: expected a 1-d array, found 2 dimensions$"):
        call(X.reshape(3, 4), None)


def test_integer_weights_equal_repeated_rows() -> None:
    """Frequency weights count as repeated rows: fits and CDFs equal those of the repeated data."""
    w = W[KEEP].astype(int)
    x = X[KEEP]
    for method in ("empirical", "gamma", "smoothed", "kaplan_meier"):
        a, b = sw.fit(x, method, weights=w), sw.fit(np.repeat(x, w), method)
        grid = np.linspace(0.0, 12.0, 49)
        np.testing.assert_allclose(a.cdf(grid), b.cdf(grid), rtol=1e-12, atol=1e-14)


def test_censoring_flags_may_be_booleans_or_zero_one_numbers() -> None:
    """0/1 flags are the same as booleans; other numbers and misaligned flags are refused."""
    flags = np.zeros(X.size, dtype=bool)
    flags[[1, 5]] = True
    as_bool = sw.fit(X, "weibull", censored=flags)
    as_int = sw.fit(X, "weibull", censored=flags.astype(int))
    assert as_bool.params == as_int.params
    with pytest.raises(
        MethodError, match=r"^censored: flags must be 0/1 or booleans; flag 1 is 2$"
    ):
        sw.fit(X, "weibull", censored=np.r_[2, np.zeros(X.size - 1, dtype=int)])
    with pytest.raises(MethodError, match=r"^censored: expected 12 flags, found 2$"):
        sw.fit(X, "weibull", censored=[True, False])


def test_checked_sample_drops_flags_with_their_rows_and_is_frozen() -> None:
    """A dropped row takes its flag along; the result is an immutable record of the check."""
    c = np.arange(X.size) % 2 == 0
    s = check_sample(X, W, c, min_n=3, what="test")
    assert isinstance(s, CheckedSample)
    np.testing.assert_array_equal(s.values, X[KEEP])
    np.testing.assert_array_equal(s.censored, c[KEEP])  # type: ignore[arg-type]
    assert s.n == 10 and s.n_dropped == 2 and s.total_weight == W.sum() and s.any_censored
    with pytest.raises(dataclasses.FrozenInstanceError):
        s.n_dropped = 0  # type: ignore[misc]
    with pytest.raises(MethodError, match=r"^test needs at least 11 values, found 10$"):
        check_sample(X, W, min_n=11, what="test")
