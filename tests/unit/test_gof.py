"""Behaviour of samplewright.check.gof: statistics, bootstrap p-values, reproducibility, ranking."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from samplewright.check import compare, gof
from samplewright.check.compare import CandidateResult, rank_candidates
from samplewright.check.gof import STATISTICS, GoodnessOfFitResult, edf_statistics, goodness_of_fit
from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.families import get_family
from samplewright.fitting.mle import FamilyFitResult, fit_family


def _slow_statistics(x: np.ndarray, cdf) -> np.ndarray:
    """Textbook sums for tie-free, unweighted data (a slow, obviously correct reference)."""
    u = np.sort(cdf(x))
    n = u.size
    i = np.arange(1, n + 1)
    ks = max(np.max(i / n - u), np.max(u - (i - 1) / n))
    ad = -n - np.mean((2 * i - 1) * (np.log(u) + np.log(1 - u[::-1])))
    cvm = 1 / (12 * n) + np.sum((u - (2 * i - 1) / (2 * n)) ** 2)
    return np.array([ks, ad, cvm])


def test_all_is_sorted():
    """The modules' __all__ are sorted (house style) and name only public objects."""
    for module in (gof, compare):
        assert module.__all__ == sorted(module.__all__)
        assert all(hasattr(module, n) for n in module.__all__)


def test_step_formula_equals_textbook_sums_without_ties():
    """The exact-integral formula used for data equals the textbook sums on tie-free data."""
    x = np.random.default_rng(0).weibull(1.5, 57)
    params = {"shape": 1.4, "scale": 1.1, "loc": 0.0}
    cdf = get_family("weibull").frozen(params).cdf
    got = edf_statistics(x, "weibull", params)
    np.testing.assert_allclose([got[k] for k in STATISTICS], _slow_statistics(x, cdf), rtol=1e-10)
    np.testing.assert_allclose(
        gof._sorted_stats(np.sort(cdf(x))[None, :])[0], _slow_statistics(x, cdf), rtol=1e-12
    )


def test_closed_form_replicate_refits_equal_generic_refits():
    """The batch closed-form refits give the same statistics as fitting each replicate alone."""
    rng = np.random.default_rng(1)
    for name, sims in [
        ("normal", rng.normal(2.0, 3.0, (5, 30))),
        ("lognormal", rng.lognormal(0.0, 1.0, (5, 30))),
        ("exponential", rng.exponential(2.0, (5, 30))),
    ]:
        fast = gof._sorted_stats(np.sort(gof._closed_form_u(name, sims, {}), axis=1))
        for row, expected in zip(sims, fast, strict=True):
            p = fit_family(name, row).params
            got = edf_statistics(row, name, p)
            np.testing.assert_allclose([got[k] for k in STATISTICS], expected, rtol=1e-10)


def test_discrete_statistics_match_a_direct_sum():
    """Discrete KS, A², W² equal a direct sum over the support (Choulakian et al., 1994)."""
    x = np.array([0, 1, 1, 2, 2, 2, 3, 5, 7], dtype=float)
    params = {"lambda": 2.4}
    dist = stats.poisson(2.4)
    k = np.arange(0, 60)
    fn = np.array([np.mean(x <= j) for j in k])
    z = fn - dist.cdf(k)
    h = dist.cdf(k)
    keep = h * (1 - h) > 1e-12
    n = x.size
    expected = {
        "ks": np.max(np.abs(z)),
        "cvm": n * np.sum(z**2 * dist.pmf(k)),
        "ad": n * np.sum((z**2 * dist.pmf(k))[keep] / (h * (1 - h))[keep]),
    }
    got = edf_statistics(x, "poisson", params)
    for key in STATISTICS:
        assert got[key] == pytest.approx(expected[key], rel=1e-9), key


def test_result_fields_and_pvalue_range():
    """The result carries the fit, the three statistics and p-values in [1/(B+1), 1]."""
    x = np.random.default_rng(2).gamma(3.0, 1.0, 60)
    res = goodness_of_fit(x, "gamma", n_resamples=49, rng=3)
    assert isinstance(res, GoodnessOfFitResult)
    out = fit_family("gamma", x)  # the same fit (unit weights may move it by rounding)
    assert res.params == pytest.approx(out.params, rel=1e-12)
    assert res.loglik == pytest.approx(out.loglik, rel=1e-12)
    assert (res.aic, res.bic) == pytest.approx((out.aic, out.bic), rel=1e-12)
    assert res.n_params == out.n_params
    assert tuple(res.statistics) == tuple(res.pvalues) == STATISTICS
    assert res.n_resamples == 49 and res.n_failed == 0
    for p in res.pvalues.values():
        assert 1 / 50 <= p <= 1 and (p * 50) == pytest.approx(round(p * 50))


