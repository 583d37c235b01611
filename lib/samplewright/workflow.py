"""Helpers for your own Snakemake rules: the paths of the artifacts samplewright's rules make.

Import this module in a Snakefile that uses the rules from :func:`rules_path`::

    import samplewright.workflow as sw
    rule risk:
        input: sw.sampler("repair_hours")
        ...

:func:`sampler`, :func:`draws` and :func:`check` give the content-addressed path of one dataset's
selected sampler, its draws and its check summary; :func:`intervals`, :func:`replicates` and
:func:`report` its bootstrap intervals, parameter replicates and check report; :func:`joint` and
:func:`joint_draws` a joint input's sampler and draws; :func:`keyed` puts the keys of the
datasets an output depends on into its path, and :func:`targets` lists every artifact the
configuration asks for. Importing this module loads no scipy or pandas, so every Snakemake
parse stays cheap.
"""

from __future__ import annotations

from samplewright.core.versions import RESULTS_VERSION
from samplewright.pipeline.helpers import (
    check,
    draws,
    intervals,
    joint,
    joint_draws,
    keyed,
    replicates,
    report,
    rules_path,
    sampler,
    targets,
)

__all__ = [
    "RESULTS_VERSION",
    "check",
    "draws",
    "intervals",
    "joint",
    "joint_draws",
    "keyed",
    "replicates",
    "report",
    "rules_path",
    "sampler",
    "targets",
]
