"""Issue 9, families and MLE: bounded fits on hostile values, input errors for values outside a
support, warnings in the diagnostics; and (issue 10) the closed-form log-likelihood sums.

References: scipy.stats (logpdf sums, cdf, the moments of each family), the reproductions named
in the issue (gumbel on values spanning +-1e160, rayleigh with a zero). Data use fixed seeds.
"""

from __future__ import annotations

import contextlib
import signal
from collections.abc import Iterator

import numpy as np
import pytest

from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.families import FAMILIES, get_family
from samplewright.fitting.api import fit
from samplewright.fitting.mle import fit_family, loglik
from samplewright.fitting.mle_sums import CHUNK, Obs, sum_log
from samplewright.fitting.mle_warnings import TAIL_LIMITS, fit_warnings

# --- item 9: every fit ends in bounded time --------------------------------------------------


@contextlib.contextmanager
def _deadline(seconds: float) -> Iterator[None]:
    """Raise TimeoutError in the test if the block runs longer than ``seconds``."""

    def expire(signum, frame):
        raise TimeoutError(f"still running after {seconds} s")

    old = signal.signal(signal.SIGALRM, expire)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


HOSTILE = {
    "pm1e160": np.array([-1e160, -3e159, 0.0, 2e159, 1e160, 5e159]),
    "1e160": np.array([1.0, 3e159, 2e159, 1e160, 5e159, 7e158]),
    "tiny": np.array([1e-300, 2e-300, 5e-300, 1e-299, 3e-300]),
    "wide": np.array([1e-300, 1.0, 1e300, 5.0, 7e150]),
    "huge": np.array([1e300, 1.5e300, 1.7e308, 3e307, 9e306]),
}


def _fit_or_refuse(name: str, x: np.ndarray) -> None:
    """Fit ``name`` to ``x``: a result holding the data with a finite loglik, or a clear error."""
    options = {"n_trials": 10} if name == "binomial" else {}
    try:
        with _deadline(30.0):
            out = fit_family(name, x, **options)
    except (MethodError, FitError) as err:
        assert "\n" not in str(err) and str(err).startswith(name)
        return
    assert np.isfinite(out.loglik)
    lo, hi = get_family(name).frozen(out.params).support()
    assert lo <= x.min() and x.max() <= hi


def test_gumbel_and_gev_on_values_spanning_1e160_return():
    """Reproduction: gumbel and gev on values spanning +-1e160 never returned; now they fit."""
    x = HOSTILE["pm1e160"]
    for name in ("gumbel", "gev"):
        with _deadline(30.0):
            out = fit_family(name, x)
        assert np.isfinite(out.loglik)
        # the fit is scale equivariant: the same fit on x / 1e160, scaled back
        small = fit_family(name, x / 1e160)
        key = "beta" if name == "gumbel" else "sigma"
        assert out.params[key] == pytest.approx(1e160 * small.params[key], rel=1e-6)


def test_auto_with_gumbel_on_values_spanning_1e160_returns():
    """Reproduction: auto with gumbel among its candidates returns on the same values."""
    with _deadline(60.0):
        s = fit(HOSTILE["pm1e160"], "auto", candidates=["gumbel", "normal"], n_resamples=0)
    assert s.params


@pytest.mark.parametrize("data", sorted(HOSTILE))
@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_every_family_on_hostile_values_ends_with_a_result_or_a_clear_error(name, data):
    """Every family on values of extreme magnitude: a checked result or a one-line error, in
    bounded time and without floating-point warnings (warnings are errors here)."""
    _fit_or_refuse(name, HOSTILE[data])


@pytest.mark.parametrize("name", ["normal", "gumbel", "logistic", "student_t", "uniform"])
def test_values_whose_spread_overflows_are_refused_naming_them(name):
    """Values from -1e308 to 1e308: their spread overflows float64, a MethodError names them."""
    with pytest.raises(MethodError, match=r"-1e\+308 to 1e\+308.*overflows float64"):
        fit_family(name, np.array([-1e308, 0.0, 1e308]))


# --- item 10: values outside a support are input errors --------------------------------------


