"""Incomplete data in the check and the report: like with like, the matching estimate, tests."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import samplewright as sw
from samplewright.check.gof_incomplete import goodness_of_fit_incomplete
from samplewright.check.incomplete_reference import (
    ConditionalSampler,
    incomplete_rows,
    reference_distance,
    reference_estimate,
    reference_quantiles,
)
from samplewright.check.render import check_summary, render_check_markdown
from samplewright.check.report_inputs import kaplan_meier_band, report_input
from samplewright.check.report_numbers import derive_numbers, step_quantile
from samplewright.core.errors import MethodError

T0 = 2000.0  # every invented claim was reported above a deductible of 2000 EUR
LIMIT = 40000.0


def _claims(n: int = 300, seed: int = 7) -> tuple[np.ndarray, np.ndarray]:
    """Invented lognormal claims reported above a deductible of 2000, capped at 40000."""
    rng = np.random.default_rng(seed)
    dist = stats.lognorm(1.0, scale=3000.0)
    x = dist.isf(dist.sf(T0) * rng.random(n))
    return np.minimum(x, LIMIT), x > LIMIT


def _kmf(x: np.ndarray, censored: np.ndarray, entry: object):
    from lifelines import KaplanMeierFitter

    return KaplanMeierFitter().fit(x, event_observed=~censored, entry=entry)


def test_conditional_sampler_is_the_truncated_scipy_distribution() -> None:
    """Given X > t0 a lognormal's CDF is (F - F(t0)) / (1 - F(t0)), its quantiles the inverse."""
    s = sw.fit(np.random.default_rng(1).lognormal(8.0, 1.0, 400), "lognormal")
    c = ConditionalSampler(s, T0)
    # source: scipy.stats.lognorm, conditioned on X > t0 by the definition (common practice)
    d = stats.lognorm(s.params["sigma"], scale=np.exp(s.params["mu"]))
    f0 = d.cdf(T0)
    x = np.array([1500.0, 2500.0, 9000.0, 60000.0])
    expected = np.where(x >= T0, (d.cdf(x) - f0) / (1 - f0), 0.0)
    np.testing.assert_allclose(c.cdf(x), expected, rtol=1e-12, atol=1e-15)
    u = np.array([0.1, 0.5, 0.99])
    np.testing.assert_allclose(c.quantile(u), d.ppf(f0 + u * (1 - f0)), rtol=1e-10)
    # source: scipy.stats.rv_continuous.expect with conditional=True
    mean = d.expect(lambda v: v, lb=T0, conditional=True)
    assert c.mean == pytest.approx(mean, rel=1e-4)
    assert c.share_below == pytest.approx(f0, rel=1e-12)


def test_reference_with_entry_times_matches_lifelines() -> None:
    """The report's Kaplan–Meier with deductibles as entry times equals lifelines', band too."""
    rng = np.random.default_rng(5)
    d = rng.choice([500.0, 1000.0, 2000.0], 250)
    dist = stats.lognorm(1.0, scale=3000.0)
    x = dist.isf(dist.sf(d) * rng.random(250))
    c = x > 20000.0
    x = np.minimum(x, 20000.0)
    ref = kaplan_meier_band(x, c, entry=d)
    kmf = _kmf(x, c, d)
    # source: lifelines KaplanMeierFitter(entry=...): survival_function_, confidence_interval_
    surv, ci = kmf.survival_function_.iloc[:, 0], kmf.confidence_interval_
    for t, f, lo, hi in zip(ref.x, ref.cdf, ref.low, ref.high, strict=True):
        assert f == pytest.approx(1.0 - surv.loc[t], abs=1e-12)
        if 0.0 < f < 1.0:
            assert hi == pytest.approx(1.0 - ci.loc[t].iloc[0], abs=1e-9)
            assert lo == pytest.approx(1.0 - ci.loc[t].iloc[1], abs=1e-9)
    # source: lifelines median_survival_time_ (smallest t with S(t) <= 0.5)
    assert reference_quantiles(ref, [0.5])[0] == pytest.approx(kmf.median_survival_time_)


