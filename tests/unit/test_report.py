"""Check summaries and the show view (samplewright.check.render, written by the pipeline)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import samplewright as sw
from samplewright.check.render import CAUTION, _ks_distance, check_candidates
from samplewright.pipeline.cli.workflow import write_check


def test_ks_distance_matches_scipy_for_a_continuous_model() -> None:
    """For a continuous model the distance equals scipy.stats.kstest's statistic."""
    x = np.random.default_rng(1).normal(2.0, 3.0, 400)
    s = sw.fit(x, "normal")
    # source: scipy.stats.kstest (two-sided D)
    assert _ks_distance(s, x) == pytest.approx(stats.kstest(x, s.cdf).statistic, abs=1e-15)


def test_ks_distance_of_counts_uses_step_functions() -> None:
    """On integer data the empirical pmf is at distance 0 and a Poisson fit close to it."""
    c = np.random.default_rng(2).poisson(2.0, 2000).astype(float)
    assert _ks_distance(sw.fit(c, "empirical"), c) == 0.0
    # common practice, no source: a correct model of Poisson draws is within 1.63/sqrt(n)
    assert _ks_distance(sw.fit(c, "poisson"), c) < 1.63 / np.sqrt(c.size)


def test_check_rows_report_the_tail_beyond_the_data() -> None:
    """The empirical sampler cannot exceed the data maximum; a fitted lognormal can."""
    x = np.random.default_rng(3).lognormal(1.0, 0.5, 300)
    rows = check_candidates(x, [sw.fit(x, "empirical"), sw.fit(x, "lognormal")])
    assert rows[0]["can_exceed_data_max"] is False and rows[0]["prob_above_data_max"] == 0.0
    assert rows[1]["can_exceed_data_max"] is True and rows[1]["prob_above_data_max"] > 0.0


def test_write_check_is_strict_json_with_markdown(tmp_path: Path) -> None:
    """The JSON has no NaN/Infinity even for an infinite-variance tail; Markdown carries the
    caution."""
    rng = np.random.default_rng(4)
    x = 1.0 + rng.pareto(1.5, 2000)  # generated heavy tail: variance infinite (xi ~ 0.67)
    data = tmp_path / "x.csv"
    data.write_text("v\n" + "\n".join(repr(float(v)) for v in x) + "\n")
    arts = []
    for method in ("spliced", "empirical"):
        path = tmp_path / f"{method}.parquet"
        s = sw.fit(x, method)
        sw.write_sampler(s, path, diagnostics=getattr(s, "diagnostics", {}))
        arts.append(path)
    out = tmp_path / "check.json"
    doc = write_check(data, arts, out=out, dataset="tail", column="v")
    text = out.read_text()
    assert "Infinity" not in text and "NaN" not in text
    assert json.loads(text) == json.loads(json.dumps(doc))
    md = out.with_suffix(".md").read_text()
    assert CAUTION in md and "tail threshold" in md


def test_censored_check_compares_with_kaplan_meier() -> None:
    """With censored data the check measures models against the Kaplan–Meier estimate."""
    from lifelines.datasets import load_waltons

    frame = load_waltons()  # source: lifelines' bundled Waltons fruit-fly lifetimes
    x = frame["T"].to_numpy(dtype=float)
    censored = frame["E"].to_numpy() == 0
    km = sw.fit(x, "kaplan_meier", censored=censored)
    weib = sw.fit(x, "weibull", censored=censored)
    rows = check_candidates(x, [km, weib], censored=censored)
    assert rows[0]["ks"] == pytest.approx(0.0, abs=1e-12)
    assert rows[0]["data_mean"] == pytest.approx(km.mean)
    # the naive ECDF of censored times would be a different reference
    naive = check_candidates(x, [km])[0]["ks"]
    assert naive > 0.0
    assert 0.0 < rows[1]["ks"] < 0.5


# --- the check as a decision: selection, goodness of fit, quantiles, other data, drift ---------


def _csv(path: Path, values: np.ndarray, name: str = "hours") -> Path:
    import pandas as pd

    pd.DataFrame({name: values}).to_csv(path, index=False)
    return path


