"""Bootstrap intervals: named statistics, acceleration, batching, weights and input checks."""

from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

from samplewright.core.errors import InputDataError, MethodError
from samplewright.resample import acceleration as accel
from samplewright.resample.block_length import optimal_block_length, resolve_block_length
from samplewright.resample.intervals import bootstrap_interval, interval_from_distribution
from samplewright.resample.schemes import make_scheme
from samplewright.resample.statistics import parse_statistic


def brute_jackknife_a(x: np.ndarray, f) -> float:
    """Efron's jackknife acceleration by deleting each value in turn (slow reference)."""
    theta = np.array([f(np.delete(x, i)) for i in range(x.size)])
    d = theta.mean() - theta
    return float(np.sum(d**3) / (6 * np.sum(d**2) ** 1.5))


def test_named_statistics_match_row_by_row_references() -> None:
    """Vectorised named statistics equal numpy computed one resample at a time."""
    rng = np.random.default_rng(0)
    batch = rng.lognormal(size=(40, 37))
    for p in (0.0, 0.1, 0.5, 0.9, 0.99, 1.0):
        got = parse_statistic(f"quantile:{p}")(batch)
        want = [np.quantile(row, p, method="inverted_cdf") for row in batch]
        np.testing.assert_array_equal(got, want)
    np.testing.assert_allclose(parse_statistic("mean")(batch), batch.mean(axis=1), rtol=1e-14)
    np.testing.assert_allclose(parse_statistic("std")(batch), batch.std(axis=1), rtol=1e-14)
    np.testing.assert_array_equal(
        parse_statistic("exceedance:1.5")(batch), [np.mean(row > 1.5) for row in batch]
    )
    # along another axis
    np.testing.assert_allclose(parse_statistic("mean")(batch.T, axis=0), batch.mean(axis=1))


@pytest.mark.parametrize("p", [0.0, 0.3, 0.75, 0.9, 0.97])
def test_tail_mean_is_the_integral_of_the_quantile_function(p: float) -> None:
    """tail_mean:p equals 1/(1-p) times the integral of F_n^-1 over (p, 1) (midpoint rule)."""
    x = np.random.default_rng(1).gamma(2.0, size=(3, 41))
    u = p + (1 - p) * (np.arange(200_000) + 0.5) / 200_000
    for row, got in zip(x, parse_statistic(f"tail_mean:{p}")(x), strict=True):
        want = np.quantile(row, u, method="inverted_cdf").mean()
        assert got == pytest.approx(want, rel=1e-4)


def test_tail_mean_at_whole_tail_counts_is_the_mean_of_the_top_values() -> None:
    """With n (1 - p) a whole number k, tail_mean is the mean of the k largest values."""
    x = np.random.default_rng(2).normal(size=200)
    assert parse_statistic("tail_mean:0.95")(x) == pytest.approx(np.sort(x)[-10:].mean())
    assert parse_statistic("tail_mean:0")(x) == pytest.approx(x.mean())


@pytest.mark.parametrize(
    "name", ["mean", "std", "quantile:0.3", "quantile:0.9", "tail_mean:0.8", "exceedance:0.5"]
)
def test_integer_weights_estimate_like_repeated_rows(name: str) -> None:
    """A named statistic with integer weights equals it on the rows repeated that often."""
    rng = np.random.default_rng(3)
    x = rng.normal(size=30)
    w = rng.integers(1, 5, 30).astype(float)
    stat = parse_statistic(name)
    assert stat.estimate(x, w / w.sum()) == pytest.approx(
        stat.estimate(np.repeat(x, w.astype(int))), rel=1e-12, abs=1e-14
    )


def test_weighted_quantile_reaches_exact_levels() -> None:
    """Ten weights of 0.1: the 0.8-quantile is the 8th smallest value despite rounding."""
    x = np.arange(10.0)
    w = np.full(10, 0.1)
    assert np.cumsum(w)[7] < 0.8  # 0.7999999999999999: a plain comparison goes one row too far
    assert parse_statistic("quantile:0.8").estimate(x, w) == 7.0
    assert parse_statistic("quantile:0.9").estimate(x, w) == 8.0
    assert parse_statistic("quantile:0.8000001").estimate(x, w) == 8.0


