"""Four "never silently wrong" gaps: fixed parameters on incomplete data, data with (almost) no
spread, seeds in the pipeline, and selecting among candidates fitted to other data."""

from __future__ import annotations

import shlex
import subprocess
import sys
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import samplewright as sw
from samplewright.core.errors import MethodError
from samplewright.distributions.families import get_family
from samplewright.fitting.catalog import CATALOG
from samplewright.fitting.incomplete import incomplete_from_flags
from samplewright.fitting.interval_api import (
    INCOMPLETE_FAMILIES,
    fit_interval,
    fit_truncated,
    incomplete_fixed,
    rank_incomplete,
)
from samplewright.pipeline.plan import Plan, derived_seed
from samplewright.store.artifacts import load_sampler

CONTINUOUS = sorted(n for n, s in CATALOG.items() if s.group == "family" and not s.counts)


# ---------------------------------------------------------------------------------------------
# 1. fixed parameters with incomplete data


def _truncated_gamma() -> tuple[np.ndarray, float]:
    """Invented gamma(3, 2) values above a deductible of 2."""
    x = np.random.default_rng(1).gamma(3.0, 2.0, 400)
    return x[x > 2.0], 2.0


@pytest.mark.parametrize(
    ("family", "options"),
    [
        ("gamma", {"shape": 2.0}),
        ("weibull", {"shape": 1.5, "scale": 6.0}),
        ("lognormal", {"sigma": 0.7}),
        ("generalized_pareto", {"xi": 0.1}),
        ("normal", {"mu": 6.0}),
    ],
)
def test_truncated_fit_holds_each_fixed_parameter(family: str, options: dict[str, float]) -> None:
    """Every parameter an option fixes keeps its value on truncated data and leaves the AIC's
    count of estimated parameters (common practice, no source)."""
    x, t = _truncated_gamma()
    free = sw.fit(x, family, truncation=t)
    held = sw.fit(x, family, truncation=t, **options)
    for k, v in options.items():
        assert held.params[k] == v
    n_free = len(free.params) - (1 if "loc" in free.params else 0)
    assert held.aic == pytest.approx(2.0 * (n_free - len(options)) - 2.0 * held.loglik)
    assert held.loglik < free.loglik  # held away from the maximum: a lower likelihood


def test_interval_fit_holds_the_fixed_shape() -> None:
    """fit_interval(..., "weibull", shape=1.5) returns shape 1.5, no longer the free estimate."""
    x = np.random.default_rng(2).weibull(2.5, 300) * 7.0
    lo, hi = np.floor(x), np.floor(x) + 1.0
    free = fit_interval(lo, hi, "weibull")
    held = fit_interval(lo, hi, "weibull", shape=1.5)
    assert held.params["shape"] == 1.5
    assert free.params["shape"] == pytest.approx(2.5, rel=0.15)  # source: the invented draw
    assert held.loglik < free.loglik


@pytest.mark.parametrize(
    ("family", "options", "message"),
    [
        ("gamma", {"shape": 0.0}, "option 'shape' of gamma: expected a number > 0, found 0.0"),
        ("weibull", {"scale": "big"}, "option 'scale' of weibull: expected a number, found 'big'"),
        ("lognormal", {"sigma": float("inf")}, "option 'sigma' of lognormal: expected a finite"),
        ("generalized_pareto", {"xi": -2.0}, "option 'xi' of generalized_pareto: expected a "),
        ("pareto", {"xm": -1.0}, "option 'xm' of pareto: expected a number > 0"),
        ("gamma", {"loc": "free"}, "option 'loc' of gamma: 'free' is not offered"),
        ("gamma", {"colour": 1.0}, "unknown option 'colour' for gamma"),
    ],
)
def test_bad_fixed_values_are_refused_naming_the_option(
    family: str, options: dict[str, Any], message: str
) -> None:
    """A fixed value the family cannot take is a one-line MethodError naming the option."""
    x, t = _truncated_gamma()
    with pytest.raises(MethodError) as err:
        sw.fit(x, family, truncation=t, **options)
    assert message in str(err.value) and "\n" not in str(err.value)


def test_incomplete_fixed_turns_every_parameter_option_into_a_fixed_value() -> None:
    """incomplete_fixed keeps settings and estimated parameters alike; nonparametric: none."""
    assert incomplete_fixed("pareto", {"loc": 1, "xm": 2.0, "alpha": 3}) == {
        "loc": 1.0,
        "xm": 2.0,
        "alpha": 3.0,
    }
    assert incomplete_fixed("turnbull", {"tail": "exponential"}) == {}


