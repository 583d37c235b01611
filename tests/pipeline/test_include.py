"""`include:` and `module` use the same rule file and make the same artifacts (issue case 11)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import yaml

import samplewright

from .conftest import copy_example, dry, nothing_to_do, snakemake

pytestmark = pytest.mark.pipeline

MODULE_BLOCK = """module samplewright:
    snakefile:
        samplewright.rules_path()
    config:
        config["samplewright"]


use rule * from samplewright
"""


def _artifacts(work: Path) -> dict[str, str]:
    """Relative path -> content hash of every sampler artifact in the store."""
    out = {}
    for sub in ("samplers", "selected"):
        for path in sorted((work / "store" / sub).rglob("*.parquet")):
            out[str(path.relative_to(work))] = samplewright.read_metadata(path)["content_hash"]
    return out


def test_include_and_module_make_identical_artifacts(pipeline: Path, tmp_path: Path) -> None:
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
    assert _artifacts(fresh).items() <= _artifacts(pipeline).items()
    cfg = yaml.safe_load((fresh / "config.yaml").read_text())["samplewright"]["datasets"]
    n_fits = sum(len(ds.get("methods", ["knots"])) for ds in cfg.values())
    assert len(_artifacts(fresh)) == n_fits + len(cfg)  # every candidate plus one selection
    risk_b = sorted((fresh / "results").glob("*/season_risk.json"))
    assert len(risk_b) == 1
    risk_a = pipeline / risk_b[0].relative_to(fresh)
    assert json.loads(risk_a.read_text()) == json.loads(risk_b[0].read_text())
    import pandas as pd

    for path in sorted((fresh / "store" / "draws").rglob("*.parquet")):
        other = pipeline / path.relative_to(fresh)
        assert pd.read_parquet(path).equals(pd.read_parquet(other))