def _fit_cli(run_cli, data: Path, method: str, out: Path) -> Path:
    code, _, err = run_cli("fit", data, "-c", "hours", "-m", method, "--out", out)
    assert code == 0, err
    return out


def test_markdown_says_which_candidate_was_selected_and_that_it_fails(
    tmp_path: Path, run_cli
) -> None:
    """A normal selected for skewed data: the summary names it first and says it fails."""
    x = np.random.default_rng(11).lognormal(0.0, 1.0, 300)  # invented skewed hours
    data = _csv(tmp_path / "d.csv", x)
    normal = _fit_cli(run_cli, data, "normal", tmp_path / "normal.parquet")
    lognormal = _fit_cli(run_cli, data, "lognormal", tmp_path / "lognormal.parquet")
    sel = tmp_path / "sel.parquet"
    assert run_cli("select", normal, lognormal, "--by", "first", "--out", sel)[0] == 0
    out = tmp_path / "check.json"
    code, _, err = run_cli(
        "check", data, "-c", "hours", normal, lognormal, "--selected", sel, "--out", out
    )
    assert code == 0, err
    doc = json.loads(out.read_text())
    # source: scipy.stats.goodness_of_fit rejects the normal for these data as well
    ref = stats.goodness_of_fit(stats.norm, x, n_mc_samples=99, rng=np.random.default_rng(3))
    assert ref.pvalue <= 0.01
    assert doc["selected"]["label"] == "normal" and doc["selected"]["poor_fit"] is True
    assert doc["candidates"][0]["gof"]["source"] == "check"
    md = out.with_suffix(".md").read_text()
    head = md.split("## Warnings")[0]
    assert "**Selected: normal**" in head and "listed first" in head
    assert "**It fails a goodness-of-fit test at p ≤ 0.01**" in head
    assert any(w["kind"] == "poor_fit" for w in doc["warnings"])


def test_a_named_choice_is_recorded_as_named_by_the_analyst(tmp_path: Path, run_cli) -> None:
    """`choose: <label>` plans rule 'named'; the selection and the summary say so."""
    from samplewright.pipeline.plan import Plan

    x = np.random.default_rng(12).gamma(3.0, 2.0, 200)
    data = _csv(tmp_path / "d.csv", x)
    cfg = {
        "store": str(tmp_path / "store"),
        "datasets": {
            "pumps": {
                "path": str(data),
                "column": "hours",
                "methods": ["gamma", "empirical"],
                "choose": "empirical",
            }
        },
    }
    assert Plan(cfg).select_rule("pumps") == "named"
    gamma = _fit_cli(run_cli, data, "gamma", tmp_path / "gamma.parquet")
    emp = _fit_cli(run_cli, data, "empirical", tmp_path / "empirical.parquet")
    sel = tmp_path / "sel.parquet"
    assert run_cli("select", emp, gamma, "--by", "named", "--out", sel)[0] == 0
    assert sw.read_metadata(sel)["diagnostics"]["selection"]["rule"] == "named"
    out = tmp_path / "c.json"
    assert (
        run_cli("check", data, "-c", "hours", gamma, emp, "--selected", sel, "--out", out)[0] == 0
    )
    doc = json.loads(out.read_text())
    assert (doc["selected"]["label"], doc["selected"]["reason"]) == (
        "empirical",
        "named by the analyst",
    )
    assert "named by the analyst" in out.with_suffix(".md").read_text()


def test_the_empirical_row_uses_the_data_rows_quantile_definition() -> None:
    """Data quantiles are numpy's inverted_cdf, so an empirical sampler's row equals them."""
    x = np.random.default_rng(13).gamma(2.0, 3.0, 101)
    rows = check_candidates(x, [sw.fit(x, "empirical")])
    # source: numpy.quantile(method="inverted_cdf"), Hyndman & Fan (1996) definition 1
    expected = np.quantile(x, [0.5, 0.9, 0.99, 0.999], method="inverted_cdf")
    assert list(rows[0]["data_quantiles"].values()) == expected.tolist()
    assert rows[0]["quantiles"] == rows[0]["data_quantiles"]
    # integer weights behave like repeated rows, on both sides
    w = np.random.default_rng(14).integers(1, 4, x.size).astype(float)
    rw = check_candidates(x, [sw.fit(x, "empirical", weights=w)], weights=w)
    rep = np.quantile(np.repeat(x, w.astype(int)), [0.5, 0.9, 0.99, 0.999], method="inverted_cdf")
    assert list(rw[0]["data_quantiles"].values()) == rep.tolist()
    assert rw[0]["quantiles"] == rw[0]["data_quantiles"]


