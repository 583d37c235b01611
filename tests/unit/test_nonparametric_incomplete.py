"""Product-limit with delayed entry and Turnbull's NPMLE: hand-checkable cases and conventions."""

from __future__ import annotations

import re

import numpy as np
import pytest

from samplewright.core.errors import MethodError
from samplewright.fitting.incomplete_sample import incomplete_from_flags, incomplete_sample
from samplewright.fitting.nonparametric_incomplete import estimate_product_limit, estimate_turnbull

INF = np.inf


# ---------------------------------------------------------------------------------------------
# product-limit with entry


def test_product_limit_counts_a_row_at_risk_only_after_its_entry_time() -> None:
    """At t the risk set is the rows with entry < t <= time (a row entering at t is not in it)."""
    times = [2.0, 3.0, 3.0, 5.0, 6.0, 8.0]
    censored = np.array([False, False, True, False, True, False])
    entry = [0.0, 1.0, 3.0, 2.0, 0.0, 5.0]
    r = estimate_product_limit(incomplete_from_flags(times, censored, truncation=entry))
    # source: hand count (common practice, no source), with lifelines' tie convention:
    # t=2: rows 0, 1, 4 (row 3 enters at 2)        -> 3 at risk, 1 event -> S = 2/3
    # t=3: rows 1, 3, 4 (row 2 enters and leaves)  -> 3 at risk, 1 event -> S = 2/3 * 2/3
    # t=5: rows 3, 4 (row 5 enters at 5)           -> 2 at risk, 1 event -> S * 1/2
    # t=6: rows 4, 5 -> 2 at risk, censored only; t=8: row 5 -> 1 at risk, 1 event -> 0
    assert r.time.tolist() == [2.0, 3.0, 5.0, 6.0, 8.0]
    assert r.n_at_risk.tolist() == [3.0, 3.0, 2.0, 2.0, 1.0]
    assert r.n_events.tolist() == [1.0, 1.0, 1.0, 0.0, 1.0]
    assert r.n_censored.tolist() == [0.0, 1.0, 0.0, 1.0, 0.0]
    expected = np.cumprod([2 / 3, 2 / 3, 1 / 2, 1.0, 0.0])
    np.testing.assert_allclose(r.survival, expected, rtol=1e-15)
    assert r.mass_beyond == 0.0


def test_an_event_at_its_entry_time_is_refused() -> None:
    """A row observed exactly at its entry time is never at risk, so both estimators refuse it."""
    s = incomplete_from_flags([2.0, 3.0], np.array([False, False]), truncation=[0.0, 3.0])
    message = "row 1 is observed exactly at its truncation (entry) point 3.0"
    with pytest.raises(MethodError, match=re.escape("estimate_product_limit: " + message)):
        estimate_product_limit(s)
    with pytest.raises(MethodError, match=re.escape("estimate_turnbull: " + message)):
        estimate_turnbull(s)


def test_product_limit_knots_are_a_step_cdf() -> None:
    """The knots put an atom at each event time and stop at 1 - S(last) when it is censored."""
    r = estimate_product_limit(
        incomplete_from_flags([1.0, 2.0, 3.0], np.array([False, False, True]))
    )
    # source: the empirical survival with the last value censored: S = 2/3, 1/3, 1/3
    assert r.x.tolist() == [1.0, 1.0, 2.0, 2.0]
    np.testing.assert_allclose(r.p, [0.0, 1 / 3, 1 / 3, 2 / 3], rtol=1e-15)
    assert r.mass_beyond == pytest.approx(1 / 3, rel=1e-15)
    np.testing.assert_allclose(r.survival_at([0.5, 1.0, 2.5, 9.0]), [1.0, 2 / 3, 1 / 3, 1 / 3])


def test_product_limit_weights_act_like_repeated_rows() -> None:
    """Integer frequency weights give the same estimate as repeating the rows."""
    t, c, e = np.array([3.0, 1.0, 4.0, 2.0]), np.array([False, True, False, False]), [0, 0, 1, 1]
    w = np.array([2.0, 1.0, 3.0, 1.0])
    a = estimate_product_limit(incomplete_from_flags(t, c, truncation=e, weights=w))
    rep = w.astype(int)
    b = estimate_product_limit(
        incomplete_from_flags(np.repeat(t, rep), np.repeat(c, rep), truncation=np.repeat(e, rep))
    )
    np.testing.assert_allclose(a.survival, b.survival, rtol=1e-14)
    np.testing.assert_allclose(a.n_at_risk, b.n_at_risk, rtol=1e-14)


def test_product_limit_refuses_interval_rows() -> None:
    """Interval- or left-censored rows are sent to the Turnbull estimator by name."""
    s = incomplete_sample([1.0, 2.0], [1.0, 3.0])
    with pytest.raises(MethodError, match=re.escape("row 1 is (2.0, 3.0] (1 such rows): use")):
        estimate_product_limit(s)


# ---------------------------------------------------------------------------------------------
# Turnbull


def test_turnbull_hand_example() -> None:
    """Two disjoint innermost intervals share the mass of a row covering both, 2/3 to 1/3."""
    s = incomplete_sample([0.0, 0.0, 2.0, 0.0], [1.0, 1.0, 3.0, 3.0])
    r = estimate_turnbull(s)
    # source: hand maximisation (common practice, no source): L = s1^2 s2 (s1 + s2) with
    # s1 + s2 = 1 is maximised at s1 = 2/3
    assert r.left.tolist() == [0.0, 2.0] and r.right.tolist() == [1.0, 3.0]
    np.testing.assert_allclose(r.mass, [2 / 3, 1 / 3], atol=1e-9)
    assert r.converged
    assert r.loglik == pytest.approx(2 * np.log(2 / 3) + np.log(1 / 3), abs=1e-12)
    # knots: linear over (0, 1], flat to 2, linear over (2, 3]
    np.testing.assert_allclose(r.x, [0.0, 1.0, 2.0, 3.0])
    np.testing.assert_allclose(r.p, [0.0, 2 / 3, 2 / 3, 1.0], atol=1e-9)
    np.testing.assert_allclose(r.cdf([0.5, 1.5, 2.5, 4.0]), [1 / 3, 2 / 3, 5 / 6, 1.0], atol=1e-9)


