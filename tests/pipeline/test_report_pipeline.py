"""Check reports under real Snakemake: one page per dataset, `--report`, drift, store tools.

Each case restores the pipeline's state (data, config) before it ends.
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest
import yaml

from samplewright.pipeline.report_args import checks, joint_report_path

from .conftest import BIN, dry, nothing_to_do, snakemake

pytestmark = pytest.mark.pipeline


def _plan(work: Path):
    import os

    from samplewright.pipeline.plan import Plan

    here = os.getcwd()
    os.chdir(work)
    try:
        return Plan(yaml.safe_load((work / "config.yaml").read_text())["samplewright"])
    finally:
        os.chdir(here)


def test_every_dataset_has_its_report_page(pipeline: Path) -> None:
    """A full run wrote one self-contained page (and its JSON) per dataset, data or not."""
    plan = _plan(pipeline)
    for name in plan.datasets:
        page = pipeline / plan.report_path(name)
        assert page.is_file(), name
        text = page.read_text()
        assert "<script" not in text and "samplewright check report" in text
        assert re.search(rf"<h1>{name}</h1>", text)
        doc = json.loads(page.with_suffix(".json").read_text())
        assert doc["dataset"] == name and doc["selected"] is not None
        if checks(plan, name):
            summary = json.loads((pipeline / plan.check_path(name)).read_text())
            assert summary["selected"]["label"] == doc["selected"]
    # the analyst named the spliced sampler for repair_hours (config.yaml: choose: spliced)
    summary = json.loads((pipeline / plan.check_path("repair_hours")).read_text())
    assert summary["selected"]["reason"] == "named by the analyst"


def test_snakemake_report_gathers_every_page(pipeline: Path, tmp_path: Path) -> None:
    """`snakemake --report` builds one report with a category per dataset and each page."""
    out = tmp_path / "report.html"
    run = snakemake(pipeline, "--report", str(out))
    assert run.returncode == 0, run.out[-3000:]
    text = out.read_text()
    for name in _plan(pipeline).datasets:
        assert name in text, name
    assert "Check report of dataset" in text  # the caption, rendered per page
    assert text.count("check report") >= len(_plan(pipeline).datasets)


def test_changed_data_records_the_previous_selection_and_drift(pipeline: Path) -> None:
    """New cost data: the new check names the previous selection and what moved; reverting
    the data finds the earlier artifacts again (nothing to do)."""
    data = pipeline / "data" / "repairs.csv"
    original = data.read_bytes()
    plan = _plan(pipeline)
    old_selected = plan.selected_path("crew_hour_cost")
    try:
        frame = pd.read_csv(data)
        frame["cost_per_crew_hour"] = frame["cost_per_crew_hour"] * 1.15
        frame.to_csv(data, index=False)
        run = snakemake(pipeline)
        assert run.returncode == 0, run.out[-3000:]
        new = _plan(pipeline)
        summary = json.loads((pipeline / new.check_path("crew_hour_cost")).read_text())
        assert summary["previous"]["path"] == old_selected
        assert summary["previous"]["data_changed"] is True
        drift = summary["drift"]
        # 15% dearer: every key quantile and the mean move up by 15% (same family refitted)
        for pair in drift["quantiles"].values():
            assert pair["new"] == pytest.approx(1.15 * pair["old"], rel=1e-6)
        assert drift["flagged"] is True and drift["ks_distance"] > 0.05
        page = (pipeline / new.report_path("crew_hour_cost")).read_text()
        assert "Since the previous selection" in page
        # the store tools see the older version as no longer referenced
        listing = subprocess.run(
            [str(BIN / "samplewright"), "store", "list", "--json", "--dataset", "crew_hour_cost"],
            cwd=pipeline,
            capture_output=True,
            text=True,
            check=True,
        )
        rows = {r["path"]: r for r in json.loads(listing.stdout)}
        assert rows[old_selected]["referenced"] is False
        assert rows[new.selected_path("crew_hour_cost")]["referenced"] is True
        dry_prune = subprocess.run(
            [str(BIN / "samplewright"), "store", "prune", "--keep", "0", "--json"],
            cwd=pipeline,
            capture_output=True,
            text=True,
            check=True,
        )
        assert old_selected in json.loads(dry_prune.stdout)["files"]
        assert Path(pipeline / old_selected).is_file()  # a dry run deletes nothing
    finally:
        data.write_bytes(original)
    assert nothing_to_do(dry(pipeline))


def test_a_method_that_cannot_fit_fails_at_planning(pipeline: Path) -> None:
    """A lognormal for counts with zeros is refused while planning, naming the reason."""
    path = pipeline / "config.yaml"
    original = path.read_text()
    cfg = yaml.safe_load(original)
    ds = cfg["samplewright"]["datasets"]["daily_breaks"]
    ds["methods"] = [*ds["methods"], {"method": "gamma", "label": "gamma"}]
    ds["choose"] = "empirical_pmf"
    path.write_text(yaml.safe_dump(cfg, sort_keys=False))
    try:
        run = snakemake(pipeline, "-n")
        assert run.returncode != 0
        assert "samplewright.datasets.daily_breaks.methods[3]: method 'gamma' cannot fit" in run.out
        assert "needs every value > 0" in run.out
        assert "rule sw_fit" not in run.out
    finally:
        path.write_text(original)
    assert nothing_to_do(dry(pipeline))


def test_store_verify_passes_on_the_pipeline_store(pipeline: Path) -> None:
    """Every artifact and column snapshot the workflow wrote verifies."""
    proc = subprocess.run(
        [sys.executable, "-m", "samplewright", "store", "verify"],
        cwd=pipeline,
        capture_output=True,
        text=True,
        check=False,
    )
    assert proc.returncode == 0, proc.stdout[-2000:] + proc.stderr
    assert "FAIL" not in proc.stdout


def test_incomplete_datasets_are_checked_against_their_nonparametric_estimate(
    pipeline: Path,
) -> None:
    """The claims (per-policy deductibles, limits) and the censored pump lives get a check
    summary whose parametric candidates are tested by the bootstrap that redoes the censoring
    and truncation, against Kaplan–Meier with entry times; the claims page compares given
    above the smallest deductible."""
    plan = _plan(pipeline)
    claims = json.loads((pipeline / plan.check_path("damage_claims")).read_text())
    # the invented deductibles are 250, 500, 1000 or 2500 EUR (make_data.py): all rows truncated
    assert claims["reference"] == "kaplan_meier" and claims["conditioned_on"] == 250.0
    tested = {r["label"]: r["gof"] for r in claims["candidates"] if r["gof"]}
    assert {"lognormal", "weibull"} <= set(tested)
    assert all(
        g["test"] == "incomplete" and g["pvalues"]["ks"] is not None for g in tested.values()
    )
    assert all(r["intervals"] for r in claims["candidates"])
    pumps = json.loads((pipeline / plan.check_path("pump_life")).read_text())
    assert pumps["candidates"][0]["gof"]["test"] == "incomplete"
    md = (pipeline / plan.check_path("pump_life")).with_suffix(".md").read_text()
    assert "bootstrap tests apply to the parametric families" not in md
    page = json.loads(
        (pipeline / plan.report_path("damage_claims")).with_suffix(".json").read_text()
    )
    assert page["given_above"]["threshold"] == 250.0
    assert page["data"]["label"] == "Kaplan–Meier (nonparametric)"


def test_joint_input_page_is_built_by_its_rule(pipeline: Path) -> None:
    """The joint input's page (rule sw_joint_report) is made on request, with rank correlations."""
    plan = _plan(pipeline)
    path = joint_report_path(plan, "repair_cost")
    run = snakemake(pipeline, path)
    assert run.returncode == 0, run.out[-3000:]
    text = (pipeline / path).read_text()
    assert "samplewright joint input report" in text and "<script" not in text
    doc = json.loads((pipeline / path).with_suffix(".json").read_text())
    assert doc["joint"] == "repair_cost" and doc["rank_correlations"][0]["columns"] == [
        "hours",
        "cost_per_crew_hour",
    ]
