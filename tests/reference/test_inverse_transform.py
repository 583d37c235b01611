"""Reference checks of the non-parametric samplers against scipy, numpy and hand computation.

Inverse-transform sampling: if U is uniform on (0, 1) and Q is the generalised inverse of a CDF F,
Q(U) has CDF F. Each test names its source beside the expected value.
"""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.datasets
from lifelines.datasets import load_waltons
from scipy import stats

import samplewright as sw
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.piecewise import from_knots

N = 200_000
P_FLOOR = 1e-3  # common practice, no source: a fixed-seed test "passes" unless p is tiny


def _nile() -> np.ndarray:
    """Annual Nile flow volumes, 1871-1970 (statsmodels.datasets.nile, bundled)."""
    return statsmodels.datasets.nile.load_pandas().data["volume"].to_numpy(dtype=np.float64)


def _waltons() -> np.ndarray:
    """Lifetimes of the Waltons fruit-fly data (lifelines.datasets.load_waltons, 'T'; many ties)."""
    return load_waltons()["T"].to_numpy(dtype=np.float64)


# --- knots: draws --------------------------------------------------------------------------


def test_uniform_knots_give_uniform_draws() -> None:
    """A CDF rising linearly from (2, 0) to (5, 1) gives draws uniform on [2, 5]."""
    d = from_knots([2.0, 5.0], [0.0, 1.0]).draw(N, rng=20260101)
    ks = stats.kstest(d, stats.uniform(loc=2.0, scale=3.0).cdf)  # source: scipy.stats.uniform
    assert ks.pvalue > P_FLOOR
    assert d.min() >= 2.0 and d.max() <= 5.0


def test_two_piece_cdf_gives_each_side_its_probability() -> None:
    """Knots (0,0), (1,0.3), (4,1): 30% of draws fall in [0, 1], each piece uniform inside."""
    d = from_knots([0.0, 1.0, 4.0], [0.0, 0.3, 1.0]).draw(N, rng=7)
    left = d <= 1.0
    n_left = int(left.sum())
    assert stats.binomtest(n_left, N, 0.3).pvalue > P_FLOOR  # source: scipy.stats.binomtest
    assert stats.kstest(d[left], stats.uniform(0.0, 1.0).cdf).pvalue > P_FLOOR
    assert stats.kstest(d[~left], stats.uniform(1.0, 3.0).cdf).pvalue > P_FLOOR


def test_three_pieces_match_their_probabilities_by_chi_square() -> None:
    """Draw counts in the three pieces of a CDF match 0.2 / 0.5 / 0.3 (chi-square test)."""
    s = from_knots([0.0, 1.0, 2.0, 10.0], [0.0, 0.2, 0.7, 1.0])
    d = s.draw(N, rng=8)
    counts = np.histogram(d, bins=[0.0, 1.0, 2.0, 10.0])[0]
    expected = N * np.array([0.2, 0.5, 0.3])  # from the knots' p steps
    assert stats.chisquare(counts, expected).pvalue > P_FLOOR  # source: scipy.stats.chisquare


def test_flat_part_gets_no_draws() -> None:
    """Where the CDF is flat (between x=1 and x=3) no draw lands, the rest keeps its share."""
    s = from_knots([0.0, 1.0, 3.0, 4.0], [0.0, 0.4, 0.4, 1.0])
    d = s.draw(N, rng=9)
    assert not np.any((d > 1.0) & (d < 3.0))  # definition: zero mass on a flat part
    assert stats.binomtest(int((d <= 1.0).sum()), N, 0.4).pvalue > P_FLOOR


