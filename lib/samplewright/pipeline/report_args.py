"""Command-line arguments and paths of the check and report rules (``rules/check.smk``,
``rules/joint.smk``).

Kept here rather than in the rule files, so the rule files hold rules only and each argument
list is built, shell-quoted, in one place from the plan.

Every dataset read from data gets a check summary, whatever its form: one column, a column with
a truncation point, or a table snapshot of columns by role (truncation, censoring, interval
rows); the check compares incomplete data with the matching nonparametric estimate. A joint
input gets its own page, under the report key :func:`joint_report_key`.
"""

from __future__ import annotations

import re
import shlex
from collections.abc import Callable
from typing import Any

__all__ = [
    "check_args",
    "checks",
    "dataset_report_pattern",
    "joint_report_key",
    "joint_report_path",
    "label_args",
    "optional_input",
    "report_args",
]


def checks(plan: Any, name: str) -> bool:
    """Whether dataset ``name`` gets a check summary: it is read from data (one column, a
    truncated column or a table of columns by role; not knots, quantiles or three points)."""
    return bool(plan.has_data(name))


def label_args(plan: Any, name: str) -> str:
    """``--label L`` for each candidate of dataset ``name``, in candidate order."""
    return " ".join(f"--label {shlex.quote(s.label)}" for s in plan.candidates(name))


def check_args(plan: Any, name: str) -> str:
    """The check command's optional arguments for dataset ``name``: its units."""
    units = plan.datasets[name].get("units")
    return "" if not units else " ".join(shlex.quote(a) for a in ("--units", str(units)))


def report_args(plan: Any, name: str) -> str:
    """The report command's optional inputs and units for dataset ``name``: its check summary
    and data (datasets read from data), units, bootstrap intervals and replicates."""
    ds, args = plan.datasets[name], []
    if checks(plan, name):
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
        "check": (checks(plan, name), plan.check_path),
        "data": (plan.has_data(name), plan.snapshot_path),
        "intervals": ("intervals" in ds, plan.intervals_path),
        "replicates": ("replicates" in ds, plan.replicates_path),
    }
    if what not in paths:
        raise ValueError(f"what: expected one of {', '.join(paths)}, found {what!r}")
    present, path = paths[what]
    return [wrap(path(name))] if present else []


def dataset_report_pattern(plan: Any) -> str:
    """A wildcard constraint matching exactly the dataset names (not the joint inputs, whose
    pages share the reports folder), or a pattern matching nothing."""
    return "|".join(re.escape(n) for n in sorted(plan.datasets)) or "(?!)"


def joint_report_key(plan: Any, name: str) -> str:
    """The content key of joint input ``name``'s page: its artifact's key and the results
    version (the page draws its picture from the artifact alone)."""
    from samplewright.pipeline.plan import content_key

    return content_key("joint_report", plan.joint_key(name), plan.results_version)


def joint_report_path(plan: Any, name: str) -> str:
    """Where joint input ``name``'s page is written (its numbers as JSON beside it)."""
    return str(plan.layout.report(name, joint_report_key(plan, name)))