def test_check_refuses_a_sampler_fitted_to_other_data(tmp_path: Path, run_cli) -> None:
    """A candidate whose recorded fingerprint is not the data's is refused, or flagged."""
    rng = np.random.default_rng(15)
    a = _csv(tmp_path / "a.csv", rng.gamma(2.0, 3.0, 100))
    b = _csv(tmp_path / "b.csv", rng.gamma(2.0, 3.0, 100))
    fitted_a = _fit_cli(run_cli, a, "gamma", tmp_path / "gamma_a.parquet")
    out = tmp_path / "c.json"
    code, _, err = run_cli("check", b, "-c", "hours", fitted_a, "--out", out)
    assert code == 2 and "gamma was fitted to other data" in err and not out.exists()
    code, _, err = run_cli("check", b, "-c", "hours", fitted_a, "--out", out, "--allow-other-data")
    assert code == 0
    doc = json.loads(out.read_text())
    assert doc["fingerprint"]["candidates"][0]["matches"] is False
    assert any("fitted to other data" in w["message"] for w in doc["warnings"])
    # the data it was fitted to pass
    assert run_cli("check", a, "-c", "hours", fitted_a, "--out", out)[0] == 0


@pytest.mark.slow
def test_check_writes_the_report_page_with_units(tmp_path: Path, run_cli) -> None:
    """--html writes a self-contained page labelled with the units, and its numbers as JSON."""
    x = np.random.default_rng(16).gamma(2.0, 3.0, 200)
    data = _csv(tmp_path / "d.csv", x)
    gamma = _fit_cli(run_cli, data, "gamma", tmp_path / "gamma.parquet")
    emp = _fit_cli(run_cli, data, "empirical", tmp_path / "empirical.parquet")
    sel = tmp_path / "sel.parquet"
    run_cli("select", gamma, emp, "--by", "aic", "--out", sel)
    html = tmp_path / "page.html"
    code, _, err = run_cli(
        "check",
        data,
        "-c",
        "hours",
        gamma,
        emp,
        "--selected",
        sel,
        "--units",
        "hours",
        "--dataset",
        "pumps",
        "--out",
        tmp_path / "c.json",
        "--html",
        html,
    )
    assert code == 0, err
    page = html.read_text()
    assert "values in hours" in page and "<script" not in page and "http" not in page.lower()
    assert page.count("data:image/png;base64,") >= 4
    nums = json.loads(html.with_suffix(".json").read_text())
    assert nums["selected"] == "gamma" and nums["units"] == "hours"
    # source: numpy.quantile(method="inverted_cdf") for the data's own row
    q99 = np.quantile(x, 0.99, method="inverted_cdf")
    assert nums["data"]["quantiles"]["0.99"] == pytest.approx(q99, rel=1e-12)
    assert nums["candidates"][1]["quantiles"] == nums["data"]["quantiles"]


