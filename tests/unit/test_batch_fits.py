"""Batched refits (samplewright.fitting.batch_fits) against the checked one-sample fit and scipy."""

from __future__ import annotations

import warnings
from collections.abc import Callable

import numpy as np
import pytest
from scipy import stats

from samplewright.check.gof import goodness_of_fit
from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.families import get_family
from samplewright.fitting import _batch_numeric, batch_fits
from samplewright.fitting.batch_fits import BATCH_FAMILIES, BatchFitResult, fit_rows, refit_cdf_rows
from samplewright.fitting.mle import fit_family

Gen = Callable[[np.random.Generator, tuple[int, int]], np.ndarray]

# replicate batches of each family, shapes on both sides of 1 where the family has a shape
SAMPLES: dict[str, list[Gen]] = {
    "normal": [lambda g, s: g.normal(-3.0, 0.2, s)],
    "lognormal": [lambda g, s: g.lognormal(1.0, 1.5, s), lambda g, s: g.lognormal(0.0, 0.1, s)],
    "exponential": [lambda g, s: g.exponential(40.0, s)],
    "gamma": [lambda g, s: g.gamma(0.4, 3.0, s), lambda g, s: g.gamma(25.0, 0.1, s)],
    "weibull": [lambda g, s: 2.0 * g.weibull(0.6, s), lambda g, s: 300.0 * g.weibull(8.0, s)],
    "inverse_gaussian": [lambda g, s: g.wald(2.0, 0.3, s), lambda g, s: g.wald(1.0, 400.0, s)],
    "rayleigh": [lambda g, s: g.rayleigh(5.0, s)],
}
CASES = [(name, i) for name, gens in SAMPLES.items() for i in range(len(gens))]


def _checked(name: str, rows: np.ndarray, **options: float) -> list[dict[str, float] | None]:
    """The checked one-sample fit of each row (None where it raises)."""
    out: list[dict[str, float] | None] = []
    for row in rows:
        try:
            out.append(fit_family(name, row, **options).params)
        except (FitError, MethodError):
            out.append(None)
    return out


def test_all_is_sorted_and_every_family_has_samples() -> None:
    """__all__ is sorted and the tests cover every family with a batch path."""
    for module in (batch_fits, _batch_numeric):
        assert module.__all__ == sorted(module.__all__)
    assert set(SAMPLES) == set(BATCH_FAMILIES)


@pytest.mark.parametrize(("name", "which"), CASES)
@pytest.mark.parametrize("n", [5, 60, 3000])
def test_batched_refits_equal_the_checked_fit(name: str, which: int, n: int) -> None:
    """Every row's batched estimate equals the checked one-sample MLE to 1e-8 relative."""
    g = np.random.default_rng([len(name), which, n])
    rows = SAMPLES[name][which](g, (12, n))
    out = fit_rows(name, rows)
    assert isinstance(out, BatchFitResult) and out.n_batched == 12 and out.n_failed == 0
    for i, expected in enumerate(_checked(name, rows)):
        assert expected is not None
        for key, value in expected.items():
            assert out.params[key][i] == pytest.approx(value, rel=1e-8, abs=1e-300), (i, key)


def test_long_weibull_rows_take_the_warm_start_and_agree() -> None:
    """Rows long enough for the subsample warm start still give the checked MLE."""
    rows = 7.0 * np.random.default_rng(11).weibull(1.3, (3, 5 * _batch_numeric._WARM))
    out = fit_rows("weibull", rows)
    for i, expected in enumerate(_checked("weibull", rows)):
        assert expected is not None
        assert out.params["shape"][i] == pytest.approx(expected["shape"], rel=1e-10)
        assert out.params["scale"][i] == pytest.approx(expected["scale"], rel=1e-10)