def test_turnbull_of_exact_values_is_the_empirical_distribution() -> None:
    """With exact values only every value is an atom holding its share of the weight."""
    x = np.array([3.0, 1.0, 2.0, 3.0])
    r = estimate_turnbull(incomplete_sample(x, x, weights=[1.0, 2.0, 1.0, 1.0]))
    # source: the empirical distribution is the NPMLE of complete data (common practice)
    assert r.left.tolist() == r.right.tolist() == [1.0, 2.0, 3.0]
    np.testing.assert_allclose(r.mass, [0.4, 0.2, 0.4], atol=1e-10)
    assert r.x.tolist() == [1.0, 1.0, 2.0, 2.0, 3.0, 3.0]


def test_turnbull_right_censored_is_the_product_limit() -> None:
    """With exact and right-censored rows (and entry times) Turnbull's EM gives Kaplan–Meier."""
    rng = np.random.default_rng(11)
    t = np.round(rng.exponential(5.0, 60), 1) + 0.1
    c = rng.random(60) < 0.3
    e = np.where(rng.random(60) < 0.5, np.floor(9.0 * t * rng.random(60)) / 10.0, -INF)
    s = incomplete_from_flags(t, c, truncation=e)
    km, tb = estimate_product_limit(s), estimate_turnbull(s)
    # source: Efron (1967): the product-limit estimate is self-consistent, and for left-truncated
    # right-censored data it is the NPMLE (from memory)
    grid = np.unique(t)
    np.testing.assert_allclose(1.0 - tb.cdf(grid), km.survival_at(grid), atol=1e-8)
    assert tb.mass_beyond == pytest.approx(km.mass_beyond, abs=1e-8)


def test_turnbull_with_truncation_hand_example() -> None:
    """A row entering late changes the risk sets as in the product-limit convention."""
    s = incomplete_sample([1.0, 2.0, 3.0], [1.0, 2.0, 3.0], truncation=[-INF, -INF, 1.5])
    r = estimate_turnbull(s)
    # source: hand count: at 1 two rows at risk (S = 1/2), at 2 two (S = 1/4), at 3 one (S = 0)
    np.testing.assert_allclose(r.mass, [0.5, 0.25, 0.25], atol=1e-9)


def test_turnbull_ends_meet_as_half_open_intervals() -> None:
    """(0, 1] and (1, 2] stay apart; an exact 1 lies in (0, 1] but not in (1, 2]."""
    r = estimate_turnbull(incomplete_sample([0.0, 1.0], [1.0, 2.0]))
    assert r.left.tolist() == [0.0, 1.0] and r.right.tolist() == [1.0, 2.0]
    r = estimate_turnbull(incomplete_sample([0.0, 1.0, 1.0], [1.0, 1.0, 2.0]))
    # innermost: the atom [1, 1] (inside (0, 1]) and (1, 2]
    assert r.left.tolist() == [1.0, 1.0] and r.right.tolist() == [1.0, 2.0]
    np.testing.assert_allclose(r.mass, [2 / 3, 1 / 3], atol=1e-9)


def test_turnbull_reports_mass_it_cannot_place() -> None:
    """Mass on an interval reaching +inf or starting at -inf is reported, outside the knots."""
    s = incomplete_sample([-INF, 1.0, 2.0, 3.0], [0.5, 1.0, 2.0, INF])
    r = estimate_turnbull(s)
    # source: with one row in each disjoint set the NPMLE gives each 1/4 (common practice)
    assert r.mass_below == pytest.approx(0.25, abs=1e-9)
    assert r.mass_beyond == pytest.approx(0.25, abs=1e-9)
    assert r.x.tolist() == [0.5, 1.0, 1.0, 2.0, 2.0, 3.0]
    np.testing.assert_allclose(r.p, [0.25, 0.25, 0.5, 0.5, 0.75, 0.75], atol=1e-9)
    assert r.cdf(-5.0) == pytest.approx(0.25, abs=1e-9) and r.cdf(9.0) == pytest.approx(0.75)


def test_turnbull_reports_an_exhausted_budget() -> None:
    """Stopping at max_iter is reported as converged=False with the steps taken."""
    rng = np.random.default_rng(5)
    lo = rng.uniform(0.0, 10.0, 40)
    s = incomplete_sample(lo, lo + rng.uniform(0.5, 4.0, 40))
    r = estimate_turnbull(s, max_iter=2)
    assert r.converged is False and r.n_iter == 2
    assert r.mass.sum() == pytest.approx(1.0)
    full = estimate_turnbull(s)
    assert full.converged and full.loglik > r.loglik


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"tol": 0.0}, "tol: expected a number in (0, 1), found 0.0"),
        ({"tol": "small"}, "tol: expected a number in (0, 1), found 'small'"),
        ({"max_iter": 0}, "max_iter: expected an integer >= 1, found 0"),
        ({"max_iter": 2.5}, "max_iter: expected an integer >= 1, found 2.5"),
    ],
)
def test_turnbull_refuses_bad_options(kwargs: dict[str, object], message: str) -> None:
    """Tolerance and iteration budget are checked by name."""
    with pytest.raises(MethodError, match=re.escape(message)):
        estimate_turnbull(incomplete_sample([0.0], [1.0]), **kwargs)  # type: ignore[arg-type]
