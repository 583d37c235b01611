"""Snakemake integration: where the rule files are, config checking, content keys, path helpers."""

from __future__ import annotations

from pathlib import Path

__all__ = ["rules_path"]


def rules_path(name: str = "samplewright.smk") -> str:
    """Absolute path of a rule file shipped with the package (default: the main rule file)."""
    import samplewright.workflow_rules as pkg

    path = Path(pkg.__file__).resolve().parent / name
    if not path.is_file():
        raise FileNotFoundError(f"no rule file {name!r} in {path.parent}")
    return str(path)
