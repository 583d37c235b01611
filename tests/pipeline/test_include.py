"""`include:` and `module` use the same rule file and make the same artifacts (issue case 11)."""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from .conftest import copy_example, dry, nothing_to_do, snakemake, store_artifacts

pytestmark = pytest.mark.pipeline

MODULE_BLOCK = """module samplewright:
    snakefile:
        samplewright.rules_path()
    config:
        config["samplewright"]


use rule * from samplewright
"""


def test_include_and_module_make_identicalstore_artifacts(
    pipeline: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A copy whose Snakefile uses include: plans nothing on the module run's store (the same
    jobs, paths and keys, the risk step included) and, run fresh for two datasets, writes the
    same content hashes and draws."""
    from samplewright.pipeline.plan import Plan

    text = (pipeline / "Snakefile").read_text()
    assert MODULE_BLOCK in text
    included = text.replace(MODULE_BLOCK, "include: samplewright.rules_path()\n")
    (pipeline / "Snakefile.include").write_text(included)
    try:
        # the include form plans the very same paths: nothing to do on the module run's store
        assert nothing_to_do(dry(pipeline, "-s", "Snakefile.include"))
    finally:
        (pipeline / "Snakefile.include").unlink()

    # a fresh run through include: of two datasets' selections and draws (a whole second run of
    # the example would repeat what the module run already shows, at minutes of test time)
    fresh = copy_example(tmp_path / "fresh")
    (fresh / "Snakefile").write_text(included)
    cfg = yaml.safe_load((fresh / "config.yaml").read_text())["samplewright"]
    monkeypatch.chdir(fresh)
    plan = Plan(cfg)
    names = ("daily_breaks", "pump_life")
    targets = [p for n in names for p in (plan.selected_path(n), plan.draws_path(n))]
    monkeypatch.undo()
    run = snakemake(fresh, *targets)
    assert run.returncode == 0, run.out[-3000:]
    made = store_artifacts(fresh)
    n_fits = sum(len(cfg["datasets"][n]["methods"]) for n in names)
    assert len(made) == n_fits + len(names)  # every candidate plus one selection
    # the module run's store may hold more (other tests change data in it)
    assert made.items() <= store_artifacts(pipeline).items()
    import pandas as pd

    draws = sorted((fresh / "store" / "draws").rglob("*.parquet"))
    assert len(draws) == len(names)
    for path in draws:
        other = pipeline / path.relative_to(fresh)
        assert pd.read_parquet(path).equals(pd.read_parquet(other))
