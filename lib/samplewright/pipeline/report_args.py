"""Command-line arguments of the check and report rules (``workflow_rules/rules/check.smk``).

Kept here rather than in the rule file, so the rule file holds rules only and each argument list
is built, shell-quoted, in one place from the plan.
"""

from __future__ import annotations

import shlex
from collections.abc import Callable
from typing import Any

__all__ = ["label_args", "optional_input", "report_args"]


def label_args(plan: Any, name: str) -> str:
    """``--label L`` for each candidate of dataset ``name``, in candidate order."""
    return " ".join(f"--label {shlex.quote(s.label)}" for s in plan.candidates(name))


def report_args(plan: Any, name: str) -> str:
    """The report command's optional inputs and units for dataset ``name``: its check summary
    and data (datasets read from data), units, bootstrap intervals and replicates."""
    ds, args = plan.datasets[name], []
    if plan.has_check(name):
        args += ["--check", plan.check_path(name)]
    if plan.has_data(name):
        args += ["--data", plan.snapshot_path(name)]
    if ds.get("units"):
        args += ["--units", str(ds["units"])]
    if "intervals" in ds:
        args += ["--intervals", plan.intervals_path(name)]
    if "replicates" in ds:
        args += ["--replicates", plan.replicates_path(name)]
    return " ".join(shlex.quote(a) for a in args)


def optional_input(plan: Any, what: str, name: str, wrap: Callable[[str], Any] = str) -> list[Any]:
    """The path of input ``what`` of dataset ``name`` (through ``wrap``, e.g. Snakemake's
    ``ancient``) when it has one, else nothing.

    ``what``: ``check``, ``data``, ``intervals`` or ``replicates``.
    """
    ds = plan.datasets[name]
    paths = {
        "check": (plan.has_check(name), plan.check_path),
        "data": (plan.has_data(name), plan.snapshot_path),
        "intervals": ("intervals" in ds, plan.intervals_path),
        "replicates": ("replicates" in ds, plan.replicates_path),
    }
    if what not in paths:
        raise ValueError(f"what: expected one of {', '.join(paths)}, found {what!r}")
    present, path = paths[what]
    return [wrap(path(name))] if present else []
