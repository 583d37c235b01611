"""Method 'auto' on censored, truncated and interval rows: candidates, ranking, test, records."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import samplewright as sw
from samplewright.check.auto import NON_NEGATIVE, POSITIVE, REAL_LINE
from samplewright.check.auto_incomplete import default_candidates_rows, fit_rows
from samplewright.core.errors import ConfigError, MethodError
from samplewright.fitting.incomplete import incomplete_sample
from samplewright.fitting.interval_api import fit_interval, fit_truncated
from samplewright.pipeline.config import load_config

INF = np.inf


def _weibull_limits(seed: int = 4, n: int = 250) -> tuple[np.ndarray, np.ndarray]:
    """Weibull(1.5, 10) lifetimes, right-censored at a study end of 12 (invented)."""
    x = 10.0 * np.random.default_rng(seed).weibull(1.5, n)
    return np.minimum(x, 12.0), x > 12.0


def _claims(seed: int = 11, n: int = 200) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Lognormal losses above per-row deductibles, capped at a limit of 5000 (invented)."""
    rng = np.random.default_rng(seed)
    d = rng.choice([0.0, 250.0, 500.0], n)
    dist = stats.lognorm(1.1, scale=900.0)
    x = dist.isf(dist.sf(d) * rng.random(n))
    return np.minimum(x, 5000.0), x > 5000.0, d


def test_censored_values_are_ranked_by_the_censored_likelihood() -> None:
    """Every default candidate has a row with its criteria; the lowest AIC is chosen and its
    parameters are those of a direct censored fit of that family."""
    x, c = _weibull_limits()
    s = sw.fit(x, "auto", censored=c, n_resamples=0)
    auto = s.diagnostics["auto"]
    rows = auto["ranking"]
    assert s.method == "auto" and auto["candidates"] == list(POSITIVE)
    assert [r["family"] for r in rows][0] == auto["chosen"] == s.family.name
    assert {r["family"] for r in rows} == set(POSITIVE)
    aics = [r["aic"] for r in rows if not r["warnings"]]
    assert aics == sorted(aics) and all(r["error"] is None for r in rows)
    direct = fit_truncated(x, s.family.name, censored=c)
    assert s.params == pytest.approx(direct.params, rel=1e-9)
    assert s.loglik == pytest.approx(direct.loglik, rel=1e-12)  # type: ignore[attr-defined]
    # common practice, no source: weibull data with 20% censored: a weibull-like family wins
    assert s.family.name in ("weibull", "gamma")


def test_truncated_and_censored_rows_record_the_test_of_the_chosen_family() -> None:
    """The chosen row carries the incomplete-data bootstrap (distance and p-value); the other
    rows carry their distance only; the incomplete section counts the rows."""
    x, c, d = _claims(n=120)
    s = sw.fit(x, "auto", censored=c, truncation=d, n_resamples=9, seed=3,
               candidates=["lognormal", "weibull", "exponential"])  # fmt: skip
    auto = s.diagnostics["auto"]
    best, *others = auto["ranking"]
    assert set(best["statistics"]) == {"ks"} and 0.0 < best["pvalues"]["ks"] <= 1.0
    assert all(r["pvalues"] == {} and "ks" in r["statistics"] for r in others if r["error"] is None)
    assert auto["test"]["tested"] == "chosen" and auto["test"]["estimator"] == "product_limit"
    assert s.diagnostics["incomplete"]["n_truncated"] == int(np.sum(d > 0))
    assert auto["refit"] == {"method": s.family.name, "options": {}}
    json.dumps(s.diagnostics)  # plain JSON for the artifact


def test_seed_option_reproduces_and_a_data_seed_sees_the_censoring() -> None:
    """The same seed gives the same record; without one the seed comes from the rows, which
    differ when only the censoring flags differ."""
    x, c = _weibull_limits(n=80)
    two = {"candidates": ["weibull", "exponential"]}
    a = sw.fit(x, "auto", censored=c, n_resamples=9, seed=5, **two).diagnostics["auto"]
    b = sw.fit(x, "auto", censored=c, n_resamples=9, seed=5, **two).diagnostics["auto"]
    assert a == b and a["seed_source"] == "option"
    other = c.copy()
    other[np.flatnonzero(~c)[0]] = True
    d1 = sw.fit(x, "auto", censored=c, n_resamples=0, **two).diagnostics["auto"]
    d2 = sw.fit(x, "auto", censored=other, n_resamples=0, **two).diagnostics["auto"]
    assert d1["seed_source"] == d2["seed_source"] == "data" and d1["seed"] != d2["seed"]


def test_interval_and_grouped_rows_rank_with_weights() -> None:
    """Grouped counts (rows with weights) give the same ranking as the repeated rows."""
    lo = np.array([0.0, 10.0, 20.0, 40.0])
    hi = np.array([10.0, 20.0, 40.0, INF])
    w = np.array([12.0, 9.0, 6.0, 3.0])
    grouped = fit_interval(lo, hi, "auto", weights=w, n_resamples=0)
    k = w.astype(int)
    repeated = fit_interval(np.repeat(lo, k), np.repeat(hi, k), "auto", n_resamples=0)
    ga, ra = grouped.diagnostics["auto"], repeated.diagnostics["auto"]
    assert [r["family"] for r in ga["ranking"]] == [r["family"] for r in ra["ranking"]]
    for g, r in zip(ga["ranking"], ra["ranking"], strict=True):
        assert g["aic"] == pytest.approx(r["aic"], rel=1e-8)
    # the first group starts at 0, the lower end of the positive families: left-censored
    inc = grouped.diagnostics["incomplete"]
    assert (inc["n_left"], inc["n_interval"], inc["n_right"]) == (1, 2, 1)


