"""Unit tests of samplewright.fitting.elicit: metalog, PERT, triangular and quantile fits."""

from __future__ import annotations

from typing import get_args

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from samplewright.core.errors import MethodError
from samplewright.fitting.elicit import (
    QUANTILE_FAMILIES,
    QuantileFamily,
    fit_metalog,
    fit_quantiles,
    pert_parameters,
    triangular_parameters,
)
from samplewright.fitting.metalog import _basis, _logit

BOUNDS = {
    "unbounded": (None, None),
    "lower": (0.0, None),
    "upper": (None, 60.0),
    "bounded": (0.0, 60.0),
}


def _points(n: int) -> tuple[np.ndarray, np.ndarray]:
    """n increasing points of a gamma(3, scale 4) (invented example) at spread-out levels."""
    p = np.linspace(0.05, 0.95, n)
    return p, stats.gamma(3.0, scale=4.0).ppf(p)


# --- metalog -----------------------------------------------------------------------------------


@pytest.mark.parametrize("kind", list(BOUNDS))
@pytest.mark.parametrize("n", [2, 3, 4, 5, 6, 8, 10])
def test_metalog_passes_exactly_through_every_elicited_point(kind: str, n: int) -> None:
    """With as many terms as points, Q(p_i) = x_i to rounding for every boundedness."""
    p, x = _points(n)
    lower, upper = BOUNDS[kind]
    m = fit_metalog(p, x, lower=lower, upper=upper)
    assert m.kind == kind and m.n_terms == n
    # common practice, no source: an exact solve reproduces its data to ~1e-12 relative
    np.testing.assert_allclose(m.quantile(p), x, rtol=1e-10)
    np.testing.assert_allclose(m.misses, 0.0, atol=1e-9)


@pytest.mark.parametrize("kind", list(BOUNDS))
def test_metalog_cdf_inverts_the_quantile_and_pdf_is_its_derivative(kind: str) -> None:
    """cdf(Q(u)) = u across the range, and pdf matches a central difference of cdf."""
    p, x = _points(5)
    lower, upper = BOUNDS[kind]
    m = fit_metalog(p, x, lower=lower, upper=upper)
    u = np.concatenate([[1e-9, 1e-4], np.linspace(0.01, 0.99, 41), [1 - 1e-4, 1 - 1e-9]])
    np.testing.assert_allclose(m.cdf(m.quantile(u)), u, rtol=1e-9, atol=1e-15)
    xs = m.quantile(np.linspace(0.05, 0.95, 13))
    h = 1e-5 * np.maximum(np.abs(xs), 1.0)
    numeric = (m.cdf(xs + h) - m.cdf(xs - h)) / (2 * h)
    np.testing.assert_allclose(m.pdf(xs), numeric, rtol=1e-6)


def test_metalog_quantile_ends_and_bad_levels() -> None:
    """Q(0) and Q(1) are the support's ends; a level outside [0, 1] is a MethodError."""
    p, x = _points(3)
    m = fit_metalog(p, x, lower=0.0, upper=60.0)
    assert m.quantile([0.0, 1.0]).tolist() == [0.0, 60.0]
    assert m.support == (0.0, 60.0)
    assert fit_metalog(p, x).quantile([0.0, 1.0]).tolist() == [-np.inf, np.inf]
    with pytest.raises(MethodError, match="^u: probabilities must lie in"):
        m.quantile([0.5, 1.5])


def test_metalog_cdf_and_pdf_outside_the_support() -> None:
    """Below the lower bound the cdf is 0 and above the upper bound 1; the pdf is 0 there."""
    p, x = _points(4)
    m = fit_metalog(p, x, lower=0.0, upper=60.0)
    assert m.cdf([-1.0, 0.0, 60.0, 61.0]).tolist() == [0.0, 0.0, 1.0, 1.0]
    assert m.pdf([-1.0, 61.0]).tolist() == [0.0, 0.0]


def test_metalog_least_squares_recovers_a_metalog_from_extra_points() -> None:
    """Fewer terms than points: points on a 3-term metalog give back its coefficients."""
    a = np.array([10.0, 2.0, 0.8])
    p = np.array([0.05, 0.2, 0.35, 0.5, 0.65, 0.8, 0.95])
    x = _basis(_logit(p), 3) @ a
    m = fit_metalog(p, x, n_terms=3)
    # source: the points were computed from these coefficients above
    np.testing.assert_allclose(m.coefficients, a, rtol=1e-12)
    np.testing.assert_allclose(m.misses, 0.0, atol=1e-12)


def test_metalog_least_squares_misses_are_reported() -> None:
    """Inconsistent points fitted by fewer terms leave non-zero misses, exactly Q(p) - x."""
    p, x = _points(6)
    m = fit_metalog(p, x + np.array([0, 0.3, -0.2, 0.1, 0, -0.4]), n_terms=3)
    assert np.max(np.abs(m.misses)) > 1e-3
    np.testing.assert_allclose(m.misses, m.quantile(m.probabilities) - m.values, atol=1e-14)


