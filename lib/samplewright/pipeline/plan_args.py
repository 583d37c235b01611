"""Command-line arguments of the rules' jobs, built from the plan (mixed into :class:`Plan`).

Every rule runs the ``samplewright`` command; these methods turn a dataset's or joint input's
validated configuration into that command's arguments, shell-quoted, so the rule files stay one
line of ``shell:`` each. A file-format option appears only when set, so existing workflows keep
their command lines (and Snakemake sees no changed parameters).
"""

from __future__ import annotations

import json
import shlex
from collections.abc import Callable, Sequence
from typing import Any

from samplewright.core.canonical import canonical_json
from samplewright.pipeline.config import MethodSpec

__all__ = ["PlanArgs", "quoted"]


def quoted(args: Sequence[str]) -> str:
    """``args`` joined for a shell command line, each quoted where needed."""
    return " ".join(shlex.quote(a) for a in args)


def _reading_args(section: dict[str, Any]) -> list[str]:
    """``--missing``/``--infinite`` always, the file-format options only when set."""
    args = ["--missing", section["missing"], "--infinite", section["infinite"]]
    if section.get("separator") is not None:
        args += ["--separator", section["separator"]]
    if section.get("decimal", ".") != ".":
        args += ["--decimal", section["decimal"]]
    for marker in section.get("missing_markers") or []:
        args.append(f"--missing-marker={marker}")  # one word: a marker may start with '-'
    if section.get("encoding") is not None:
        args += ["--encoding", section["encoding"]]
    return args


def _option_args(flag: str, prefix: str, options: dict[str, Any]) -> list[str]:
    out: list[str] = []
    for k, v in sorted(options.items()):
        out += [flag, f"{prefix}{k}={json.dumps(v)}"]
    return out


class PlanArgs:
    """The argument builders of :class:`~samplewright.pipeline.plan.Plan`."""

    datasets: dict[str, dict[str, Any]]
    joints: dict[str, dict[str, Any]]
    roles: dict[str, dict[str, str] | None]
    joint_specs: dict[str, list[tuple[str, MethodSpec]]]
    spec: Callable[[str, str], MethodSpec]

    def snapshot_args(self, name: str) -> str:
        """Arguments naming the column, weights, censoring and cleaning policy (column
        snapshots and the fingerprint checkpoint)."""
        ds = self.datasets[name]
        args = ["--column", ds["column"]]
        for opt in ("weights", "censor"):
            if ds.get(opt):
                args += [f"--{opt}", ds[opt]]
        return quoted(args + _reading_args(ds))

    def _role_args(self, name: str) -> list[str]:
        ds = self.datasets[name]
        roles = self.roles[name] or {}
        args: list[str] = []
        for role, flag in (("value", "--column"), ("lower", "--lower"), ("upper", "--upper")):
            if role in roles:
                args += [flag, roles[role]]
        for role, flag in (("truncation", "--truncation"), ("weight", "--weights")):
            if role in roles:
                args += [flag, roles[role]]
        if "censor" in roles:
            args += ["--censor", roles["censor"]]
        t = ds.get("truncation")
        if t is not None and not isinstance(t, str):
            args += ["--truncation", repr(float(t))]
        return args

    def table_snapshot_args(self, name: str) -> str:
        """Arguments of the table snapshot of a joint input or an incomplete-data dataset."""
        if name in self.joints:
            entry = self.joints[name]
            return quoted(["--columns", ",".join(entry["columns"]), *_reading_args(entry)])
        return quoted(self._role_args(name) + _reading_args(self.datasets[name]))

    def fit_args(self, name: str, label: str) -> str:
        """Arguments for fitting candidate ``label`` of dataset ``name`` from its snapshot."""
        spec = self.spec(name, label)
        args = ["--method", spec.method, *_option_args("--option", "", spec.options)]
        return quoted(args + self._role_args(name))

    def elicit_args(self, name: str) -> str:
        """Arguments of the ``elicit`` command for a quantiles / three_points dataset."""
        ds = self.datasets[name]
        if "quantiles" in ds:
            q = ds["quantiles"]
            points = ",".join(
                f"{p!r}:{float(x)!r}" for p, x in zip(q["probabilities"], q["values"], strict=True)
            )
            args = ["--quantiles", points, "--family", q["family"]]
            for key in ("lower", "upper", "n_terms"):
                if q.get(key) is not None:
                    args += [f"--{key.replace('_', '-')}", repr(q[key])]
            return quoted(args)
        t = ds["three_points"]
        points = ",".join(repr(float(t[k])) for k in ("low", "mode", "high"))
        args = ["--three-points", points, "--family", t["family"]]
        if t.get("shape") is not None:
            args += ["--shape", repr(t["shape"])]
        return quoted(args)

    def fit_joint_args(self, name: str) -> str:
        """Arguments of ``fit-joint`` for joint input ``name`` (read from its table snapshot)."""
        entry = self.joints[name]
        args = ["--columns", ",".join(entry["columns"])]
        for column, spec in self.joint_specs[name]:
            args += ["--marginal", f"{column}={spec.method}"]
            args += _option_args("--marginal-option", f"{column}:", spec.options)
        args += ["--coupling", entry["coupling"]]
        if entry.get("rank_correlation") is not None:
            args += ["--rank-correlation", canonical_json(entry["rank_correlation"])]
        args += ["--correlation-method", entry["correlation_method"]]
        return quoted(args)

    def interval_args(self, name: str) -> str:
        """Arguments of ``interval`` for the dataset's ``intervals`` items (as one JSON list)."""
        return quoted(["--items", canonical_json(self.datasets[name]["intervals"])])

    def replicate_args(self, name: str) -> str:
        """Arguments of ``replicate`` for the dataset's ``replicates`` settings."""
        r = self.datasets[name]["replicates"]
        return quoted(["--replicates", str(r["n_replicates"]), "--kind", r["kind"]])
