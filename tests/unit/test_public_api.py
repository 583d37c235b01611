"""The public surface is exactly what ``__all__`` says: complete, sorted, importable, documented."""

from __future__ import annotations

import importlib
import re
from pathlib import Path

import pytest

import samplewright
import samplewright.workflow

ROOT = Path(__file__).resolve().parents[2]
PUBLIC_MODULES = (samplewright, samplewright.workflow)


@pytest.mark.parametrize("module", PUBLIC_MODULES, ids=lambda m: m.__name__)
def test_all_is_sorted_unique_and_public(module: object) -> None:
    """``__all__`` lists each name once, sorted, none of them private."""
    names = list(module.__all__)  # type: ignore[attr-defined]
    assert names == sorted(set(names))
    assert not [n for n in names if n.startswith("_")]


@pytest.mark.parametrize("module", PUBLIC_MODULES, ids=lambda m: m.__name__)
def test_every_listed_name_resolves(module: object) -> None:
    """Every name in ``__all__`` can be fetched (lazy names included)."""
    for name in module.__all__:  # type: ignore[attr-defined]
        assert getattr(module, name) is not None, name


def test_lazy_table_and_all_agree() -> None:
    """Each lazily loaded name is in ``__all__``, and every other listed name is defined eagerly."""
    lazy = set(samplewright._LAZY)
    listed = set(samplewright.__all__)
    assert lazy <= listed
    eager = {n for n in listed - lazy if n != "__version__"}
    assert all(n in vars(samplewright) for n in eager), eager - set(vars(samplewright))
    for name, module in samplewright._LAZY.items():
        assert hasattr(importlib.import_module(f"samplewright.{module}"), name), (name, module)


def test_public_classes_and_functions_say_where_they_live() -> None:
    """Objects exported at the top level come from the stage subpackages, not stray modules."""
    stages = (
        "core",
        "intake",
        "distributions",
        "resample",
        "fitting",
        "check",
        "store",
        "pipeline",
    )
    for name in samplewright.__all__:
        obj = getattr(samplewright, name)
        mod = getattr(obj, "__module__", "samplewright")
        assert mod == "samplewright" or mod.split(".")[1] in stages, (name, mod)


def test_readme_names_only_public_names() -> None:
    """Every ``sw.<name>`` / ``samplewright.<name>`` the README uses is public."""
    text = (ROOT / "README.md").read_text()
    used = set(re.findall(r"\b(?:sw|samplewright)\.([A-Za-z_][A-Za-z0-9_]*)", text))
    allowed = set(samplewright.__all__) | {"workflow", "__version__"}
    workflow_names = set(re.findall(r"\bsw\.([A-Za-z_]\w*)\(", text)) & set(
        samplewright.workflow.__all__
    )
    unknown = sorted(
        used - allowed - workflow_names - {"smk", "yaml", "json", "parquet", "csv", "datasets"}
    )
    assert unknown == [], f"README uses non-public names: {unknown}"
