"""Incomplete data: the checked sample, the likelihood, parametric fits and their refusals."""

from __future__ import annotations

import re

import numpy as np
import pytest
from scipy import stats

from samplewright.core.errors import MethodError
from samplewright.fitting.incomplete import (
    FAMILY_NAMES,
    IncompleteSample,
    fit_incomplete,
    incomplete_from_flags,
    incomplete_loglik,
    incomplete_sample,
)
from samplewright.fitting.incomplete_families import SPECS

INF = np.inf


def _loglik_of(sample: IncompleteSample, dist: object) -> float:
    d = dist
    return incomplete_loglik(sample, d.logpdf, d.logcdf, d.logsf)  # type: ignore[attr-defined]


# ---------------------------------------------------------------------------------------------
# the checked sample


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"lower": [1.0, 3.0], "upper": [2.0, 2.0]}, "lower > upper at row 1 (3.0 > 2.0"),
        (
            {"lower": [1.0, np.nan], "upper": [2.0, 2.0]},
            "lower: expected numbers, found NaN at row 1",
        ),
        (
            {"lower": [1.0, 1.0], "upper": [np.nan, 2.0]},
            "upper: expected numbers, found NaN at row 0",
        ),
        (
            {"lower": [1.0], "upper": [2.0, 3.0]},
            "upper: expected 1 values (one per row of lower), found 2",
        ),
        ({"lower": [], "upper": []}, "lower: expected at least one row, found none"),
        (
            {"lower": [[1.0]], "upper": [[2.0]]},
            "lower: expected a one-dimensional array, found shape (1, 1)",
        ),
        ({"lower": ["a"], "upper": [1.0]}, "lower: expected numbers, found list"),
        (
            {"lower": [INF], "upper": [INF]},
            "lower: expected a finite number or -inf, found +inf at row 0",
        ),
        (
            {"lower": [-INF], "upper": [-INF]},
            "upper: expected a finite number or +inf, found -inf at row 0",
        ),
        ({"lower": [0.0, -INF], "upper": [1.0, INF]}, "row 1 has lower=-inf and upper=+inf"),
        (
            {"lower": [1.0, 2.0], "upper": [1.0, 2.0], "truncation": [0.5, 2.5]},
            "truncation at row 1 (2.5) is above the exact value (2.0)",
        ),
        (
            {"lower": [1.0, 2.0], "upper": [1.0, INF], "truncation": [0.5, 3.0]},
            "truncation at row 1 (3.0) is above lower of a right-censored row (2.0)",
        ),
        (
            {"lower": [0.0, 1.0], "upper": [4.0, 2.0], "truncation": 2.0},
            "truncation at row 1 (2.0) is at or above upper (2.0)",
        ),
        (
            {"lower": [1.0], "upper": [2.0], "truncation": [np.nan]},
            "truncation: expected numbers, found NaN at row 0",
        ),
        (
            {"lower": [1.0], "upper": [2.0], "truncation": [INF]},
            "truncation: expected a finite number or -inf, found +inf at row 0",
        ),
        (
            {"lower": [1.0, 1.0], "upper": [2.0, 2.0], "truncation": [0.0]},
            "truncation: expected 2 values (one per row of lower), found 1",
        ),
        (
            {"lower": [1.0, 1.0], "upper": [2.0, 2.0], "weights": [1.0, 0.0]},
            "weights: expected finite values > 0, found 0.0 at row 1",
        ),
        (
            {"lower": [1.0, 1.0], "upper": [2.0, 2.0], "weights": [-1.0, INF]},
            "weights: expected finite values > 0, found -1.0 at row 0 (2 in all)",
        ),
        (
            {"lower": [1.0, 1.0], "upper": [2.0, 2.0], "weights": [1.0, 2.0, 3.0]},
            "weights: expected 2 values (one per row of lower), found 3",
        ),
    ],
)
def test_incomplete_sample_refuses_bad_rows(kwargs: dict[str, object], message: str) -> None:
    """Each invalid input gets a one-line MethodError naming the argument and the row."""
    with pytest.raises(MethodError, match=re.escape(message)):
        incomplete_sample(**kwargs)  # type: ignore[arg-type]


