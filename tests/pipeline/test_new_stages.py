"""The new stages through real Snakemake: bootstrap intervals, parameter replicates, joint inputs,
truncated and grouped data, expert judgement and quasi-random draws.

One small invented workflow runs twice, with ``--cores 1`` and ``--cores 2`` in two copies: every
output must be the same (random streams come from the root seed and stable names, never from job
order). Touching the data afterwards plans nothing.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
import yaml

from .conftest import SNAKEMAKE, Run, nothing_to_do

pytestmark = pytest.mark.pipeline

CONFIG = {
    "samplewright": {
        "store": "store",
        "root_seed": 20261203,
        "draws": 1024,
        "datasets": {
            "repair_hours": {
                "path": "data/ops.csv",
                "column": "hours",
                "methods": ["gamma", "empirical"],
                "sequence": "sobol",
                "intervals": [
                    {"statistic": "quantile:0.9", "n_resamples": 299},
                    {
                        "statistic": "mean",
                        "scheme": "stationary",
                        "method": "percentile",
                        "n_resamples": 299,
                    },
                ],  # fmt: skip
                "replicates": {"n_replicates": 12},
            },
            "pipe_claims": {
                "path": "data/claims.csv",
                "column": "paid",
                "truncation": "deductible",
                "censor": "capped",
                "methods": ["lognormal"],
            },
            "part_failures": {
                "path": "data/inspections.csv",
                "lower": "last_ok",
                "upper": "found_failed",
                "weights": "units",
                "methods": ["weibull", "turnbull"],
            },
            "pump_cost": {
                "quantiles": {"probabilities": [0.1, 0.5, 0.9], "values": [18, 24, 41]},
                "draws": 0,
            },
            "lead_time": {
                "three_points": {"low": 2, "mode": 5, "high": 12},
                "sequence": "latin_hypercube",
            },  # fmt: skip
        },
        "joint": {
            "repair_job": {
                "path": "data/ops.csv",
                "columns": {"hours": "lognormal", "cost_per_hour": "empirical"},
                "coupling": "gaussian_copula",
                "sequence": "halton",
                "draws": 512,
            }
        },
    }
}

SNAKEFILE = """\
import samplewright
import samplewright.workflow as sw

configfile: "config.yaml"
include: samplewright.rules_path()

DATASETS = list(config["samplewright"]["datasets"])

rule all:
    input:
        [sw.sampler(n) for n in DATASETS],
        [sw.draws(n) for n in DATASETS if n != "pump_cost"],
        sw.intervals("repair_hours"),
        sw.replicates("repair_hours"),
        sw.joint("repair_job"),
        sw.joint_draws("repair_job"),
"""


def _write_data(folder: Path) -> None:
    """Invented data: repair hours with a crew-hour cost that moves with them; burst-pipe claims
    above per-policy deductibles, capped at limits; part failures found between inspections."""
    rng = np.random.default_rng(5)
    n = 160
    z = rng.multivariate_normal([0.0, 0.0], [[1.0, 0.6], [0.6, 1.0]], n)
    pd.DataFrame({"hours": np.exp(1.2 + 0.6 * z[:, 0]), "cost_per_hour": 70 + 9 * z[:, 1]}).to_csv(
        folder / "ops.csv", index=False
    )
    ground = rng.lognormal(7.0, 1.1, 600)
    deductible = rng.choice([250.0, 500.0, 1000.0], 600)
    limit = rng.choice([25000.0, 50000.0], 600)
    seen = ground > deductible
    paid = np.minimum(ground, limit)[seen][:150]
    pd.DataFrame(
        {
            "paid": paid,
            "deductible": deductible[seen][:150],
            "capped": (ground >= limit)[seen][:150].astype(int),
        }
    ).to_csv(folder / "claims.csv", index=False)
    edges = np.array([0.0, 30, 60, 90, 120, 180, 240])
    pd.DataFrame(
        {
            "last_ok": np.append(edges[:-1], 240.0),
            "found_failed": np.append(edges[1:], np.inf),
            "units": [4, 9, 12, 10, 8, 5, 6],
        }
    ).to_csv(folder / "inspections.csv", index=False)


@pytest.fixture(scope="module")
def project(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The small workflow: config, Snakefile and its invented data files."""
    root = tmp_path_factory.mktemp("new_stages") / "project"
    (root / "data").mkdir(parents=True)
    _write_data(root / "data")
    (root / "config.yaml").write_text(yaml.safe_dump(CONFIG, sort_keys=False))
    (root / "Snakefile").write_text(SNAKEFILE)
    return root


def _snakemake(workdir: Path, *args: str) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ)
    env["PATH"] = f"{Path(sys.executable).parent}{os.pathsep}{env.get('PATH', '')}"
    return subprocess.run(
        [SNAKEMAKE, "--max-checksum-file-size", "0", *args],
        cwd=workdir,
        env=env,
        capture_output=True,
        text=True,
        timeout=900,
    )