@pytest.mark.parametrize(
    ("name", "dist", "gen"),
    [
        ("gamma", stats.gamma, lambda g: g.gamma(1.7, 2.0, 400)),
        ("weibull", stats.weibull_min, lambda g: 3.0 * g.weibull(2.2, 400)),
        ("inverse_gaussian", stats.invgauss, lambda g: g.wald(3.0, 5.0, 400)),
    ],
)
def test_batched_refits_agree_with_scipy_fit(name, dist, gen) -> None:
    """The batched estimates are scipy's MLE of the same rows: parameters within scipy's
    optimiser tolerance and a log-likelihood at least as high."""
    g = np.random.default_rng(21)
    rows = np.stack([gen(g) for _ in range(3)])
    out = fit_rows(name, rows)
    fam = get_family(name)
    for i, row in enumerate(rows):
        ours = fam.scipy_kwargs({k: float(v[i]) for k, v in out.params.items()})
        # source: scipy.stats maximum-likelihood fit with the location fixed (reference library)
        theirs = dist.fit(row, floc=0.0)
        shape_names = [s.strip() for s in (dist.shapes or "").split(",") if s.strip()]
        expected = dict(zip([*shape_names, "loc", "scale"], theirs, strict=True))
        for key, value in expected.items():
            assert float(ours[key]) == pytest.approx(value, rel=1e-4, abs=1e-12), (i, key)
        ll_ours = float(np.sum(dist.logpdf(row, **ours)))
        ll_theirs = float(np.sum(dist.logpdf(row, *theirs)))
        assert ll_ours >= ll_theirs - 1e-9 * abs(ll_theirs), (i, ll_ours, ll_theirs)


@pytest.mark.parametrize(("name", "which"), CASES)
def test_refitted_cdf_rows_are_the_fitted_scipy_cdf_of_the_sorted_rows(name, which) -> None:
    """refit_cdf_rows gives scipy's CDF (checked fit's parameters) at each sorted row."""
    g = np.random.default_rng([7, len(name), which])
    rows = SAMPLES[name][which](g, (6, 400))
    u = refit_cdf_rows(name, rows)
    assert u is not None and u.shape == rows.shape
    fam = get_family(name)
    for i, params in enumerate(_checked(name, rows)):
        assert params is not None
        # source: scipy.stats CDFs (reference library)
        expected = fam.bound(params).cdf(np.sort(rows[i]))
        np.testing.assert_allclose(u[i], expected, rtol=1e-9, atol=1e-14)


@pytest.mark.parametrize(
    ("name", "gen"),
    [
        ("gamma", lambda g, s: g.gamma(0.5, 2.0, s)),
        ("gamma", lambda g, s: g.gamma(3.0, 2.0, s)),
        ("inverse_gaussian", lambda g, s: g.wald(2.0, 0.5, s)),
        ("gamma", lambda g, s: np.round(g.gamma(3.0, 2.0, s), 2)),  # ties: blocks done exactly
    ],
)
@pytest.mark.parametrize("n", [100, 1000, 30_000])
def test_cdf_interpolated_between_exact_anchors_keeps_tail_accuracy(name, gen, n) -> None:
    """Gamma and inverse Gaussian CDFs (interpolated between exact anchors): every value within
    1e-10 of scipy's CDF relative to the nearer tail, min(F, 1 - F) (what the Anderson-Darling
    statistic needs)."""
    g = np.random.default_rng(17)
    rows = gen(g, (2, n))
    u = refit_cdf_rows(name, rows)
    assert u is not None
    for i, params in enumerate(_checked(name, rows)):
        assert params is not None
        # source: scipy.stats CDFs (reference library)
        exact = get_family(name).bound(params).cdf(np.sort(rows[i]))
        tail = np.minimum(exact, 1.0 - exact)
        assert np.all(np.abs(u[i] - exact) <= 1e-10 * tail + 1e-300)


def test_a_location_is_honoured() -> None:
    """loc = 5 fits the shifted values and records loc; the CDF matches the shifted fit."""
    rows = 5.0 + np.random.default_rng(2).gamma(2.5, 1.0, (4, 200))
    out = fit_rows("gamma", rows, options={"loc": 5.0})
    np.testing.assert_array_equal(out.params["loc"], 5.0)
    for i, expected in enumerate(_checked("gamma", rows, loc=5.0)):
        assert expected is not None
        assert out.params["shape"][i] == pytest.approx(expected["shape"], rel=1e-10)
    u = refit_cdf_rows("gamma", rows, options={"loc": 5.0})
    assert u is not None
    expected_u = (
        get_family("gamma").bound(_checked("gamma", rows[:1], loc=5.0)[0]).cdf(np.sort(rows[0]))
    )
    np.testing.assert_allclose(u[0], expected_u, rtol=1e-10)