def test_same_seed_same_pvalues_and_batch_does_not_matter():
    """A seed reproduces the p-values, whatever the batch size; another seed changes them."""
    for name in ("normal", "gamma"):
        x = get_family(name).draw(
            fit_family(name, [1.0, 2.0, 4.0]).params, 40, np.random.default_rng(4)
        )

        a = goodness_of_fit(x, name, n_resamples=59, rng=11)
        b = goodness_of_fit(x, name, n_resamples=59, rng=11, batch=7 * 40)
        c = goodness_of_fit(x, name, n_resamples=59, rng=12)
        assert a == b
        assert a.pvalues != c.pvalues


def test_wrong_family_gets_the_smallest_pvalue_and_right_one_does_not():
    """Clearly non-normal data reach the minimum p-value; data from the family do not."""
    rng = np.random.default_rng(5)
    bad = goodness_of_fit(rng.exponential(1.0, 300), "normal", n_resamples=99, rng=1)
    assert all(p == 0.01 for p in bad.pvalues.values())
    good = goodness_of_fit(rng.normal(0.0, 1.0, 300), "normal", n_resamples=99, rng=1)
    assert all(p > 0.05 for p in good.pvalues.values())


def test_pvalues_are_roughly_uniform_under_the_null():
    """Under the null the AD p-value falls below 0.1 about 10% of the time (100 data sets)."""
    rng = np.random.default_rng(6)
    p = [
        goodness_of_fit(rng.exponential(3.0, 25), "exponential", n_resamples=99, rng=rng).pvalues[
            "ad"
        ]
        for _ in range(100)
    ]
    below = np.mean(np.array(p) <= 0.1)
    assert 0.02 <= below <= 0.2  # binomial(100, 0.1): 0.02..0.2 holds with > 99.5% probability


def test_weights_equal_repeated_values():
    """Integer frequency weights give the statistics and p-values of the repeated data."""
    rng = np.random.default_rng(7)
    x = rng.lognormal(0.0, 0.5, 30)
    w = rng.integers(1, 4, 30)
    a = goodness_of_fit(x, "lognormal", weights=w, n_resamples=39, rng=5)
    b = goodness_of_fit(np.repeat(x, w), "lognormal", n_resamples=39, rng=5)
    for key in STATISTICS:
        assert a.statistics[key] == pytest.approx(b.statistics[key], rel=1e-10)
    assert a.pvalues == b.pvalues


def test_discrete_family_bootstrap():
    """Discrete families get statistics and p-values too; Poisson data fit poisson well."""
    x = np.random.default_rng(8).poisson(4.0, 200)
    res = goodness_of_fit(x, "poisson", n_resamples=99, rng=2)
    assert all(p > 0.05 for p in res.pvalues.values())
    over = np.random.default_rng(8).negative_binomial(1.0, 0.2, 200)
    res = goodness_of_fit(over, "poisson", n_resamples=99, rng=2)
    assert all(p == 0.01 for p in res.pvalues.values())


def test_failed_refits_are_reported_and_left_out_of_the_pvalues(monkeypatch):
    """A replicate whose refit fails is counted in n_failed and p uses the B_ok others."""
    calls = {"n": 0}
    real = gof.fit_family

    def flaky(name, x, w=None, **options):
        calls["n"] += 1
        if calls["n"] > 1 and calls["n"] % 3 == 0:
            raise FitError("test: refused on purpose")
        return real(name, x, w, **options)

    monkeypatch.setattr(gof, "fit_family", flaky)
    monkeypatch.setattr(gof, "_closed_form_u", lambda name, sims, options: None)  # refit each
    x = np.random.default_rng(9).gamma(2.0, 1.0, 50)
    res = goodness_of_fit(x, "gamma", n_resamples=30, rng=1)
    assert res.n_failed == 10 and res.reliable is False  # 10 of 30 > MAX_FAILED_SHARE
    for p in res.pvalues.values():  # (1 + k) / (1 + 20) for some k in 0..20
        assert 1 / 21 <= p <= 1 and p * 21 == pytest.approx(round(p * 21))