@pytest.mark.parametrize(
    "name,x,options,pattern",
    [
        ("rayleigh", [1.0, 0.0, 2.0], {}, "rayleigh needs every value > 0.0 (its location); "
         "value 2 is 0.0"),
        ("gamma", [1.0, 2.0, 0.0], {}, "gamma needs every value > 0.0 (its location); value 3"),
        ("lognormal", [1.0, -2.0, 3.0], {"loc": -1.0}, "value 2 is -2.0"),
        ("exponential", [1.0, 0.5, 3.0], {"loc": 0.8}, ">= 0.8 (its location); value 2 is 0.5"),
        ("beta", [0.2, 1.0, 0.4], {}, "strictly inside (0.0, 1.0); value 2 is 1.0"),
        ("poisson", [1.0, 2.0, -1.0], {}, "poisson: counts must be non-negative integers; "
         "value 3 is -1.0"),
        ("binomial", [1.0, 12.0], {"n_trials": 10}, "at most n_trials=10; value 2 is 12.0"),
    ],
)  # fmt: skip
def test_value_outside_the_support_is_an_input_error_naming_it(name, x, options, pattern):
    """A value the family cannot produce is a MethodError (a ValueError) naming value and row."""
    with pytest.raises(MethodError) as info:
        fit_family(name, np.array(x), **options)
    assert isinstance(info.value, ValueError) and pattern in str(info.value)


def test_rows_are_counted_among_rows_of_positive_weight():
    """After rows of weight 0 are dropped, the message says how rows are counted."""
    with pytest.raises(MethodError, match=r"value 2 is 0.0, counting rows of weight > 0$"):
        fit_family("rayleigh", np.array([1.0, -5.0, 0.0]), np.array([1.0, 0.0, 1.0]))


# --- item 11: warnings recorded in the diagnostics -------------------------------------------


def _durations() -> np.ndarray:
    return np.random.default_rng(17).gamma(1.5, 2.0, 300)


@pytest.mark.parametrize("name", ["normal", "logistic", "gev", "student_t", "gumbel"])
def test_real_line_families_on_positive_data_warn_of_mass_below_zero(name):
    """Fitted to positive durations these put mass below 0; the warning states scipy's cdf(0)."""
    s = fit(_durations(), name)
    kinds = [w["kind"] for w in s.diagnostics["warnings"]]
    p0 = float(get_family(name).frozen(s.params).cdf(0.0))  # source: scipy.stats cdf at 0
    assert ("support_below_zero" in kinds) == (p0 > 1e-3)
    assert name != "normal" or p0 > 1e-3
    if p0 > 1e-3:
        message = next(w["message"] for w in s.diagnostics["warnings"])
        assert f"{p0:.2%}" in message


@pytest.mark.parametrize("name", ["lognormal", "gamma", "weibull", "exponential"])
def test_positive_families_on_positive_data_record_no_warning(name):
    """A positive family on positive data: the declared list is there and empty."""
    assert fit(_durations(), name).diagnostics["warnings"] == []


@pytest.mark.parametrize("alpha,kinds", [(0.8, 2), (1.5, 1), (2.5, 0)])
def test_pareto_tail_index_warnings(alpha, kinds):
    """pareto with alpha <= 1 has no finite mean (and variance); 1 < alpha <= 2 no variance."""
    x = get_family("pareto").draw(
        {"alpha": alpha, "xm": 1.0, "loc": 0.0}, 5000, np.random.default_rng(3)
    )
    s = fit(x, "pareto")
    found = {w["kind"] for w in s.diagnostics["warnings"]}
    dist = get_family("pareto").frozen(s.params)
    assert ("infinite_mean" in found) == (not np.isfinite(dist.mean()))  # source: scipy moments
    assert ("infinite_variance" in found) == (not np.isfinite(dist.var()))
    assert len(found) == kinds


