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