def test_every_refit_failing_gives_nan_pvalues(monkeypatch):
    """With no successful refit there is no null distribution: p-values NaN, unreliable."""
    real = gof.fit_family
    calls = {"n": 0}

    def first_only(name, x, w=None, **options):
        calls["n"] += 1
        if calls["n"] > 1:
            raise FitError("test: refused on purpose")
        return real(name, x, w, **options)

    monkeypatch.setattr(gof, "fit_family", first_only)
    monkeypatch.setattr(gof, "_closed_form_u", lambda name, sims, options: None)  # refit each
    res = goodness_of_fit(np.random.default_rng(9).gamma(2.0, 1.0, 50), "gamma", n_resamples=9)
    assert res.n_failed == 9 and not res.reliable
    assert all(np.isnan(p) for p in res.pvalues.values())


def test_a_few_failures_stay_reliable(monkeypatch):
    """Failures up to MAX_FAILED_SHARE (10%) keep the p-values reliable."""
    real = gof.fit_family
    calls = {"n": 0}

    def rare(name, x, w=None, **options):
        calls["n"] += 1
        if calls["n"] in (5, 17):
            raise FitError("test: refused on purpose")
        return real(name, x, w, **options)

    monkeypatch.setattr(gof, "fit_family", rare)
    monkeypatch.setattr(gof, "_closed_form_u", lambda name, sims, options: None)  # refit each
    res = goodness_of_fit(np.random.default_rng(9).gamma(2.0, 1.0, 50), "gamma", n_resamples=20)
    assert gof.MAX_FAILED_SHARE == 0.10 and res.n_failed == 2 and res.reliable


def test_resolution_argument_is_checked_and_discrete_families_are_never_rounded():
    """resolution takes 'detect', a positive number or None; counts are not rounded."""
    x = np.round(np.random.default_rng(3).gamma(5.0, 3.0, 80))
    assert goodness_of_fit(x, "gamma", n_resamples=9, rng=1, resolution=0.5).resolution == 0.5
    assert goodness_of_fit(x, "poisson", n_resamples=9, rng=1).resolution is None
    for bad in (0.0, -1.0, "auto", True, float("nan")):
        with pytest.raises(MethodError, match="resolution: expected 'detect', a positive number"):
            goodness_of_fit(x, "gamma", n_resamples=9, resolution=bad)


def test_rounded_replicates_stay_inside_the_fitted_support():
    """snap_to_grid moves values that would round onto an end of the support inside it."""
    from samplewright.check.resolution import snap_to_grid

    got = snap_to_grid(np.array([0.01, 0.49, 0.51, 3.7, 4.2]), 0.5, lower=0.0, upper=4.0)
    assert got.tolist() == [0.5, 0.5, 0.5, 3.5, 3.5]  # hand computation
    x = np.round(np.random.default_rng(4).exponential(3.0, 200), 1)  # a few 0.0 are likely
    x = x[x > 0]
    res = goodness_of_fit(x, "exponential", n_resamples=49, rng=2)
    assert res.resolution == 0.1 and res.n_failed == 0


@pytest.mark.parametrize(
    "kwargs,pattern",
    [
        ({"n_resamples": 0}, "n_resamples: expected an int >= 1, found 0"),
        ({"n_resamples": 9.5}, "n_resamples: expected an int >= 1, found 9.5"),
        ({"batch": 0}, "batch: expected an int >= 1, found 0"),
        ({"weights": [1.0, 2.0]}, "weights: expected 5 weights"),
        ({"weights": [1.0, -1.0, 1.0, 1.0, 1.0]}, "weights: expected finite non-negative"),
        ({"shape": 2.0}, "unknown option 'shape' for normal"),
    ],
)
def test_goodness_of_fit_input_errors(kwargs, pattern):
    """Bad arguments raise MethodError naming the argument."""
    with pytest.raises(MethodError, match=pattern):
        goodness_of_fit([1.0, 2.0, 3.0, 4.5, 5.0], "normal", **kwargs)


# --- ranking ------------------------------------------------------------------------------------