@pytest.mark.parametrize("name", sorted(TAIL_LIMITS))
def test_tail_rules_agree_with_scipy_moments(name):
    """The documented tail limits flag exactly the parameters where scipy's mean/var is not
    finite."""
    key = TAIL_LIMITS[name][0]
    fam = get_family(name)
    base = {
        "pareto": {"alpha": 1.0, "xm": 1.0, "loc": 0.0},
        "loglogistic": {"alpha": 1.0, "beta": 1.0, "loc": 0.0},
        "student_t": {"mu": 0.0, "sigma": 1.0, "nu": 1.0},
        "generalized_pareto": {"xi": 0.0, "sigma": 1.0, "loc": 0.0},
        "gev": {"mu": 0.0, "sigma": 1.0, "xi": 0.0},
    }[name]
    values = [-0.3, 0.2, 0.45, 0.55, 0.9, 1.1, 1.5, 1.9, 2.1, 3.0]
    for v in values:
        if key != "xi" and v <= 0:
            continue
        p = {**base, key: v}
        lo = fam.support(p)[0]
        x = np.array([max(lo, 0.0) + 1.0, max(lo, 0.0) + 2.0]) if np.isfinite(lo) else np.ones(2)
        found = {w.kind for w in fit_warnings(fam, p, x)}
        with np.errstate(all="ignore"):
            dist = fam.frozen(p)
            mean, var = dist.mean(), dist.var()  # source: scipy.stats moments
        assert ("infinite_mean" in found) == (not np.isfinite(mean)), (v, mean)
        assert ("infinite_variance" in found) == (not np.isfinite(var)), (v, var)


def test_support_beyond_data_is_reported_for_given_parameters():
    """Parameters whose support misses a value (not from a fit of these data) are flagged."""
    found = fit_warnings("uniform", {"lower": 0.0, "upper": 1.0}, np.array([0.5, 1.5]))
    assert [w.kind for w in found] == ["support_beyond_data"]


# --- issue 10: closed-form log-likelihood sums ------------------------------------------------

CLOSED = {
    "normal": {"mu": 3.0, "sigma": 2.0},
    "lognormal": {"mu": 1.0, "sigma": 0.6, "loc": 0.0},
    "exponential": {"scale": 2.0, "loc": 0.0},
    "gamma": {"shape": 2.5, "scale": 1.5, "loc": 0.0},
    "weibull": {"shape": 1.7, "scale": 3.0, "loc": 0.0},
    "inverse_gaussian": {"mu": 2.0, "lambda": 5.0, "loc": 0.0},
    "rayleigh": {"sigma": 2.0, "loc": 0.0},
    "pareto": {"alpha": 2.5, "xm": 1.5, "loc": 0.0},
}


@pytest.mark.parametrize("n", [50, 3 * CHUNK + 7])
@pytest.mark.parametrize("name", sorted(CLOSED))
def test_closed_form_loglik_equals_scipy_logpdf_sum(name, n):
    """The loglik a closed-form fit returns from its sums equals scipy's logpdf sum, unweighted,
    weighted and with a location, on one chunk and on several."""
    fam = get_family(name)
    x = fam.draw(CLOSED[name], n, np.random.default_rng(n)) + 5.0
    w = np.random.default_rng(1).integers(1, 4, n).astype(float)
    opts = {} if name == "normal" else {"loc": 4.0}
    for weights in (None, w):
        out = fit_family(name, x, weights, **opts)
        ref = loglik(fam, out.params, x, weights)  # source: scipy.stats logpdf, summed
        assert out.loglik == pytest.approx(ref, rel=1e-11, abs=1e-9)


@pytest.mark.parametrize("lo,hi", [(1e-3, 1e3), (1e-200, 1e-190), (1e200, 1e250), (0.5, 2.0)])
def test_sum_of_logs_by_products_equals_summed_logarithms(lo, hi):
    """The grouped-product sum of logs agrees with numpy's summed logarithms (any magnitude)."""
    x = np.exp(np.random.default_rng(2).uniform(np.log(lo), np.log(hi), 2 * CHUNK + 5))
    ref = float(np.sum(np.log(x)))  # source: numpy's logarithm, summed
    assert sum_log(Obs(x)) == pytest.approx(ref, rel=1e-13, abs=1e-9)