def test_check_records_the_previous_selection_and_what_moved(tmp_path: Path, run_cli) -> None:
    """With a store, the check finds the dataset's previous selection and measures the change."""
    rng = np.random.default_rng(17)
    store = tmp_path / "store"
    sel_dir = store / "selected" / "pumps"
    sel_dir.mkdir(parents=True)
    old_data = _csv(tmp_path / "old.csv", rng.normal(10.0, 2.0, 400))
    new_data = _csv(tmp_path / "new.csv", rng.normal(11.0, 2.0, 400))
    old_fit = _fit_cli(run_cli, old_data, "normal", tmp_path / "old.parquet")
    new_fit = _fit_cli(run_cli, new_data, "normal", tmp_path / "new.parquet")
    old_sel, new_sel = sel_dir / "a0.parquet", sel_dir / "b1.parquet"
    assert run_cli("select", old_fit, "--by", "first", "--out", old_sel)[0] == 0
    assert run_cli("select", new_fit, "--by", "first", "--out", new_sel)[0] == 0
    out = tmp_path / "c.json"
    code, _, err = run_cli(
        "check",
        new_data,
        "-c",
        "hours",
        new_fit,
        "--selected",
        new_sel,
        "--store",
        store,
        "--dataset",
        "pumps",
        "--out",
        out,
        "--gof-resamples",
        "0",
    )
    assert code == 0, err
    doc = json.loads(out.read_text())
    assert doc["previous"]["path"] == str(old_sel) and doc["previous"]["data_changed"] is True
    a, b = sw.load_sampler(old_sel), sw.load_sampler(new_sel)
    grid = np.linspace(0.0, 25.0, 200001)
    # source: scipy.stats.norm.cdf of the two fitted normals on a fine grid
    ks = np.max(
        np.abs(
            stats.norm.cdf(grid, a.params["mu"], a.params["sigma"])
            - stats.norm.cdf(grid, b.params["mu"], b.params["sigma"])
        )
    )
    assert doc["drift"]["ks_distance"] == pytest.approx(ks, abs=2e-4)
    assert doc["drift"]["flagged"] is bool(ks > 0.05) is True
    assert doc["drift"]["mean"] == {"old": a.mean, "new": b.mean}
    assert "## Since the previous selection" in out.with_suffix(".md").read_text()


def test_kaplan_meier_band_matches_lifelines() -> None:
    """The report's Kaplan–Meier band equals lifelines' log(−log) Greenwood interval."""
    from lifelines import KaplanMeierFitter
    from lifelines.datasets import load_waltons

    from samplewright.check.report_inputs import kaplan_meier_band

    frame = load_waltons()  # source: lifelines' bundled Waltons fruit-fly lifetimes
    t, e = frame["T"].to_numpy(float), frame["E"].to_numpy() == 1
    ref = kaplan_meier_band(t, ~e)
    kmf = KaplanMeierFitter().fit(t, e)
    # source: lifelines KaplanMeierFitter (survival_function_, confidence_interval_)
    surv = kmf.survival_function_.iloc[:, 0]
    ci = kmf.confidence_interval_
    for x, f, lo, hi in zip(ref.x, ref.cdf, ref.low, ref.high, strict=True):
        assert f == pytest.approx(1.0 - surv.loc[x], abs=1e-12)
        if 0.0 < f < 1.0:
            assert hi == pytest.approx(1.0 - ci.loc[x].iloc[0], abs=1e-9)
            assert lo == pytest.approx(1.0 - ci.loc[x].iloc[1], abs=1e-9)


def test_report_of_a_drawn_cdf_needs_no_data(tmp_path: Path, run_cli) -> None:
    """A knots sampler gets its page without data: no data row, no Q–Q picture, no error."""
    knots = tmp_path / "wait.parquet"
    code, _, err = run_cli("knots", "--points", "2:0,24:0.6,60:0.9,168:1", "--out", knots)
    assert code == 0, err
    page = tmp_path / "wait.html"
    code, _, err = run_cli("report", knots, "--selected", knots, "--dataset", "wait", "--out", page)
    assert code == 0, err
    text = page.read_text()
    assert "No data were given" in text and "Q–Q plot" not in text
    nums = json.loads(page.with_suffix(".json").read_text())
    assert nums["data"] is None and nums["selected"] == "knots"
    # source: the drawn CDF itself: 60 % of draws at or below 24 h, linear between knots
    assert nums["candidates"][0]["quantiles"]["0.5"] == pytest.approx(2 + 22 * 0.5 / 0.6)