def test_zero_weight_rows_are_dropped_and_counted() -> None:
    """Rows of weight 0 are dropped before ranking and counted in n_dropped."""
    x, c = _weibull_limits(n=60)
    w = np.ones(x.size)
    w[:5] = 0.0
    two = {"candidates": ["weibull", "lognormal"]}
    s = sw.fit(x, "auto", censored=c, weights=w, n_resamples=0, **two)
    t = sw.fit(x[5:], "auto", censored=c[5:], n_resamples=0, **two)
    assert s.diagnostics["incomplete"]["n_dropped"] == 5
    assert s.params == pytest.approx(t.params, rel=1e-9)


def test_default_candidates_follow_the_rule_of_complete_data() -> None:
    """Positive, non-negative (an exact 0) and real-line rows get auto's three candidate sets."""
    assert default_candidates_rows(incomplete_sample([0.0, 1.0], [2.0, INF])) == POSITIVE
    assert default_candidates_rows(incomplete_sample([0.0, 1.0], [0.0, 3.0])) == NON_NEGATIVE
    assert default_candidates_rows(incomplete_sample([-INF, 1.0], [-1.0, 1.0])) == REAL_LINE


def test_support_warnings_rank_a_candidate_last() -> None:
    """A real-line family putting mass below 0 ranks after the positive ones on positive rows,
    whatever its AIC, as on complete data."""
    x, c = _weibull_limits(n=200)
    s = sw.fit(x, "auto", censored=c, candidates=["normal", "weibull"], n_resamples=0)
    rows = s.diagnostics["auto"]["ranking"]
    assert [r["family"] for r in rows] == ["weibull", "normal"]
    assert rows[1]["warnings"][0]["kind"] == "support_below_zero"


def test_poor_fit_is_flagged_from_the_incomplete_test() -> None:
    """An exponential forced on clearly non-exponential censored data fails its bootstrap test."""
    rng = np.random.default_rng(8)
    x = rng.normal(50.0, 2.0, 200)  # a narrow bump, far from exponential
    s = sw.fit(np.minimum(x, 53.0), "auto", censored=x > 53.0, candidates=["exponential"],
               n_resamples=99, seed=1)  # fmt: skip
    auto = s.diagnostics["auto"]
    # common practice, no source: p = 1 / (1 + 99) is the smallest attainable p-value
    assert auto["ranking"][0]["pvalues"]["ks"] == pytest.approx(0.01)
    assert auto["poor_fit"] is True


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"candidates": ["poisson"]}, "option 'candidates' of auto: 'poisson' is not fitted to"),
        ({"candidates": ["beta"]}, "option 'candidates' of auto: 'beta' is not fitted to"),
        ({"integers": "counts"}, "option 'integers' of auto: 'counts' is not offered"),
        ({"criterion": "hqc"}, "option 'criterion' of auto"),
        ({"colour": 1}, "unknown option 'colour' for auto"),
    ],
)
def test_bad_options_are_refused_by_name(options: dict, message: str) -> None:
    """Options auto cannot honour on incomplete rows raise one-line MethodErrors."""
    x, c = _weibull_limits(n=30)
    with pytest.raises(MethodError, match=re.escape(message)):
        sw.fit(x, "auto", censored=c, truncation=0.0, n_resamples=0, **options)


def test_no_candidate_fitted_is_one_error() -> None:
    """Rows on which every candidate is refused give one error naming the first reason."""
    rows = incomplete_sample([1.0, 2.0, 3.0], [INF, INF, INF], truncation=[0.5, 0.5, 0.5])
    with pytest.raises(MethodError, match="^auto: no candidate could be fitted"):
        fit_rows(rows, n_resamples=0)


def test_config_accepts_auto_on_truncated_data(tmp_path: Path) -> None:
    """A dataset with a truncation column may list auto (it refused it before)."""
    data = tmp_path / "claims.csv"
    x, c, d = _claims(n=40)
    pd.DataFrame({"paid": x, "capped": c.astype(int), "deductible": d}).to_csv(data, index=False)
    ds = {"path": str(data), "column": "paid", "censor": "capped", "truncation": "deductible"}
    cfg = load_config({"datasets": {"claims": {**ds, "methods": ["auto", "lognormal"]}}})
    assert cfg["datasets"]["claims"]["methods"][0] == "auto"
    with pytest.raises(ConfigError, match=r"methods\[0\]: method 'beta' does not fit truncated"):
        load_config({"datasets": {"claims": {**ds, "methods": ["beta"]}}})


def test_cli_fits_auto_on_interval_columns(tmp_path: Path) -> None:
    """`samplewright fit --lower --upper -m auto` writes an artifact with the ranking."""
    from samplewright.pipeline.cli import main

    g = np.random.default_rng(2).gamma(3.0, 4.0, 150)
    lo = np.floor(g / 5.0) * 5.0
    pd.DataFrame({"lo": lo, "hi": lo + 5.0}).to_csv(tmp_path / "iv.csv", index=False)
    out = tmp_path / "a.parquet"
    code = main(["fit", str(tmp_path / "iv.csv"), "--lower", "lo", "--upper", "hi", "-m", "auto",
                 "-o", "n_resamples=0", "--out", str(out)])  # fmt: skip
    assert code == 0
    s = sw.load_sampler(out)
    assert s.method == "auto" and len(s.metadata["diagnostics"]["auto"]["ranking"]) == 5