@pytest.mark.parametrize(
    "text",
    ["median", "quantile", "quantile:x", "quantile:1.5", "tail_mean:1", "exceedance:nan", "mean:2"],
)
def test_bad_statistic_names_name_statistic(text: str) -> None:
    """Unknown names and bad parameters raise a MethodError naming 'statistic'."""
    with pytest.raises(MethodError, match="^statistic: "):
        bootstrap_interval([1.0, 2.0, 3.0], text)


@pytest.mark.parametrize("name", ["mean", "std", "exceedance:0.2"])
def test_closed_form_leave_one_out_matches_the_jackknife(name: str) -> None:
    """Closed-form leave-one-out accelerations equal the brute-force jackknife's."""
    x = np.random.default_rng(4).exponential(size=60)
    stat = parse_statistic(name)
    got = accel.acceleration(x, stat, weights=None, gen=np.random.default_rng(0))
    assert got == pytest.approx(brute_jackknife_a(x, stat.estimate), rel=1e-9)


@pytest.mark.parametrize("name", ["quantile:0.5", "quantile:0.93", "tail_mean:0.9", "tail_mean:0"])
def test_rank_based_group_deletion_matches_brute_force(name: str) -> None:
    """Delete-group estimates from ranks equal the statistic recomputed without the group."""
    x = np.random.default_rng(5).lognormal(size=203)
    stat = parse_statistic(name)
    got = accel._grouped_order_statistic(stat, x, np.random.default_rng(9))
    # the same groups of ranks, deleted for real
    order = np.argsort(x, kind="stable")
    total = 0.0
    for blocks in accel._groupings(
        x.size, accel._n_groups(x.size, accel.N_GROUPS), np.random.default_rng(9)
    ):
        theta = []
        for block in blocks:
            for ranks in block:
                theta.append(stat.estimate(np.delete(x, order[ranks])))
        total += accel._from_deletions(np.array(theta))
    assert got == pytest.approx(total / accel.N_GROUPINGS, rel=1e-9, abs=1e-12)


def test_quantile_acceleration_is_not_degenerate() -> None:
    """For an even-n median the jackknife has two values; the grouped estimate is sensible."""
    x = np.random.default_rng(6).exponential(size=20_000)
    loo = [np.quantile(np.delete(x, i), 0.5, method="inverted_cdf") for i in (0, 1, 2, 3)]
    assert len(set(loo)) <= 2  # the degenerate case the grouped jackknife avoids
    # source: influence function of the p-quantile, (p - 1{x <= q}) / f(q), gives
    # a = (2p - 1) / (6 sqrt(n p (1 - p))) (derived, no published table)
    for p in (0.5, 0.9):
        stat = parse_statistic(f"quantile:{p}")
        a = accel.acceleration(x, stat, weights=None, gen=np.random.default_rng(1))
        want = (2 * p - 1) / (6 * np.sqrt(x.size * p * (1 - p)))
        assert np.isfinite(a) and a != 0.0
        assert abs(a - want) < 0.02  # grouped-jackknife noise measured ~0.005-0.01 at this n


def test_tail_mean_grouped_acceleration_tracks_the_influence_value() -> None:
    """For a smooth statistic the grouped jackknife agrees with the influence-function value."""
    x = np.random.default_rng(7).lognormal(size=20_000)
    stat = parse_statistic("tail_mean:0.99")
    grouped = accel.acceleration(x, stat, weights=None, gen=np.random.default_rng(2))
    w = np.full(x.size, 1 / x.size)
    influence = accel.acceleration(x, stat, weights=w, gen=np.random.default_rng(2))
    # sd of the grouped estimate over random groupings measured at 0.0015 here
    assert grouped == pytest.approx(influence, abs=0.005)