@pytest.mark.slow
def test_report_shows_replicate_and_data_intervals(tmp_path: Path, run_cli) -> None:
    """Percentile intervals over the replicates go to the selected candidate's figures; the
    data's bootstrap intervals go to the empirical candidate's."""
    x = np.random.default_rng(18).gamma(2.0, 3.0, 150)
    data = _csv(tmp_path / "d.csv", x)
    gamma = _fit_cli(run_cli, data, "gamma", tmp_path / "gamma.parquet")
    emp = _fit_cli(run_cli, data, "empirical", tmp_path / "empirical.parquet")
    reps = sw.fit_replicates(x, "gamma", n_replicates=40, rng=np.random.default_rng(1))
    rep_path = tmp_path / "reps.parquet"
    sw.write_sampler(reps, rep_path)
    intervals = tmp_path / "iv.json"
    code, _, err = run_cli(
        "interval",
        data,
        "-c",
        "hours",
        "--statistic",
        "quantile:0.9",
        "--method",
        "percentile",
        "--resamples",
        "199",
        "--seed",
        "3",
        "--out",
        intervals,
    )
    assert code == 0, err
    page = tmp_path / "p.html"
    code, _, err = run_cli(
        "report",
        gamma,
        emp,
        "--data",
        data,
        "-c",
        "hours",
        "--selected",
        gamma,
        "--replicates",
        rep_path,
        "--intervals",
        intervals,
        "--out",
        page,
    )
    assert code == 0, err
    nums = json.loads(page.with_suffix(".json").read_text())
    ci = nums["candidates"][0]["quantile_intervals"]["0.99"]
    # source: numpy percentiles of the replicates' own quantiles (percentile interval)
    q = np.array([reps.replicate(i).quantile(0.99) for i in range(reps.n_replicates)])
    assert (ci["low"], ci["high"]) == pytest.approx(tuple(np.quantile(q, [0.025, 0.975])))
    data_ci = nums["candidates"][1]["quantile_intervals"]["0.9"]
    row = json.loads(intervals.read_text())["intervals"][0]
    assert (data_ci["low"], data_ci["high"]) == (row["low"], row["high"])
    assert "95%: [" in page.read_text()


def test_report_rule_arguments_follow_the_dataset(tmp_path: Path) -> None:
    """Data datasets pass their check summary, snapshot and units; a drawn CDF passes none."""
    from samplewright.pipeline.plan import Plan
    from samplewright.pipeline.report_args import label_args, optional_input, report_args

    data = _csv(tmp_path / "d.csv", np.random.default_rng(19).gamma(2.0, 3.0, 50))
    knots = tmp_path / "k.csv"
    knots.write_text("x,p\n0,0\n5,0.5\n9,1\n")
    plan = Plan(
        {
            "store": str(tmp_path / "store"),
            "datasets": {
                "hours": {
                    "path": str(data),
                    "column": "hours",
                    "units": "hours",
                    "methods": ["gamma", "empirical"],
                    "choose": "empirical",
                },
                "wait": {"knots": str(knots)},
            },
        }
    )
    args = report_args(plan, "hours")
    assert f"--check {plan.check_path('hours')}" in args
    assert f"--data {plan.snapshot_path('hours')}" in args and "--units hours" in args
    assert label_args(plan, "hours") == "--label empirical --label gamma"  # named one first
    assert report_args(plan, "wait") == ""
    assert optional_input(plan, "data", "wait") == [] == optional_input(plan, "check", "wait")
    assert optional_input(plan, "data", "hours", lambda p: ("wrapped", p)) == [
        ("wrapped", plan.snapshot_path("hours"))
    ]
    with pytest.raises(ValueError, match="what"):
        optional_input(plan, "nothing", "hours")


# --- texts that said something untrue, intervals for every candidate, elicited points ---------


def test_failed_refits_are_said_to_be_left_out() -> None:
    """Failed refits are described as gof.py treats them: left out of the p-values."""
    from samplewright.check.report_model import Candidate, CheckReportInput, FitCheck
    from samplewright.check.report_numbers import derive_numbers

    x = np.random.default_rng(31).gamma(2.0, 3.0, 100)
    c = Candidate("weibull", sw.fit(x, "weibull"), fit_checks=(FitCheck("ks", 0.05, 0.4, 99, 15),))
    found = [w.message for w, _ in derive_numbers(CheckReportInput("d", (c,))).warnings]
    # source: samplewright.check.gof: p = (1 + #{T* >= T}) / (1 + B_ok) over successful refits,
    # unreliable above 10% failures (common practice, no outside source)
    assert found == [
        "weibull: 15 of 99 bootstrap refits failed; they are left out of its p-values (computed "
        "over the 84 that succeeded), which assumes the failures are unrelated to how well the "
        "model fits; more than 10% failed, so those p-values are unreliable"
    ]


