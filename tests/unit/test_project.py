"""Project-level checks: the README's commands, CI and the public API stay in step."""

from __future__ import annotations

import re
from pathlib import Path

import samplewright

ROOT = Path(__file__).resolve().parents[2]


def _quick_start_commands() -> list[str]:
    text = (ROOT / "README.md").read_text()
    section = text.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    block = re.search(r"```(?:sh|bash|console)?\n(.*?)```", section, re.S)
    assert block, "README Quick start has no code block"
    return [
        ln.strip()
        for ln in block.group(1).splitlines()
        if ln.strip() and not ln.strip().startswith("#")
    ]


def test_quick_start_has_exactly_two_commands() -> None:
    """The README's Quick start lists exactly two commands: the demo and the test suite."""
    cmds = _quick_start_commands()
    assert len(cmds) == 2, cmds
    assert "demo" in cmds[0] and "test" in cmds[1]


def test_ci_runs_the_readme_test_command() -> None:
    """.ci/run calls exactly the README's test command."""
    test_cmd = _quick_start_commands()[1]
    ci_lines = [ln.strip() for ln in (ROOT / ".ci" / "run").read_text().splitlines()]
    assert test_cmd in ci_lines


def test_public_names_are_sorted_and_importable() -> None:
    """__all__ is sorted and every name in it exists."""
    assert list(samplewright.__all__) == sorted(samplewright.__all__)
    for name in samplewright.__all__:
        assert hasattr(samplewright, name), name


def test_rules_path_points_at_shipped_rule_file() -> None:
    """rules_path() returns an existing .smk file inside the installed package."""
    path = Path(samplewright.rules_path())
    assert path.is_file() and path.suffix == ".smk"
