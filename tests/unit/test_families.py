"""Behaviour of the families: registry, options, closed forms, checks, censoring, draws."""

from __future__ import annotations

import re
import warnings

import numpy as np
import pytest
from scipy import special, stats

from samplewright.core.errors import FitError, MethodError
from samplewright.distributions import families
from samplewright.distributions.families import FAMILIES, get_family
from samplewright.fitting import mle
from samplewright.fitting.catalog import CATALOG, METHOD_OPTIONS
from samplewright.fitting.mle import FamilyFitResult, fit_family

# parameters to generate data from for every family, with the options its fit needs
TRUE = {
    "normal": ({"mu": 3.0, "sigma": 2.0}, {}),
    "lognormal": ({"mu": 1.0, "sigma": 0.6, "loc": 0.0}, {}),
    "exponential": ({"scale": 2.0, "loc": 0.0}, {}),
    "gamma": ({"shape": 2.5, "scale": 1.5, "loc": 0.0}, {}),
    "weibull": ({"shape": 1.7, "scale": 3.0, "loc": 0.0}, {}),
    "gumbel": ({"mu": 5.0, "beta": 2.0}, {}),
    "logistic": ({"mu": 1.0, "s": 3.0}, {}),
    "loglogistic": ({"alpha": 2.0, "beta": 3.0, "loc": 0.0}, {}),
    "pareto": ({"alpha": 2.5, "xm": 1.5, "loc": 0.0}, {}),
    "generalized_pareto": ({"xi": 0.3, "sigma": 2.0, "loc": 0.0}, {}),
    "gev": ({"mu": 10.0, "sigma": 2.0, "xi": 0.15}, {}),
    "beta": ({"alpha": 2.0, "beta": 5.0, "lower": 0.0, "upper": 1.0}, {}),
    "uniform": ({"lower": 2.0, "upper": 7.0}, {}),
    "triangular": ({"lower": 1.0, "mode": 3.0, "upper": 8.0}, {}),
    "inverse_gaussian": ({"mu": 2.0, "lambda": 5.0, "loc": 0.0}, {}),
    "student_t": ({"mu": 1.0, "sigma": 2.0, "nu": 5.0}, {}),
    "rayleigh": ({"sigma": 2.0, "loc": 0.0}, {}),
    "poisson": ({"lambda": 3.2}, {}),
    "negative_binomial": ({"r": 2.5, "p": 0.3}, {}),
    "geometric": ({"p": 0.3}, {}),
    "binomial": ({"n_trials": 12.0, "p": 0.35}, {"n_trials": 12}),
}


def _data(name: str, n: int, seed: int = 0) -> np.ndarray:
    return get_family(name).draw(TRUE[name][0], n, np.random.default_rng(seed))


def test_true_parameters_cover_every_family():
    """The table above names every registered family, with its parameters in order."""
    assert set(TRUE) == set(FAMILIES)
    for name, (params, _) in TRUE.items():
        assert tuple(params) == FAMILIES[name].param_names


def test_module_docstring_table_lists_every_family_and_its_parameters():
    """The docstring's table documents each family's parameter names exactly."""
    rows = {}
    for line in families.__doc__.splitlines():
        m = re.match(r"^([a-z_]+)\s{2,}([a-z_]+(?:, [a-z_]+)*)\s{2,}", line)
        if m and m.group(1) in FAMILIES:
            rows[m.group(1)] = tuple(m.group(2).split(", "))
    assert rows == {name: fam.param_names for name, fam in FAMILIES.items()}


def test_fit_options_cover_every_family():
    """The catalog lists every family's options; positive families accept loc."""
    assert set(FAMILIES) <= set(METHOD_OPTIONS)
    for name, fam in FAMILIES.items():
        assert ("loc" in METHOD_OPTIONS[name]) == fam.positive


def test_unknown_family_lists_the_known_ones():
    """An unknown family name raises MethodError that lists the registered names."""
    with pytest.raises(MethodError, match="unknown family 'weibul'.*weibull"):
        get_family("weibul")


