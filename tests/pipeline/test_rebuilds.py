"""Content-addressed rebuilds of the example pipeline, with real Snakemake (issue cases 1-10, 12).

Every case asserts the exact set of jobs a dry run plans, as (rule, dataset) pairs. Data files
are larger than 1 MB and Snakemake's checksum shortcut is off, so what is proved is samplewright's
mechanism. Each case restores the pipeline's state before it ends.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest
import yaml

from .conftest import ROOT, dry, nothing_to_do, snakemake

pytestmark = pytest.mark.pipeline

DATA_FILES = ("repairs.csv", "breaks.parquet", "pumps.csv", "claims.csv", "spare_part_wait.yaml")
ALL_DATASETS = (
    "repair_hours",
    "crew_hour_cost",
    "traffic_control_hours",
    "daily_breaks",
    "pump_life",
    "spare_part_wait",
    "damage_claims",
    "pump_lead_time",
    "pump_hire_rate",
)
JOINTS = ("repair_cost",)


def _example_config() -> dict:
    return yaml.safe_load((ROOT / "example_pipeline" / "config.yaml").read_text())["samplewright"]


def _below_fit(name: str) -> set[tuple[str, str]]:
    """Jobs of one dataset from its fit down: the fit rule of its kind, selection, draws, check
    (every dataset read from data, truncated and table datasets too), report, and the bootstrap
    intervals and replicates its config asks for."""
    ds = _example_config()["datasets"][name]
    if "knots" in ds:
        fit = "sw_knots"
    elif "quantiles" in ds or "three_points" in ds:
        fit = "sw_elicit"
    else:
        fit = "sw_fit"
    jobs = {(fit, name), ("sw_select", name), ("sw_draw", name), ("sw_report", name)}
    if fit == "sw_fit":
        jobs.add(("sw_check", name))
    for key, rule in (("intervals", "sw_intervals"), ("replicates", "sw_replicates")):
        if key in ds:
            jobs.add((rule, name))
    return jobs


def _dataset_chain(name: str) -> set[tuple[str, str]]:
    """Jobs that rebuild one (data) dataset from its snapshot down, plus the risk step."""
    methods = _example_config()["datasets"][name]["methods"]
    # one sw_fit job per method; the set keeps one (rule, dataset) pair
    assert methods
    return {("sw_snapshot", name), ("season_risk", ""), ("all", "")} | _below_fit(name)


def _set_config(work: Path, edit) -> str:
    path = work / "config.yaml"
    original = path.read_text()
    cfg = yaml.safe_load(original)
    edit(cfg)
    path.write_text(yaml.safe_dump(cfg, sort_keys=False))
    return original


def test_full_run_made_risk_outputs(pipeline: Path) -> None:
    """A full run wrote risk figures, plot and every selected sampler; reruns plan nothing."""
    risk = list((pipeline / "results").glob("*/season_risk.json"))
    assert len(risk) == 1
    doc = json.loads(risk[0].read_text())
    assert 0.0 <= doc["prob_any_overload_day"]["value"] <= 1.0
    cost = doc["season_cost_eur"]
    assert cost["p99"]["value"] > cost["p50"]["value"] > 0
    assert risk[0].with_suffix(".png").stat().st_size > 10_000
    for name in ALL_DATASETS:
        assert len(list((pipeline / "store" / "selected" / name).glob("*.parquet"))) == 1
    for f in ("repairs.csv", "breaks.parquet"):
        assert (pipeline / "data" / f).stat().st_size > 1_000_000  # beyond the 1 MB shortcut
    assert nothing_to_do(dry(pipeline))


def test_touching_data_plans_nothing(pipeline: Path) -> None:
    """Touching every data file (new mtime, same bytes) plans no job."""
    for f in DATA_FILES:
        os.utime(pipeline / "data" / f)
    assert nothing_to_do(dry(pipeline))


def test_identical_redownload_plans_nothing(pipeline: Path, tmp_path: Path) -> None:
    """Copying a file away and moving the copy back (new inode and mtime) plans no job."""
    for f in DATA_FILES:
        src = pipeline / "data" / f
        shutil.copyfile(src, tmp_path / f)
        src.unlink()
        shutil.move(tmp_path / f, src)
    assert nothing_to_do(dry(pipeline))


def test_csv_to_parquet_conversion_refits_nothing(pipeline: Path) -> None:
    """Converting repairs.csv to Parquet (same values, config updated) reruns only snapshots."""
    frame = pd.read_csv(pipeline / "data" / "repairs.csv")
    frame.to_parquet(pipeline / "data" / "repairs.parquet", index=False)

    def to_parquet(cfg: dict) -> None:
        for name in ("repair_hours", "crew_hour_cost"):
            cfg["samplewright"]["datasets"][name]["path"] = "data/repairs.parquet"

    original = _set_config(pipeline, to_parquet)
    try:
        run = dry(pipeline)
        assert run.jobs() == {("sw_snapshot", "repair_hours"), ("sw_snapshot", "crew_hour_cost")}
        assert snakemake(pipeline).returncode == 0
        assert nothing_to_do(dry(pipeline))
    finally:
        (pipeline / "config.yaml").write_text(original)
        (pipeline / "data" / "repairs.parquet").unlink()
    # back on the CSV: again only the snapshot jobs (their input path changed back)
    assert dry(pipeline).jobs() == {
        ("sw_snapshot", "repair_hours"),
        ("sw_snapshot", "crew_hour_cost"),
    }
    assert snakemake(pipeline).returncode == 0
    assert nothing_to_do(dry(pipeline))


def test_changing_an_unused_column_plans_nothing(pipeline: Path, tmp_path: Path) -> None:
    """Editing a column no sampler reads (district) changes the file but plans no job."""
    path = pipeline / "data" / "repairs.csv"
    backup = tmp_path / "repairs.csv"
    shutil.copy2(path, backup)
    frame = pd.read_csv(path, dtype=str, keep_default_na=False)
    frame.loc[0:99, "district"] = "D99"
    frame.to_csv(path, index=False)
    try:
        assert path.read_bytes() != backup.read_bytes()
        assert nothing_to_do(dry(pipeline))
    finally:
        shutil.copy2(backup, path)


def test_one_value_change_reruns_exactly_its_chain_and_revert_finds_old(
    pipeline: Path, tmp_path: Path
) -> None:
    """One changed value reruns its dataset's chain and the risk step; a revert plans nothing."""
    path = pipeline / "data" / "breaks.parquet"
    backup = tmp_path / "breaks.parquet"
    shutil.copy2(path, backup)
    frame = pd.read_parquet(path)
    frame.loc[5, "breaks"] = int(frame.loc[5, "breaks"]) + 3
    frame.to_parquet(path, index=False)
    try:
        assert dry(pipeline).jobs() == _dataset_chain("daily_breaks")
        assert snakemake(pipeline).returncode == 0
        assert nothing_to_do(dry(pipeline))
    finally:
        shutil.copyfile(backup, path)  # the original values, written anew (new mtime)
    assert nothing_to_do(dry(pipeline))