def test_rank_by_aic_and_bic_orders_by_the_criterion():
    """Candidates come best first by the chosen criterion, each with its statistics."""
    x = np.random.default_rng(10).gamma(4.0, 2.0, 300)
    names = ["exponential", "normal", "gamma", "lognormal", "weibull"]
    for criterion in ("aic", "bic"):
        ranked = rank_candidates(x, names, criterion=criterion)
        scores = [getattr(c, criterion) for c in ranked]
        assert scores == sorted(scores)
        assert {c.family for c in ranked} == set(names)
        assert all(set(c.statistics) == set(STATISTICS) and c.ok for c in ranked)
        assert ranked[0].family == "gamma"


def test_ties_go_to_fewer_parameters_then_listed_order(monkeypatch):
    """Equal criteria rank the candidate with fewer estimated parameters, then the first listed."""
    fake = {"a3": (3, -10.0), "b2": (2, -11.0), "c2": (2, -11.0), "d1": (1, -5.0)}

    def fit(name, x, w=None, **options):
        k, ll = fake[name]
        return FamilyFitResult(name, {"p": 1.0}, ll + k, k, 10.0)  # every AIC = 20 - 2 ll - ...

    monkeypatch.setattr(compare, "fit_family", fit)
    monkeypatch.setattr(compare, "get_family", lambda n: get_family("normal"))
    monkeypatch.setattr(compare, "edf_statistics", lambda *a, **k: {})
    ranked = rank_candidates(np.arange(10.0), ["a3", "c2", "b2", "d1"])
    # AIC = 2k - 2(ll + k) = -2 ll: a3 20, b2 22, c2 22, d1 10
    assert [c.family for c in ranked] == ["d1", "a3", "c2", "b2"]
    fake.update({"a3": (3, -11.0)})  # now a3 ties with b2 and c2 at 22 but has more parameters
    ranked = rank_candidates(np.arange(10.0), ["a3", "c2", "b2", "d1"])
    assert [c.family for c in ranked] == ["d1", "c2", "b2", "a3"]


def test_failed_candidates_come_last_with_their_reason():
    """A family that cannot fit the data is listed after the others with its one-line error."""
    x = np.random.default_rng(11).normal(0.0, 1.0, 100)  # negative values
    ranked = rank_candidates(x, ["gamma", "normal", "logistic"])
    assert [c.family for c in ranked][:2] in (["normal", "logistic"], ["logistic", "normal"])
    last = ranked[-1]
    assert isinstance(last, CandidateResult) and last.family == "gamma" and not last.ok
    assert "gamma needs every value > 0" in last.error and np.isnan(last.aic)


def test_rank_with_bootstrap_pvalues_and_options():
    """With n_resamples > 0 every successful candidate has p-values; options reach the fit."""
    x = 5.0 + np.random.default_rng(12).weibull(2.0, 80)
    ranked = rank_candidates(
        x, ["weibull", "gamma"], n_resamples=19, rng=3, options={"weibull": {"loc": 5.0}}
    )
    by_name = {c.family: c for c in ranked}
    assert by_name["weibull"].params["loc"] == 5.0
    assert by_name["weibull"].n_params == 2
    assert all(set(c.pvalues) == set(STATISTICS) for c in ranked)
    again = rank_candidates(
        x, ["weibull", "gamma"], n_resamples=19, rng=3, options={"weibull": {"loc": 5.0}}
    )
    assert again == ranked


@pytest.mark.parametrize(
    "args,kwargs,pattern",
    [
        ((["normal"],), {"criterion": "hqic"}, "criterion: expected 'aic' or 'bic', found 'hqic'"),
        (([],), {}, "families: expected at least one"),
        ((["normal", "normal"],), {}, "families: expected distinct names"),
        ((["normal", "poisson"],), {}, "all continuous or all discrete"),
        ((["normal"],), {"options": {"gamma": {}}}, "options: family 'gamma' is not among"),
        ((["normal"],), {"n_resamples": -1}, "n_resamples: expected an int >= 0"),
    ],
)
def test_rank_input_errors(args, kwargs, pattern):
    """Bad ranking arguments raise MethodError naming the argument."""
    with pytest.raises(MethodError, match=pattern):
        rank_candidates([1.0, 2.0, 3.0], *args, **kwargs)