def test_incomplete_sample_kinds_and_effective_lower() -> None:
    """Rows are classified by their ends; a censored row's lower end is raised to its truncation."""
    s = incomplete_sample(
        [2.0, 3.0, -INF, 1.0, 0.0], [2.0, INF, 4.0, 5.0, 6.0], truncation=[1.0, 3.0, 2.0, -INF, 4.0]
    )
    assert s.is_exact.tolist() == [True, False, False, False, False]
    assert s.is_right.tolist() == [False, True, False, False, False]
    assert s.is_left.tolist() == [False, False, True, False, False]
    assert s.is_interval.tolist() == [False, False, False, True, True]
    assert s.is_truncated.tolist() == [True, True, True, False, True]
    assert s.effective_lower.tolist() == [2.0, 3.0, 2.0, 1.0, 4.0]
    assert s.weights.tolist() == [1.0] * 5
    with pytest.raises(ValueError, match="read-only"):
        s.lower[0] = 9.0


@pytest.mark.parametrize(
    ("args", "kwargs", "message"),
    [
        (([1.0, 2.0], [False, True]), {"side": "both"}, "side: expected one of ('right', 'left')"),
        (
            ([1.0, 2.0], [0, 1]),
            {},
            "censored: expected 2 booleans (one per value), found dtype int",
        ),
        (([1.0, 2.0], [True]), {}, "censored: expected 2 booleans"),
        (([1.0, INF], [False, True]), {}, "values: expected finite numbers, found inf at row 1"),
        (
            ([0.5, 2.0], [True, False]),
            {"side": "left", "left_end": 1.0},
            "values: left-censored value 0.5 at row 0 is not above left_end=1.0",
        ),
        (([1.0], [True]), {"left_end": INF}, "left_end: expected a finite number or -inf"),
    ],
)
def test_incomplete_from_flags_refuses_bad_input(
    args: tuple[object, object], kwargs: dict[str, object], message: str
) -> None:
    """Bad flags, sides, values or left ends get a one-line MethodError naming the argument."""
    with pytest.raises(MethodError, match=re.escape(message)):
        incomplete_from_flags(*args, **kwargs)  # type: ignore[arg-type]


def test_incomplete_from_flags_left_and_right() -> None:
    """Right-censored values become (x, inf), left-censored ones (left_end, x]."""
    r = incomplete_from_flags([1.0, 2.0], np.array([False, True]))
    assert (r.lower.tolist(), r.upper.tolist()) == ([1.0, 2.0], [1.0, INF])
    lf = incomplete_from_flags([1.0, 2.0], np.array([True, False]), side="left", left_end=0.0)
    assert (lf.lower.tolist(), lf.upper.tolist()) == ([0.0, 2.0], [1.0, 2.0])


# ---------------------------------------------------------------------------------------------
# the likelihood


def test_loglik_matches_the_terms_written_out() -> None:
    """Each kind of row contributes the term of the textbook likelihood, weights multiplying."""
    d = stats.norm(loc=1.0, scale=2.0)
    s = incomplete_sample(
        [0.5, 2.0, -INF, -1.0, 0.0, 3.0],
        [0.5, INF, 1.5, 0.5, 2.5, 3.0],
        truncation=[-INF, -INF, -INF, -INF, 1.0, 2.0],
        weights=[1.0, 2.0, 1.0, 3.0, 1.0, 1.0],
    )
    # source: the likelihood written out (common practice, no source): f, S, F, F(u)-F(l),
    # (F(u)-F(t))/S(t) for an interval starting below its truncation point, f(x)/S(t)
    expected = (
        np.log(d.pdf(0.5))
        + 2 * np.log(d.sf(2.0))
        + np.log(d.cdf(1.5))
        + 3 * np.log(d.cdf(0.5) - d.cdf(-1.0))
        + np.log((d.cdf(2.5) - d.cdf(1.0)) / d.sf(1.0))
        + np.log(d.pdf(3.0) / d.sf(2.0))
    )
    assert _loglik_of(s, d) == pytest.approx(expected, rel=1e-13)