def test_ranking_incomplete_candidates_honours_fixed_parameters() -> None:
    """rank_incomplete fits a candidate with its fixed parameter held and counts one fewer."""
    x, t = _truncated_gamma()
    sample = incomplete_from_flags(x, np.zeros(x.size, bool), truncation=t)
    ranked = {
        r.family: r for r in rank_incomplete(sample, ["gamma"], options={"gamma": {"shape": 2.0}})
    }
    assert ranked["gamma"].params["shape"] == 2.0 and ranked["gamma"].n_params == 1


def test_fully_fixed_truncated_fit_estimates_nothing() -> None:
    """With every parameter fixed the fit is the given distribution and its likelihood (source:
    the truncated likelihood computed here with scipy.stats.gamma)."""
    x, t = _truncated_gamma()
    s = fit_truncated(x, "gamma", truncation=t, shape=3.0, scale=2.0)
    d = stats.gamma(3.0, scale=2.0)
    assert s.params == {"shape": 3.0, "scale": 2.0, "loc": 0.0}
    assert s.loglik == pytest.approx(float(np.sum(d.logpdf(x) - d.logsf(t))), rel=1e-10)
    assert s.aic == pytest.approx(-2.0 * s.loglik)


def test_cli_and_config_fix_parameters_of_truncated_and_interval_fits(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, run_cli: Any
) -> None:
    """`fit --truncation 2 -o shape=2.0`, `fit --lower/--upper -o shape=1.5` and a config
    dataset with truncation and a fixed shape all write artifacts holding the fixed value."""
    monkeypatch.chdir(tmp_path)
    x, _ = _truncated_gamma()
    pd.DataFrame({"v": x, "lo": np.floor(x), "hi": np.floor(x) + 1.0}).to_csv(
        "d.csv", index=False, float_format="%.17g"
    )
    code, _, err = run_cli(
        "fit", "d.csv", "--column", "v", "--truncation", "2", "--method", "gamma",
        "-o", "shape=2.0", "--out", "a.parquet",
    )  # fmt: skip
    assert code == 0, err
    assert load_sampler("a.parquet").params["shape"] == 2.0
    code, _, err = run_cli(
        "fit", "d.csv", "--lower", "lo", "--upper", "hi", "--method", "weibull",
        "-o", "shape=1.5", "--out", "b.parquet",
    )  # fmt: skip
    assert code == 0, err
    assert load_sampler("b.parquet").params["shape"] == 1.5
    plan = Plan(
        {
            "store": "st",
            "datasets": {
                "v": {
                    "path": "d.csv",
                    "column": "v",
                    "truncation": 2.0,
                    "methods": [{"method": "gamma", "options": {"shape": 2.0}}],
                }
            },
        }
    )
    args = shlex.split(plan.fit_args("v", "gamma"))
    code, _, err = run_cli("fit", "d.csv", "--column", "v", *args, "--out", "c.parquet")
    assert code == 0, err
    c = load_sampler("c.parquet")
    assert c.params["shape"] == 2.0
    assert c.params["scale"] == pytest.approx(
        sw.fit(x, "gamma", truncation=2.0, shape=2.0).params["scale"]
    )


# ---------------------------------------------------------------------------------------------
# 2. data with (almost) no spread

ULP = float(np.nextafter(3.0, 4.0))
DEGENERATE = {
    "constant": [3.0] * 20,
    "all_but_one_above": [3.0] * 19 + [4.0],
    "all_but_one_below": [2.0] + [3.0] * 19,
    "two_values": [3.0] * 10 + [4.0] * 10,
    "one_ulp_apart": [3.0] * 19 + [ULP],
}


def _on_family_support(family: str, values: list[float]) -> np.ndarray:
    """The values, moved into (0, 1) for beta (its default bounds)."""
    x = np.array(values)
    return x / 10.0 if family == "beta" else x