def test_weighted_mean_acceleration_equals_jackknife_with_equal_weights() -> None:
    """The influence formula used with weights gives the jackknife's a for the mean."""
    x = np.random.default_rng(8).gamma(0.5, size=300)
    w = np.full(x.size, 1 / x.size)
    stat = parse_statistic("mean")
    a = accel.acceleration(x, stat, weights=w, gen=np.random.default_rng(0))
    assert a == pytest.approx(brute_jackknife_a(x, np.mean), rel=1e-10)


def test_callable_grouped_jackknife_above_2000_rows() -> None:
    """A callable gets the grouped jackknife for large n: close to the plain one's value."""
    x = np.random.default_rng(9).gamma(1.0, size=3000)
    a = accel.acceleration(x, np.mean, weights=None, gen=np.random.default_rng(3))
    exact = float(np.sum((x - x.mean()) ** 3) / (6 * np.sum((x - x.mean()) ** 2) ** 1.5))
    # sd of the grouped estimate over random groupings measured at 0.0008 here
    assert a == pytest.approx(exact, abs=0.003)


def test_interval_brackets_estimate_and_is_reproducible() -> None:
    """Intervals contain the estimate, repeat with the seed, and do not depend on the batch."""
    x = np.random.default_rng(10).lognormal(size=150)
    for method in ("percentile", "basic", "bca"):
        r = bootstrap_interval(x, "mean", method=method, n_resamples=999, rng=5)
        assert r.low < r.estimate < r.high
        assert r.method == method and r.n_resamples == 999 and r.scheme == "iid"
        assert r.bootstrap_distribution.shape == (999,)
        s = bootstrap_interval(x, "mean", method=method, n_resamples=999, rng=5, batch=7)
        assert (s.low, s.high) == (r.low, r.high)
    assert r.acceleration is not None and r.bias_correction is not None


def test_named_mean_equals_callable_mean() -> None:
    """The named 'mean' and the callable np.mean give the same interval on the same seed."""
    x = np.random.default_rng(11).normal(size=80)
    a = bootstrap_interval(x, "mean", n_resamples=500, rng=1)
    b = bootstrap_interval(x, np.mean, n_resamples=500, rng=1)
    np.testing.assert_allclose(a.bootstrap_distribution, b.bootstrap_distribution, rtol=1e-14)
    assert (a.low, a.high) == pytest.approx((b.low, b.high), rel=1e-12)
    assert b.statistic == "mean"


def test_weighted_resamples_are_the_repeated_rows_resampled() -> None:
    """Whole-number weights: each resample's counts give exactly the statistic of the units it
    drew (the rows repeated by their counts), for every named statistic."""
    # source: definition of frequency weights, a row of weight k is k rows (np.repeat), as in
    # statsmodels' freq_weights and the README; numpy evaluates the statistic on the units
    rng = np.random.default_rng(12)
    x = rng.lognormal(size=25)
    w = rng.integers(1, 6, 25).astype(float)
    sch = make_scheme(x, weights=w)
    counts = np.concatenate(list(sch.count_batches(40, rng=3)))
    units = np.concatenate(list(sch.index_batches(40, rng=3)))  # the same draws, as units
    assert counts.sum(axis=1).tolist() == [int(w.sum())] * 40
    np.testing.assert_array_equal(np.apply_along_axis(np.bincount, 1, units, None, 25), counts)
    for name in ("mean", "std", "quantile:0.3", "quantile:0.95", "tail_mean:0.8", "exceedance:1"):
        stat = parse_statistic(name)
        np.testing.assert_allclose(
            stat.weighted(x, counts), stat(x.take(units)), rtol=1e-12, atol=1e-15
        )