def test_unknown_option_is_named():
    """An option the family does not take is refused, naming the option and the allowed ones."""
    with pytest.raises(
        MethodError, match="unknown option 'rate' for gamma \\(allowed: loc, scale, shape\\)"
    ):
        fit_family("gamma", [1.0, 2.0, 3.0], rate=2)


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_every_fit_has_finite_loglik_support_and_parameter_count(name):
    """Every family fits its own data: finite loglik, support holding the data, AIC/BIC formulas."""
    params, options = TRUE[name]
    x = _data(name, 300)
    out = fit_family(name, x, **options)
    assert isinstance(out, FamilyFitResult)
    assert tuple(out.params) == FAMILIES[name].param_names
    assert np.isfinite(out.loglik)
    lo, hi = get_family(name).frozen(out.params).support()
    assert lo <= x.min() and x.max() <= hi
    assert out.aic == pytest.approx(2 * out.n_params - 2 * out.loglik)
    assert out.bic == pytest.approx(out.n_params * np.log(300) - 2 * out.loglik)
    fixed = {"loc", "lower", "upper", "n_trials"} & set(params)
    if name in ("uniform", "triangular"):
        fixed = set()
    assert out.n_params == len(params) - len(fixed)


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_fit_recovers_parameters_from_a_large_sample(name):
    """On 20,000 draws every fit is within a few percent of the generating parameters."""
    params, options = TRUE[name]
    out = fit_family(name, _data(name, 20_000, seed=3), **options)
    for key, value in params.items():
        assert out.params[key] == pytest.approx(value, rel=0.06, abs=0.03), key


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_integer_weights_equal_repeated_values(name):
    """Frequency weights give the same fit as repeating each value that many times."""
    _, options = TRUE[name]
    x = _data(name, 60, seed=11)
    w = np.random.default_rng(12).integers(1, 4, x.size).astype(float)
    weighted = fit_family(name, x, w, **options)
    repeated = fit_family(name, np.repeat(x, w.astype(int)), **options)
    assert weighted.n_obs == repeated.n_obs == w.sum()
    assert weighted.loglik == pytest.approx(repeated.loglik, rel=1e-7)
    for key in weighted.params:
        assert weighted.params[key] == pytest.approx(repeated.params[key], rel=1e-4, abs=1e-9)


def test_zero_weights_drop_values():
    """A value of weight 0 is ignored, even one the family could not describe."""
    out = fit_family("exponential", [1.0, 2.0, -5.0], [1.0, 1.0, 0.0])
    assert out.params["scale"] == 1.5 and out.n_obs == 2.0


# --- closed forms -------------------------------------------------------------------------------


X = np.array([0.7, 1.3, 2.2, 2.9, 4.1, 5.6])


def test_closed_forms_match_their_formulas():
    """Closed-form MLEs equal the textbook formulas written out here."""
    # source: normal MLE, mean and sd with divisor n
    p = fit_family("normal", X).params
    assert p == pytest.approx({"mu": X.mean(), "sigma": X.std()})
    # source: lognormal MLE, mean and sd of log x
    p = fit_family("lognormal", X).params
    assert p == pytest.approx({"mu": np.log(X).mean(), "sigma": np.log(X).std(), "loc": 0.0})
    # source: exponential MLE, scale = mean
    assert fit_family("exponential", X).params["scale"] == pytest.approx(X.mean())
    # source: uniform MLE, the sample extremes
    assert fit_family("uniform", X).params == {"lower": 0.7, "upper": 5.6}
    # source: rayleigh MLE, sigma^2 = sum x^2 / (2n)
    assert fit_family("rayleigh", X).params["sigma"] == pytest.approx(np.sqrt(np.mean(X**2) / 2))
    # source: pareto MLE, xm = min, alpha = n / sum log(x / xm)
    p = fit_family("pareto", X).params
    assert p["xm"] == 0.7 and p["alpha"] == pytest.approx(6 / np.log(X / 0.7).sum())
    # source: inverse gaussian MLE, mu = mean, 1/lambda = mean(1/x - 1/mu)
    p = fit_family("inverse_gaussian", X).params
    assert p["mu"] == pytest.approx(X.mean())
    assert p["lambda"] == pytest.approx(1 / np.mean(1 / X - 1 / X.mean()))
    k = np.array([0.0, 1, 1, 2, 3, 5, 8])
    # source: poisson MLE, lambda = mean; geometric on {0, 1, ...}: p = 1 / (1 + mean)
    assert fit_family("poisson", k).params["lambda"] == pytest.approx(k.mean())
    assert fit_family("geometric", k).params["p"] == pytest.approx(1 / (1 + k.mean()))
    # source: binomial MLE, p = mean / n_trials
    assert fit_family("binomial", k, n_trials=10).params["p"] == pytest.approx(k.mean() / 10)


