"""The example pipeline's demo of the newer features: its data, its risk figures, its Snakefile.

The invented data must carry what the features are there for (serially dependent daily counts,
dependent hours and rates, truncated and capped claims, a spike of zeros), the risk step must
report its figures with Monte Carlo errors and parameter uncertainty, and `snakemake` alone must
work in a fresh copy (the friction point of a Snakefile that needed `make_data.py` first).
"""

from __future__ import annotations

import json
import math
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from scipy import stats

from .conftest import EXAMPLE, dry, nothing_to_do

pytestmark = pytest.mark.pipeline

DATA_FILES = ("repairs.csv", "breaks.parquet", "pumps.csv", "claims.csv", "spare_part_wait.yaml")
# a copy of the example as a new user gets it: no data, no store, no results
_SOURCES_ONLY = shutil.ignore_patterns(
    "data", "store", "results", "logs", ".snakemake", "__pycache__"
)


def _risk(work: Path) -> dict:
    found = sorted((work / "results").glob("*/season_risk.json"))
    assert len(found) == 1, found
    return json.loads(found[0].read_text())


def _figures(doc: object) -> list[dict]:
    """Every {value, mc_standard_error, mc_interval_95} entry anywhere in the document."""
    if isinstance(doc, dict):
        if "mc_standard_error" in doc:
            return [doc]
        return [f for v in doc.values() for f in _figures(v)]
    if isinstance(doc, list):
        return [f for v in doc for f in _figures(v)]
    return []


def test_snakemake_alone_makes_the_data_in_a_fresh_copy(tmp_path: Path) -> None:
    """A copy without data plans fine: the Snakefile makes the data first; a rerun rewrites none."""
    work = tmp_path / "fresh"
    shutil.copytree(EXAMPLE, work, ignore=_SOURCES_ONLY)
    assert not (work / "data").exists()
    run = dry(work)
    assert "make_data.py: wrote data/repairs.csv" in run.out
    stamps = {f: (work / "data" / f).stat().st_mtime_ns for f in DATA_FILES}
    again = dry(work)
    assert "make_data.py: wrote" not in again.out
    assert {f: (work / "data" / f).stat().st_mtime_ns for f in DATA_FILES} == stamps
    assert "python make_data.py" not in (work / "Snakefile").read_text()


def test_stale_data_are_rewritten_byte_for_byte(tmp_path: Path) -> None:
    """Data stamped by an older make_data.py are rewritten; the fixed seed gives the same bytes."""
    work = tmp_path / "stale"
    shutil.copytree(EXAMPLE, work, ignore=_SOURCES_ONLY)
    subprocess.run([sys.executable, "make_data.py"], cwd=work, check=True)
    before = {f: (work / "data" / f).read_bytes() for f in DATA_FILES}
    (work / "data" / "VERSION").write_text("0\n")
    proc = subprocess.run(
        [sys.executable, "make_data.py"], cwd=work, check=True, capture_output=True, text=True
    )
    assert proc.stderr.count("make_data.py: wrote") == len(DATA_FILES)
    assert {f: (work / "data" / f).read_bytes() for f in DATA_FILES} == before


def test_demo_data_carry_the_invented_dependences(pipeline: Path) -> None:
    """Hours and rate share a rank correlation near 0.5, daily counts are serially dependent,
    traffic control has a spike of zeros and every claim lies above its deductible."""
    repairs = pd.read_csv(pipeline / "data" / "repairs.csv")
    # source: scipy.stats.spearmanr; target 0.5 set in make_data.py (Gaussian copula)
    rho = stats.spearmanr(repairs["hours"], repairs["cost_per_crew_hour"]).statistic
    assert abs(rho - 0.5) < 0.03
    zeros = float((repairs["traffic_control_hours"] == 0).mean())
    assert 0.55 < zeros < 0.7  # 62 % set in make_data.py
    breaks = pd.read_parquet(pipeline / "data" / "breaks.parquet")
    daily = breaks.groupby(["winter", "day"])["breaks"].sum().to_numpy(dtype=float)
    lag1 = np.corrcoef(daily[:-1], daily[1:])[0, 1]  # common practice, no source
    assert lag1 > 0.3
    claims = pd.read_csv(pipeline / "data" / "claims.csv")
    assert (claims["damage_eur"] > claims["deductible_eur"]).all()
    capped = claims["at_limit"] == 1
    assert (
        capped.any() and (claims.loc[capped, "damage_eur"] == claims.loc[capped, "limit_eur"]).all()
    )
    assert (claims.loc[~capped, "damage_eur"] < claims.loc[~capped, "limit_eur"]).all()