def test_weighted_bootstrap_standard_error_counts_every_unit() -> None:
    """Frequency weights: the SE of the mean is the plug-in sd over sqrt(sum of weights), as for
    the rows repeated, not over sqrt(number of rows)."""
    # source: ideal bootstrap SE of a mean, plug-in sd / sqrt(n) (Efron & Tibshirani 1993,
    # ch. 5 -- from memory); n is the number of observations, here sum(w)
    rng = np.random.default_rng(13)
    x = rng.normal(size=400)
    w = np.where(x > 0, 3.0, 1.0)
    r = bootstrap_interval(x, "mean", weights=w, n_resamples=4000, rng=2)
    e = np.repeat(x, w.astype(int))
    assert r.estimate == pytest.approx(e.mean(), rel=1e-12)
    want = e.std() / np.sqrt(e.size)
    assert r.standard_error == pytest.approx(want, rel=0.05)  # MC error ~1/sqrt(2*4000) = 1.1%
    assert r.standard_error < 0.8 * x.std() / np.sqrt(x.size)  # the old per-row answer is far


def test_fractional_weights_resample_the_rounded_total() -> None:
    """Fractional weights: resamples have round(sum(w)) units; the SE of the mean is the
    weighted plug-in sd over sqrt(round(sum(w)))."""
    rng = np.random.default_rng(14)
    x = rng.gamma(2.0, size=300)
    w = rng.uniform(0.5, 2.5, 300)
    r = bootstrap_interval(x, "mean", weights=w, n_resamples=4000, rng=3)
    p = w / w.sum()
    mu = p @ x
    assert r.estimate == pytest.approx(mu, rel=1e-12)
    # source: multinomial resampling of m units: Var = sigma_w^2 / m (common practice)
    want = np.sqrt(p @ (x - mu) ** 2 / round(w.sum()))
    assert r.standard_error == pytest.approx(want, rel=0.05)


def test_weights_of_one_and_zero_rows_change_nothing() -> None:
    """All-one weights are no weights; rows of weight 0 are dropped like absent rows."""
    # source: samplewright.core.checks' rule (weight 0 rows dropped), common practice
    x = np.random.default_rng(15).normal(size=60)
    plain = bootstrap_interval(x, "quantile:0.5", n_resamples=300, rng=4)
    ones = bootstrap_interval(x, "quantile:0.5", weights=np.ones(60), n_resamples=300, rng=4)
    np.testing.assert_array_equal(plain.bootstrap_distribution, ones.bootstrap_distribution)
    w = np.r_[np.zeros(10), np.full(50, 2.0)]
    zero = bootstrap_interval(x, "mean", weights=w, n_resamples=300, rng=5)
    dropped = bootstrap_interval(x[10:], "mean", weights=w[10:], n_resamples=300, rng=5)
    np.testing.assert_array_equal(zero.bootstrap_distribution, dropped.bootstrap_distribution)


def test_callable_with_weights_sees_the_same_resamples_as_the_named_statistic() -> None:
    """A callable with whole-number weights gets the units of the same draws: np.mean equals
    'mean' resample by resample, and BCa uses the jackknife of the repeated rows."""
    # source: Efron's jackknife acceleration on the repeated rows (brute_jackknife_a above)
    rng = np.random.default_rng(16)
    x = rng.exponential(size=30)
    w = rng.integers(1, 4, 30).astype(float)
    a = bootstrap_interval(x, "mean", weights=w, n_resamples=500, rng=6)
    b = bootstrap_interval(x, np.mean, weights=w, n_resamples=500, rng=6)
    np.testing.assert_allclose(a.bootstrap_distribution, b.bootstrap_distribution, rtol=1e-12)
    e = np.repeat(x, w.astype(int))
    assert b.estimate == pytest.approx(e.mean(), rel=1e-12)
    assert a.acceleration == pytest.approx(brute_jackknife_a(e, np.mean), rel=1e-9)
    assert b.acceleration == pytest.approx(brute_jackknife_a(e, np.mean), rel=1e-9)