def test_inverse_gaussian_cdf_stays_finite_where_the_textbook_form_overflows() -> None:
    """lambda / mu = 2000: exp(2 lambda / mu) overflows, the rewritten CDF still equals scipy's."""
    rows = np.random.default_rng(4).wald(1.0, 2000.0, (3, 500))
    u = refit_cdf_rows("inverse_gaussian", rows)
    assert u is not None and np.all(np.isfinite(u))
    for i, params in enumerate(_checked("inverse_gaussian", rows)):
        assert params is not None
        # source: scipy.stats.invgauss.cdf (reference library; it works on the log scale)
        np.testing.assert_allclose(
            u[i], get_family("inverse_gaussian").bound(params).cdf(np.sort(rows[i])), rtol=1e-9
        )


@pytest.mark.parametrize("name", ["lognormal", "gamma", "weibull", "inverse_gaussian"])
def test_rows_the_checked_fit_refuses_are_declined_and_fail_alike(name: str) -> None:
    """A value at the location, all values equal: declined (NaN), and failed iff the checked
    fit raises."""
    rows = np.random.default_rng(8).gamma(3.0, 1.0, (5, 30))
    rows[1, 4] = 0.0  # at the location: every strict family refuses
    rows[3] = 2.5  # all equal
    u = refit_cdf_rows(name, rows)
    assert u is not None
    declined = np.isnan(u).all(axis=1)
    np.testing.assert_array_equal(declined, [False, True, False, True, False])
    assert not np.isnan(u[~declined]).any()
    out = fit_rows(name, rows)
    refused = np.array([p is None for p in _checked(name, rows)])
    np.testing.assert_array_equal(out.failed, refused)
    assert np.isnan(out.params[get_family(name).param_names[0]][refused]).all()
    assert out.n_batched == 3


def test_all_equal_exponential_rows_go_to_the_checked_fit_and_succeed() -> None:
    """An exponential row of equal values is declined by the batch path, then fitted."""
    rows = np.array([[2.0, 2.0, 2.0], [1.0, 2.0, 4.0]])
    out = fit_rows("exponential", rows)
    assert out.n_batched == 1 and out.n_failed == 0
    # closed form: the scale is the mean (common practice, no source)
    np.testing.assert_allclose(out.params["scale"], [2.0, 7.0 / 3.0], rtol=1e-15)


def test_families_and_options_without_a_batch_path() -> None:
    """No batch path: refit_cdf_rows says None, fit_rows fits every row by the checked fit."""
    rows = np.random.default_rng(9).logistic(0.0, 2.0, (3, 50))
    assert refit_cdf_rows("logistic", rows) is None
    assert refit_cdf_rows("gamma", np.abs(rows) + 1.0, options={"loc": "free"}) is None
    assert (
        refit_cdf_rows("gamma", np.abs(rows) + 1.0, options={"shape": 2.0}) is None
    )  # a fixed shape
    out = fit_rows("logistic", rows)
    assert out.n_batched == 0 and out.n_failed == 0
    for i, expected in enumerate(_checked("logistic", rows)):
        assert expected is not None
        assert out.params["mu"][i] == pytest.approx(expected["mu"], rel=1e-12)
    with pytest.raises(MethodError, match="unknown option"):
        fit_rows("gamma", np.abs(rows) + 1.0, options={"bogus": 2.0})


def test_rows_must_be_two_dimensional() -> None:
    """A 1-d array is refused with a message naming the argument."""
    with pytest.raises(MethodError, match="rows: expected a 2-d array"):
        fit_rows("normal", np.arange(5.0))