@pytest.mark.parametrize("data", sorted(DEGENERATE))
@pytest.mark.parametrize("family", CONTINUOUS)
def test_degenerate_data_refused_or_fitted_properly(family: str, data: str) -> None:
    """Every continuous family either refuses with a one-line error saying the data have
    (almost) no spread, or returns a fit whose log-likelihood is finite, equals scipy.stats'
    at the fitted parameters, and does not come from a distribution shrunk onto a point (its
    interquartile range at least 1e-12 of the data's magnitude; common practice, no source)."""
    x = _on_family_support(family, DEGENERATE[data])
    try:
        s = sw.fit(x, family)
    except MethodError as err:
        text = str(err)
        assert "\n" not in text
        assert "no spread" in text or f"{family} needs at least" in text, text
        return
    assert np.isfinite(s.loglik)
    dist = get_family(family).bound(s.params)  # source: scipy.stats' logpdf and ppf
    assert s.loglik == pytest.approx(float(np.sum(dist.logpdf(x))), rel=1e-9, abs=1e-9)
    iqr = float(dist.ppf(0.75) - dist.ppf(0.25))
    assert iqr > 1e-12 * float(np.max(np.abs(x)))


@pytest.mark.parametrize(
    ("family", "data"),
    [
        # gev's truncated fits on tied data take 2-10 s each (the drift check's profile)
        pytest.param(f, d, marks=[pytest.mark.slow] if f == "gev" else [])
        for f in INCOMPLETE_FAMILIES
        for d in sorted(DEGENERATE)
    ],
)
def test_degenerate_truncated_data_refused_or_fitted_properly(family: str, data: str) -> None:
    """The same on data truncated at 1: a one-line refusal, or a fit whose log-likelihood is
    scipy.stats' truncated one (sum of log f(x) - log S(1)) and whose interquartile range is
    at least 1e-12 of the data's magnitude (common practice, no source)."""
    x = np.array(DEGENERATE[data])
    try:
        s = sw.fit(x, family, truncation=1.0)
    except MethodError as err:
        assert "\n" not in str(err)
        return
    dist = get_family(family).bound(s.params)  # source: scipy.stats' logpdf, logsf and ppf
    expected = float(np.sum(dist.logpdf(x) - dist.logsf(1.0)))
    assert s.loglik == pytest.approx(expected, rel=1e-9, abs=1e-9)
    assert float(dist.ppf(0.75) - dist.ppf(0.25)) > 1e-12 * float(np.max(np.abs(x)))


@pytest.mark.parametrize(
    ("values", "weights"),
    [
        ([3.0] * 50, None),  # the case reported: sigma 3e-16 before
        ([7.3] * 1000, None),  # log moments rounded to a spread of 2e-16
        ([7.3] * 5, [1.0, 2.0, 3.0, 4.0, 5.5]),
        (list(3.0 + np.arange(20) * 1e-13), None),  # a relative spread of 6e-13
    ],
)
def test_lognormal_on_constant_data_refuses(values: list[float], weights: Any) -> None:
    """lognormal on (nearly) equal values is refused, not fitted with a sigma of 1e-16."""
    with pytest.raises(MethodError, match="no spread"):
        sw.fit(np.array(values), "lognormal", weights=weights)


def test_gev_with_ties_at_the_maximum_ends_at_its_edge() -> None:
    """gev on values tied at their maximum returns the xi = -1 fit with its upper end there,
    the largest likelihood over xi = -1 (closed form: sigma the mean distance to the maximum,
    log-likelihood -n log(sigma) - n), whose log-likelihood scipy.stats reproduces."""
    x = np.array([2.0] + [3.0] * 199)
    s = sw.fit(x, "gev")
    sigma = float(np.mean(3.0 - x))  # source: the closed form in the docstring
    assert s.params["xi"] == -1.0 and s.params["sigma"] == pytest.approx(sigma)
    assert s.params["mu"] + s.params["sigma"] == pytest.approx(3.0)
    assert s.loglik == pytest.approx(-200 * np.log(sigma) - 200, rel=1e-9)
    d = stats.genextreme(1.0, loc=s.params["mu"], scale=s.params["sigma"])
    assert s.loglik == pytest.approx(float(np.sum(d.logpdf(x))), rel=1e-9)


def test_constant_data_still_fit_families_whose_maximum_exists() -> None:
    """exponential and rayleigh (location fixed) have a proper fit to constant data: the scale
    is the mean (source: the exponential MLE), and sqrt(mean(x^2) / 2) (the rayleigh MLE)."""
    x = np.full(30, 3.0)
    assert sw.fit(x, "exponential").params["scale"] == pytest.approx(3.0)
    assert sw.fit(x, "rayleigh").params["sigma"] == pytest.approx(3.0 / np.sqrt(2.0))