def test_report_compares_candidates_given_above_the_smallest_deductible() -> None:
    """With a deductible everywhere the data row is Kaplan–Meier given X > t0 and each candidate
    is compared given X > t0, while its ground-up quantiles stay those a simulation draws."""
    x, c = _claims()
    cands = [sw.fit(x, m, censored=c, truncation=T0) for m in ("lognormal", "kaplan_meier")]
    report = report_input(
        "claims", cands, ["lognormal", "kaplan_meier"], values=x, censored=c, truncation=T0,
        selected=0, units="EUR",
    )  # fmt: skip
    n = derive_numbers(report)
    ln = cands[0]
    d = stats.lognorm(ln.params["sigma"], scale=np.exp(ln.params["mu"]))
    f0 = d.cdf(T0)
    assert n.given_above == T0 and n.share_below["lognormal"] == pytest.approx(f0)
    # source: scipy.stats.lognorm.ppf, ground-up and conditional on X > t0
    assert n.candidates[0].quantiles[0.5] == pytest.approx(d.ppf(0.5), rel=1e-10)
    assert n.conditional[0].quantiles[0.5] == pytest.approx(d.ppf(f0 + 0.5 * (1 - f0)), rel=1e-9)
    # source: numpy.quantile(method="inverted_cdf"): Kaplan–Meier is the ECDF below the limit,
    # where every censored claim lies (lifelines' survival product lands a hair above the
    # levels 0.5 and 0.9 here, k/n in exact arithmetic, and gives the next claim)
    assert n.data_row is not None and x[c].min() > np.quantile(x, 0.9)
    ecdf = np.quantile(x, [0.5, 0.9], method="inverted_cdf")
    assert [n.data_row.quantiles[0.5], n.data_row.quantiles[0.9]] == ecdf.tolist()
    # like with like: the conditional median is near the data's, the ground-up one is not
    gap_given = abs(n.conditional[0].quantiles[0.5] / n.data_row.quantiles[0.5] - 1)
    gap_ground = abs(n.candidates[0].quantiles[0.5] / n.data_row.quantiles[0.5] - 1)
    assert gap_given < 0.1 < gap_ground
    found = [w.message for w, _ in n.warnings if w.kind == "support_beyond_data"]
    assert any(f"lognormal puts {f0:.1%} of its draws at or below 2000 EUR" in m for m in found)
    from samplewright.check.report_html import render_report_html

    page = render_report_html(report)
    assert "given above the smallest deductible t0 = 2000" in page
    assert "Q–Q plot of lognormal (given X &gt; 2000 EUR)" in page


def test_the_matching_estimate_is_made_without_a_nonparametric_candidate() -> None:
    """Parametric candidates only: the report still computes Kaplan–Meier with entry times, or
    Turnbull for interval rows."""
    x, c = _claims(120)
    ln = sw.fit(x, "lognormal", censored=c, truncation=T0)
    r = report_input("claims", [ln], ["lognormal"], values=x, censored=c, truncation=T0)
    assert r.reference is not None and r.reference.label == "Kaplan–Meier"
    lo = np.array([0.0, 5.0, 10.0, 20.0])
    hi = np.array([5.0, 10.0, 20.0, np.inf])
    w = np.array([30.0, 40.0, 20.0, 10.0])
    ex = sw.fit_interval(lo, hi, "exponential", weights=w)
    mid = np.where(np.isfinite(hi), (lo + hi) / 2, lo)
    r = report_input("groups", [ex], ["exponential"], values=mid, weights=w, lower=lo, upper=hi)
    assert r.reference is not None and r.reference.label == "Turnbull"
    ref = r.reference
    # source: grouped data (common practice, no source): the estimate's CDF at the bin edges is
    # the cumulative share, and above the last finite edge the data say nothing
    np.testing.assert_allclose(np.interp([5.0, 10.0, 20.0], ref.x, ref.cdf), [0.3, 0.7, 0.9])
    assert ref.reached == pytest.approx(0.9) and np.isnan(reference_quantiles(ref, [0.95])[0])


def test_kaplan_meier_rows_use_the_samplers_quantile_definition() -> None:
    """The data row of a Kaplan–Meier estimate is not one atom higher than a Kaplan–Meier
    candidate: a level reached up to rounding selects its own step."""
    x = np.arange(1.0, 11.0) * 100.0
    flags = np.zeros(10, dtype=bool)
    ref = reference_estimate(incomplete_rows(x, censored=flags, truncation=50.0))
    km = sw.fit(x, "kaplan_meier", censored=flags, truncation=50.0)
    u = np.array([0.3, 0.5, 0.7, 0.9])
    assert np.any(np.abs(ref.cdf[[2, 4, 6, 8]] - u) > 0)  # the products are not exact
    # source: numpy.quantile(method="inverted_cdf"): without censoring Kaplan–Meier is the ECDF
    expected = np.quantile(x, u, method="inverted_cdf")
    np.testing.assert_array_equal(reference_quantiles(ref, u), expected)
    np.testing.assert_array_equal(km.quantile(u), expected)
    np.testing.assert_array_equal(step_quantile(ref.x, ref.cdf, u), expected)