def test_gamma_and_weibull_solve_their_score_equations():
    """The gamma and weibull shapes solve their likelihood equations to machine precision."""
    g = fit_family("gamma", X).params
    # source: gamma MLE equation log k - digamma(k) = log mean - mean log
    assert np.log(g["shape"]) - special.digamma(g["shape"]) == pytest.approx(
        np.log(X.mean()) - np.log(X).mean(), rel=1e-12
    )
    w = fit_family("weibull", X).params
    k = w["shape"]
    # source: weibull MLE equation 1/k + mean log x = sum x^k log x / sum x^k
    assert 1 / k + np.log(X).mean() == pytest.approx(
        np.sum(X**k * np.log(X)) / np.sum(X**k), rel=1e-11
    )
    assert w["scale"] == pytest.approx(np.mean(X**k) ** (1 / k), rel=1e-12)


def test_gumbel_solves_its_scale_equation():
    """The gumbel scale solves beta = mean - sum x e^(-x/beta) / sum e^(-x/beta)."""
    p = fit_family("gumbel", X).params
    b = p["beta"]
    e = np.exp(-X / b)
    assert b == pytest.approx(X.mean() - np.sum(X * e) / np.sum(e), rel=1e-12)  # score equation
    assert p["mu"] == pytest.approx(-b * np.log(np.mean(e)), rel=1e-12)


def test_triangular_mode_is_an_order_statistic_or_bound():
    """The triangular MLE puts the mode at a data point or at a bound (Oliver, 1972)."""
    x = _data("triangular", 200)
    p = fit_family("triangular", x).params
    assert p["lower"] < x.min() or p["mode"] == p["lower"]
    assert p["mode"] in set(x) | {p["lower"], p["upper"]}
    fixed = fit_family("triangular", x, lower=0.0, upper=9.0)
    assert (fixed.params["lower"], fixed.params["upper"]) == (0.0, 9.0) and fixed.n_params == 1


def test_gev_stores_the_extreme_value_sign_convention():
    """A gev with xi > 0 is bounded below at mu - sigma/xi (scipy's genextreme c = -xi)."""
    frozen = get_family("gev").frozen({"mu": 0.0, "sigma": 1.0, "xi": 0.5})
    assert frozen.support() == (-2.0, np.inf)
    x = get_family("gev").draw({"mu": 0.0, "sigma": 1.0, "xi": 0.3}, 5000, np.random.default_rng(4))
    assert fit_family("gev", x).params["xi"] == pytest.approx(0.3, abs=0.05)


# --- options and refusals -----------------------------------------------------------------------


def test_positive_family_refuses_values_at_or_below_loc():
    """A positive family names its location and the offending count when data fall below it."""
    with pytest.raises(
        MethodError,
        match=r"^gamma needs every value > 1.0 \(its location\); value 1 is 0.5 "
        r"\(2 values outside\)$",
    ):
        fit_family("gamma", [0.5, 1.0, 3.0, 4.0], loc=1.0)