def test_a_fit_not_rejected_is_not_said_to_pass(tmp_path: Path, run_cli) -> None:
    """The summary says what was tested and at which level, not that the fit 'passes'."""
    x = np.random.default_rng(32).lognormal(1.0, 0.5, 200)
    data = _csv(tmp_path / "d.csv", x)
    ln = _fit_cli(run_cli, data, "lognormal", tmp_path / "lognormal.parquet")
    sel = tmp_path / "sel.parquet"
    assert run_cli("select", ln, "--by", "first", "--out", sel)[0] == 0
    out = tmp_path / "c.json"
    assert run_cli("check", data, "-c", "hours", ln, "--selected", sel, "--out", out)[0] == 0
    doc = json.loads(out.read_text())
    # source: scipy.stats.goodness_of_fit does not reject the lognormal for lognormal data
    ref = stats.goodness_of_fit(
        stats.lognorm, x, known_params={"loc": 0}, n_mc_samples=99, rng=np.random.default_rng(3)
    )
    assert ref.pvalue > 0.01 and doc["selected"]["poor_fit"] is False
    head = out.with_suffix(".md").read_text().split("## The tail")[0]
    assert "passes" not in head
    assert "Tested: the distance to the data's empirical CDF (KS, AD, CvM)" in head
    assert "None of these p-values is at or below 0.01" in head


def test_report_of_other_data_names_an_option_that_exists(tmp_path: Path, run_cli) -> None:
    """The report's refusal of another dataset's sampler names its own --allow-other-data, and
    following it writes the page (the check command has the same option)."""
    rng = np.random.default_rng(33)
    a = _csv(tmp_path / "a.csv", rng.gamma(2.0, 3.0, 100))
    b = _csv(tmp_path / "b.csv", rng.gamma(2.0, 3.0, 100))
    fitted_a = _fit_cli(run_cli, a, "gamma", tmp_path / "gamma_a.parquet")
    page = tmp_path / "p.html"
    code, _, err = run_cli("report", fitted_a, "--data", b, "-c", "hours", "--out", page)
    assert code == 2 and "pass --allow-other-data to compare anyway" in err
    assert not page.exists()
    code, _, err = run_cli(
        "report", fitted_a, "--data", b, "-c", "hours", "--allow-other-data", "--out", page
    )
    assert code == 0, err
    assert page.is_file() and "other data" in page.read_text()
    code, _, err = run_cli(
        "check", b, "-c", "hours", fitted_a, "--allow-other-data", "--gof-resamples", "0",
        "--out", tmp_path / "c.json", "--html", tmp_path / "q.html",
    )  # fmt: skip
    assert code == 0, err
    assert (tmp_path / "q.html").is_file()


def test_every_candidate_gets_bootstrap_intervals_of_its_tail() -> None:
    """An empirical candidate's intervals are scipy's percentile bootstrap on the same
    resamples; a lognormal's parametric bootstrap is as wide as the delta method says."""
    from samplewright.check.candidate_intervals import candidate_intervals

    x = np.random.default_rng(34).lognormal(1.0, 0.6, 120)
    emp = candidate_intervals(sw.fit(x, "empirical"), values=x, rng=np.random.default_rng(5))
    assert emp is not None and emp.source == "nonparametric bootstrap"

    def q90(v: np.ndarray, axis: int) -> np.ndarray:
        return np.quantile(v, 0.9, method="inverted_cdf", axis=axis)

    # source: scipy.stats.bootstrap, percentile method, same seed (same resamples)
    ref = stats.bootstrap(
        (x,), q90, n_resamples=99, method="percentile", rng=np.random.default_rng(5)
    ).confidence_interval
    assert (emp.quantiles[0.9].low, emp.quantiles[0.9].high) == pytest.approx(
        (ref.low, ref.high), rel=1e-12
    )
    ln = sw.fit(x, "lognormal")
    par = candidate_intervals(ln, values=x, n_resamples=399, rng=np.random.default_rng(6))
    assert par is not None and par.source == "parametric bootstrap" and par.n_failed == 0
    s, z = ln.params["sigma"], stats.norm.ppf(0.99)
    # source: delta method for the normal MLE (from memory): var(mu) = s^2/n,
    # var(sigma) = s^2/(2n), so log Q(0.99) = mu + z sigma has sd s sqrt((1 + z^2/2) / n)
    sd = s * np.sqrt((1 + z * z / 2) / x.size)
    width = np.log(par.quantiles[0.99].high) - np.log(par.quantiles[0.99].low)
    assert width == pytest.approx(2 * 1.96 * sd, rel=0.2)
    lo, hi = par.tail_mean.low, par.tail_mean.high  # type: ignore[union-attr]
    assert lo < float(np.exp(ln.params["mu"] + s * z)) < hi  # the tail mean lies above Q(0.99)