def test_changing_one_method_option_reruns_only_affected(pipeline: Path) -> None:
    """A new option on one candidate refits it alone; its selection, draws and risk step follow."""

    def shift(cfg: dict) -> None:
        methods = cfg["samplewright"]["datasets"]["crew_hour_cost"]["methods"]
        methods[0] = {"method": "auto", "options": {"criterion": "bic"}}

    original = _set_config(pipeline, shift)
    try:
        run = dry(pipeline)
        assert run.jobs() == {
            ("sw_fit", "crew_hour_cost"),
            ("sw_select", "crew_hour_cost"),
            ("sw_check", "crew_hour_cost"),
            ("sw_draw", "crew_hour_cost"),
            ("sw_report", "crew_hour_cost"),
            ("season_risk", ""),
            ("all", ""),
        }
        assert run.out.count("rule sw_fit:") == 1
    finally:
        (pipeline / "config.yaml").write_text(original)
    assert nothing_to_do(dry(pipeline))


def test_bumping_results_version_reruns_from_fitting_down(pipeline: Path, tmp_path: Path) -> None:
    """A samplewright whose RESULTS_VERSION is bumped replans every fit and everything below."""
    lib = tmp_path / "lib"
    shutil.copytree(
        ROOT / "lib" / "samplewright",
        lib / "samplewright",
        ignore=shutil.ignore_patterns("__pycache__"),
    )
    shutil.copytree(
        ROOT / "workflow_rules",
        lib / "samplewright" / "workflow_rules",
        ignore=shutil.ignore_patterns("__pycache__"),
    )
    wf = lib / "samplewright" / "core" / "versions.py"
    text = wf.read_text()
    assert "\nRESULTS_VERSION = " in text
    import samplewright.core.versions as current

    wf.write_text(
        text.replace(
            f"\nRESULTS_VERSION = {current.RESULTS_VERSION}\n",
            f"\nRESULTS_VERSION = {current.RESULTS_VERSION + 1}\n",
        )
    )
    run = dry(pipeline, env={"PYTHONPATH": str(lib)})
    expected = {("all", ""), ("season_risk", "")}
    for name in ALL_DATASETS:
        expected |= _below_fit(name)
    if JOINTS:  # joint jobs carry a 'joint' wildcard, not a 'dataset' one
        expected |= {("sw_fit_joint", ""), ("sw_joint_draw", ""), ("sw_joint_report", "")}
    assert run.jobs() == expected, sorted(run.jobs() ^ expected)
    assert not {"sw_snapshot", "sw_table_snapshot"} & {rule for rule, _ in run.jobs()}
    # and without the bumped copy, nothing is planned
    assert nothing_to_do(dry(pipeline))