def test_numeric_loc_shifts_the_data():
    """A fixed location fits x - loc and stores loc."""
    out = fit_family("weibull", X + 10.0, loc=10.0)
    assert out.params == pytest.approx({**fit_family("weibull", X).params, "loc": 10.0})
    assert out.n_params == 2


@pytest.mark.parametrize(
    "name,params",
    [
        ("weibull", {"shape": 2.5, "scale": 3.0, "loc": 10.0}),
        ("gamma", {"shape": 4.0, "scale": 1.0, "loc": 5.0}),
        ("lognormal", {"mu": 1.0, "sigma": 0.3, "loc": -3.0}),
        ("exponential", {"scale": 2.0, "loc": 3.0}),
    ],
)
def test_free_loc_is_estimated_and_beats_scipy(name, params):
    """loc='free' estimates the threshold and reaches at least scipy's three-parameter fit."""
    x = get_family(name).draw(params, 500, np.random.default_rng(9))
    out = fit_family(name, x, loc="free")
    assert out.n_params == len(params)
    assert out.params["loc"] <= x.min()  # exponential: exactly min(x), its MLE
    assert out.params["loc"] == pytest.approx(params["loc"], abs=0.5)
    dist = {
        "weibull": stats.weibull_min,
        "gamma": stats.gamma,
        "lognormal": stats.lognorm,
        "exponential": stats.expon,
    }[name]
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theta = dist.fit(x)
    ref = np.sum(dist.logpdf(x, *theta))  # source: scipy.stats.<dist>.fit, all parameters free
    assert out.loglik >= (ref if np.isfinite(ref) else -np.inf) - 1e-6 * abs(out.loglik)


@pytest.mark.parametrize("name", ["weibull", "gamma"])
def test_free_loc_with_shape_below_one_is_refused(name):
    """With shape < 1 the likelihood is unbounded as loc nears min(x): loc='free' refuses."""
    params = {"shape": 0.6, "scale": 2.0, "loc": 10.0}
    x = get_family(name).draw(params, 400, np.random.default_rng(2))
    with pytest.raises(MethodError, match=f"{name} with loc='free'.*pass loc as a number"):
        fit_family(name, x, loc="free")


@pytest.mark.parametrize("name", ["pareto", "generalized_pareto", "normal"])
def test_free_loc_not_offered(name):
    """pareto and generalized_pareto take loc only as a number; normal takes no loc."""
    with pytest.raises(MethodError, match="loc"):
        fit_family(name, X, loc="free")


@pytest.mark.parametrize(
    "name,x,options,pattern",
    [
        (
            "poisson",
            [1.0, 2.5],
            {},
            "poisson: counts must be non-negative integers; value 2 is 2.5",
        ),
        ("poisson", [0.0, 0.0], {}, "every value is 0"),
        ("negative_binomial", [2.0, 3.0, 2.0, 3.0], {}, "variance > mean"),
        (
            "binomial",
            [1.0, 2.0],
            {},
            "option 'n_trials' of binomial: expected an int >= 1, found None",
        ),
        ("binomial", [1.0, 12.0], {"n_trials": 10}, "at most n_trials=10; value 2 is 12.0"),
        ("beta", [0.2, 1.4], {}, "upper=1.0 is below the largest value 1.4"),
        ("beta", [0.0, 0.4], {}, "strictly inside"),
        ("uniform", [1.0, 2.0], {"lower": 3.0}, "lower=3.0 is above the smallest value 1.0"),
        ("normal", [1.0, 1.0, 1.0], {}, "all 3 values equal 1.0"),
        ("gamma", [1.0], {}, "at least 2 values, found 1"),
        ("pareto", [2.0, 3.0], {"xm": 2.5}, "xm=2.5 must be in"),
        ("gamma", [1.0, 2.0], {"loc": "zero"}, "expected a number or 'free', found 'zero'"),
    ],
)
def test_refusals_name_what_was_expected_and_found(name, x, options, pattern):
    """Data or options a family cannot use raise a one-line MethodError naming the problem."""
    with pytest.raises(MethodError, match=re.escape(pattern)) as info:
        fit_family(name, np.array(x), **options)
    assert "\n" not in str(info.value)


