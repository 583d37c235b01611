"""The store under real Snakemake: declared memory, permissions, temporary files, a wrong memo."""

from __future__ import annotations

import json
import math
import os
import re
import shutil
import stat
from pathlib import Path

import pytest
import yaml

from .conftest import ROOT, dry, nothing_to_do, snakemake

pytestmark = pytest.mark.pipeline


def _snapshot_resources(out: str) -> dict[str, int]:
    """dataset -> declared mem_mb of every sw_snapshot job in a Snakemake run's output."""
    found = {}
    for block in re.split(r"\n(?=(?:local)?rule \w+:)", out):
        if re.match(r"(?:local)?rule sw_snapshot:", block):
            dataset = re.search(r"wildcards: dataset=(\w+)", block)
            mem = re.search(r"resources: .*\bmem_mb=(\d+)", block)
            assert dataset and mem, block
            found[dataset.group(1)] = int(mem.group(1))
    return found


def _data_files(work: Path) -> dict[str, Path]:
    """dataset -> data file of every dataset read by sw_snapshot (a truncation column or
    interval columns make a table snapshot instead)."""
    datasets = yaml.safe_load((work / "config.yaml").read_text())["samplewright"]["datasets"]
    return {
        name: work / ds["path"]
        for name, ds in datasets.items()
        if "path" in ds and not isinstance(ds.get("truncation"), str) and "lower" not in ds
    }


def _lib_without_floor(tmp_path: Path) -> Path:
    """A copy of samplewright whose snapshot memory has no floor, so the scaling shows."""
    lib = tmp_path / "lib"
    ignore = shutil.ignore_patterns("__pycache__")
    shutil.copytree(ROOT / "lib" / "samplewright", lib / "samplewright", ignore=ignore)
    shutil.copytree(ROOT / "workflow_rules", lib / "samplewright" / "workflow_rules", ignore=ignore)
    plan = lib / "samplewright" / "pipeline" / "plan.py"
    text = plan.read_text()
    floor = "\nSNAPSHOT_MEM_FLOOR_MB = {}\n"
    assert floor.format(1000) in text
    plan.write_text(text.replace(floor.format(1000), floor.format(0)))
    return lib


def test_snapshot_memory_scales_with_the_input_file(pipeline: Path, tmp_path: Path) -> None:
    """Each snapshot job declares 300 MB plus 6 (CSV) or 10 (Parquet) MB per MB of its data
    file, and a profile's set-resources still overrides it; nothing below reruns."""
    env = {"PYTHONPATH": str(_lib_without_floor(tmp_path))}
    run = snakemake(pipeline, "--forcerun", "sw_snapshot", "--until", "sw_snapshot", env=env)
    assert run.returncode == 0, run.out[-3000:]
    declared = _snapshot_resources(run.out)
    expected = {}
    for name, path in _data_files(pipeline).items():
        per_mb = 10 if path.suffix == ".parquet" else 6
        # common practice, no source: Snakemake's input.size_mb is bytes / 2**20
        expected[name] = math.ceil(300 + per_mb * path.stat().st_size / 2**20)
    assert declared == expected
    assert len(set(declared.values())) > 1  # the files differ in size, so do the declarations
    override = snakemake(
        pipeline,
        "--forcerun",
        "sw_snapshot",
        "--until",
        "sw_snapshot",
        "--set-resources",
        "sw_snapshot:mem_mb=4321",
    )
    assert override.returncode == 0, override.out[-3000:]
    assert set(_snapshot_resources(override.out).values()) == {4321}
    assert nothing_to_do(dry(pipeline))


def test_store_files_follow_the_umask_and_leave_no_temporaries(pipeline: Path) -> None:
    """After a full run every store file has the mode the umask asks for, and no temporary
    file of an interrupted write is left."""
    mask = os.umask(0o022)
    os.umask(mask)
    files = [p for p in (pipeline / "store").rglob("*") if p.is_file()]
    assert files
    assert not [p for p in files if p.name.startswith(".swtmp.")]
    written = [p for p in files if p.suffix in (".parquet", ".json", ".md")]
    # source: POSIX open(2), new files get 0o666 & ~umask
    assert {stat.S_IMODE(p.stat().st_mode) for p in written} == {0o666 & ~mask}


def test_a_wrong_fingerprint_memo_fails_once_then_plans_right(pipeline: Path) -> None:
    """A well-formed but wrong memo entry makes one run fail at the snapshot with a message
    that says to plan again; the entry is dropped, and the next run has nothing to do."""
    import samplewright.store.fingerprints as fps

    memo_path = pipeline / "store" / "fingerprints.json"
    original = memo_path.read_text()
    memo = json.loads(original)
    key = next(k for k in memo if json.loads(k)[1] == "hours" and "repairs.csv" in k)
    entry = memo[key]
    wrong = "0123456789abcdef" * 4
    info = {k: entry[k] for k in ("size", "mtime_ns", "inode")}
    memo[key] = {**info, "fingerprint": wrong, "check": fps._entry_check(key, info, wrong)}
    memo_path.write_text(json.dumps(memo))
    try:
        run = snakemake(pipeline)
        assert run.returncode != 0
        log = next(
            (pipeline / "store" / "logs" / "snapshot" / "repair_hours").glob(f"{wrong[:20]}.log")
        )
        text = log.read_text()
        assert "changed after the workflow was planned" in text
        assert "cached fingerprint was dropped" in text
        assert key not in json.loads(memo_path.read_text())
        assert nothing_to_do(dry(pipeline))
    finally:
        if not nothing_to_do(dry(pipeline)):  # pragma: no cover - leave the fixture usable
            memo_path.write_text(original)
