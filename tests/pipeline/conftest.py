"""Helpers for running real Snakemake on temporary copies of the example pipeline."""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "example_pipeline"
BIN = Path(sys.executable).parent
SNAKEMAKE = str(BIN / "snakemake")
# Turn off Snakemake's own checksum shortcut so the tests prove samplewright's mechanism.
BASE_ARGS = ["--cores", "2", "--max-checksum-file-size", "0"]
_IGNORE = shutil.ignore_patterns("store", "results", "logs", ".snakemake", "data", "__pycache__")


@dataclass
class Run:
    returncode: int
    out: str

    def jobs(self) -> set[tuple[str, str]]:
        """(rule, dataset or '') of every job a dry run plans."""
        return parse_jobs(self.out)


def parse_jobs(text: str) -> set[tuple[str, str]]:
    jobs: set[tuple[str, str]] = set()
    rule = None
    dataset = ""
    for line in text.splitlines():
        m = re.match(r"^(?:local)?(?:rule|checkpoint) (\w+):$", line.strip())
        if m:
            if rule is not None:
                jobs.add((rule, dataset))
            rule, dataset = m.group(1), ""
            continue
        m = re.match(r"^\s+wildcards: (.*)$", line)
        if m and rule is not None:
            w = dict(kv.split("=", 1) for kv in m.group(1).split(", ") if "=" in kv)
            dataset = w.get("dataset", "")
    if rule is not None:
        jobs.add((rule, dataset))
    return jobs


def snakemake(
    workdir: Path, *args: str, env: dict[str, str] | None = None, timeout: int = 600
) -> Run:
    full_env = dict(os.environ)
    full_env["PATH"] = f"{BIN}{os.pathsep}{full_env.get('PATH', '')}"
    full_env.update(env or {})
    proc = subprocess.run(
        [SNAKEMAKE, *BASE_ARGS, *args],
        cwd=workdir,
        env=full_env,
        capture_output=True,
        text=True,
        timeout=timeout,
    )
    return Run(proc.returncode, proc.stdout + proc.stderr)


def dry(workdir: Path, *args: str, env: dict[str, str] | None = None) -> Run:
    run = snakemake(workdir, "-n", *args, env=env)
    assert run.returncode == 0, run.out[-3000:]
    return run


def nothing_to_do(run: Run) -> bool:
    return "Nothing to be done" in run.out


# store folders whose files are compared between runs, and how each is read: artifacts by the
# content hash in their metadata (it covers payload and description, not write times), Parquet
# tables by their values, JSON documents by their parsed content
_ARTIFACT_DIRS = ("samplers", "selected", "replicates", "joint")
_TABLE_DIRS = ("draws", "joint_draws", "columns", "tables")
_JSON_DIRS = ("intervals",)
STORE_OUTPUTS = _ARTIFACT_DIRS + _TABLE_DIRS + _JSON_DIRS


def _table_digest(path: Path) -> str:
    """sha256 of a Parquet file's column names, types and values (not its bytes: the footer
    records the writer's version)."""
    import pyarrow.parquet as pq

    table = pq.read_table(path)
    h = hashlib.sha256()
    for name, column in zip(table.column_names, table.columns, strict=True):
        h.update(json.dumps([name, str(column.type), column.to_pylist()]).encode())
    return f"values:{h.hexdigest()}"


def _json_digest(path: Path) -> str:
    """sha256 of a JSON document's canonical form (sorted keys)."""
    doc = json.loads(path.read_text())
    return f"json:{hashlib.sha256(json.dumps(doc, sort_keys=True).encode()).hexdigest()}"


def store_artifacts(
    work: Path, folders: tuple[str, ...] = ("samplers", "selected")
) -> dict[str, str]:
    """Relative path -> digest of every file of a run's store in ``folders`` (by default the
    sampler artifacts, candidates and selections; :data:`STORE_OUTPUTS` for every output).

    Sampler artifacts (candidates, selections, replicates, joint samplers) by content hash;
    draws, joint draws and column and table snapshots by their values; bootstrap intervals by
    their parsed JSON. Never compared: logs and benchmarks (times), the fingerprint memo (file
    stats), check summaries and reports (their drift section compares with whatever the store
    selected before, so they depend on its history, not only on the run).
    """
    import samplewright

    unknown = sorted(set(folders) - set(STORE_OUTPUTS))
    if unknown:
        raise ValueError(f"folders: expected names from {STORE_OUTPUTS}, found {unknown}")
    out = {}
    for sub in folders:
        for path in sorted((work / "store" / sub).rglob("*")):
            if not path.is_file() or path.name.startswith("."):
                continue
            rel = str(path.relative_to(work))
            if sub in _ARTIFACT_DIRS:
                out[rel] = samplewright.read_metadata(path)["content_hash"]
            elif sub in _TABLE_DIRS:
                out[rel] = _table_digest(path)
            else:
                out[rel] = _json_digest(path)
    return out


def copy_example(dest: Path) -> Path:
    """A fresh copy of the example pipeline with its invented data generated."""
    shutil.copytree(EXAMPLE, dest, ignore=_IGNORE)
    subprocess.run([sys.executable, "make_data.py"], cwd=dest, check=True)
    return dest


@pytest.fixture(scope="session")
def pipeline(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A copy of the example pipeline after one complete run."""
    work = copy_example(tmp_path_factory.mktemp("pipeline") / "example")
    run = snakemake(work, timeout=1800)  # a few minutes alone; much longer on a busy machine
    assert run.returncode == 0, run.out[-5000:]
    return work