def test_loglik_keeps_precision_in_both_tails() -> None:
    """Interval masses far in either tail keep full precision where F(u) - F(l) underflows."""
    d = stats.expon()
    # source: closed form for the exponential, P(a < X <= b) = exp(-a) (1 - exp(-(b - a)))
    far = incomplete_sample([50.0], [51.0])
    assert _loglik_of(far, d) == pytest.approx(-50.0 + np.log(-np.expm1(-1.0)), rel=1e-14)
    assert d.cdf(51.0) - d.cdf(50.0) == 0.0  # the naive difference is lost
    near = incomplete_sample([1e-20], [3e-20])
    exact = -1e-20 + np.log(-np.expm1(-2e-20))
    assert _loglik_of(near, d) == pytest.approx(exact, rel=1e-14)


def test_loglik_drops_rows_censored_below_their_truncation_point() -> None:
    """A right-censored row at its truncation point contributes exactly 0 (S(t)/S(t))."""
    d = stats.gamma(2.0, scale=3.0)
    base = incomplete_sample([1.0, 4.0], [1.0, INF])
    more = incomplete_sample([1.0, 4.0, 6.0], [1.0, INF, INF], truncation=[-INF, -INF, 6.0])
    assert _loglik_of(more, d) == _loglik_of(base, d)


def test_loglik_is_minus_inf_outside_the_support() -> None:
    """A row the distribution cannot produce gives -inf, without a warning."""
    d = stats.expon()
    assert _loglik_of(incomplete_sample([-2.0], [-1.0]), d) == -INF
    assert _loglik_of(incomplete_sample([-2.0], [-2.0]), d) == -INF


# ---------------------------------------------------------------------------------------------
# fits


def _simulated(n: int = 150) -> IncompleteSample:
    """Weibull losses with random deductibles, a limit, and some grouped rows."""
    rng = np.random.default_rng(20240611)
    x = stats.weibull_min.rvs(1.7, scale=10.0, size=3 * n, random_state=rng)
    d = rng.choice([0.0, 2.0, 4.0], size=x.size)
    keep = x > d
    x, d = x[keep][:n], d[keep][:n]
    lower, upper = x.copy(), x.copy()
    upper[x > 25.0] = INF
    lower[x > 25.0] = 25.0
    grouped = rng.random(x.size) < 0.3  # recorded only to the whole unit
    lower[grouped & (x <= 25)] = np.maximum(
        np.floor(x[grouped & (x <= 25)]), d[grouped & (x <= 25)]
    )
    upper[grouped & (x <= 25)] = np.floor(x[grouped & (x <= 25)]) + 1.0
    return incomplete_sample(lower, upper, truncation=np.where(d > 0, d, -INF))


@pytest.mark.parametrize("name", FAMILY_NAMES)
def test_fit_is_a_local_maximum(name: str) -> None:
    """Moving any estimated parameter by 0.1% either way lowers the log-likelihood."""
    s = _simulated()
    try:
        r = fit_incomplete(s, name)
    except MethodError as exc:  # only runaway fits may be refused, never silently returned
        assert "keeps rising" in str(exc) or "mass above the truncation" in str(exc)
        return
    assert r.converged and np.isfinite(r.loglik)
    spec = SPECS[name]
    for k in spec.estimated:
        for f in (0.999, 1.001):
            p = dict(r.params)
            p[k] = p[k] * f if p[k] != 0 else f - 1.0
            d = spec.dist(**spec.kwargs(p))
            assert _loglik_of(s, d) < r.loglik + 1e-9, (k, f)


def test_fit_counts_rows_and_criteria() -> None:
    """Row counts, parameter count, AIC and BIC follow their definitions."""
    s = incomplete_sample(
        [0.0, 1.0, 2.0, 3.0, 5.0, 2.5, 7.0],
        [1.0, 1.0, 2.0, INF, 6.0, 2.5, 7.0],
        truncation=[-INF, -INF, 0.5, 1.0, -INF, -INF, -INF],
        weights=[1.0, 2.0, 1.0, 1.0, 1.0, 1.0, 1.0],
    )
    r = fit_incomplete(s, "gamma")
    assert (r.n_exact, r.n_right, r.n_left, r.n_interval, r.n_truncated) == (4, 1, 1, 1, 2)
    assert r.n_params == 2 and r.n_obs == 8.0
    # source: AIC = 2k - 2 logL (Akaike 1974), BIC = k log n - 2 logL (Schwarz 1978)
    assert r.aic == pytest.approx(4.0 - 2.0 * r.loglik)
    assert r.bic == pytest.approx(2.0 * np.log(8.0) - 2.0 * r.loglik)
    assert set(r.params) == {"shape", "scale", "loc"} and r.params["loc"] == 0.0