def test_two_step_cdf_gives_each_atom_half_the_time() -> None:
    """A CDF with steps of 1/2 at x=1 and x=4 only draws 1 and 4, each about half the time."""
    s = from_knots([1.0, 1.0, 4.0, 4.0], [0.0, 0.5, 0.5, 1.0])
    d = s.draw(N, rng=10)
    assert set(np.unique(d).tolist()) == {1.0, 4.0}
    assert stats.binomtest(int((d == 1.0).sum()), N, 0.5).pvalue > P_FLOOR
    ref = stats.rv_discrete(values=([1.0, 4.0], [0.5, 0.5]))  # source: scipy.stats.rv_discrete
    u = np.array([0.0, 0.25, 0.5, 0.5000001, 0.9, 1.0])
    np.testing.assert_array_equal(s.quantile(u[1:]), ref.ppf(u[1:]))
    np.testing.assert_array_equal(
        s.cdf([0.5, 1.0, 2.0, 4.0, 5.0]), ref.cdf([0.5, 1.0, 2.0, 4.0, 5.0])
    )
    assert (s.mean, s.var) == (ref.mean(), ref.var())  # 2.5, 2.25


# --- knots: hand-checked values --------------------------------------------------------------

ATOM = ([0.0, 1.0, 1.0, 3.0], [0.0, 0.5, 0.75, 1.0])  # slope, atom of 1/4 at x=1, slope


def test_cdf_is_right_continuous_at_an_atom() -> None:
    """At an atom F takes the upper value; just left of it, the lower one."""
    s = from_knots(*ATOM)
    assert s.cdf(1.0) == 0.75  # hand computation: F(1) = P(X <= 1) = 0.5 + 0.25
    assert s.cdf(np.nextafter(1.0, 0.0)) == pytest.approx(0.5)  # hand computation: F(1-) = 0.5
    expected = [0.0, 0.0, 0.25, 0.875, 1.0, 1.0]  # hand computation
    np.testing.assert_allclose(s.cdf([-1.0, 0.0, 0.5, 2.0, 3.0, 7.0]), expected)


def test_pmf_is_the_jump() -> None:
    """pmf is the size of the jump at an atom and zero elsewhere."""
    s = from_knots(*ATOM)
    expected = [0.0, 0.0, 0.25, 0.0]  # hand computation: jump F(1) - F(1-) = 0.25
    np.testing.assert_allclose(s.pmf([0.0, 0.5, 1.0, 3.0]), expected)


def test_quantile_is_the_generalised_inverse_at_an_atom() -> None:
    """Q(u) = inf{x : F(x) >= u}: all u in (0.5, 0.75] map to the atom at 1."""
    s = from_knots(*ATOM)
    u = [0.0, 0.25, 0.5, 0.6, 0.75, 0.875, 1.0]
    expected = [0.0, 0.5, 1.0, 1.0, 1.0, 2.0, 3.0]  # hand computation
    np.testing.assert_allclose(s.quantile(u), expected)
    assert s.quantile(0.75 + 1e-9) > 1.0


def test_quantile_is_the_generalised_inverse_at_a_flat_part() -> None:
    """At the level of a flat part Q gives its left end, just above it the right end."""
    s = from_knots([0.0, 1.0, 3.0, 4.0], [0.0, 0.4, 0.4, 1.0])
    assert s.quantile(0.4) == 1.0  # hand computation: inf{x : F(x) >= 0.4} = 1
    assert s.quantile(0.4 + 1e-12) == pytest.approx(3.0)  # hand computation: right end of the gap
    assert s.cdf(2.0) == 0.4  # hand computation: flat between 1 and 3


def test_mean_and_variance_of_a_knots_cdf() -> None:
    """Mean and variance of the slope-atom-slope CDF, computed by hand."""
    s = from_knots(*ATOM)
    # hand computation: E X = 0.5*0.5 + 0.25*1 + 0.25*2 = 1; E X^2 = 0.5/3 + 0.25 + 0.25*13/3 = 1.5
    assert s.mean == pytest.approx(1.0)
    assert s.var == pytest.approx(0.5)