def test_weighted_replicates_and_weighted_intervals_draw_the_same_counts() -> None:
    """fit_replicates('empirical') with weights and bootstrap_interval with the same weights and
    seed resample the same units: replicate means equal the bootstrap distribution."""
    from samplewright.fitting.replicates import fit_replicates

    rng = np.random.default_rng(17)
    x = rng.lognormal(size=40)
    w = rng.integers(1, 5, 40).astype(float)
    ens = fit_replicates(x, "empirical", weights=w, n_replicates=60, rng=8)
    means = [ens.replicate(i).mean for i in range(60)]
    r = bootstrap_interval(x, "mean", weights=w, n_resamples=60, rng=8)
    np.testing.assert_allclose(means, r.bootstrap_distribution, rtol=1e-12)


def test_in_place_evaluation_matches_numpy_row_by_row() -> None:
    """The reused-buffer path gives numpy's quantile and tail sums of each resample exactly."""
    # source: numpy's inverted-CDF quantile of each resample, same seed and draws
    x = np.random.default_rng(18).lognormal(size=397)
    r = bootstrap_interval(x, "quantile:0.9", method="percentile", n_resamples=50, rng=9)
    idx = np.random.default_rng(9).integers(0, 397, (50, 397))
    want = np.quantile(x[idx], 0.9, axis=1, method="inverted_cdf")
    np.testing.assert_array_equal(r.bootstrap_distribution, want)
    t = bootstrap_interval(x, "tail_mean:0.9", method="percentile", n_resamples=50, rng=9)
    np.testing.assert_allclose(t.bootstrap_distribution, parse_statistic("tail_mean:0.9")(x[idx]))


def test_constant_data_give_a_point_interval() -> None:
    """Constant values: every method returns [c, c] with a = 0."""
    r = bootstrap_interval(np.full(50, 2.5), "mean", n_resamples=200, rng=0)
    assert (r.low, r.high, r.acceleration) == (2.5, 2.5, 0.0)


def test_bca_refuses_block_schemes_and_degenerate_distributions() -> None:
    """BCa with a block scheme, or with all resamples on one side, raises a MethodError."""
    x = np.random.default_rng(13).normal(size=100)
    with pytest.raises(MethodError, match="percentile"):
        bootstrap_interval(x, "mean", scheme="moving", block_length=5)

    def n_distinct(sample: np.ndarray, axis: int = -1) -> np.ndarray:
        s = np.sort(sample, axis=axis)
        return 1 + np.count_nonzero(np.diff(s, axis=axis), axis=axis)

    with pytest.raises(MethodError, match="bca.*undefined"):
        bootstrap_interval(x, n_distinct, n_resamples=100, rng=0)


def test_auto_block_length_uses_the_politis_white_value() -> None:
    """block_length='auto' takes the stationary or the rounded circular optimal length."""
    e = np.random.default_rng(14).normal(size=600)
    x = np.convolve(e, np.ones(6), mode="valid")  # MA(5): dependent
    opt = optimal_block_length(x)
    for scheme in ("stationary", "circular", "moving"):
        r = bootstrap_interval(
            x, "mean", method="percentile", scheme=scheme, block_length="auto", n_resamples=50
        )
        assert r.block_length == resolve_block_length(opt, scheme)
    assert resolve_block_length(opt, "circular") == round(opt.circular)


@pytest.mark.parametrize(
    ("kwargs", "word"),
    [
        ({"method": "studentized"}, "method"),
        ({"confidence_level": 1.0}, "confidence_level"),
        ({"confidence_level": "high"}, "confidence_level"),
        ({"n_resamples": 1}, "n_resamples"),
        ({"n_resamples": 2.5}, "n_resamples"),
        ({"batch": -1}, "batch"),
        ({"scheme": "blocks"}, "scheme"),
        ({"block_length": "auto"}, "block_length"),
        ({"scheme": "moving", "method": "basic", "block_length": "long"}, "block_length"),
        ({"statistic": np.mean, "weights": np.full(20, 1.5)}, "weights"),
        (
            {"scheme": "moving", "method": "basic", "block_length": 2, "weights": np.ones(20) * 2},
            "weights",
        ),
        ({"statistic": 3}, "statistic"),
        ({"statistic": lambda s, axis=-1: s}, "statistic"),
    ],
)
def test_bad_options_raise_method_errors(kwargs: dict, word: str) -> None:
    """Each bad option gives a MethodError whose message starts with the option's name."""
    x = np.arange(20.0)
    statistic = kwargs.pop("statistic", "mean")
    with pytest.raises(MethodError, match=f"^{word}"):
        bootstrap_interval(x, statistic, **kwargs)


