"""The report page of a joint input: `samplewright report` given the joint artifact."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import samplewright as sw
from samplewright.core.randomness import stream_rng


@pytest.fixture(scope="module")
def joint_files(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    """A table snapshot of invented repair hours and hourly costs, and its joint artifact."""
    from samplewright.pipeline.cli import main

    root = tmp_path_factory.mktemp("joint")
    rng = np.random.default_rng(41)
    hours = rng.gamma(2.0, 3.0, 300)
    cost = 60.0 + 4.0 * hours + rng.normal(0.0, 8.0, 300)  # longer repairs cost more per hour
    data = root / "repairs.csv"
    pd.DataFrame({"hours": hours, "cost": cost}).to_csv(data, index=False)
    snap = root / "snap.parquet"
    assert main(["snapshot-table", str(data), "--columns", "hours,cost", "--out", str(snap)]) == 0
    art = root / "joint.parquet"
    args = ["fit-joint", str(snap), "--columns", "hours,cost", "--marginal", "hours=gamma"]
    args += ["--coupling", "gaussian_copula", "--out", str(art)]
    assert main(args) == 0
    return snap, art


def test_report_writes_the_joint_page(
    joint_files: tuple[Path, Path], tmp_path: Path, run_cli
) -> None:
    """The report command given a joint artifact writes its page: scatter, rank correlations
    of the data and of draws seeded by the artifact's content hash."""
    snap, art = joint_files
    page = tmp_path / "repair_cost.html"
    code, _, err = run_cli("report", art, "--data", snap, "--dataset", "repair_cost", "--out", page)
    assert code == 0, err
    text = page.read_text()
    assert "samplewright joint input report" in text and "<script" not in text
    assert "Data rows over the joint draws" in text and text.count("data:image/png;base64,") == 3
    doc = json.loads(page.with_suffix(".json").read_text())
    frame = pd.read_parquet(snap)
    # source: scipy.stats.spearmanr of the data rows and of the draws shown
    rd = stats.spearmanr(frame["hours"], frame["cost"]).statistic
    joint = sw.load_sampler(art)
    draws = joint.draw(4000, rng=stream_rng(0, joint.metadata["content_hash"], "report"))
    rs = stats.spearmanr(draws[:, 0], draws[:, 1]).statistic
    pair = doc["rank_correlations"][0]
    assert pair["columns"] == ["hours", "cost"]
    assert pair["data"] == pytest.approx(rd, abs=1e-12)
    assert pair["draws"] == pytest.approx(rs, abs=1e-12)
    # source: scipy.stats.gamma.ppf at the gamma marginal's parameters
    g = joint.marginal("hours")
    q99 = stats.gamma(g.params["shape"], scale=g.params["scale"]).ppf(0.99)
    assert doc["marginals"][0]["quantiles"]["0.99"] == pytest.approx(q99, rel=1e-10)
    # the same artifact gives the same page
    again = tmp_path / "again.html"
    assert run_cli("report", art, "--data", snap, "--out", again)[0] == 0
    strip = re.compile(r"<title>.*?</title>|<h1>.*?</h1>")
    assert strip.sub("", again.read_text()) == strip.sub("", text)


def test_joint_page_uses_given_draws_and_warns_about_a_correlation_gap(
    joint_files: tuple[Path, Path], tmp_path: Path
) -> None:
    """Stored draws are used as given; independent draws are flagged against correlated data."""
    from samplewright.pipeline.cli.check_files import write_report

    snap, art = joint_files
    frame = pd.read_parquet(snap)
    rng = np.random.default_rng(3)
    independent = pd.DataFrame(
        {"hours": rng.permutation(frame["hours"].to_numpy()), "cost": frame["cost"].to_numpy()}
    )
    draws = tmp_path / "draws.parquet"
    independent.to_parquet(draws)
    page = tmp_path / "p.html"
    write_report([art], out=page, data_path=snap, dataset="repair_cost", draws=draws)
    doc = json.loads(page.with_suffix(".json").read_text())
    # source: scipy.stats.spearmanr of the given draws
    rs = stats.spearmanr(independent["hours"], independent["cost"]).statistic
    assert doc["rank_correlations"][0]["draws"] == pytest.approx(rs, abs=1e-12)
    assert any("rank correlation" in w["message"] for w in doc["warnings"])
    assert doc["n_draws"] == len(independent)


def test_joint_page_needs_its_table(
    joint_files: tuple[Path, Path], tmp_path: Path, run_cli
) -> None:
    """A joint artifact without --data, or with other candidates, is refused in one line."""
    snap, art = joint_files
    code, _, err = run_cli("report", art, "--out", tmp_path / "p.html")
    assert code == 2 and "a joint input's page takes its one joint artifact and --data" in err


def test_joint_report_paths_and_patterns(tmp_path: Path) -> None:
    """The joint page lives in the reports folder under its own key; the dataset report rule's
    pattern matches dataset names only, so the two rules never compete for a page."""
    from samplewright.pipeline.plan import Plan
    from samplewright.pipeline.report_args import (
        dataset_report_pattern,
        joint_report_key,
        joint_report_path,
    )

    data = tmp_path / "r.csv"
    pd.DataFrame({"hours": [1.0, 2.0, 3.5, 4.0, 7.0, 9.0], "cost": [5.0, 7, 6, 9, 12, 15]}).to_csv(
        data, index=False
    )
    plan = Plan(
        {
            "store": str(tmp_path / "store"),
            "datasets": {"hours": {"path": str(data), "column": "hours", "methods": ["gamma"]}},
            "joint": {
                "repair_cost": {
                    "path": str(data),
                    "columns": {"hours": "gamma", "cost": "empirical"},
                }
            },
        }
    )
    path = joint_report_path(plan, "repair_cost")
    assert path == plan.layout.report("repair_cost", joint_report_key(plan, "repair_cost"))
    pattern = dataset_report_pattern(plan)
    assert re.fullmatch(pattern, "hours") and not re.fullmatch(pattern, "repair_cost")