def test_knots_without_atoms_match_scipy_rv_histogram() -> None:
    """A knots CDF without atoms is a histogram distribution: scipy.stats.rv_histogram agrees."""
    x = np.array([0.0, 1.0, 2.5, 4.0, 7.0])
    p = np.array([0.0, 0.1, 0.45, 0.45, 1.0])
    s = from_knots(x, p)
    ref = stats.rv_histogram((np.diff(p), x), density=False)  # source: scipy.stats.rv_histogram
    q = np.linspace(-1.0, 8.0, 181)
    np.testing.assert_allclose(s.cdf(q), ref.cdf(q), atol=1e-14)
    np.testing.assert_allclose(
        s.pdf(q[(q != 4.0) & (q != 2.5)]), ref.pdf(q[(q != 4.0) & (q != 2.5)]), atol=1e-14
    )
    u = np.linspace(0.0, 1.0, 101)
    u = u[np.abs(u - 0.45) > 1e-9]  # rv_histogram's ppf is not the generalised inverse there
    np.testing.assert_allclose(s.quantile(u), ref.ppf(u), atol=1e-12)
    assert s.mean == pytest.approx(ref.mean(), rel=1e-13)
    assert s.var == pytest.approx(ref.var(), rel=1e-12)


# --- empirical --------------------------------------------------------------------------------


def test_empirical_draws_each_observation_with_frequency_one_over_n() -> None:
    """Each of 25 distinct observations is drawn about N/25 times (chi-square test)."""
    x = np.random.default_rng(3).normal(size=25)  # distinct values (demo data)
    s = EmpiricalSampler(x)
    d = s.draw(N, rng=11)
    counts = np.array([(d == v).sum() for v in x])
    assert counts.sum() == N  # no value that was not observed
    assert stats.chisquare(counts).pvalue > P_FLOOR  # source: scipy.stats.chisquare (uniform f_exp)


def test_weighted_empirical_draws_follow_the_weights() -> None:
    """Each observation is drawn with frequency weight / sum(weights) (chi-square test)."""
    x = np.array([5.0, 1.0, 3.0, 2.0, 4.0])
    w = np.array([1.0, 4.0, 2.0, 0.5, 2.5])
    d = EmpiricalSampler(x, w).draw(N, rng=12)
    counts = np.array([(d == v).sum() for v in x])
    assert counts.sum() == N
    expected = N * w / w.sum()  # definition of frequency weights
    assert stats.chisquare(counts, expected).pvalue > P_FLOOR  # source: scipy.stats.chisquare


def test_empirical_with_ties_draws_each_value_by_multiplicity() -> None:
    """With the Waltons lifetimes (many ties), value frequencies follow their multiplicities."""
    x = _waltons()
    values, mult = np.unique(x, return_counts=True)
    d = EmpiricalSampler(x).draw(N, rng=13)
    counts = np.array([(d == v).sum() for v in values])
    assert counts.sum() == N
    expected = N * mult / x.size  # multiplicity / n per distinct value
    assert stats.chisquare(counts, expected).pvalue > P_FLOOR  # source: scipy.stats.chisquare


@pytest.mark.parametrize("data", ["waltons", "nile"])
def test_empirical_cdf_equals_scipy_ecdf(data: str) -> None:
    """The CDF equals scipy.stats.ecdf(data).cdf.evaluate at data points, between and outside."""
    x = _waltons() if data == "waltons" else _nile()
    s = EmpiricalSampler(x)
    xs = np.unique(x)
    mids = (xs[:-1] + xs[1:]) / 2
    q = np.concatenate([xs, mids, np.nextafter(xs, -np.inf), [xs[0] - 10, xs[-1] + 10]])
    ref = stats.ecdf(x).cdf.evaluate(q)  # source: scipy.stats.ecdf
    np.testing.assert_allclose(s.cdf(q), ref, rtol=0, atol=1e-15)


def test_weighted_empirical_cdf_equals_ecdf_of_repeated_data() -> None:
    """Integer weights act like repeating each value: the CDF is the ECDF of the repeated data."""
    x = _nile()[:30]
    w = np.random.default_rng(14).integers(1, 6, x.size)
    s = EmpiricalSampler(x, w.astype(float))
    q = np.concatenate([x, x + 0.5, [x.min() - 1, x.max() + 1]])
    ref = stats.ecdf(np.repeat(x, w)).cdf.evaluate(q)  # source: scipy.stats.ecdf (repeated data)
    np.testing.assert_allclose(s.cdf(q), ref, rtol=0, atol=1e-14)