def test_bad_values_and_weights_are_refused():
    """Non-finite values, 2-d input and mismatched or negative weights raise MethodError."""
    with pytest.raises(MethodError, match="finite"):
        fit_family("normal", [1.0, np.nan, 2.0])
    with pytest.raises(MethodError, match="1-d"):
        fit_family("normal", np.ones((2, 2)))
    with pytest.raises(MethodError, match="expected 3 weights, found 2"):
        fit_family("normal", [1.0, 2.0, 3.0], [1.0, 1.0])
    with pytest.raises(MethodError, match="non-negative"):
        fit_family("normal", [1.0, 2.0, 3.0], [1.0, -1.0, 1.0])


def test_beta_on_given_bounds():
    """beta on [lower, upper] fits the rescaled values and keeps the bounds fixed."""
    u = _data("beta", 300)
    out = fit_family("beta", 10.0 + 5.0 * u, lower=10.0, upper=15.0)
    ref = fit_family("beta", u)
    assert out.params["alpha"] == pytest.approx(ref.params["alpha"], rel=1e-6)
    assert out.loglik == pytest.approx(ref.loglik - 300 * np.log(5.0), rel=1e-9)
    assert out.n_params == 2


# --- censoring ----------------------------------------------------------------------------------


def _censored_sample(seed: int = 0):
    rng = np.random.default_rng(seed)
    t = 5.0 * rng.weibull(1.8, 400)
    limit = rng.exponential(8.0, 400)
    return np.minimum(t, limit), limit < t


def test_no_censored_flag_equals_an_uncensored_fit():
    """An all-False censoring array gives exactly the uncensored fit."""
    x = _data("gamma", 100)
    a = fit_family("gamma", x, censored=np.zeros(100, dtype=bool))
    assert a == fit_family("gamma", x)


def test_censored_weibull_solves_the_censored_score_equation():
    """Censored weibull: 1/k + sum_events log t / r = sum t^k log t / sum t^k."""
    t, c = _censored_sample()
    p = fit_family("weibull", t, censored=c).params
    k, r = p["shape"], (~c).sum()
    # source: censored weibull likelihood equations (derived from sum log f + sum log S)
    assert 1 / k + np.log(t[~c]).sum() / r == pytest.approx(
        np.sum(t**k * np.log(t)) / np.sum(t**k), rel=1e-10
    )
    assert p["scale"] == pytest.approx((np.sum(t**k) / r) ** (1 / k), rel=1e-10)


@pytest.mark.parametrize("name", sorted(n for n in FAMILIES if CATALOG[n].censoring))
def test_censored_fit_improves_on_its_start_for_every_censorable_family(name):
    """Each censorable family's censored fit is a local maximum of the censored likelihood."""
    t, c = _censored_sample(1)
    options = {}
    if name == "beta":
        t = t / (t.max() * 1.01)
    out = fit_family(name, t, censored=c, **options)
    fam = get_family(name)
    w = np.ones_like(t)
    assert out.loglik == pytest.approx(mle.loglik(fam, out.params, t, w, c), rel=1e-12)
    free = mle.free_params(name, options)
    for key in free:  # nudging any free parameter must not help (1e-4 relative steps)
        for step in (-1e-4, 1e-4):
            p = dict(out.params)
            p[key] = p[key] + step * max(abs(p[key]), 1e-3)
            with np.errstate(all="ignore"):
                other = mle.loglik(fam, p, t, w, c)
            assert not other > out.loglik + 1e-7 * abs(out.loglik), (key, step)