def test_reinstalling_same_version_plans_nothing(pipeline: Path, tmp_path: Path) -> None:
    """Installing the same samplewright again (fresh files, new mtimes) plans no job."""
    wheel_dir = tmp_path / "wheel"
    subprocess.run(
        [
            sys.executable,
            "-m",
            "pip",
            "wheel",
            "--no-deps",
            "--no-build-isolation",
            "-q",
            "-w",
            str(wheel_dir),
            str(ROOT),
        ],
        check=True,
    )
    wheel = next(wheel_dir.glob("samplewright-*.whl"))
    target = tmp_path / "site"
    for _ in range(2):  # install, then reinstall over it
        subprocess.run(
            [
                sys.executable,
                "-m",
                "pip",
                "install",
                "--no-deps",
                "--upgrade",
                "--force-reinstall",
                "-q",
                "--target",
                str(target),
                str(wheel),
            ],
            check=True,
        )
        run = dry(pipeline, "--verbose", env={"PYTHONPATH": str(target)})
        assert nothing_to_do(run), run.out[-2000:]
    # the installed copy (not the source tree) was the one in use
    probe = subprocess.run(
        [sys.executable, "-c", "import samplewright; print(samplewright.rules_path())"],
        env={**os.environ, "PYTHONPATH": str(target)},
        capture_output=True,
        text=True,
        check=True,
    )
    assert probe.stdout.strip().startswith(str(target))


@pytest.mark.parametrize(
    ("override", "expected"),
    [
        (
            {"datasets": {"repair_hours": {"colum": "hours"}}},
            "samplewright.datasets.repair_hours: unknown key 'colum'",
        ),
        (
            {"datasets": {"repair_hours": {"path": "data/missing.csv"}}},
            "samplewright.datasets.repair_hours.path: file 'data/missing.csv' not found",
        ),
        (
            {"datasets": {"repair_hours": {"methods": ["lognormal", "gama"]}}},
            "samplewright.datasets.repair_hours.methods[1]: unknown method 'gama'",
        ),
        ({"storage": "x"}, "samplewright: unknown key 'storage'"),
    ],
)
def test_bad_config_fails_before_any_job(
    pipeline: Path, tmp_path: Path, override: dict, expected: str
) -> None:
    """A bad config stops Snakemake at parse time with a message naming the key; nothing runs."""
    bad = tmp_path / "bad.yaml"
    bad.write_text(yaml.safe_dump({"samplewright": override}))
    before = sorted(p for p in (pipeline / "store").rglob("*") if p.is_file())
    run = snakemake(pipeline, "--configfile", "config.yaml", str(bad))
    assert run.returncode != 0
    assert expected in run.out, run.out[-2000:]
    assert "Select jobs to execute" not in run.out
    assert sorted(p for p in (pipeline / "store").rglob("*") if p.is_file()) == before


def test_lint_reports_only_the_accepted_warning(pipeline: Path) -> None:
    """`snakemake --lint` finds nothing in the rules but the accepted per-rule environment hint."""
    run = snakemake(pipeline, "--lint")
    lints = [ln.strip() for ln in run.out.splitlines() if ln.strip().startswith("* ")]
    assert lints, run.out[-2000:]
    assert set(lints) == {"* Specify a conda environment or container for each rule.:"}, lints