def test_bad_values_raise_input_errors() -> None:
    """Non-finite values, 2-d input or a single value raise InputDataError naming values."""
    for bad in ([1.0, np.inf], [[1.0, 2.0]], [3.0]):
        with pytest.raises(InputDataError, match="^values"):
            bootstrap_interval(bad, "mean")


@pytest.mark.parametrize(
    ("weights", "match"),
    [
        (np.full(10, 0.1), "add up to at least 2 units, found a sum of 1"),
        (np.r_[-1.0, np.ones(9)], "finite numbers >= 0"),
        (np.ones(9), "expected 10 weights"),
        (np.r_[np.zeros(9), 5.0], "at least 2 rows of positive weight"),
    ],
)
def test_bad_weights_raise_one_line_input_errors(weights: np.ndarray, match: str) -> None:
    """Shares that add up to 1, negative weights, a wrong count or one row: refused clearly."""
    with pytest.raises(InputDataError, match=f"^weights: .*{match}"):
        bootstrap_interval(np.arange(10.0), "mean", weights=weights)


def test_interval_from_distribution_needs_acceleration_for_bca() -> None:
    """Asking for BCa without an acceleration is refused; a = 0 gives the bias-corrected one."""
    d = np.random.default_rng(15).normal(size=1000)
    with pytest.raises(MethodError, match="acceleration"):
        interval_from_distribution(d, 0.0, method="bca")
    lo, hi = interval_from_distribution(d, float(np.median(d)), method="bca", acceleration=0.0)
    assert (lo, hi) == pytest.approx(tuple(np.quantile(d, [0.025, 0.975])), rel=1e-2)


def test_memory_stays_bounded_at_a_million_rows() -> None:
    """n = 1e6: BCa on the mean and on quantile:0.99 peak far below 1 GB (batches of 8)."""
    x = np.random.default_rng(16).lognormal(size=1_000_000)
    for name in ("mean", "quantile:0.99"):
        tracemalloc.start()
        r = bootstrap_interval(x, name, n_resamples=8, rng=1)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        assert r.low <= r.high
        assert peak < 400e6  # 9,999 resamples add only their 80 kB distribution to this


_PEAK_SCRIPT = """
import resource, sys
import numpy as np
from samplewright.resample.intervals import bootstrap_interval
x = np.random.default_rng(16).lognormal(size=1_000_000)
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
r = bootstrap_interval(x, sys.argv[1], method="bca", n_resamples=int(sys.argv[2]), rng=1)
assert r.low <= r.estimate <= r.high
print(before, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


@pytest.mark.slow
def test_peak_memory_at_a_million_rows_does_not_grow_with_resamples() -> None:
    """n = 1e6, BCa: peak RSS (ru_maxrss of a fresh process) stays under 1 GB and is the same
    for 24 and 240 resamples, so 9,999 resamples add only their 80 kB distribution."""
    import subprocess
    import sys

    peaks = {}
    for name in ("mean", "quantile:0.99"):
        for b in (24, 240):
            out = subprocess.run(
                [sys.executable, "-c", _PEAK_SCRIPT, name, str(b)],
                capture_output=True, text=True, check=True, timeout=600,
            )  # fmt: skip
            before, after = (int(v) * 1024 for v in out.stdout.split())  # Linux: kB
            peaks[name, b] = after
            assert after < 1e9, (name, b, after)
            assert after - before < 0.5e9  # x is 8 MB; a batch of 8 resamples 2 x 64 MB
        # a batch is the same size whatever the number of resamples: allow allocator noise
        assert abs(peaks[name, 240] - peaks[name, 24]) < 32e6, peaks