def test_fit_of_exact_data_matches_closed_forms() -> None:
    """With only exact values the normal and lognormal fits are the closed-form MLEs."""
    x = np.array([2.1, 3.4, 1.9, 5.6, 4.4, 2.8, 3.3])
    s = incomplete_sample(x, x)
    # source: closed-form MLEs (mean, sd with divisor n; of log x for the lognormal)
    r = fit_incomplete(s, "normal")
    assert r.params["mu"] == pytest.approx(x.mean(), rel=1e-7)
    assert r.params["sigma"] == pytest.approx(x.std(), rel=1e-6)
    r = fit_incomplete(s, "lognormal")
    assert r.params["mu"] == pytest.approx(np.log(x).mean(), rel=1e-7)
    assert r.params["sigma"] == pytest.approx(np.log(x).std(), rel=1e-6)


def test_frequency_weights_act_like_repeated_rows() -> None:
    """A row with weight 3 gives the same fit as the row written three times."""
    lo, hi = np.array([1.0, 2.0, 0.0, 4.0]), np.array([1.0, 3.0, 2.5, INF])
    w = np.array([3.0, 1.0, 2.0, 1.0])
    a = fit_incomplete(incomplete_sample(lo, hi, weights=w), "weibull")
    rep = w.astype(int)
    b = fit_incomplete(incomplete_sample(np.repeat(lo, rep), np.repeat(hi, rep)), "weibull")
    assert a.loglik == pytest.approx(b.loglik, rel=1e-10)
    assert a.params["shape"] == pytest.approx(b.params["shape"], rel=1e-5)


def test_fixed_shape_one_weibull_is_the_exponential_fit() -> None:
    """Weibull with shape fixed at 1 is the exponential: same scale, same likelihood, k = 1."""
    s = _simulated(150)
    w = fit_incomplete(s, "weibull", fixed={"shape": 1.0})
    e = fit_incomplete(s, "exponential")
    assert w.n_params == 1 and w.params["shape"] == 1.0
    assert w.params["scale"] == pytest.approx(e.params["scale"], rel=1e-6)
    assert w.loglik == pytest.approx(e.loglik, abs=1e-8)


def test_fixed_location_shifts_the_support() -> None:
    """With loc fixed, a positive family is fitted to x - loc and refuses values at or below it."""
    x = np.array([12.0, 13.5, 15.0, 11.2, 19.0])
    s = incomplete_sample(x, x)
    r = fit_incomplete(s, "exponential", fixed={"loc": 10.0})
    # source: closed-form exponential MLE with known location, mean(x - loc)
    assert r.params["scale"] == pytest.approx((x - 10.0).mean(), rel=1e-7)
    with pytest.raises(MethodError, match=r"every exact value >= 12\.0 .* found 11\.2 at row 3"):
        fit_incomplete(s, "exponential", fixed={"loc": 12.0})


def test_pareto_minimum_defaults_to_the_smallest_point() -> None:
    """The pareto xm is fixed at the smallest exact value, lower end or truncation point."""
    s = incomplete_sample([3.0, 5.0, 4.0], [3.0, 5.0, INF], truncation=[2.0, 2.0, 2.0])
    r = fit_incomplete(s, "pareto")
    assert r.params["xm"] == 2.0 and r.n_params == 1