def test_infeasible_points_are_refused_naming_the_points() -> None:
    """Points whose exact 3-term metalog would decrease are refused, naming the culprits."""
    with pytest.raises(MethodError, match=r"between \(p=0\.5, x=10\) and \(p=0\.9, x=11\)"):
        fit_metalog([0.1, 0.5, 0.9], [0.0, 10.0, 11.0])


def test_infeasible_five_term_fit_is_refused_but_fewer_terms_fit() -> None:
    """The same points may admit a least-squares fit with fewer terms."""
    p, x = [0.1, 0.3, 0.5, 0.7, 0.9], [1.0, 2.0, 3.0, 4.5, 4.6]
    with pytest.raises(MethodError, match="no valid 5-term metalog"):
        fit_metalog(p, x)
    m = fit_metalog(p, x, n_terms=2)
    assert np.all(np.diff(m.quantile(np.linspace(0.001, 0.999, 500))) > 0)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"probabilities": [0.1], "values": [1.0]}, "^probabilities: expected at least 2"),
        ({"probabilities": [0.0, 0.5], "values": [1.0, 2.0]}, "^probabilities: expected levels"),
        ({"probabilities": [0.2, 0.2], "values": [1.0, 2.0]}, "^probabilities: level 0.2"),
        ({"probabilities": [0.2, 0.7], "values": [3.0, 2.0]}, "^values: must increase"),
        ({"probabilities": [0.2, 0.7], "values": [1.0, np.nan]}, "^values: expected finite"),
        ({"probabilities": [0.2, 0.7], "values": [1.0, 2.0], "lower": 1.0}, "^values: expected"),
        ({"probabilities": [0.2, 0.7], "values": [1.0, 2.0], "upper": 2.0}, "^values: expected"),
        ({"probabilities": [0.2, 0.7], "values": [1.0, 2.0], "n_terms": 3}, "^n_terms: expected"),
        ({"probabilities": [0.2, 0.7], "values": [1.0, 2.0], "n_terms": 1}, "^n_terms: expected"),
        (
            {"probabilities": [0.2, 0.7], "values": [1.0, 2.0], "lower": 3.0, "upper": 0.0},
            "^lower, upper: expected lower < upper",
        ),
    ],
)
def test_metalog_bad_input_names_the_argument(kwargs: dict, message: str) -> None:
    """Every bad input raises a one-line MethodError that starts with the argument's name."""
    with pytest.raises(MethodError, match=message) as info:
        fit_metalog(**kwargs)
    assert "\n" not in str(info.value)


def test_metalog_moments_match_quadrature_of_the_density() -> None:
    """Mean and variance agree with integrating x f(x) and x^2 f(x) over the support."""
    p, x = _points(4)
    m = fit_metalog(p, x, lower=0.0, upper=60.0)
    mean = integrate.quad(lambda v: v * m.pdf(np.array([v]))[0], 0.0, 60.0, limit=200)[0]
    second = integrate.quad(lambda v: v * v * m.pdf(np.array([v]))[0], 0.0, 60.0, limit=200)[0]
    assert m.mean == pytest.approx(mean, rel=1e-7)
    assert m.var == pytest.approx(second - mean * mean, rel=1e-6)


# --- PERT and triangular -----------------------------------------------------------------------


def test_pert_shape_changes_the_weight_of_the_mode() -> None:
    """A larger shape concentrates the PERT around the mode (smaller variance, mean nearer mode)."""
    wide = pert_parameters(0.0, 2.0, 10.0, shape=2.0)
    tight = pert_parameters(0.0, 2.0, 10.0, shape=8.0)
    assert tight.var < wide.var
    assert abs(tight.mean - 2.0) < abs(wide.mean - 2.0)


def test_pert_cdf_quantile_pdf_are_the_scaled_beta() -> None:
    """cdf, quantile and pdf are those of scipy.stats.beta(alpha, beta, low, high - low)."""
    r = pert_parameters(3.0, 4.0, 11.0)
    ref = stats.beta(r.alpha, r.beta, loc=3.0, scale=8.0)
    u = np.linspace(0.0, 1.0, 11)
    xs = np.linspace(2.0, 12.0, 21)
    np.testing.assert_allclose(r.quantile(u), ref.ppf(u), rtol=1e-14)
    np.testing.assert_allclose(r.cdf(xs), ref.cdf(xs), rtol=1e-14)
    np.testing.assert_allclose(r.pdf(xs), ref.pdf(xs), rtol=1e-14)
    assert r.support == (3.0, 11.0)