def test_risk_figures_carry_monte_carlo_errors_rounded_to_them(pipeline: Path) -> None:
    """Every simulated figure has a standard error and an interval around it, and is rounded to
    the second significant digit of its error; the caution text is present."""
    doc = _risk(pipeline)
    figures = _figures(doc)
    assert len(figures) >= 20
    for f in figures:
        se = f["mc_standard_error"]
        lo, hi = f["mc_interval_95"]
        assert se >= 0 and lo <= f["value"] <= hi, f
        if se > 0:
            decimals = 1 - math.floor(math.log10(se))
            assert round(f["value"], decimals) == f["value"], f
    assert 0 < doc["prob_any_overload_day"]["value"] < 1
    assert "licensed" in doc["caution"] and "model" in doc["caution"]


def test_dependence_and_parameter_uncertainty_are_reported(pipeline: Path) -> None:
    """The joint draws keep the data's rank correlation, dependence raises the cost tail, the
    replicate worlds give intervals that agree with the data's own bootstrap interval, and the
    season cost figures carry those worlds' spread as a parameter interval."""
    doc = _risk(pipeline)
    repairs = pd.read_csv(pipeline / "data" / "repairs.csv")
    # source: scipy.stats.spearmanr of the data the joint sampler was fitted to
    rho = stats.spearmanr(repairs["hours"], repairs["cost_per_crew_hour"]).statistic
    dep = doc["dependence"]
    assert abs(dep["rank_correlation_of_joint_draws"] - rho) < 0.05
    # long repairs at higher rates: the dependent season cost lies above the independent one,
    # beyond the Monte Carlo error
    with_dep, without = doc["season_cost_eur"]["p90"], dep["season_cost_eur_independent"]["p90"]
    assert with_dep["mc_interval_95"][0] > without["mc_interval_95"][1]
    cfg = yaml.safe_load((pipeline / "config.yaml").read_text())
    pu = doc["parameter_uncertainty"]
    asked = cfg["samplewright"]["datasets"]["repair_hours"]["replicates"]["n_replicates"]
    assert 0.9 * asked <= pu["n_replicates"] <= asked  # failed refits are recorded, not kept
    for name in ("repair_hours_p99", "season_crew_hours_mean", "overload_days_mean"):
        lo, hi = pu[name]["interval_90"]
        assert lo < pu[name]["median"] < hi, name
    # the season cost figures carry their parameter interval beside their Monte Carlo error
    for name, fig in doc["season_cost_eur"].items():
        lo, hi = fig["parameter_interval_90"]
        assert lo < hi and lo <= fig["value"] <= hi, name
        worlds_lo, worlds_hi = pu["season_cost_eur"][name]["interval_90"]
        # same relative width as the worlds' own spread (rounding aside)
        assert (hi - lo) / fig["value"] == pytest.approx(
            (worlds_hi - worlds_lo) / pu["season_cost_eur"][name]["median"], abs=0.01
        ), name
    # two routes to the same uncertainty: refits of replicates vs the BCa interval of the data
    (q99,) = (r for r in doc["data_intervals"]["repair_hours"] if r["statistic"] == "quantile:0.99")
    lo, hi = pu["repair_hours_p99"]["interval_90"]
    assert lo < q99["high"] and q99["low"] < hi
    # source: numpy's sample quantile (its default definition) of the same column
    assert q99["estimate"] == pytest.approx(np.quantile(repairs["hours"], 0.99), rel=0.01)


