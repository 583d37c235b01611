"""`samplewright store ...` and samplewright.store.listing on a store made by the commands."""

from __future__ import annotations

import json
import os
import shutil
import time
from collections.abc import Callable
from pathlib import Path

import duckdb
import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
import yaml
from scipy import stats

import samplewright as sw
from samplewright.pipeline.plan import Plan
from samplewright.store.atomic import TEMP_PREFIX, _host_tag
from samplewright.store.listing import list_store, plan_prune, previous_selection

Cli = Callable[..., tuple[int, str, str]]
HOURS = np.random.default_rng(31).gamma(2.0, 3.0, 150)  # invented repair hours


def _make(plan: Plan, run_cli: Cli, data: Path) -> None:
    """Every artifact the rules would make for dataset 'pumps', made by the commands."""
    snap = plan.snapshot_path("pumps")
    assert run_cli("snapshot", data, "-c", "hours", "--out", snap)[0] == 0
    for spec in plan.candidates("pumps"):
        path = plan.fit_path("pumps", spec.label)
        key = Path(path).stem
        code, _, err = run_cli("fit", snap, "-m", spec.method, "--key", key, "--out", path)
        assert code == 0, err
    sel = plan.selected_path("pumps")
    cands = plan.candidate_paths("pumps")
    assert run_cli("select", *cands, "--by", "aic", "--out", sel)[0] == 0
    assert (
        run_cli("draw", sel, "-n", "500", "--seed", "1", "--out", plan.draws_path("pumps"))[0] == 0
    )
    check = plan.check_path("pumps")
    code, _, err = run_cli(
        "check", snap, *cands, "--selected", sel, "--out", check, "--gof-resamples", "0"
    )
    assert code == 0, err


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A workflow folder (config.yaml, data, store) with one older version of every artifact."""
    from samplewright.pipeline.cli import main

    def run_cli(*args: object) -> tuple[int, str, str]:
        return main([str(a) for a in args]), "", ""

    root = tmp_path_factory.mktemp("workflow")
    here = os.getcwd()
    os.chdir(root)
    try:
        data = root / "repairs.csv"
        cfg = {
            "samplewright": {
                "store": "store",
                "draws": 500,
                "datasets": {
                    "pumps": {
                        "path": "repairs.csv",
                        "column": "hours",
                        "methods": ["gamma", "empirical"],
                    }
                },
            }
        }
        (root / "config.yaml").write_text(yaml.safe_dump(cfg))
        pd.DataFrame({"hours": HOURS[:120]}).to_csv(data, index=False)  # the older data
        _make(Plan(cfg["samplewright"]), run_cli, data)
        time.sleep(1.1)  # creation times are recorded to the second
        pd.DataFrame({"hours": HOURS}).to_csv(data, index=False)  # the data now
        _make(Plan(cfg["samplewright"]), run_cli, data)
    finally:
        os.chdir(here)
    return root


@pytest.fixture
def workflow(built: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A fresh copy of the built workflow folder, made the working folder."""
    work = tmp_path / "work"
    shutil.copytree(built, work)
    monkeypatch.chdir(work)
    return work


def _listing(run_cli: Cli, *args: str) -> list[dict]:
    code, out, err = run_cli("store", "list", "--json", *args)
    assert code == 0, err
    return json.loads(out)


def test_list_says_what_the_config_references(workflow: Path, run_cli: Cli) -> None:
    """Every file is listed once; the current version is referenced, the older one is not."""
    plan = Plan(yaml.safe_load((workflow / "config.yaml").read_text())["samplewright"])
    rows = _listing(run_cli)
    by_path = {r["path"]: r for r in rows}
    current = [
        plan.snapshot_path("pumps"),
        *plan.candidate_paths("pumps"),
        plan.selected_path("pumps"),
        plan.draws_path("pumps"),
        plan.check_path("pumps"),
    ]
    for p in current:
        assert by_path[p]["referenced"] is True, p
    areas = {(r["area"], r["referenced"]) for r in rows}
    for area in ("columns", "samplers", "selected", "draws", "checks"):
        assert (area, False) in areas and (area, True) in areas
    sel = by_path[plan.selected_path("pumps")]
    assert (sel["method"], sel["n"], sel["dataset"]) == ("gamma", 150, "pumps")
    gamma = next(r for r in rows if r["area"] == "samplers" and r["referenced"] is False)
    assert gamma["label"] in ("gamma", "empirical") and gamma["n"] == 120
    assert by_path[plan.draws_path("pumps")]["n"] == 500
    assert all(r["size"] == os.path.getsize(r["path"]) for r in rows)
    code, text, _ = run_cli("store", "list")
    assert code == 0 and text.splitlines()[0].split() == [
        "area",
        "dataset",
        "label",
        "method",
        "key",
        "created",
        "n",
        "size",
        "in",
        "config",
    ]


