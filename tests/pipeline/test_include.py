"""`include:` and `module` use the same rule file and make the same artifacts (issue case 11)."""

from __future__ import annotations

import json
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


def test_include_and_module_make_identicalstore_artifacts(pipeline: Path, tmp_path: Path) -> None:
    """A copy whose Snakefile uses include: plans nothing on the module run's store and, run
    fresh, writes the same paths, content hashes, draws and risk figures."""
    text = (pipeline / "Snakefile").read_text()
    assert MODULE_BLOCK in text
    included = text.replace(MODULE_BLOCK, "include: samplewright.rules_path()\n")
    (pipeline / "Snakefile.include").write_text(included)
    try:
        # the include form plans the very same paths: nothing to do on the module run's store
        assert nothing_to_do(dry(pipeline, "-s", "Snakefile.include"))
    finally:
        (pipeline / "Snakefile.include").unlink()

    fresh = copy_example(tmp_path / "fresh")
    (fresh / "Snakefile").write_text(included)
    run = snakemake(fresh)
    assert run.returncode == 0, run.out[-3000:]
    # the module run's store may hold more (other tests change data in it)
    assert store_artifacts(fresh).items() <= store_artifacts(pipeline).items()
    cfg = yaml.safe_load((fresh / "config.yaml").read_text())["samplewright"]["datasets"]
    n_fits = sum(len(ds.get("methods", ["knots"])) for ds in cfg.values())
    assert len(store_artifacts(fresh)) == n_fits + len(cfg)  # every candidate plus one selection
    risk_b = sorted((fresh / "results").glob("*/season_risk.json"))
    assert len(risk_b) == 1
    risk_a = pipeline / risk_b[0].relative_to(fresh)
    assert json.loads(risk_a.read_text()) == json.loads(risk_b[0].read_text())
    import pandas as pd

    for path in sorted((fresh / "store" / "draws").rglob("*.parquet")):
        other = pipeline / path.relative_to(fresh)
        assert pd.read_parquet(path).equals(pd.read_parquet(other))