def test_censoring_refusals():
    """Discrete, uniform, all-censored, badly typed flags and free loc are refused clearly."""
    with pytest.raises(MethodError, match="method 'poisson' does not handle censored data"):
        fit_family("poisson", [1.0, 2.0], censored=np.array([True, False]))
    with pytest.raises(MethodError, match="method 'uniform' does not handle censored data"):
        fit_family("uniform", [1.0, 2.0], censored=np.array([True, False]))
    with pytest.raises(MethodError, match="every value is censored"):
        fit_family("weibull", [1.0, 2.0], censored=np.array([True, True]))
    with pytest.raises(MethodError, match="^censored: flags must be 0/1 or booleans; flag 1 is 2$"):
        fit_family("weibull", [1.0, 2.0], censored=np.array([2, 0]))
    with pytest.raises(MethodError, match="^censored: expected 2 flags, found 3$"):
        fit_family("weibull", [1.0, 2.0], censored=np.array([True, False, False]))
    with pytest.raises(MethodError, match="loc='free' is not offered"):
        fit_family("weibull", [1.0, 2.0, 3.0], censored=np.array([True, False, False]), loc="free")


def test_fit_error_when_the_optimiser_cannot_start(monkeypatch):
    """A start with a non-finite likelihood raises FitError, not a silent answer."""
    from samplewright.fitting import optimise as _mle

    with pytest.raises(FitError, match="starting values"):
        _mle.maximise(lambda v: -np.inf, np.zeros(2), label="test")


# --- draws --------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_native_draws_follow_the_frozen_distribution(name):
    """Each family's fast generator draws from the same law as its scipy distribution."""
    params, _ = TRUE[name]
    fam = get_family(name)
    draws = fam.draw(params, 20_000, np.random.default_rng(42))
    assert draws.shape == (20_000,)
    frozen = fam.frozen(params)
    if fam.discrete:
        assert np.issubdtype(draws.dtype, np.integer)
        mean, var = frozen.stats("mv")
        assert abs(draws.mean() - mean) <= 5 * np.sqrt(var / draws.size)
        # chi-square test on the cells with expected count >= 5
        k = np.arange(int(frozen.ppf(0.999)) + 1)
        obs = np.bincount(np.minimum(draws, k[-1]), minlength=k.size)
        exp = frozen.pmf(k) * draws.size
        exp[-1] = frozen.sf(k[-2]) * draws.size
        keep = exp >= 5
        chi2 = np.sum((obs[keep] - exp[keep]) ** 2 / exp[keep])
        assert stats.chi2.sf(chi2, keep.sum() - 1) > 1e-4
    else:
        assert stats.kstest(draws, frozen.cdf).pvalue > 1e-4


# --- support and warnings -----------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_support_formula_equals_scipy_support(name):
    """Family.support equals scipy's support() exactly, also with shapes of either sign."""
    fam = get_family(name)
    params, _ = TRUE[name]
    variants = [dict(params)]
    for key in ("xi",):
        if key in params:
            variants += [{**params, key: v} for v in (-0.7, -0.25, 0.0, 0.4)]
    for key in ("loc", "mu", "lower"):
        if key in params:
            variants.append({**params, key: params[key] + 0.3})
    for p in variants:
        ours = fam.support(p)
        theirs = tuple(float(v) for v in fam.frozen(p).support())  # source: scipy support()
        assert ours == theirs, p


@pytest.mark.parametrize("name", sorted(FAMILIES))
def test_every_family_fit_declares_its_warnings(name):
    """fit(...) of every family records a 'warnings' list of {kind, message} in diagnostics."""
    from samplewright.fitting.api import fit
    from samplewright.fitting.mle_warnings import WARNING_KINDS

    params, options = TRUE[name]
    s = fit(_data(name, 200, seed=5), name, **options)
    found = s.diagnostics["warnings"]
    assert isinstance(found, list)
    assert all(set(w) == {"kind", "message"} and w["kind"] in WARNING_KINDS for w in found)
