"""Shared helpers for the test suite: running the CLI in-process and listing folders."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest

from samplewright.pipeline.cli import main


@pytest.fixture
def run_cli(capsys: pytest.CaptureFixture[str]) -> Callable[..., tuple[int, str, str]]:
    """Run ``samplewright ARGS...`` in-process; return (exit code, stdout, stderr)."""

    def run(*args: object) -> tuple[int, str, str]:
        capsys.readouterr()  # drop anything printed before this call
        code = main([str(a) for a in args])
        out, err = capsys.readouterr()
        return code, out, err

    return run


def listing(folder: Path) -> list[str]:
    """Every name in ``folder``, hidden files included, sorted."""
    return sorted(p.name for p in folder.iterdir())


@pytest.fixture
def names_in() -> Callable[[Path], list[str]]:
    """The sorted names (hidden ones included) of the entries of a folder."""
    return listing


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    """Under xdist (``dev.py test``), keep each test file on one worker, and every test that uses
    the example pipeline's one run (the ``pipeline`` fixture) on the same worker, so module- and
    session-scoped fixtures are built once."""
    if not config.pluginmanager.hasplugin("xdist"):
        return
    sharing = {
        item.nodeid.split("::")[0]
        for item in items
        if "pipeline" in getattr(item, "fixturenames", ())
    }
    for item in items:
        file = item.nodeid.split("::")[0]
        item.add_marker(pytest.mark.xdist_group("example-pipeline" if file in sharing else file))
