"""Reference checks of expert-judgement fits against published values and scipy.

Sources: the test suite of the R package qpd (D. Perepolkin, github.com/dmi3kno/qpd,
inst/tinytest/test_metalog.R: a 3-term metalog through (0.1, 4), (0.5, 9), (0.85, 17) in all four
boundedness forms, values rounded to 4 decimals); Keelin (2016, Decision Analysis 13(4)) for the
2-term metalog being the logistic distribution and for the 3-term feasibility bound; Malcolm,
Roseboom, Clark & Fazar (1959, Operations Research 7(5)) for the PERT mean; scipy.stats for the
logistic, log-logistic (fisk), beta and triangular distributions.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize, special, stats

from samplewright.core.errors import MethodError
from samplewright.fitting.elicit import (
    fit_metalog,
    fit_quantiles,
    pert_parameters,
    triangular_parameters,
)
from samplewright.fitting.metalog import _basis, _logit

P_QPD = [0.1, 0.5, 0.85]
X_QPD = [4.0, 9.0, 17.0]
# source: qpd inst/tinytest/test_metalog.R (fit_metalog, qmetalog(0.12), 1/fmetalog(0.12),
# pmetalog(7.11)); keys are (lower, upper) as passed to qpd's fit_metalog(p, q, bl, bu)
QPD = {
    (None, None): ([9.0, 3.5217, 3.1152], 4.3419, 0.0628, 0.3501),
    (0.0, None): ([2.1972, 0.3678, -0.0032], 4.3146, 0.0662, 0.3452),
    (None, 50.0): ([-3.7136, 0.0912, 0.0970], 4.3144, 0.0682, 0.3585),
    (0.0, 50.0): ([-1.5163, 0.4590, 0.0938], 4.3146, 0.0664, 0.3472),
}


@pytest.mark.parametrize("bounds", list(QPD))
def test_metalog_matches_the_qpd_package(bounds: tuple[float | None, float | None]) -> None:
    """Coefficients, Q(0.12), f(Q(0.12)) and F(7.11) agree with qpd to its 4 printed decimals."""
    coefficients, q12, density12, cdf711 = QPD[bounds]
    m = fit_metalog(P_QPD, X_QPD, lower=bounds[0], upper=bounds[1])
    np.testing.assert_allclose(m.coefficients, coefficients, atol=5e-5)
    assert float(m.quantile(0.12)) == pytest.approx(q12, abs=5e-5)
    assert 1.0 / float(m.quantile_density(0.12)) == pytest.approx(density12, abs=5e-5)
    assert float(m.pdf(m.quantile(0.12))) == pytest.approx(density12, abs=5e-5)
    assert float(m.cdf(7.11)) == pytest.approx(cdf711, abs=5e-5)


def _two_term(lower: float | None, upper: float | None) -> tuple[object, float, float]:
    """A 2-term metalog through (0.2, 3) and (0.7, 8), with its coefficients (a1, a2)."""
    m = fit_metalog([0.2, 0.7], [3.0, 8.0], lower=lower, upper=upper)
    return m, float(m.coefficients[0]), float(m.coefficients[1])


def test_two_term_unbounded_metalog_is_the_logistic() -> None:
    """Keelin (2016): M(y) = a1 + a2 ln(y / (1 - y)) is logistic(loc=a1, scale=a2)."""
    m, a1, a2 = _two_term(None, None)
    ref = stats.logistic(loc=a1, scale=a2)  # source: scipy.stats.logistic
    u = np.linspace(0.001, 0.999, 37)
    xs = np.linspace(-20.0, 30.0, 41)
    np.testing.assert_allclose(m.quantile(u), ref.ppf(u), rtol=1e-12)
    np.testing.assert_allclose(m.cdf(xs), ref.cdf(xs), rtol=1e-10, atol=1e-15)
    np.testing.assert_allclose(m.pdf(xs), ref.pdf(xs), rtol=1e-8, atol=1e-15)
    assert m.mean == pytest.approx(ref.mean(), rel=1e-9)
    assert m.var == pytest.approx(ref.var(), rel=1e-8)


def test_two_term_lower_bounded_metalog_is_the_log_logistic() -> None:
    """b + exp(a1 + a2 L) is scipy's fisk(c = 1/a2, loc = b, scale = exp(a1))."""
    m = fit_metalog([0.2, 0.7], [3.0, 4.5], lower=1.0)
    a1, a2 = m.coefficients
    assert a2 < 0.5  # light enough for a finite variance
    ref = stats.fisk(1.0 / a2, loc=1.0, scale=np.exp(a1))  # source: scipy.stats.fisk
    u = np.linspace(0.001, 0.999, 37)
    xs = np.linspace(1.5, 40.0, 41)
    np.testing.assert_allclose(m.quantile(u), ref.ppf(u), rtol=1e-12)
    np.testing.assert_allclose(m.cdf(xs), ref.cdf(xs), rtol=1e-10)
    np.testing.assert_allclose(m.pdf(xs), ref.pdf(xs), rtol=1e-8)
    assert m.mean == pytest.approx(ref.mean(), rel=1e-8)
    assert m.var == pytest.approx(ref.var(), rel=1e-7)


