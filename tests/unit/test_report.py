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