def test_empirical_quantile_is_scipy_rv_discrete_ppf() -> None:
    """The empirical quantile is the generalised inverse, as scipy.stats.rv_discrete computes it."""
    x = np.array([4.0, 1.0, 3.0, 2.0])
    w = np.array([0.1, 0.2, 0.3, 0.4])
    s = EmpiricalSampler(x, w)
    ref = stats.rv_discrete(values=(x, w))  # source: scipy.stats.rv_discrete
    u = np.array([0.05, 0.2, 0.25, 0.6, 0.61, 0.95, 1.0])
    np.testing.assert_array_equal(s.quantile(u), ref.ppf(u))
    np.testing.assert_allclose(s.cdf([0.5, 1, 2.5, 4]), ref.cdf([0.5, 1, 2.5, 4]), atol=1e-15)


def test_empirical_fit_never_draws_unseen_values() -> None:
    """fit(method='empirical') on the Nile data draws only observed volumes."""
    x = _nile()
    d = sw.fit(x, method="empirical").draw(10_000, rng=15)
    assert np.isin(d, x).all()


# --- interpolated -----------------------------------------------------------------------------


@pytest.mark.parametrize("data", ["nile", "waltons"])
def test_interpolated_quantile_is_numpy_linear_quantile(data: str) -> None:
    """The interpolated quantile equals numpy.quantile(method='linear'), Hyndman & Fan type 7."""
    x = _nile() if data == "nile" else _waltons()
    s = sw.fit(x, method="interpolated")
    u = np.concatenate([np.linspace(0.0, 1.0, 1001), [1e-9, 0.5 + 1e-12, 1 - 1e-9]])
    ref = np.quantile(x, u, method="linear")  # source: numpy.quantile, Hyndman & Fan (1996) type 7
    np.testing.assert_allclose(s.quantile(u), ref, rtol=1e-12, atol=0)


def test_interpolated_draws_stay_inside_the_data_range() -> None:
    """No interpolated draw falls outside [min, max]; the CDF is 0 at min and 1 at max."""
    x = _nile()
    s = sw.fit(x, method="interpolated")
    d = s.draw(N, rng=16)
    assert d.min() >= x.min() and d.max() <= x.max()
    assert s.cdf(x.min()) == 0.0 and s.cdf(x.max()) == 1.0  # source: README, plotting (i-1)/(n-1)
    assert s.cdf(x.max() - 1.0) < 1.0 and s.cdf(x.min() + 1.0) > 0.0
    assert s.support == (x.min(), x.max())


def test_interpolated_draws_follow_type_7_quantiles() -> None:
    """Interpolated draws pass a KS test against the type-7 CDF they are meant to have."""
    # Distinct Engel household incomes (statsmodels.datasets.engel): no ties, so the CDF is
    # continuous and the KS test applies.
    x = np.unique(statsmodels.datasets.engel.load_pandas().data["income"].to_numpy(float))
    s = sw.fit(x, method="interpolated")
    d = s.draw(N, rng=17)
    grid = np.linspace(0.0, 1.0, 2001)
    ref_q = np.quantile(x, grid, method="linear")  # source: numpy.quantile (type 7)
    ref_cdf = lambda v: np.interp(v, ref_q, grid)  # noqa: E731
    assert stats.kstest(d, ref_cdf).pvalue > P_FLOOR


def test_interpolated_ties_form_an_atom() -> None:
    """Tied values become a vertical step whose height is their share beyond the first."""
    s = sw.fit([1.0, 2.0, 2.0, 2.0, 5.0], method="interpolated")
    # hand computation: p = 0, 1/4, 2/4, 3/4, 1 at x = 1, 2, 2, 2, 5 -> jump 1/2 at x = 2
    assert s.pmf(2.0) == pytest.approx(0.5)
    assert s.cdf(2.0) == pytest.approx(0.75)
