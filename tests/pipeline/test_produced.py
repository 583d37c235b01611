"""Data made by a rule of the same workflow: the checkpoint fingerprints it after it is made."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from .conftest import nothing_to_do, snakemake

pytestmark = pytest.mark.pipeline
HERE = Path(__file__).resolve().parent


def _export(path: Path, shift: float = 0.0) -> None:
    # Exponential-ish repair hours from numpy's generator; invented test input, not a reference.
    rng = np.random.default_rng(5)
    n = 120_000  # > 1 MB of CSV, beyond Snakemake's checksum shortcut
    frame = pd.DataFrame(
        {
            "hours": np.round(rng.gamma(2.0, 1.5, n), 6),
            "ok": rng.random(n) < 0.9,
            "note": rng.choice(["x", "y"], n),
        }
    )
    frame["ok"] = frame["ok"].astype(int)
    frame.loc[0, "hours"] += shift
    frame.loc[0, "ok"] = 1
    path.parent.mkdir(parents=True, exist_ok=True)
    frame.to_csv(path, index=False)


@pytest.fixture(scope="module")
def produced(tmp_path_factory: pytest.TempPathFactory) -> Path:
    work = tmp_path_factory.mktemp("produced")
    for f in ("Snakefile", "config.yaml"):
        shutil.copy(HERE / "produced" / f, work / f)
    _export(work / "raw" / "export.csv")
    run = snakemake(work)
    assert run.returncode == 0, run.out[-4000:]
    return work


def test_produced_data_runs_and_then_plans_nothing(produced: Path) -> None:
    """The first run fingerprints the ingested file by checkpoint; a rerun plans nothing."""
    assert (produced / "results" / "report.txt").read_text().count("selected by") == 1
    assert len(list((produced / "store" / "selected" / "clean_hours").glob("*.parquet"))) == 1
    assert nothing_to_do(snakemake(produced, "-n"))


def test_reingesting_same_content_refits_nothing(produced: Path) -> None:
    """A touched raw export reruns the ingest and the checkpoint only: no fit, no selection."""
    os.utime(produced / "raw" / "export.csv")
    run = snakemake(produced)
    assert run.returncode == 0, run.out[-3000:]
    ran = {rule for rule, _ in run.jobs()}
    assert ran == {"ingest", "sw_fingerprint"}, run.out[-3000:]
    assert nothing_to_do(snakemake(produced, "-n"))


def test_changed_content_refits_through_the_checkpoint(produced: Path) -> None:
    """A changed value in the ingested data reruns its fits, selection and the consumer."""
    _export(produced / "raw" / "export.csv", shift=1.25)
    run = snakemake(produced)
    assert run.returncode == 0, run.out[-3000:]
    ran = {rule for rule, _ in run.jobs()}
    assert {
        "ingest",
        "sw_fingerprint",
        "sw_snapshot",
        "sw_fit",
        "sw_select",
        "sw_draw",
        "sw_check",
        "report",
    } <= ran
    assert len(list((produced / "store" / "selected" / "clean_hours").glob("*.parquet"))) == 2
    assert nothing_to_do(snakemake(produced, "-n"))