def test_goodness_of_fit_incomplete_takes_plain_arrays() -> None:
    """Values with a truncation point give the same test as the checked rows, and the statistic
    is the KS distance to the conditional CDF."""
    x, c = _claims(120)
    keep = ~c
    a = goodness_of_fit_incomplete(x[keep], "lognormal", truncation=T0, n_resamples=9, rng=2)
    rows = incomplete_rows(x[keep], truncation=T0)
    b = goodness_of_fit_incomplete(rows, "lognormal", n_resamples=9, rng=2)
    assert a.statistic == b.statistic and a.pvalue == b.pvalue and len(a.replicate_params) == 9
    d = stats.lognorm(a.params["sigma"], scale=np.exp(a.params["mu"]))
    f0 = d.cdf(T0)
    # source: scipy.stats.kstest against the lognormal conditional on X > t0
    ref = stats.kstest(x[keep], lambda v: (d.cdf(v) - f0) / (1 - f0)).statistic
    assert a.statistic == pytest.approx(ref, rel=1e-9)
    assert reference_distance(rows, sw.fit(x[keep], "lognormal", truncation=T0)) == pytest.approx(
        ref, rel=1e-6
    )
    with pytest.raises(MethodError, match="values: give values .* or lower and upper, not both"):
        goodness_of_fit_incomplete(x, "lognormal", lower=x, upper=x)
    with pytest.raises(MethodError, match="censored: not taken with an IncompleteSample"):
        goodness_of_fit_incomplete(rows, "lognormal", censored=c[keep])


def test_check_summary_of_truncated_data_shows_the_fits_given_above_t0() -> None:
    """The JSON summary names the estimate and t0; the Markdown compares given X > t0."""
    x, c = _claims(200)
    rows = incomplete_rows(x, censored=c, truncation=T0)
    cands = [sw.fit(x, m, censored=c, truncation=T0) for m in ("lognormal", "weibull")]
    doc = check_summary(
        x, cands, censored=c, rows=rows, labels=["lognormal", "weibull"], selected=0
    )
    assert (doc["reference"], doc["conditioned_on"], doc["n_truncated"]) == (
        "kaplan_meier",
        T0,
        200,
    )
    row = doc["candidates"][0]
    ln = cands[0]
    d = stats.lognorm(ln.params["sigma"], scale=np.exp(ln.params["mu"]))
    f0 = d.cdf(T0)
    # source: scipy.stats.lognorm.ppf conditional on X > t0, and ground-up
    assert row["given_above"]["quantiles"]["p50"] == pytest.approx(d.ppf(f0 + 0.5 * (1 - f0)))
    assert row["quantiles"]["p50"] == pytest.approx(d.ppf(0.5))
    # source: numpy.quantile(method="inverted_cdf"): with one deductible and every censored
    # claim at the limit, far above the median, Kaplan–Meier is the ECDF up to there (lifelines
    # agrees but for rounding: its survival product lands a hair above 0.5 at the 100th claim)
    assert c.sum() > 0 and x[c].min() > 2 * np.median(x)
    assert row["data_quantiles"]["p50"] == np.quantile(x, 0.5, method="inverted_cdf")
    md = render_check_markdown(doc)
    assert "**Given above t0**" in md and "**What a simulation draws** (ground-up)" in md
    assert "the Kaplan–Meier estimate with entry times, given X > 2000" in md
    json.dumps(doc, allow_nan=False)


def _csv(path: Path, **columns: object) -> Path:
    pd.DataFrame(columns).to_csv(path, index=False)
    return path