def test_heavy_semi_bounded_tail_moments_exist_exactly_where_scipy_has_them() -> None:
    """Lower-bounded 2-term metalogs: the mean is finite iff a2 < 1 (fisk: iff c > 1)."""
    for high, finite in ((30.0, False), (12.0, True)):
        m = fit_metalog([0.2, 0.8], [1.0, high], lower=0.0)
        ref = stats.fisk(1.0 / m.coefficients[1], scale=np.exp(m.coefficients[0]))
        # source: scipy.stats.fisk, whose mean is nan where the integral diverges
        assert np.isfinite(ref.mean()) == finite
        if finite:
            assert m.mean == pytest.approx(ref.mean(), rel=1e-7)
        else:
            assert m.mean == np.inf and m.var == np.inf


def test_two_term_upper_bounded_metalog_is_a_reflected_log_logistic() -> None:
    """b - exp(-(a1 + a2 L)): b - X is fisk(c = 1/a2, scale = exp(-a1))."""
    m, a1, a2 = _two_term(None, 12.0)
    ref = stats.fisk(1.0 / a2, scale=np.exp(-a1))  # source: scipy.stats.fisk, reflected at 12
    xs = np.linspace(-10.0, 11.9, 41)
    np.testing.assert_allclose(m.cdf(xs), ref.sf(12.0 - xs), rtol=1e-10)
    np.testing.assert_allclose(m.pdf(xs), ref.pdf(12.0 - xs), rtol=1e-8)


def test_two_term_bounded_metalog_is_a_logit_logistic() -> None:
    """(b_l + b_u e^M) / (1 + e^M): logit((X - b_l) / (b_u - X)) is logistic(a1, a2)."""
    m, a1, a2 = _two_term(0.0, 10.0)
    xs = np.linspace(0.05, 9.95, 41)
    z = np.log(xs / (10.0 - xs))
    ref = stats.logistic(loc=a1, scale=a2)  # source: scipy.stats.logistic on the logit scale
    np.testing.assert_allclose(m.cdf(xs), ref.cdf(z), rtol=1e-10)
    jacobian = 10.0 / (xs * (10.0 - xs))
    np.testing.assert_allclose(m.pdf(xs), ref.pdf(z) * jacobian, rtol=1e-8)


def test_three_term_feasibility_bound_of_keelin() -> None:
    """A 3-term metalog is feasible iff |a3| / a2 < 1.66711 (Keelin 2016)."""
    # the bound is 1 / max |y(1-y) L + (y - 1/2)| on (0, 1); check that derivation independently
    g = optimize.minimize_scalar(
        lambda y: -abs(y * (1 - y) * special.logit(y) + (y - 0.5)),
        bounds=(1e-9, 0.5),
        method="bounded",
        options={"xatol": 1e-14},
    )
    # source: Keelin (2016), feasibility of the 3-term metalog, |a3|/a2 < 1.66711 (from memory)
    assert 1.0 / -g.fun == pytest.approx(1.66711, abs=5e-6)
    p = np.array([0.1, 0.5, 0.9])
    for ratio, feasible in ((1.660, True), (-1.660, True), (1.674, False), (-1.674, False)):
        x = _basis(_logit(p), 3) @ np.array([5.0, 1.0, ratio])
        if feasible:
            fit_metalog(p, x)
        else:
            with pytest.raises(MethodError, match="no valid 3-term metalog"):
                fit_metalog(p, x)


