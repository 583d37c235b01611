"""The package's shape: stages import only the stages before them, and planning stays light."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parents[2] / "lib" / "samplewright"
# Each stage may import the stages listed before it (and itself), never one after it.
LAYERS = ("core", "intake", "distributions", "resample", "fitting", "check", "store", "pipeline")
# Top-level modules: the public façades may import anything (lazily); nothing imports them.
FACADES = {"__init__", "__main__", "workflow"}


def _stage(module: str) -> str | None:
    """The stage of a dotted module name inside samplewright, None for a façade or outside."""
    parts = module.split(".")
    if parts[0] != "samplewright" or len(parts) < 2:
        return None
    return parts[1] if parts[1] in LAYERS else None


def _imports(path: Path) -> list[tuple[int, str]]:
    """Every samplewright module imported anywhere in a file (also inside functions)."""
    tree = ast.parse(path.read_text(), filename=str(path))
    rel = path.relative_to(PKG.parent).with_suffix("")
    here = list(rel.parts[:-1]) if rel.name != "__init__" else list(rel.parts[:-1])
    found: list[tuple[int, str]] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = here[: len(here) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            found.append((node.lineno, mod))
            found += [(node.lineno, f"{mod}.{a.name}") for a in node.names]
    return [(line, m) for line, m in found if m.startswith("samplewright")]


def _modules() -> list[Path]:
    return sorted(p for p in PKG.rglob("*.py") if "workflow_rules" not in p.parts)


def test_every_module_belongs_to_a_stage() -> None:
    """Each module lives in one of the stage subpackages (or is a top-level façade)."""
    strays = []
    for path in _modules():
        rel = path.relative_to(PKG)
        if len(rel.parts) == 1:
            if rel.stem not in FACADES:
                strays.append(str(rel))
        elif rel.parts[0] not in LAYERS:
            strays.append(str(rel))
    assert strays == []


@pytest.mark.parametrize("path", _modules(), ids=lambda p: str(p.relative_to(PKG)))
def test_no_import_runs_against_the_stage_order(path: Path) -> None:
    """A module imports only its own stage and the stages before it; nothing imports a façade."""
    rel = path.relative_to(PKG)
    if len(rel.parts) == 1:
        return  # façades re-export lazily
    mine = LAYERS.index(rel.parts[0])
    bad = []
    for line, module in _imports(path):
        if module in {f"samplewright.{f}" for f in FACADES - {"__init__"}}:
            bad.append(f"line {line}: {module} (a façade)")
            continue
        stage = _stage(module)
        if stage is not None and LAYERS.index(stage) > mine:
            bad.append(f"line {line}: {module}")
    assert bad == [], f"{rel} imports a later stage: {bad}"


def test_the_wheel_lists_every_subpackage() -> None:
    """pyproject.toml names each package directory, so an installed wheel is never missing one."""
    import tomllib

    config = tomllib.loads((PKG.parents[1] / "pyproject.toml").read_text())
    listed = set(config["tool"]["setuptools"]["packages"])
    on_disk = {
        ".".join(init.parent.relative_to(PKG.parent).parts)
        for init in PKG.rglob("__init__.py")
        if "__pycache__" not in init.parts
    }
    assert on_disk - listed == set()