@pytest.mark.parametrize(
    ("lower", "upper", "trunc", "name", "message"),
    [
        ([1.0, 2.0], [INF, INF], None, "normal", "every informative row is right-censored"),
        ([1.0, 2.0], [INF, INF], [1.0, 2.0], "weibull", "no row carries information"),
        (
            [0.0, 1.0, 2.0],
            [3.0, 4.0, 5.0],
            None,
            "normal",
            "every row admits the point(s) in [2.0, 3.0]",
        ),
        ([0.0, 1.0], [1.0, 2.0], None, "weibull", "every row admits the point(s) in [1.0, 1.0]"),
        ([2.0, 2.0, 1.0], [2.0, 2.0, 5.0], None, "gamma", "every exact value equals 2.0"),
        ([0.0, 0.0], [1.0, 2.0], None, "exponential", "every informative row is left-censored"),
        ([1.0, 2.0, 3.0], [1.0, 2.0, 3.0], None, "lognorm", "dist_name: expected one of ("),
        (
            [1.0, 0.0],
            [1.0, 0.0],
            None,
            "lognormal",
            "every exact value > 0.0 (its lower end); found 0.0 at row 1",
        ),
        (
            [1.0, -INF],
            [1.0, -1.0],
            None,
            "weibull",
            "every upper end > 0.0 (its lower end); found -1.0 at row 1",
        ),
    ],
)
def test_fit_refuses_data_without_a_maximum(
    lower: list[float], upper: list[float], trunc: list[float] | None, name: str, message: str
) -> None:
    """Unbounded or degenerate likelihoods and data outside the support get a MethodError."""
    s = incomplete_sample(lower, upper, truncation=trunc)
    with pytest.raises(MethodError, match=re.escape(message)):
        fit_incomplete(s, name)


def test_fit_refuses_a_parameter_running_to_its_edge() -> None:
    """Light-tailed data push the lomax shape to infinity; the fit says so instead of answering."""
    x = stats.norm.rvs(50.0, 5.0, size=200, random_state=np.random.default_rng(7))
    with pytest.raises(MethodError, match=r"lomax: the likelihood keeps rising as \w+ -> \+inf"):
        fit_incomplete(incomplete_sample(x, x), "lomax")


def test_fit_refuses_a_fit_that_lives_below_the_truncation_point() -> None:
    """A normal fitted to exponential excesses drifts below the deductible and is refused."""
    n = 200  # exponential quantiles above a deductible of 100: no normal fits their shape
    x = 100.0 + 300.0 * -np.log1p(-(np.arange(1, n + 1) - 0.5) / n)
    s = incomplete_sample(x, x, truncation=100.0)
    with pytest.raises(MethodError, match=r"normal: the fit puts only \S+ of its mass above the"):
        fit_incomplete(s, "normal")


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        (
            {"fixed": {"shape2": 1.0}},
            "fixed: weibull has parameters ('loc', 'shape', 'scale'), found 'shape2'",
        ),
        ({"fixed": {"shape": -1.0}}, "fixed['shape'] of weibull: expected a value > 0, found -1.0"),
        (
            {"fixed": {"loc": "free"}},
            "fixed['loc'] of weibull: expected a finite number, found 'free'",
        ),
        (
            {"fixed": {"loc": np.nan}},
            "fixed['loc'] of weibull: expected a finite number, found nan",
        ),
        ({"start": {"loc": 1.0}}, "start: weibull estimates ('shape', 'scale'), found 'loc'"),
        ({"start": {"scale": 0.0}}, "start['scale'] of weibull: expected a value > 0"),
        ({"max_iter": 3}, "max_iter: expected an integer >= 10, found 3"),
        ({"max_iter": 10.5}, "max_iter: expected an integer >= 10, found 10.5"),
    ],
)
def test_fit_refuses_bad_options(kwargs: dict[str, object], message: str) -> None:
    """Unknown or invalid fixed values, starting values and budgets are refused by name."""
    s = incomplete_sample([1.0, 2.0, 3.5], [1.0, 2.0, 3.5])
    with pytest.raises(MethodError, match=re.escape(message)):
        fit_incomplete(s, "weibull", **kwargs)  # type: ignore[arg-type]


def test_fit_reports_an_exhausted_budget() -> None:
    """A budget too small to converge is reported as converged=False, not hidden."""
    r = fit_incomplete(_simulated(100), "gamma", max_iter=10)
    assert r.converged is False and r.n_iter <= 10


def test_all_fixed_evaluates_the_likelihood() -> None:
    """With every parameter fixed the result is the log-likelihood at those values."""
    s = _simulated(50)
    r = fit_incomplete(s, "weibull", fixed={"shape": 1.5, "scale": 9.0})
    assert r.n_params == 0 and r.n_iter == 0
    assert r.loglik == _loglik_of(s, stats.weibull_min(1.5, scale=9.0))