def _daily_totals(work: Path) -> tuple[np.ndarray, np.ndarray, int]:
    """The demo data's district-day counts, their network totals (winters x days) and the
    number of districts."""
    breaks = pd.read_parquet(work / "data" / "breaks.parquet")
    totals = breaks.groupby(["winter", "day"])["breaks"].sum().unstack("day")
    return (
        breaks["breaks"].to_numpy(dtype=float),
        totals.to_numpy(dtype=float),
        int(breaks["district"].nunique()),
    )


def test_breaks_correlations_in_the_config_are_the_datas(pipeline: Path) -> None:
    """The two correlations the risk step couples districts and days with are the demo data's,
    measured as config.yaml describes."""
    # source: the invented demo data themselves (data/breaks.parquet), not an outside reference
    counts, totals, n = _daily_totals(pipeline)
    same_day = (totals.var(ddof=1) / (n * counts.var(ddof=1)) - 1.0) / (n - 1)
    next_day = np.corrcoef(totals[:, :-1].ravel(), totals[:, 1:].ravel())[0, 1]
    season = yaml.safe_load((pipeline / "config.yaml").read_text())["season"]
    assert season["breaks_same_day_correlation"] == pytest.approx(same_day, abs=5e-4)
    assert season["breaks_next_day_correlation"] == pytest.approx(next_day, abs=5e-4)


def test_simulated_daily_totals_have_the_datas_variance(pipeline: Path) -> None:
    """The simulated breaks per day over the network vary as much as the data's daily totals
    (within 5 %), about three times what independent districts give, with a P99 near theirs."""
    doc = _risk(pipeline)["breaks_dependence"]
    _, totals, _ = _daily_totals(pipeline)
    # source: the invented demo data themselves (variance 52.5, P99 37 in data/breaks.parquet)
    data_var, data_p99 = totals.var(ddof=1), np.quantile(totals, 0.99)
    sim = doc["network_breaks_per_day_sd"]
    # 5 %: the fitted count distribution's variance is ~1 % off the data's, the simulation's
    # error ~0.5 %; drawing districts independently is ~70 % off (common practice, no source)
    assert sim["value"] ** 2 == pytest.approx(data_var, rel=0.05)
    assert doc["network_breaks_per_day_sd_if_districts_independent"] ** 2 < 0.5 * data_var
    # a Gaussian copula's tail is a little lighter than the data's lognormal frost factor
    assert 0.85 * data_p99 <= doc["network_breaks_per_day_p99"]["value"] <= 1.1 * data_p99


def test_block_bootstrap_widens_the_interval_as_batch_means_predict(pipeline: Path) -> None:
    """The stationary block bootstrap's interval for the mean daily count is several times the
    iid one, as the batch-means estimate of the mean's standard error says it should be."""
    doc = _risk(pipeline)
    ratio = doc["data_intervals"]["daily_breaks_mean_block_over_iid_width"]
    x = pd.read_parquet(pipeline / "data" / "breaks.parquet")["breaks"].to_numpy(dtype=float)
    # batch means with one winter (24 districts x 120 days) per batch: common practice, no source
    m = 24 * 120
    k = x.size // m
    batch_se = x[: k * m].reshape(k, m).mean(axis=1).std(ddof=1) / math.sqrt(k)
    iid_se = x.std(ddof=1) / math.sqrt(x.size)
    assert ratio > 2.0
    assert 0.6 < ratio / (batch_se / iid_se) < 1.6


def test_changing_season_settings_reruns_only_the_risk_step(pipeline: Path) -> None:
    """A new season setting replans the risk step alone (under a new key); reverting finds the
    earlier results again."""
    path = pipeline / "config.yaml"
    original = path.read_text()
    cfg = yaml.safe_load(original)
    cfg["season"]["crews"] = int(cfg["season"]["crews"]) + 1
    path.write_text(yaml.safe_dump(cfg, sort_keys=False))
    try:
        assert dry(pipeline).jobs() == {("season_risk", ""), ("all", "")}
    finally:
        path.write_text(original)
    assert nothing_to_do(dry(pipeline))