@pytest.mark.parametrize(
    ("low", "mode", "high", "shape"),
    [(2.0, 5.0, 14.0, 4.0), (0.0, 0.0, 1.0, 4.0), (10.0, 30.0, 30.0, 4.0), (1.0, 2.0, 9.0, 3.0)],
)
def test_pert_matches_malcolm_et_al_and_scipy_beta(
    low: float, mode: float, high: float, shape: float
) -> None:
    """PERT mean is (low + shape mode + high)/(shape + 2); variance is that of scipy's beta."""
    r = pert_parameters(low, mode, high, shape=shape)
    # source: Malcolm, Roseboom, Clark & Fazar (1959) mean and shape parameters
    assert r.mean == pytest.approx((low + shape * mode + high) / (shape + 2), rel=1e-14)
    assert r.alpha == pytest.approx(1 + shape * (mode - low) / (high - low), rel=1e-14)
    assert r.beta == pytest.approx(1 + shape * (high - mode) / (high - low), rel=1e-14)
    ref = stats.beta(r.alpha, r.beta, loc=low, scale=high - low)  # source: scipy.stats.beta
    assert r.mean == pytest.approx(ref.mean(), rel=1e-13)
    assert r.var == pytest.approx(ref.var(), rel=1e-12)


@pytest.mark.parametrize(("low", "mode", "high"), [(1.0, 2.0, 5.0), (0.0, 0.0, 3.0), (-4, 1, 1)])
def test_triangular_matches_scipy_triang(low: float, mode: float, high: float) -> None:
    """c, loc, scale, mean, variance, cdf and quantile agree with scipy.stats.triang."""
    r = triangular_parameters(low, mode, high)
    ref = stats.triang((mode - low) / (high - low), loc=low, scale=high - low)
    # source: scipy.stats.triang
    assert r.mean == pytest.approx(ref.mean(), rel=1e-14, abs=1e-15)
    assert r.var == pytest.approx(ref.var(), rel=1e-13)
    xs = np.linspace(low - 1, high + 1, 31)
    u = np.linspace(0, 1, 21)
    np.testing.assert_allclose(r.cdf(xs), ref.cdf(xs), rtol=1e-14, atol=1e-16)
    np.testing.assert_allclose(r.quantile(u), ref.ppf(u), rtol=1e-14, atol=1e-15)


# family -> (scipy distribution making the points, its parameters by name, bounds to pass)
FAMILIES = {
    "normal": (stats.norm(3.0, 2.0), {"loc": 3.0, "scale": 2.0}, {}),
    "logistic": (stats.logistic(1.0, 0.5), {"loc": 1.0, "scale": 0.5}, {}),
    "gumbel": (stats.gumbel_r(2.0, 3.0), {"loc": 2.0, "scale": 3.0}, {}),
    "exponential": (stats.expon(scale=4.0), {"loc": 0.0, "scale": 4.0}, {}),
    "lognormal": (stats.lognorm(0.7, scale=20.0), {"s": 0.7, "scale": 20.0}, {}),
    "gamma": (stats.gamma(3.5, scale=2.0), {"a": 3.5, "scale": 2.0}, {}),
    "weibull": (stats.weibull_min(1.7, scale=10.0), {"c": 1.7, "scale": 10.0}, {}),
    "loglogistic": (stats.fisk(4.0, scale=3.0), {"c": 4.0, "scale": 3.0}, {}),
    "beta": (
        stats.beta(2.0, 5.0, loc=1.0, scale=9.0),
        {"a": 2.0, "b": 5.0, "loc": 1.0, "scale": 9.0},
        {"lower": 1.0, "upper": 10.0},
    ),
}


@pytest.mark.parametrize("family", list(FAMILIES))
@pytest.mark.parametrize("levels", [(0.1, 0.9), (0.1, 0.5, 0.9), (0.05, 0.25, 0.5, 0.75, 0.95)])
def test_quantile_fit_recovers_a_known_scipy_distribution(
    family: str, levels: tuple[float, ...]
) -> None:
    """Points computed from a scipy distribution give back its parameters to 1e-6."""
    dist, expected, bounds = FAMILIES[family]
    p = np.array(levels)
    r = fit_quantiles(p, dist.ppf(p), family=family, **bounds)
    # source: the scipy.stats distribution that made the points (parameters in FAMILIES)
    for name, value in expected.items():
        assert r.params[name] == pytest.approx(value, rel=1e-6, abs=1e-9), name
    np.testing.assert_allclose(r.misses, 0.0, atol=1e-8)
    np.testing.assert_allclose(r.quantile(p), dist.ppf(p), rtol=1e-8)