# ---------------------------------------------------------------------------------------------
# 3. seeds in the pipeline


@pytest.fixture
def data_dir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A working folder with invented repair hours and crew costs (CSV)."""
    monkeypatch.chdir(tmp_path)
    rng = np.random.default_rng(7)
    frame = pd.DataFrame({"hours": rng.gamma(2.0, 2.0, 120), "cost": rng.lognormal(3.0, 0.4, 120)})
    frame.to_csv("d.csv", index=False, float_format="%.17g")
    return tmp_path


AUTO = {"method": "auto", "options": {"candidates": ["gamma", "lognormal"], "n_resamples": 19}}


def _plan(root_seed: int = 0, auto: dict | None = None) -> Plan:
    methods = [auto or AUTO, "gamma", {"method": "mixture", "label": "mix"}]
    return Plan(
        {
            "store": "st",
            "root_seed": root_seed,
            "datasets": {
                "hours": {"path": "d.csv", "column": "hours", "methods": methods},
                "cost": {"path": "d.csv", "column": "cost", "methods": [auto or AUTO]},
            },
        }
    )


def test_plan_derives_seeds_for_random_methods_only(data_dir: Path) -> None:
    """auto and mixture get a seed from the root seed, dataset, purpose and label (sha256 of
    the canonical key); gamma gets none; the seed enters the fit key and the job's arguments."""
    plan = _plan(0)
    auto, gamma, mix = (plan.spec("hours", lab) for lab in ("auto", "gamma", "mix"))
    assert auto.options["seed"] == derived_seed(0, "hours", "fit", "auto")
    assert mix.options["seed"] == derived_seed(0, "hours", "fit", "mix")
    assert "seed" not in gamma.options
    assert plan.spec("cost", "auto").options["seed"] != auto.options["seed"]  # no shared stream
    assert f"--option seed={auto.options['seed']}" in plan.fit_args("hours", "auto")
    other = _plan(1)
    assert other.fit_key("hours", "auto") != plan.fit_key("hours", "auto")
    assert other.fit_key("hours", "mix") != plan.fit_key("hours", "mix")
    assert other.fit_key("hours", "gamma") == plan.fit_key("hours", "gamma")
    assert _plan(0).fit_key("hours", "auto") == plan.fit_key("hours", "auto")


def test_a_seed_the_config_sets_wins(data_dir: Path) -> None:
    """An explicit seed is kept as given, and the key no longer follows the root seed."""
    mine = {"method": "auto", "options": {**AUTO["options"], "seed": 12}}
    a, b = _plan(0, mine), _plan(1, mine)
    assert a.spec("hours", "auto").options["seed"] == 12
    assert a.fit_key("hours", "auto") == b.fit_key("hours", "auto")