def test_current_shows_the_sampler_downstream_steps_get(workflow: Path, run_cli: Cli) -> None:
    """`store current pumps` describes the selected artifact of the current data."""
    plan = Plan(yaml.safe_load((workflow / "config.yaml").read_text())["samplewright"])
    code, out, err = run_cli("store", "current", "pumps")
    assert code == 0, err
    assert out.splitlines()[0] == plan.selected_path("pumps")
    assert "selected by" in out
    code, _, err = run_cli("store", "current", "nosuch")
    assert code == 2 and "not in the configuration" in err


def test_verify_finds_an_altered_artifact_and_snapshot(workflow: Path, run_cli: Cli) -> None:
    """All good first; a snapshot whose values no longer hash to its name fails with exit 3."""
    code, out, _ = run_cli("store", "verify")
    assert code == 0 and "FAIL" not in out and out.count("ok") >= 7
    plan = Plan(yaml.safe_load((workflow / "config.yaml").read_text())["samplewright"])
    snap = Path(plan.snapshot_path("pumps"))
    table = pq.read_table(snap)
    values = table.column("value").to_numpy().copy()
    values[0] += 1.0
    changed = table.set_column(0, "value", pa.array(values))
    pq.write_table(changed.replace_schema_metadata(table.schema.metadata), snap)
    code, out, err = run_cli("store", "verify")
    assert code == 3
    assert f"FAIL {snap}" in out and "values have fingerprint" in err


def test_compare_reports_quantiles_and_ks(workflow: Path, run_cli: Cli) -> None:
    """Comparing the old and the new gamma gives scipy's figures for the two fits."""
    rows = [r for r in _listing(run_cli) if r["area"] == "samplers" and r["label"] == "gamma"]
    old = next(r["path"] for r in rows if not r["referenced"])
    new = next(r["path"] for r in rows if r["referenced"])
    code, out, err = run_cli("store", "compare", old, new, "--json")
    assert code == 0, err
    doc = json.loads(out)
    a, b = sw.load_sampler(old).params, sw.load_sampler(new).params
    # source: scipy.stats.gamma.ppf and .cdf of the two fitted gammas
    assert doc["quantiles"]["p99"]["old"] == pytest.approx(
        stats.gamma.ppf(0.99, a["shape"], scale=a["scale"]), rel=1e-9
    )
    grid = np.linspace(0.0, 60.0, 600001)
    ks = np.max(
        np.abs(
            stats.gamma.cdf(grid, a["shape"], scale=a["scale"])
            - stats.gamma.cdf(grid, b["shape"], scale=b["scale"])
        )
    )
    assert doc["ks_distance"] == pytest.approx(ks, abs=3e-4)
    code, text, _ = run_cli("store", "compare", old, new)
    assert code == 0 and "KS distance" in text and "quantile 99%" in text


def test_prune_is_a_dry_run_until_applied(workflow: Path, run_cli: Cli) -> None:
    """Without --apply nothing is deleted; --keep 0 --apply removes exactly the unused files."""
    before = {r["path"] for r in _listing(run_cli)}
    unused = {r["path"] for r in _listing(run_cli) if r["referenced"] is False}
    code, out, _ = run_cli("store", "prune", "--keep", "0")
    assert code == 0 and "would remove" in out
    assert {r["path"] for r in _listing(run_cli)} == before
    code, out, _ = run_cli("store", "prune", "--keep", "1", "--json")
    assert json.loads(out)["files"] == []  # one older version of each: all kept
    code, out, _ = run_cli("store", "prune", "--keep", "0", "--apply", "--json")
    doc = json.loads(out)
    assert code == 0 and set(doc["files"]) == unused and doc["removed"] == len(unused)
    after = _listing(run_cli)
    assert {r["path"] for r in after} == before - unused
    assert all(r["referenced"] for r in after)


def test_previous_selection_is_the_newest_other_one(workflow: Path) -> None:
    """The previous selection of a dataset is the most recent selected file but the current."""
    plan = Plan(yaml.safe_load((workflow / "config.yaml").read_text())["samplewright"])
    current = plan.selected_path("pumps")
    prev = previous_selection("store", "pumps", current=current)
    assert prev is not None and prev.path != current and prev.n == 120
    entries = list_store("store", referenced={current})
    assert plan_prune(entries, keep=5) == []


