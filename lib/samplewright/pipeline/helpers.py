"""Functions for users' Snakefiles: where samplewright's rules put each artifact.

The entry rule file registers its :class:`~samplewright.pipeline.plan.Plan` with
:func:`register`; the functions below ask the last plan registered. They are re-exported by
:mod:`samplewright.workflow`, the module a Snakefile imports. Importing this module loads no
scipy or pandas, so every Snakemake parse stays cheap.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import Any

from samplewright.core.errors import ConfigError
from samplewright.pipeline.plan import Plan

__all__ = [
    "check",
    "current_plan",
    "draws",
    "intervals",
    "joint",
    "joint_draws",
    "keyed",
    "register",
    "replicates",
    "report",
    "rules_path",
    "sampler",
    "targets",
]

_PLANS: list[Plan] = []


def rules_path(name: str = "samplewright.smk") -> str:
    """Absolute path of a rule file shipped with the package (default: the entry rule file)."""
    import samplewright.workflow_rules as pkg

    path = Path(pkg.__file__).resolve().parent / name
    if not path.is_file():
        raise FileNotFoundError(f"no rule file {name!r} in {path.parent}")
    return str(path)


def register(plan: Plan) -> Plan:
    """Called by the rule file; makes the plan visible to the helpers below.

    Also puts the folder of the running interpreter first on PATH (if it is not already), so the
    rules' ``samplewright`` commands run from the same environment as the Snakemake that planned
    them, activated or not.
    """
    bin_dir = str(Path(sys.executable).parent)
    parts = os.environ.get("PATH", "").split(os.pathsep)
    if parts[:1] != [bin_dir]:
        os.environ["PATH"] = os.pathsep.join([bin_dir, *parts])
    _PLANS.append(plan)
    return plan


def current_plan() -> Plan:
    """The plan the samplewright rules registered last."""
    if not _PLANS:
        raise ConfigError(
            "samplewright rules are not loaded yet: put the 'module'/'use rule' or 'include:' "
            "lines before rules that call samplewright.workflow helpers"
        )
    return _PLANS[-1]


def _dataset(plan: Plan, name: str) -> str:
    if name not in plan.datasets:
        raise ConfigError(
            f"samplewright: no dataset {name!r} in the config (datasets: "
            f"{', '.join(sorted(plan.datasets))})"
        )
    return name


def _configured(plan: Plan, name: str, key: str) -> str:
    _dataset(plan, name)
    if key not in plan.datasets[name]:
        raise ConfigError(
            f"samplewright.datasets.{name}: no {key!r} in the config, so no {key} file is made"
        )
    return name


def _joint(plan: Plan, name: str) -> str:
    if name not in plan.joints:
        raise ConfigError(
            f"samplewright: no joint input {name!r} in the config (joint: "
            f"{', '.join(sorted(plan.joints)) or 'none'})"
        )
    return name


def sampler(name: str) -> Any:
    """Path of the selected sampler artifact of dataset ``name`` (for a rule's ``input:``)."""
    plan = current_plan()
    return plan.lazy(plan.selected_path, _dataset(plan, name))


def draws(name: str) -> Any:
    """Path of the Parquet file of draws of dataset ``name``."""
    plan = current_plan()
    return plan.lazy(plan.draws_path, _dataset(plan, name))


def check(name: str) -> Any:
    """Path of the check summary (JSON; Markdown beside it) of dataset ``name``."""
    plan = current_plan()
    return plan.lazy(plan.check_path, _dataset(plan, name))


def intervals(name: str) -> Any:
    """Path of the bootstrap intervals (JSON) of dataset ``name`` (its ``intervals`` config)."""
    plan = current_plan()
    return plan.lazy(plan.intervals_path, _configured(plan, name, "intervals"))


def replicates(name: str) -> Any:
    """Path of the parameter replicates (one ensemble artifact) of dataset ``name``'s selected
    method; ``load_sampler`` reads it, ``draw_nested`` separates uncertainty from variability."""
    plan = current_plan()
    return plan.lazy(plan.replicates_path, _configured(plan, name, "replicates"))


def joint(name: str) -> str:
    """Path of the joint sampler artifact of joint input ``name``."""
    plan = current_plan()
    return plan.joint_path(_joint(plan, name))


def joint_draws(name: str) -> str:
    """Path of the Parquet file of draws of joint input ``name`` (one column per input)."""
    plan = current_plan()
    if plan.joints[_joint(plan, name)]["draws"] == 0:
        raise ConfigError(f"samplewright.joint.{name}.draws: 0, so no draws file is made")
    return plan.joint_draws_path(name)


def report(name: str) -> Any:
    """Path of the check report (HTML; JSON beside it) of dataset ``name``."""
    plan = current_plan()
    return plan.lazy(plan.report_path, _dataset(plan, name))


def keyed(template: str, *datasets: str) -> str:
    """A content-addressed path for *your* downstream outputs.

    ``{key}`` in ``template`` is replaced by a key of the selected samplers of ``datasets``
    (their select keys), so every output made from the same samplers shares one key. Use it for
    a downstream rule's output (and in ``rule all``) so that reverting the data finds the
    earlier results again instead of recomputing them. Only for datasets known at parse time
    (not ``produced: true``).

    >>> # keyed("results/{key}/season.json", "repair_hours")  ->  "results/3f0c.../season.json"
    """
    plan = current_plan()
    if "{key}" not in template:
        raise ConfigError(f"keyed: template {template!r} has no '{{key}}' placeholder")
    for name in datasets:
        _dataset(plan, name)
        if plan.is_produced(name):
            raise ConfigError(
                f"keyed: dataset {name!r} is produced by the workflow; its key is "
                "known only after the checkpoint"
            )
    return template.replace("{key}", plan.keyed_key(list(datasets)))


def targets() -> list[Any]:
    """Every artifact the plugin's rules can make: for ``rule all: input: targets()``."""
    plan = current_plan()
    out: list[Any] = []
    for name in plan.datasets:
        if plan.is_produced(name):
            out.append(lambda wildcards, n=name: plan.dataset_targets(n))
        else:
            out.extend(plan.dataset_targets(name))
    for name in plan.joints:
        out.extend(plan.joint_targets(name))
    return out