def test_seed_derivation_imports_no_numpy() -> None:
    """Deriving seeds stays on the light planning path (no numpy in the process)."""
    code = (
        "import sys\n"
        "from samplewright.pipeline.plan import derived_seed, seeded\n"
        "from samplewright.pipeline.config import MethodSpec\n"
        "s = seeded(MethodSpec('auto', 'auto', {}), 3, 'hours', 'fit', 'auto')\n"
        "assert s.options['seed'] == derived_seed(3, 'hours', 'fit', 'auto') < 2**53\n"
        "print('numpy' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def _fit_job(plan: Plan, label: str, out: str, run_cli: Any) -> Any:
    """Run the fit job the plan describes (on the CSV instead of the snapshot); load it."""
    args = shlex.split(plan.fit_args("hours", label))
    key = plan.fit_key("hours", label)
    code, _, err = run_cli("fit", "d.csv", "--column", "hours", *args, "--key", key, "--out", out)
    assert code == 0, err
    return load_sampler(out)


def _pvalues(sampler: Any) -> list[dict[str, float]]:
    return [row["pvalues"] for row in sampler.diagnostics["auto"]["ranking"]]


def test_root_seed_moves_the_bootstrap_and_a_repeat_is_identical(
    data_dir: Path, run_cli: Any
) -> None:
    """Two root seeds give auto fits with other seeds and other bootstrap p-values; the same
    root seed gives the same artifact content (content hash)."""
    a = _fit_job(_plan(0), "auto", "a.parquet", run_cli)
    b = _fit_job(_plan(1), "auto", "b.parquet", run_cli)
    c = _fit_job(_plan(0), "auto", "c.parquet", run_cli)
    assert a.diagnostics["auto"]["seed_source"] == "option"
    assert a.diagnostics["auto"]["seed"] == derived_seed(0, "hours", "fit", "auto")
    assert b.diagnostics["auto"]["seed"] == derived_seed(1, "hours", "fit", "auto")
    assert _pvalues(a) != _pvalues(b)
    assert a.metadata["content_hash"] == c.metadata["content_hash"]
    assert a.metadata["key"] != b.metadata["key"]


def test_cli_seed_reaches_the_method_options(data_dir: Path, run_cli: Any) -> None:
    """`fit --seed N` becomes option seed of auto and mixture, leaves gamma as it is, and is
    refused when negative or when it disagrees with --option seed."""
    base = ("fit", "d.csv", "--column", "hours")
    code, _, err = run_cli(
        *base, "-m", "auto", "-o", "n_resamples=19", "--seed", "5", "--out", "a.parquet"
    )
    assert code == 0, err
    a = load_sampler("a.parquet")
    assert (a.diagnostics["auto"]["seed"], a.diagnostics["auto"]["seed_source"]) == (5, "option")
    code, _, err = run_cli(*base, "-m", "mixture", "--seed", "5", "--out", "m.parquet")
    assert code == 0, err
    assert load_sampler("m.parquet").metadata["provenance"]["options"]["seed"] == 5
    code, _, err = run_cli(*base, "-m", "gamma", "--seed", "5", "--out", "g.parquet")
    assert code == 0 and load_sampler("g.parquet").metadata["provenance"]["options"] == {}
    code, _, err = run_cli(*base, "-m", "auto", "--seed", "-1", "--out", "x.parquet")
    assert code == 2 and "--seed: expected a non-negative int, found -1" in err
    code, _, err = run_cli(*base, "-m", "auto", "-o", "seed=6", "--seed", "5", "--out", "x.parquet")
    assert code == 2 and "--seed: 5 disagrees with --option seed=6" in err


# ---------------------------------------------------------------------------------------------
# 4. selecting among candidates fitted to other data


def test_select_refuses_a_candidate_fitted_to_other_data(data_dir: Path, run_cli: Any) -> None:
    """select names both files when a candidate's fingerprint, or its truncation point,
    differs from the first candidate's; candidates of the same data are selected as before."""
    fit = ("fit", "d.csv", "--method")
    assert run_cli(*fit, "gamma", "--column", "hours", "--out", "g.parquet")[0] == 0
    assert run_cli(*fit, "lognormal", "--column", "hours", "--out", "l.parquet")[0] == 0
    assert run_cli(*fit, "lognormal", "--column", "cost", "--out", "c.parquet")[0] == 0
    assert (
        run_cli(
            *fit, "lognormal", "--column", "hours", "--truncation", "0.1", "--out", "t.parquet"
        )[0]
        == 0
    )
    code, out, err = run_cli("select", "g.parquet", "l.parquet", "--out", "s.parquet")
    assert code == 0, err
    code, _, err = run_cli("select", "g.parquet", "c.parquet", "--out", "s2.parquet")
    assert code == 2
    line = err.strip()
    assert "\n" not in line and "c.parquet was fitted to other data than g.parquet" in line
    assert not Path("s2.parquet").exists()
    code, _, err = run_cli(
        "select", "g.parquet", "t.parquet", "--by", "first", "--out", "s3.parquet"
    )
    assert code == 2 and "t.parquet was fitted to other data than g.parquet" in err
    assert "truncation 0.1" in err


def test_select_refuses_counts_against_a_density(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, run_cli: Any
) -> None:
    """select by AIC calls check_comparable_fitted: a poisson and a normal fitted to the same
    counts are not ranked by AIC (a pmf's likelihood against a density's)."""
    monkeypatch.chdir(tmp_path)
    k = np.random.default_rng(4).poisson(4.0, 80)
    pd.DataFrame({"k": k}).to_csv("k.csv", index=False)
    for m in ("poisson", "normal"):
        assert run_cli("fit", "k.csv", "--column", "k", "-m", m, "--out", f"{m}.parquet")[0] == 0
    code, _, err = run_cli("select", "poisson.parquet", "normal.parquet", "--out", "s.parquet")
    assert code == 2 and "not comparable" in err
    code, _, err = run_cli(
        "select", "poisson.parquet", "normal.parquet", "--by", "first", "--out", "s.parquet"
    )
    assert code == 0, err