@pytest.mark.parametrize(
    ("args", "kwargs", "message"),
    [
        ((1.0, 2.0, 1.0), {}, "^low, high: expected low < high"),
        ((1.0, 0.5, 3.0), {}, "^mode: expected a value from low"),
        ((1.0, 3.5, 3.0), {}, "^mode: expected a value from low"),
        ((1.0, 2.0, 3.0), {"shape": 0.0}, "^shape: expected a number > 0"),
        ((1.0, 2.0, np.inf), {}, "^high: expected a finite number"),
        (("1", 2.0, 3.0), {}, "^low: expected a number"),
    ],
)
def test_pert_bad_input_names_the_argument(args: tuple, kwargs: dict, message: str) -> None:
    """Bad three-point input raises a one-line MethodError naming the argument."""
    with pytest.raises(MethodError, match=message):
        pert_parameters(*args, **kwargs)


def test_triangular_accepts_the_mode_at_either_end() -> None:
    """mode = low gives c = 0 and mode = high gives c = 1, both valid triangles."""
    assert triangular_parameters(2.0, 2.0, 6.0).c == 0.0
    assert triangular_parameters(2.0, 6.0, 6.0).c == 1.0
    with pytest.raises(MethodError, match="^mode: expected"):
        triangular_parameters(2.0, 7.0, 6.0)


# --- named families through quantiles ----------------------------------------------------------


def test_location_scale_fit_is_the_least_squares_line_on_standard_quantiles() -> None:
    """For a location-scale family the fit is the straight line through (z_i, x_i)."""
    p = np.array([0.05, 0.25, 0.5, 0.75, 0.95])
    x = np.array([3.0, 7.5, 10.0, 12.0, 18.0])
    r = fit_quantiles(p, x, family="logistic")
    slope, intercept = np.polyfit(stats.logistic.ppf(p), x, 1)
    # source: numpy.polyfit, ordinary least squares of x on the standard logistic quantiles
    assert r.params["scale"] == pytest.approx(slope, rel=1e-12)
    assert r.params["loc"] == pytest.approx(intercept, rel=1e-12)


@pytest.mark.parametrize("family", ["lognormal", "gamma", "weibull", "loglogistic"])
def test_inconsistent_points_get_a_local_least_squares_minimum(family: str) -> None:
    """With points no member passes through, no nearby parameter set has a smaller sum."""
    p = np.array([0.1, 0.3, 0.5, 0.7, 0.9])
    x = np.array([4.0, 7.0, 8.0, 11.0, 19.0])
    r = fit_quantiles(p, x, family=family)
    dist = getattr(stats, r.scipy_name)
    shape_name = next(k for k in r.params if k not in ("loc", "scale"))

    def sum_sq(log_theta: np.ndarray) -> float:
        q = dist.ppf(p, np.exp(log_theta[0]), scale=np.exp(log_theta[1]))
        return float(np.sum((q - x) ** 2))

    best = np.log([r.params[shape_name], r.params["scale"]])
    # source: scipy.optimize.minimize (Nelder-Mead) started from a deliberately poor point
    other = optimize.minimize(
        sum_sq, best + 0.3, method="Nelder-Mead", options={"xatol": 1e-12, "fatol": 1e-14}
    )
    assert sum_sq(best) <= other.fun + 1e-9
    assert np.max(np.abs(r.misses)) > 0.05
    np.testing.assert_allclose(r.relative_misses, r.misses / x, rtol=1e-14)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"family": "cauchy"}, "^family: expected one of"),
        ({"family": "beta"}, "^lower, upper: family 'beta' needs both bounds"),
        ({"family": "normal", "lower": 0.0}, "^lower, upper: family 'normal' takes no bounds"),
        ({"family": "gamma", "upper": 9.0}, "^upper: family 'gamma' takes only a lower bound"),
        ({"family": "gamma", "lower": 5.0}, "^values: expected every value > lower=5"),
    ],
)
def test_quantile_fit_bad_input_names_the_argument(kwargs: dict, message: str) -> None:
    """Unknown families and misplaced bounds raise a MethodError naming the argument."""
    with pytest.raises(MethodError, match=message):
        fit_quantiles([0.1, 0.5, 0.9], [4.0, 6.0, 9.0], **kwargs)


def test_quantile_fit_needs_as_many_points_as_free_parameters() -> None:
    """A two-parameter family through one point is refused."""
    with pytest.raises(MethodError, match="needs at least 2 points, found 1"):
        fit_quantiles([0.5], [3.0], family="normal")


def test_every_family_name_maps_to_a_scipy_distribution() -> None:
    """The mapping covers exactly the Literal's names and points at scipy distributions."""
    assert set(QUANTILE_FAMILIES) == set(get_args(QuantileFamily))
    for name, scipy_name in QUANTILE_FAMILIES.items():
        assert isinstance(getattr(stats, scipy_name), stats.rv_continuous), name