def _outputs(work: Path) -> dict[str, object]:
    """Every output of the store (logs, benchmarks and the memo aside) by relative path: content
    hashes of artifacts, the values of draws files, the numbers of interval files."""
    import samplewright

    out: dict[str, object] = {}
    for path in sorted((work / "store").rglob("*")):
        rel = str(path.relative_to(work))
        top = rel.split("/")[1]
        if not path.is_file() or top in ("logs", "benchmarks") or path.name == "fingerprints.json":
            continue
        if top in ("samplers", "selected", "replicates", "joint"):
            out[rel] = samplewright.read_metadata(path)["content_hash"]
        elif top in ("draws", "joint_draws", "columns", "tables"):
            out[rel] = pq.read_table(path).to_pydict()
        elif top == "intervals":
            out[rel] = json.loads(path.read_text())
        else:
            out[rel] = path.stat().st_size
    return out


@pytest.fixture(scope="module")
def runs(project: Path, tmp_path_factory: pytest.TempPathFactory) -> dict[int, Path]:
    """The workflow run to the end with 1 core and, in a copy, with 2 cores."""
    done = {}
    for cores in (1, 2):
        work = tmp_path_factory.mktemp(f"cores{cores}") / "project"
        shutil.copytree(project, work)
        run = _snakemake(work, "--cores", str(cores))
        assert run.returncode == 0, (run.stdout + run.stderr)[-5000:]
        done[cores] = work
    return done


def test_one_and_two_cores_give_the_same_outputs(runs: dict[int, Path]) -> None:
    """Every store output (artifacts, draws, intervals, snapshots) is identical between runs."""
    one, two = _outputs(runs[1]), _outputs(runs[2])
    assert sorted(one) == sorted(two)
    assert one == two
    tops = {rel.split("/")[1] for rel in one}
    assert {"columns", "tables", "samplers", "selected", "draws", "intervals", "replicates",
            "joint", "joint_draws"} <= tops  # fmt: skip


def test_each_new_stage_wrote_what_its_config_asks(runs: dict[int, Path]) -> None:
    """Intervals per configured item, replicates of the selected method, joint draws with one
    column per input, incomplete-data fits from table snapshots, judgement without data."""
    import samplewright

    work = runs[2]
    store = work / "store"
    (iv,) = (store / "intervals" / "repair_hours").glob("*.json")
    doc = json.loads(iv.read_text())
    rows = doc["intervals"]
    assert [(r["statistic"], r["method"], r["scheme"]) for r in rows] == [
        ("quantile:0.9", "bca", "iid"),
        ("mean", "percentile", "stationary"),
    ]
    assert all(r["low"] <= r["estimate"] <= r["high"] for r in rows)
    assert doc["stream"] == ["repair_hours", "intervals"] and doc["key"] == iv.stem
    (rep,) = (store / "replicates" / "repair_hours").glob("*.parquet")
    (sel,) = (store / "selected" / "repair_hours").glob("*.parquet")
    ens = samplewright.load_sampler(rep)
    assert ens.method == samplewright.load_sampler(sel).method and ens.n_replicates >= 2
    (jd,) = (store / "joint_draws" / "repair_job").glob("*.parquet")
    assert pq.read_table(jd).column_names == ["hours", "cost_per_hour"]
    assert pq.read_table(jd).num_rows == 512
    claims = samplewright.load_sampler(next((store / "selected" / "pipe_claims").glob("*")))
    assert claims.metadata["data"]["truncated"] and claims.family.name == "lognormal"
    assert next((store / "tables" / "pipe_claims").glob("*.parquet"))
    failures = samplewright.load_sampler(next((store / "selected" / "part_failures").glob("*")))
    assert failures.metadata["data"]["interval_rows"]
    assert not (store / "columns" / "pump_cost").exists()
    assert next((store / "samplers" / "pump_cost" / "quantiles").glob("*.parquet"))
    assert not (store / "draws" / "pump_cost").exists()  # draws: 0
    lead = pq.read_table(next((store / "draws" / "lead_time").glob("*.parquet")))
    values = lead.column("value").to_numpy()
    assert values.size == 1024 and 2.0 <= values.min() and values.max() <= 12.0
    # source: Latin hypercube sampling (McKay, Beckman & Conover 1979) puts one point in each of
    # the n equal-probability strata
    u = samplewright.load_sampler(next((store / "selected" / "lead_time").glob("*"))).cdf(values)
    np.testing.assert_array_equal(np.sort(np.floor(u * 1024)), np.arange(1024))


def test_touching_the_data_plans_nothing(runs: dict[int, Path]) -> None:
    """New modification times on every data file rerun no job of the new stages."""
    work = runs[1]
    for f in (work / "data").iterdir():
        os.utime(f)
    proc = _snakemake(work, "-n", "--cores", "1")
    run = Run(proc.returncode, proc.stdout + proc.stderr)
    assert run.returncode == 0, run.out[-3000:]
    assert nothing_to_do(run), run.jobs()