def test_check_tests_a_censored_weibull_against_kaplan_meier(tmp_path: Path, run_cli) -> None:
    """Censored pump lives: the weibull is tested by the bootstrap that redoes the censoring, its
    statistic is the largest gap to lifelines' Kaplan–Meier, and the summary says what was done."""
    rng = np.random.default_rng(21)
    life = 900.0 * rng.weibull(1.6, 150)  # invented pump lives (hours)
    cut = rng.uniform(300.0, 1500.0, 150)
    x, c = np.minimum(life, cut), life > cut
    data = _csv(tmp_path / "pumps.csv", hours=x, running=c.astype(int))
    snap = tmp_path / "snap.parquet"
    assert run_cli("snapshot", data, "-c", "hours", "--censor", "running", "--out", snap)[0] == 0
    arts = []
    for m in ("weibull", "kaplan_meier"):
        out = tmp_path / f"{m}.parquet"
        code, _, err = run_cli("fit", snap, "-m", m, "--out", out)
        assert code == 0, err
        arts.append(out)
    sel = tmp_path / "sel.parquet"
    assert run_cli("select", *arts, "--by", "first", "--out", sel)[0] == 0
    out = tmp_path / "check.json"
    code, _, err = run_cli(
        "check", snap, *arts, "--selected", sel, "--gof-resamples", "19", "--out", out
    )
    assert code == 0, err
    doc = json.loads(out.read_text())
    gof = doc["candidates"][0]["gof"]
    assert gof["test"] == "incomplete" and gof["n_resamples"] == 19
    w = sw.load_sampler(arts[0])
    kmf = _kmf(x, c, None)
    t = kmf.survival_function_.index.to_numpy()[1:]
    s = kmf.survival_function_.iloc[1:, 0].to_numpy()
    events = np.isin(t, x[~c])
    before = np.r_[1.0, s[:-1]]
    model = stats.weibull_min(w.params["shape"], scale=w.params["scale"]).cdf(t)
    # source: lifelines KaplanMeierFitter and scipy.stats.weibull_min: the largest gap at the
    # event times (before and after each step) and at the last time
    gaps = np.r_[np.abs(1 - s - model)[events], np.abs(1 - before - model)[events]]
    expected = max(gaps.max(), abs(1 - s[-1] - model[-1]))
    # (the test refits the weibull; its parameters agree with the artifact's to about 1e-8)
    assert gof["statistics"]["ks"] == pytest.approx(expected, abs=1e-6)
    assert 0.0 < gof["pvalues"]["ks"] <= 1.0
    md = out.with_suffix(".md").read_text()
    assert "bootstrap tests apply to the parametric families" not in md
    assert "the largest distance to the Kaplan–Meier estimate" in md
    assert "kaplan_meier is the data's own nonparametric estimate" in json.dumps(doc)


def test_check_and_report_cover_a_table_dataset(tmp_path: Path, run_cli) -> None:
    """A table snapshot (value, deductible, limit flag) gets a check summary and a page."""
    x, c = _claims(150)
    data = _csv(
        tmp_path / "claims.csv", damage=x, deductible=np.full(x.size, T0), capped=c.astype(int)
    )
    snap = tmp_path / "snap.parquet"
    roles = ("-c", "damage", "--truncation", "deductible", "--censor", "capped")
    assert run_cli("snapshot-table", data, *roles, "--out", snap)[0] == 0
    arts = []
    for m in ("lognormal", "kaplan_meier"):
        out = tmp_path / f"{m}.parquet"
        code, _, err = run_cli("fit", snap, *roles, "-m", m, "--out", out)
        assert code == 0, err
        arts.append(out)
    sel = tmp_path / "sel.parquet"
    assert run_cli("select", *arts, "--by", "first", "--out", sel)[0] == 0
    out, page = tmp_path / "c.json", tmp_path / "p.html"
    code, _, err = run_cli(
        "check", snap, *arts, "--selected", sel, "--gof-resamples", "9", "--units", "EUR",
        "--dataset", "claims", "--out", out, "--html", page,
    )  # fmt: skip
    assert code == 0, err
    doc = json.loads(out.read_text())
    assert doc["conditioned_on"] == T0 and doc["candidates"][0]["gof"]["test"] == "incomplete"
    assert all(r["intervals"] for r in doc["candidates"])
    nums = json.loads(page.with_suffix(".json").read_text())
    assert nums["given_above"]["threshold"] == T0
    assert nums["data"]["label"] == "Kaplan–Meier (nonparametric)"
    # a Kaplan–Meier candidate and the data's estimate agree exactly (one quantile definition)
    km = next(r for r in nums["given_above"]["candidates"] if r["label"] == "kaplan_meier")
    assert km["quantiles"]["0.5"] == nums["data"]["quantiles"]["0.5"]
    assert re.search(r"lognormal puts [\d.]+% of its draws at or below 2000 EUR", page.read_text())


def test_auto_on_truncated_rows_gets_tail_intervals_without_its_own_options() -> None:
    """An auto fit on deductible data carries its options (seed, n_resamples) in provenance;
    the candidate's tail intervals refit its chosen family and take none of them."""
    import samplewright as sw
    from samplewright.check.candidate_intervals import candidate_intervals
    from samplewright.fitting.incomplete import incomplete_from_flags

    rng = np.random.default_rng(12)  # invented ground-up losses above a deductible of 2
    x = rng.lognormal(1.5, 0.6, 400)
    x = x[x > 2.0][:150]
    fitted = sw.fit(x, "auto", truncation=2.0, n_resamples=19, seed=3)
    rows = incomplete_from_flags(x, np.zeros(x.size, bool), truncation=np.full(x.size, 2.0))
    result = candidate_intervals(
        fitted, rows=rows, options={"n_resamples": 19, "seed": 3}, n_resamples=19, rng=4
    )
    assert result is not None
    # source: interval ends bracket the fitted family's own quantile (common practice)
    q99 = float(fitted.quantile([0.99])[0])
    assert result.quantiles[0.99].low <= q99 <= result.quantiles[0.99].high
    assert "truncation" in result.source
