"""Goodness of fit on incomplete data: the distance, the mechanism each replicate redoes, p."""

from __future__ import annotations

import re

import numpy as np
import pytest
from scipy import stats

import samplewright.check.gof_incomplete as gi
from samplewright.check.gof_incomplete import goodness_of_fit_incomplete, incomplete_distance
from samplewright.core.errors import MethodError
from samplewright.fitting.incomplete import (
    IncompleteSample,
    fit_incomplete,
    incomplete_from_flags,
    incomplete_sample,
)

INF = np.inf


def _claims(seed: int = 8, n: int = 120) -> tuple[IncompleteSample, np.ndarray]:
    """Weibull claims above deductibles 0, 2 or 5, capped at per-policy limits 15 or 25."""
    rng = np.random.default_rng(seed)
    d = rng.choice([0.0, 2.0, 5.0], n)
    dist = stats.weibull_min(1.5, scale=10.0)
    x = dist.isf(dist.sf(d) * rng.random(n))
    limit = rng.choice([15.0, 25.0], n)
    capped = x > limit
    s = incomplete_from_flags(np.minimum(x, limit), capped, truncation=np.where(d > 0, d, -INF))
    return s, limit


def test_distance_is_the_ks_statistic_for_complete_data() -> None:
    """Without censoring and truncation D is the Kolmogorov–Smirnov statistic of the fit."""
    x = stats.gamma.rvs(2.5, scale=3.0, size=60, random_state=np.random.default_rng(1))
    s = incomplete_sample(x, x)
    p = fit_incomplete(s, "gamma").params
    d, name, *_ = incomplete_distance(s, "gamma", p)
    # source: scipy.stats.kstest against the same fitted CDF
    ref = stats.kstest(x, stats.gamma(p["shape"], scale=p["scale"]).cdf).statistic
    assert name == "product_limit" and d == pytest.approx(ref, rel=1e-12)


def test_distance_with_one_truncation_point_is_ks_of_the_conditional_cdf() -> None:
    """All rows truncated at t: D is the KS statistic against F(x | X > t)."""
    x = 3.0 + stats.expon.rvs(scale=4.0, size=50, random_state=np.random.default_rng(2))
    s = incomplete_sample(x, x, truncation=3.0)
    p = {"scale": 5.0, "loc": 0.0}  # any parameters: the distance is a function of them

    def conditional(v: np.ndarray) -> np.ndarray:
        return 1.0 - np.exp(-(v - 3.0) / 5.0)  # the exponential is memoryless above t

    d, *_ = incomplete_distance(s, "exponential", p)
    # source: scipy.stats.kstest against the conditional CDF written out
    assert d == pytest.approx(stats.kstest(x, conditional).statistic, rel=1e-12)


def test_distance_on_grouped_data_compares_at_the_bin_edges() -> None:
    """With common bins D is the largest gap between cumulative shares and F at the edges."""
    edges = np.array([0.0, 5.0, 10.0, 20.0])
    counts = np.array([30.0, 40.0, 20.0, 10.0])  # last group (20, inf)
    s = incomplete_sample(edges, np.append(edges[1:], INF), weights=counts)
    p = {"scale": 8.0, "loc": 0.0}
    d, name, x, c, f = incomplete_distance(s, "exponential", p)
    # source: the definition (common practice, no source): shares 0.3, 0.7, 0.9 at 5, 10, 20
    gaps = np.abs(np.array([0.3, 0.7, 0.9]) + 0.0 - (1.0 - np.exp(-edges[1:] / 8.0)))
    assert name == "turnbull" and d == pytest.approx(float(gaps.max()), rel=1e-9)
    assert float(np.max(np.abs(c - f))) == d and np.all(np.diff(x) >= 0)


def test_replicates_redo_truncation_censoring_and_bins() -> None:
    """Each replicate keeps the rows' truncation points, limits and bins."""
    s, limit = _claims()
    params = fit_incomplete(s, "weibull").params
    mech = gi._mechanism(s, limit, None)
    rep = gi._replicate(mech, "weibull", params, np.random.default_rng(0))
    assert rep.weights.sum() == s.weights.sum()
    assert set(rep.lower[rep.is_right]) <= {15.0, 25.0}  # censored only at the limits
    assert np.all(rep.lower[rep.is_exact] <= 25.0)
    assert np.all(rep.lower[rep.is_exact] > rep.truncation[rep.is_exact])
    assert sorted(set(rep.truncation)) == sorted(set(s.truncation))
    edges = np.array([0.0, 5.0, 10.0, 20.0])
    g = incomplete_sample(edges, np.append(edges[1:], INF), weights=[30, 40, 20, 10])
    grouped = gi._replicate(
        gi._mechanism(g, None, None),
        "exponential",
        {"scale": 8.0, "loc": 0.0},
        np.random.default_rng(1),
    )
    assert set(grouped.lower) <= set(edges) and set(grouped.upper) <= {5.0, 10.0, 20.0, INF}
    assert grouped.weights.sum() == 100.0