def test_clean_removes_stale_temporaries_only(workflow: Path, run_cli: Cli) -> None:
    """A temporary file of a dead writer goes; one of a live writer stays."""
    folder = workflow / "store" / "selected" / "pumps"
    dead = folder / f"{TEMP_PREFIX}{_host_tag()}.999999999.0123abcd.x.parquet"
    live = folder / f"{TEMP_PREFIX}{_host_tag()}.{os.getpid()}.0123abcd.y.parquet"
    dead.write_bytes(b"partial")
    live.write_bytes(b"partial")
    code, out, _ = run_cli("store", "clean", "--json")
    assert code == 0 and json.loads(out)["removed"] == [
        str(Path("store") / dead.relative_to(workflow / "store"))
    ]
    assert live.exists() and not dead.exists()


def test_export_draws_and_artifacts_open_in_pandas_pyarrow_and_duckdb(
    workflow: Path, run_cli: Cli
) -> None:
    """Exported draws (CSV, Parquet) and the artifacts themselves read back with three readers."""
    plan = Plan(yaml.safe_load((workflow / "config.yaml").read_text())["samplewright"])
    draws = pq.read_table(plan.draws_path("pumps")).column("value").to_numpy()
    for name in ("d.csv", "d.parquet"):
        code, _, err = run_cli("store", "export", "pumps", "--out", name)
        assert code == 0, err
    # source: pandas, pyarrow and duckdb readers (outside the project)
    csv = pd.read_csv("d.csv", float_precision="round_trip")
    assert np.array_equal(csv["value"].to_numpy(), draws)
    assert np.array_equal(pd.read_parquet("d.parquet")["value"].to_numpy(), draws)
    assert np.array_equal(pq.read_table("d.parquet").column("value").to_numpy(), draws)
    got = duckdb.sql("select value from read_parquet('d.parquet')").fetchnumpy()["value"]
    assert np.array_equal(got, draws)
    emp = next(p for p in plan.candidate_paths("pumps") if "/empirical/" in p)
    expected = np.sort(HOURS)
    assert np.array_equal(pd.read_parquet(emp)["value"].to_numpy(), expected)
    assert np.array_equal(pq.read_table(emp).column("value").to_numpy(), expected)
    sql = f"select value from read_parquet('{emp}') order by value"
    assert np.array_equal(duckdb.sql(sql).fetchnumpy()["value"], expected)
    meta = json.loads(pq.read_metadata(emp).metadata[b"samplewright"])
    assert meta["sampler"]["method"] == "empirical" and meta["data"]["n_obs"] == HOURS.size
    gamma = next(p for p in plan.candidate_paths("pumps") if "/gamma/" in p)
    assert pd.read_parquet(gamma).shape == (0, 1)  # the empty placeholder column only
    assert json.loads(pq.read_metadata(gamma).metadata[b"samplewright"])["sampler"]["family"] == (
        "gamma"
    )


def test_duckdb_opens_a_parametric_artifact(tmp_path: Path) -> None:
    """duckdb reads a parametric artifact (no payload, one empty placeholder column) as zero
    rows, and samplewright loads it back without that column."""
    path = tmp_path / "gamma.parquet"
    sw.write_sampler(sw.fit(HOURS, "gamma"), path)
    # source: duckdb's Parquet reader
    assert duckdb.sql(f"select count(*) from read_parquet('{path}')").fetchall() == [(0,)]
    assert sw.load_sampler(path).payload() == {}


def test_export_json_says_what_was_written(workflow: Path, run_cli: Cli) -> None:
    """`store export --json` prints the file written, its rows, columns and size as JSON."""
    plan = Plan(yaml.safe_load((workflow / "config.yaml").read_text())["samplewright"])
    code, out, err = run_cli("store", "export", "pumps", "--out", "d.parquet", "--json")
    assert code == 0, err
    doc = json.loads(out)
    # source: pyarrow's reader of the file written, and the operating system's file size
    table = pq.read_table("d.parquet")
    assert doc == {
        "source": plan.draws_path("pumps"),
        "out": "d.parquet",
        "format": "parquet",
        "rows": table.num_rows,
        "columns": table.column_names,
        "bytes": os.path.getsize("d.parquet"),
    }