@pytest.mark.parametrize(
    ("name", "dist", "gen", "which"),
    [
        ("lognormal", stats.lognorm, lambda g: g.lognormal(0.5, 0.8, 60), ("ks", "ad", "cvm")),
        ("gamma", stats.gamma, lambda g: g.gamma(2.0, 3.0, 60), ("ks", "ad", "cvm")),
        pytest.param(
            "weibull",
            stats.weibull_min,
            lambda g: 2.0 * g.weibull(1.5, 60),
            ("cvm",),
            marks=pytest.mark.slow,  # scipy refits weibull by a generic optimiser (~15 ms each)
        ),
    ],
)
def test_bootstrap_pvalues_agree_with_scipy_goodness_of_fit(name, dist, gen, which) -> None:
    """Our batched bootstrap p-values equal scipy.stats.goodness_of_fit's within Monte Carlo
    error (two independent estimates: 4.5 binomial standard errors of their difference)."""
    g = np.random.default_rng(31)
    n_resamples = 399
    x = gen(g)
    ours = goodness_of_fit(x, name, n_resamples=n_resamples, rng=g, resolution=None)
    for stat in which:
        with warnings.catch_warnings():
            # scipy's generic optimiser may warn on a replicate; its answer is still its answer
            warnings.simplefilter("ignore", RuntimeWarning)
            # source: scipy.stats.goodness_of_fit, location known (reference library)
            theirs = stats.goodness_of_fit(
                dist, x, known_params={"loc": 0.0}, statistic=stat, n_mc_samples=n_resamples, rng=g
            ).pvalue
        p = 0.5 * (ours.pvalues[stat] + theirs)
        se = np.sqrt(2.0 * max(p * (1.0 - p), 0.02) / n_resamples)
        assert abs(ours.pvalues[stat] - theirs) <= 4.5 * se, (stat, ours.pvalues, theirs)


@pytest.mark.parametrize(
    ("name", "params", "options", "dist"),
    [
        ("exponential", {"scale": 3.0, "loc": 0.0}, {}, stats.expon(scale=3.0)),
        ("rayleigh", {"sigma": 2.0, "loc": 1.0}, {"loc": 1.0}, stats.rayleigh(loc=1.0, scale=2.0)),
        (
            "weibull",
            {"shape": 2.5, "scale": 4.0, "loc": 10.0},
            {"loc": 10.0},
            stats.weibull_min(2.5, loc=10.0, scale=4.0),
        ),
    ],
)
def test_sorted_replicate_rows_are_sorted_draws_from_the_fitted_member(
    name, params, options, dist
) -> None:
    """Rows come sorted and, pooled, pass a KS test against the fitted member (scipy)."""
    g = np.random.default_rng(3)
    rows = batch_fits.sorted_replicate_rows(name, params, (40, 250), options=options, rng=g)
    assert rows is not None and rows.shape == (40, 250)
    assert np.all(np.diff(rows, axis=1) >= 0)
    # source: scipy.stats.kstest against the scipy distribution (reference library); a sorted
    # sample is an iid sample in another order, so the pooled values are iid from the member
    assert stats.kstest(rows.ravel(), dist.cdf).pvalue > 1e-3


def test_weibull_rows_at_location_zero_give_the_same_null_statistics() -> None:
    """Weibull at location 0: refit statistics of the shape-1 rows have the law of those of rows
    drawn from the fitted member (two-sample KS on the Anderson-Darling values)."""
    from samplewright.check.gof import _sorted_stats

    params = {"shape": 0.7, "scale": 5.0, "loc": 0.0}
    g = np.random.default_rng(12)
    fast = batch_fits.sorted_replicate_rows("weibull", params, (3000, 40), options={}, rng=g)
    plain = get_family("weibull").draw(params, (3000, 40), g)
    assert fast is not None
    u_fast, u_plain = refit_cdf_rows("weibull", fast), refit_cdf_rows("weibull", plain)
    assert u_fast is not None and u_plain is not None
    ad_fast, ad_plain = _sorted_stats(u_fast)[:, 1], _sorted_stats(u_plain)[:, 1]
    # source: scipy.stats.ks_2samp (reference library)
    assert stats.ks_2samp(ad_fast, ad_plain).pvalue > 1e-3


def test_sorted_replicate_rows_only_where_offered() -> None:
    """Other families, a free location or a fixed shape: None (the caller draws as usual)."""
    g = np.random.default_rng(0)
    assert batch_fits.sorted_replicate_rows("gamma", {}, (2, 5), options={}, rng=g) is None
    assert (
        batch_fits.sorted_replicate_rows("exponential", {}, (2, 5), options={"loc": "free"}, rng=g)
        is None
    )
    assert (
        batch_fits.sorted_replicate_rows("weibull", {}, (2, 5), options={"shape": 2.0}, rng=g)
        is None
    )