def test_pvalue_counts_successful_refits_only(monkeypatch: pytest.MonkeyPatch) -> None:
    """Failed refits are left out of p and reported; p = (1 + #{D* >= D}) / (1 + n_ok)."""
    s, limit = _claims(n=60)
    real = gi.refit_incomplete
    calls = {"n": 0}

    def flaky(*args: object, **kwargs: object) -> object:
        calls["n"] += 1
        if calls["n"] % 3 == 0:
            raise MethodError("weibull: refused for the test")
        return real(*args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(gi, "refit_incomplete", flaky)
    r = goodness_of_fit_incomplete(s, "weibull", n_resamples=12, rng=3, censor_at=limit)
    assert r.n_failed == 4 and r.failures == ("weibull: refused for the test",)
    assert r.null_distribution.size == 8
    # source: the definition in the module docstring
    expected = (1.0 + np.sum(r.null_distribution >= r.statistic)) / 9.0
    assert r.pvalue == expected


def test_same_seed_same_answer_and_no_resamples_gives_no_pvalue() -> None:
    """The p-value depends only on the seed; zero replicates give the statistic alone."""
    s, limit = _claims(n=60)
    a = goodness_of_fit_incomplete(s, "exponential", n_resamples=9, rng=5, censor_at=limit)
    b = goodness_of_fit_incomplete(s, "exponential", n_resamples=9, rng=5, censor_at=limit)
    np.testing.assert_array_equal(a.null_distribution, b.null_distribution)
    none = goodness_of_fit_incomplete(s, "exponential", n_resamples=0)
    assert np.isnan(none.pvalue) and none.statistic == a.statistic
    assert a.conditioned_on is None and a.estimator == "product_limit"


def test_a_wrong_family_is_rejected_and_the_right_one_is_not() -> None:
    """Gamma(4) claims above a deductible: the exponential is rejected, the gamma is not."""
    rng = np.random.default_rng(12)
    dist = stats.gamma(4.0, scale=2.0)
    x = dist.isf(dist.sf(3.0) * rng.random(150))
    s = incomplete_from_flags(np.minimum(x, 20.0), x > 20.0, truncation=3.0)
    cap = np.full(150, 20.0)
    bad = goodness_of_fit_incomplete(s, "exponential", n_resamples=39, rng=1, censor_at=cap)
    good = goodness_of_fit_incomplete(s, "gamma", n_resamples=39, rng=1, censor_at=cap)
    assert bad.pvalue == 1.0 / 40.0 and bad.conditioned_on == 3.0
    assert good.pvalue > 0.05 and good.n_failed == 0


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"censor_at": [1.0, 2.0]}, "censor_at: expected 4 values (one per row), found 2"),
        (
            {"censor_at": [9.0, 9.0, 9.0, 9.0]},
            "censor_at: row 3 is right-censored at 8.0 but censor_at gives 9.0",
        ),
        (
            {"censor_at": [1.0, 9.0, 9.0, 8.0]},
            "censor_at: row 0 is observed exactly at 2.0, above its censoring point 1.0",
        ),
        ({"censor_at": ["a", 1, 1, 1]}, "censor_at: expected numbers"),
        ({"n_resamples": -1}, "n_resamples: expected an integer >= 0, found -1"),
        ({"colour": 1.0}, "unknown option 'colour' for weibull (allowed: loc, scale, shape)"),
        ({"inspection": [4.0]}, "inspection: the rows have interval end 3.0"),
        ({"inspection": [3.0, INF]}, "inspection: expected finite inspection points"),
    ],
)
def test_bad_arguments_are_refused_by_name(kwargs: dict[str, object], message: str) -> None:
    """Misaligned or inconsistent censoring points and bad options get a one-line error."""
    s = incomplete_sample([2.0, 3.0, 5.0, 8.0], [2.0, 4.0, 5.0, INF])
    with pytest.raises(MethodError, match=re.escape(message)):
        goodness_of_fit_incomplete(s, "weibull", **kwargs)  # type: ignore[arg-type]


def test_replicate_refits_are_kept_for_intervals() -> None:
    """The refitted parameters of the successful replicates are kept, one per null statistic,
    and each reproduces its statistic."""
    s, limit = _claims(n=60)
    r = goodness_of_fit_incomplete(s, "weibull", n_resamples=6, rng=4, censor_at=limit)
    assert len(r.replicate_params) == r.null_distribution.size == 6 - r.n_failed
    rep = gi._replicate(
        gi._mechanism(s, limit, None), "weibull", r.params, np.random.default_rng(4)
    )
    first = incomplete_distance(rep, "weibull", r.replicate_params[0])[0]
    assert first == r.null_distribution[0]
    # source: scipy.stats.weibull_min with the refitted parameters is a proper distribution
    p = r.replicate_params[0]
    assert stats.weibull_min(p["shape"], scale=p["scale"]).cdf(1e9) == pytest.approx(1.0)