@pytest.mark.slow
def test_check_and_page_show_intervals_for_every_candidate(tmp_path: Path, run_cli) -> None:
    """The summary records intervals for each candidate and the page shows them in the lead."""
    x = np.random.default_rng(35).gamma(2.0, 3.0, 300)
    data = _csv(tmp_path / "d.csv", x)
    arts = [_fit_cli(run_cli, data, m, tmp_path / f"{m}.parquet") for m in ("gamma", "spliced")]
    sel = tmp_path / "sel.parquet"
    assert run_cli("select", *arts, "--by", "first", "--out", sel)[0] == 0
    out, page = tmp_path / "c.json", tmp_path / "p.html"
    code, _, err = run_cli(
        "check", data, "-c", "hours", *arts, "--selected", sel, "--gof-resamples", "19",
        "--out", out, "--html", page,
    )  # fmt: skip
    assert code == 0, err
    doc = json.loads(out.read_text())
    sources = [r["intervals"]["source"] for r in doc["candidates"]]
    assert sources == ["parametric bootstrap", "parametric bootstrap of the tail"]
    nums = json.loads(page.with_suffix(".json").read_text())
    spliced = nums["candidates"][1]
    ci = spliced["quantile_intervals"]["0.99"]
    assert ci["low"] < spliced["quantiles"]["0.99"] < ci["high"]
    assert "The tail of every candidate" in page.read_text()
    assert "## The tail of every candidate" in out.with_suffix(".md").read_text()


def test_three_points_report_shows_the_elicited_points(tmp_path: Path, run_cli) -> None:
    """A three-point input's page draws its lowest, most likely and highest value on the CDF."""
    art = tmp_path / "lead.parquet"
    assert run_cli("elicit", "--three-points", "12,20,55", "--out", art)[0] == 0
    page = tmp_path / "lead.html"
    code, _, err = run_cli("report", art, "--selected", art, "--units", "days", "--out", page)
    assert code == 0, err
    text = page.read_text()
    assert "Elicited points on the curve" in text and "most likely value 20" in text
    # source: scipy.stats.beta with the PERT shapes of Malcolm et al. (1959)
    at_mode = stats.beta(1 + 4 * 8 / 43, 1 + 4 * 35 / 43).cdf(8 / 43)
    assert f"where the curve is at {at_mode:.3f}" in text
    assert "Grey: the data" not in text  # there are no data on this page


def test_report_rule_arguments_of_a_table_dataset(tmp_path: Path) -> None:
    """A dataset read as a table (truncation column) gets its check summary too."""
    import pandas as pd

    from samplewright.pipeline.plan import Plan
    from samplewright.pipeline.report_args import check_args, checks, optional_input, report_args

    rng = np.random.default_rng(36)
    path = tmp_path / "claims.csv"
    pd.DataFrame({"damage": 2000.0 + rng.gamma(2.0, 900.0, 60), "deductible": 2000.0}).to_csv(
        path, index=False
    )
    plan = Plan(
        {
            "store": str(tmp_path / "store"),
            "datasets": {
                "claims": {
                    "path": str(path),
                    "column": "damage",
                    "truncation": "deductible",
                    "units": "EUR",
                    "methods": ["lognormal", "kaplan_meier"],
                }
            },
        }
    )
    assert plan.is_table("claims") and checks(plan, "claims")
    assert f"--check {plan.check_path('claims')}" in report_args(plan, "claims")
    assert optional_input(plan, "check", "claims") == [plan.check_path("claims")]
    assert check_args(plan, "claims") == "--units EUR"
