"""The example pipeline on a real Slurm cluster through Snakemake's Slurm executor plugin.

Needs a running cluster (``.ci/slurm/up`` starts one; ``.ci/run`` does so before the tests).
Skipped when none is running, unless SAMPLEWRIGHT_REQUIRE_SLURM=1 (set by CI), which turns the
skip into a failure.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest
import yaml

from .conftest import (
    BASE_ARGS,
    BIN,
    SNAKEMAKE,
    STORE_OUTPUTS,
    copy_example,
    store_artifacts,
)

pytestmark = [pytest.mark.pipeline, pytest.mark.slurm, pytest.mark.slow]
DATA_FILES = ("repairs.csv", "breaks.parquet", "pumps.csv", "claims.csv", "spare_part_wait.yaml")


def _cluster_ready() -> bool:
    if shutil.which("sbatch") is None or shutil.which("sacct") is None:
        return False
    probe = subprocess.run(["sinfo", "-h", "-o", "%T"], capture_output=True, text=True)
    states = probe.stdout.split()
    return probe.returncode == 0 and any(s in ("idle", "mixed", "allocated") for s in states)


# session scope, like the `pipeline` fixture it comes before: pytest sets up wider-scoped fixtures
# first, so a module-scoped check ran the whole local pipeline before skipping
@pytest.fixture(scope="session")
def cluster() -> None:
    if not _cluster_ready():
        if os.environ.get("SAMPLEWRIGHT_REQUIRE_SLURM") == "1":
            pytest.fail("SAMPLEWRIGHT_REQUIRE_SLURM=1 but no Slurm cluster answers (.ci/slurm/up)")
        pytest.skip("no Slurm cluster running (start one with .ci/slurm/up)")


def _slurm_snakemake(work: Path, *args: str) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ)
    env["PATH"] = f"{BIN}{os.pathsep}{env.get('PATH', '')}"
    # A hung Snakemake ignores SIGTERM: timeout -k sends SIGKILL 30 s later.
    cmd = [
        "timeout",
        "-k",
        "30",
        "1500",
        SNAKEMAKE,
        *BASE_ARGS,
        "--workflow-profile",
        "profiles/slurm",
        "--executor",
        "slurm",
        "--jobs",
        "4",
        *args,
    ]
    return subprocess.run(cmd, cwd=work, env=env, capture_output=True, text=True, timeout=1600)


def test_pipeline_on_slurm_matches_local_run(cluster: None, pipeline: Path, tmp_path: Path) -> None:
    """Every job goes through Slurm (accounting shows it), every store output (artifacts,
    replicates, joint samplers, draws, snapshots, intervals) and the risk figures equal the local
    run's, and a touch of the data afterwards plans no job."""
    work = copy_example(tmp_path / "on_slurm")
    proc = _slurm_snakemake(work)
    out = proc.stdout + proc.stderr
    assert proc.returncode == 0, out[-5000:]

    job_ids = re.findall(r"has been submitted with SLURM jobid (\d+)", out)
    n_jobs = len(re.findall(r"^rule \w+:$", out, flags=re.M))
    assert n_jobs >= 20 and len(job_ids) == n_jobs, (len(job_ids), n_jobs)
    acct = subprocess.run(
        ["sacct", "-X", "-n", "-P", "-o", "JobID,State,ExitCode,Account", "-j", ",".join(job_ids)],
        capture_output=True,
        text=True,
        check=True,
    )
    rows = [r.split("|") for r in acct.stdout.split()]
    assert {r[0] for r in rows} == set(job_ids)
    assert all(r[1] == "COMPLETED" and r[2] == "0:0" for r in rows), rows
    assert {r[3] for r in rows} == {"samplewright"}

    # The local store may hold more (other tests change data in it); every output of the
    # cluster run must be there under the same path with the same content.
    ours = store_artifacts(work, STORE_OUTPUTS)
    cfg = yaml.safe_load((work / "config.yaml").read_text())["samplewright"]
    datasets, joint = cfg["datasets"], cfg.get("joint", {})
    folders = {rel.split("/")[1] for rel in ours}
    n_fits = sum(len(ds.get("methods", ["knots"])) for ds in datasets.values())
    assert sum(rel.split("/")[1] in ("samplers", "selected") for rel in ours) == n_fits + len(
        datasets
    )
    assert set(STORE_OUTPUTS) <= folders, folders
    assert sum(rel.split("/")[1] == "joint" for rel in ours) == len(joint)
    with_draws = [ds for ds in datasets.values() if ds.get("draws", cfg["draws"]) > 0]
    assert sum(rel.split("/")[1] == "draws" for rel in ours) == len(with_draws)
    local = store_artifacts(pipeline, STORE_OUTPUTS)
    differ = {
        rel: (digest, local.get(rel)) for rel, digest in ours.items() if local.get(rel) != digest
    }
    assert not differ, differ
    risk = sorted((work / "results").glob("*/season_risk.json"))
    assert len(risk) == 1
    local_risk = pipeline / risk[0].relative_to(work)
    assert json.loads(risk[0].read_text()) == json.loads(local_risk.read_text())

    for f in DATA_FILES:
        os.utime(work / "data" / f)
    again = _slurm_snakemake(work, "-n")
    assert again.returncode == 0, (again.stdout + again.stderr)[-3000:]
    assert "Nothing to be done" in again.stdout + again.stderr
