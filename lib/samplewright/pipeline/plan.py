"""Snakemake integration: rule files, config checking, content keys and path helpers.

The rule file (``workflow_rules/samplewright.smk``) builds a :class:`Plan` from the
``samplewright`` config section when Snakemake parses the workflow. The plan fingerprints each
dataset (memoised by file stat), derives every content key, and so knows every artifact path
before any job runs. The user's own rules get those paths from :func:`sampler`, :func:`draws`,
:func:`check` and :func:`targets`.

Keys (20 hex characters of a sha256):

* fit key    = H("fit", data fingerprint, canonical method + options, RESULTS_VERSION)
* select key = H("select", fit keys of the candidates in order, selection rule, RESULTS_VERSION)
* draws key  = H("draws", select key, number of draws, root seed, RESULTS_VERSION)

Bump :data:`RESULTS_VERSION` whenever a change makes any artifact's content differ: that is what
makes pipelines refit after an upgrade (and only then).
"""

from __future__ import annotations

import hashlib
import json
import sys
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from samplewright.core.errors import ConfigError, InputDataError, KnotsError
from samplewright.core.versions import RESULTS_VERSION, SNAPSHOT_FORMAT_VERSION

__all__ = [
    "RESULTS_VERSION",
    "Plan",
    "check",
    "draws",
    "keyed",
    "load_config",
    "rules_path",
    "sampler",
    "targets",
]

KEY_LEN = 20
KEY_PATTERN = f"[0-9a-f]{{{KEY_LEN}}}"
LABEL_PATTERN = r"[A-Za-z0-9][A-Za-z0-9_.\-]*"
DATASET_PATTERN = r"[A-Za-z][A-Za-z0-9_]*"
_SCHEMA_PATH = Path(__file__).resolve().parent / "schemas" / "config.schema.json"


def rules_path(name: str = "samplewright.smk") -> str:
    """Absolute path of a rule file shipped with the package (default: the main rule file)."""
    import samplewright.workflow_rules as pkg

    path = Path(pkg.__file__).resolve().parent / name
    if not path.is_file():
        raise FileNotFoundError(f"no rule file {name!r} in {path.parent}")
    return str(path)


def _h(*parts: Any) -> str:
    text = json.dumps(parts, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()[:KEY_LEN]


# ---------------------------------------------------------------------------------------------
# configuration


def _where(path: Any) -> str:
    out = "samplewright"
    for part in path:
        out += f"[{part}]" if isinstance(part, int) else f".{part}"
    return out


def load_config(raw: Any) -> dict[str, Any]:
    """Validate the ``samplewright`` section against the JSON Schema and fill in defaults.

    Raises :class:`ConfigError` naming the offending key.
    """
    import jsonschema

    if not isinstance(raw, Mapping):
        raise ConfigError(f"samplewright: expected a mapping, found {type(raw).__name__}")
    schema = json.loads(_SCHEMA_PATH.read_text())
    validator = jsonschema.Draft202012Validator(schema)
    errors = sorted(validator.iter_errors(dict(raw)), key=lambda e: list(e.absolute_path))
    if errors:
        err = errors[0]
        where = _where(err.absolute_path)
        if err.validator == "additionalProperties":
            allowed = sorted(err.schema.get("properties", {}))
            extra = sorted(set(err.instance) - set(allowed))
            raise ConfigError(
                f"{where}: unknown key {extra[0]!r}"
                + (f" (allowed: {', '.join(allowed)})" if allowed else "")
            )
        if err.validator == "minProperties" and list(err.absolute_path) == ["datasets"]:
            raise ConfigError(f"{where}: at least one dataset is needed")
        raise ConfigError(f"{where}: {err.message}")
    cfg = json.loads(json.dumps(dict(raw)))  # deep copy, plain types
    top = schema["properties"]
    for key in ("store", "root_seed", "draws", "choose"):
        cfg.setdefault(key, top[key]["default"])
    ds_props = schema["$defs"]["dataset"]["properties"]
    for name, ds in cfg["datasets"].items():
        for key, spec in ds_props.items():
            if "default" in spec:
                ds.setdefault(key, spec["default"])
        ds.setdefault("draws", cfg["draws"])
        ds.setdefault("choose", cfg["choose"])
        _check_dataset(name, ds)
    return cfg


@dataclass(frozen=True)
class MethodSpec:
    """One candidate method of a dataset."""

    label: str
    method: str
    options: dict[str, Any] = field(default_factory=dict)

    @property
    def canonical(self) -> str:
        """Sorted JSON of the method and its options (as fitting.canonical_method)."""
        return json.dumps(
            {"method": self.method, "options": self.options}, sort_keys=True, separators=(",", ":")
        )


def _method_specs(name: str, ds: Mapping[str, Any]) -> list[MethodSpec]:
    from samplewright.fitting.catalog import METHOD_OPTIONS, METHODS

    specs = []
    for i, item in enumerate(ds.get("methods") or []):
        where = f"samplewright.datasets.{name}.methods[{i}]"
        if isinstance(item, str):
            item = {"method": item}
        method = item["method"]
        if method not in METHODS:
            raise ConfigError(
                f"{where}: unknown method {method!r} (expected one of: {', '.join(METHODS)})"
            )
        options = dict(item.get("options") or {})
        bad = sorted(set(options) - METHOD_OPTIONS[method])
        if bad:
            allowed = ", ".join(sorted(METHOD_OPTIONS[method])) or "none"
            raise ConfigError(
                f"{where}.options: unknown option {bad[0]!r} for {method} (allowed: {allowed})"
            )
        specs.append(MethodSpec(item.get("label", method), method, options))
    labels = [s.label for s in specs]
    dup = next((lab for lab in labels if labels.count(lab) > 1), None)
    if dup:
        raise ConfigError(
            f"samplewright.datasets.{name}.methods: label {dup!r} appears twice; give each "
            "repeated method a distinct 'label'"
        )
    return specs


def _check_dataset(name: str, ds: dict[str, Any]) -> None:
    where = f"samplewright.datasets.{name}"
    if "knots" in ds:
        extra = sorted(k for k in ("path", "column", "methods") if k in ds)
        if extra:
            raise ConfigError(f"{where}: a knots dataset takes no {extra[0]!r}")
        if not Path(ds["knots"]).is_file():
            raise ConfigError(f"{where}.knots: file {ds['knots']!r} not found")
        ds["methods"] = [{"method": "knots"}]
        ds["choose"] = "first"
        return
    for key in ("path", "column", "methods"):
        if key not in ds:
            raise ConfigError(f"{where}: missing key {key!r}")
    if not ds["produced"] and not Path(ds["path"]).is_file():
        raise ConfigError(f"{where}.path: file {ds['path']!r} not found")
    specs = _method_specs(name, ds)
    choose = ds["choose"]
    if choose not in ("aic", "bic", "first") and choose not in {s.label for s in specs}:
        raise ConfigError(
            f"{where}.choose: {choose!r} is neither a rule (aic, bic, first) nor one of the "
            f"method labels ({', '.join(s.label for s in specs)})"
        )


# ---------------------------------------------------------------------------------------------
# the plan


class Plan:
    """Everything the rules need, derived from the validated config at parse time."""

    def __init__(self, raw_config: Any, *, checkpoints: Any = None) -> None:
        self.config = load_config(raw_config)
        self.store = self.config["store"].rstrip("/")
        self.root_seed = int(self.config["root_seed"])
        self.results_version = RESULTS_VERSION

        self.snapshot_version = SNAPSHOT_FORMAT_VERSION
        self.checkpoints = checkpoints
        self.datasets: dict[str, dict[str, Any]] = self.config["datasets"]
        self.specs = {n: self._specs(n) for n in self.datasets}
        self._fps: dict[str, str] = {}
        self._keys: dict[tuple[str, ...], str] = {}
        self._fingerprint_all()

    # -- setup ------------------------------------------------------------------------------

    def _specs(self, name: str) -> list[MethodSpec]:
        ds = self.datasets[name]
        if "knots" in ds:
            return [MethodSpec("knots", "knots")]
        return _method_specs(name, ds)

    def _fingerprint_all(self) -> None:
        from samplewright.store.fingerprints import FingerprintCache

        cache = FingerprintCache(self.store)
        try:
            for name, ds in self.datasets.items():
                where = f"samplewright.datasets.{name}"
                if "knots" in ds:
                    try:
                        self._fps[name] = cache.fingerprint_knots(ds["knots"])
                    except KnotsError as exc:
                        raise ConfigError(f"{where}.knots: {exc}") from None
                elif not ds["produced"]:
                    try:
                        self._fps[name] = cache.fingerprint(
                            ds["path"],
                            ds["column"],
                            weights=ds["weights"],
                            censor=ds["censor"],
                            missing=ds["missing"],
                            infinite=ds["infinite"],
                        )
                    except InputDataError as exc:
                        raise ConfigError(f"{where}: {exc}") from None
        finally:
            cache.save()

    # -- fingerprints and keys ---------------------------------------------------------------

    def is_knots(self, name: str) -> bool:
        return "knots" in self.datasets[name]

    def is_produced(self, name: str) -> bool:
        return bool(self.datasets[name].get("produced"))

    def fingerprint(self, name: str) -> str:
        """The data fingerprint; for produced data it is read from the checkpoint's output."""
        if name in self._fps:
            return self._fps[name]
        if not self.is_produced(name):
            raise KeyError(name)
        if self.checkpoints is None:
            raise ConfigError(
                f"samplewright.datasets.{name}: produced data needs the rules' "
                "checkpoint (load the samplewright rule file)"
            )
        out = self.checkpoints.sw_fingerprint.get(dataset=name).output[0]
        return str(json.loads(Path(out).read_text())["fingerprint"])

    def spec(self, name: str, label: str) -> MethodSpec:
        for s in self.specs[name]:
            if s.label == label:
                return s
        raise KeyError(f"{name}/{label}")

    def fit_key(self, name: str, label: str) -> str:
        return _h(
            "fit", self.fingerprint(name), self.spec(name, label).canonical, self.results_version
        )

    def candidates(self, name: str) -> list[MethodSpec]:
        """Candidates in selection order (a fixed label choice goes first)."""
        specs = list(self.specs[name])
        choose = self.datasets[name]["choose"]
        if choose not in ("aic", "bic", "first"):
            specs.sort(key=lambda s: s.label != choose)
        return specs

    def select_rule(self, name: str) -> str:
        choose = self.datasets[name]["choose"]
        return choose if choose in ("aic", "bic", "first") else "first"

    def select_key(self, name: str) -> str:
        keys = [self.fit_key(name, s.label) for s in self.candidates(name)]
        memo = ("select", name, *keys)
        if memo not in self._keys:
            self._keys[memo] = _h(
                "select", keys, self.datasets[name]["choose"], self.results_version
            )
        return self._keys[memo]

    def draws_key(self, name: str) -> str:
        n = self.datasets[name]["draws"]
        return _h("draws", self.select_key(name), n, self.root_seed, self.results_version)

    # -- paths ------------------------------------------------------------------------------

    def path(self, relative: str) -> str:
        """``relative`` inside the store folder (rule output, log and benchmark patterns)."""
        return f"{self.store}/{relative}"

    def snapshot_path(self, name: str) -> str:
        return f"{self.store}/columns/{name}/{self.fingerprint(name)[:KEY_LEN]}.parquet"

    def fit_path(self, name: str, label: str) -> str:
        return f"{self.store}/samplers/{name}/{label}/{self.fit_key(name, label)}.parquet"

    def candidate_paths(self, name: str) -> list[str]:
        return [self.fit_path(name, s.label) for s in self.candidates(name)]

    def selected_path(self, name: str) -> str:
        return f"{self.store}/selected/{name}/{self.select_key(name)}.parquet"

    def draws_path(self, name: str) -> str:
        return f"{self.store}/draws/{name}/{self.draws_key(name)}.parquet"

    def check_path(self, name: str) -> str:
        return f"{self.store}/checks/{name}/{self.select_key(name)}.json"

    def fingerprint_record(self, name: str) -> str:
        return f"{self.store}/produced/{name}.json"

    def dataset_targets(self, name: str) -> list[str]:
        out = [self.selected_path(name)]
        if not self.is_knots(name):
            out.append(self.check_path(name))
        if self.datasets[name]["draws"] > 0:
            out.append(self.draws_path(name))
        return out

    # -- for rule definitions ----------------------------------------------------------------

    def lazy(self, fn: Callable[[str], Any], name: str) -> Any:
        """``fn(name)`` now, or an input function for data produced by the workflow."""
        if self.is_produced(name):
            return lambda wildcards: fn(name)
        return fn(name)

    def dataset_pattern(self) -> str:
        """Wildcard constraint for dataset names (the schema's name pattern)."""
        return DATASET_PATTERN

    def snapshot_args(self, name: str) -> str:
        """Command-line arguments naming the column, weights, censoring and cleaning policy."""
        import shlex

        ds = self.datasets[name]
        args = ["--column", ds["column"]]
        for opt in ("weights", "censor"):
            if ds.get(opt):
                args += [f"--{opt}", ds[opt]]
        args += ["--missing", ds["missing"], "--infinite", ds["infinite"]]
        return " ".join(shlex.quote(a) for a in args)

    def fit_args(self, name: str, label: str) -> str:
        """Command-line arguments for fitting candidate ``label`` of dataset ``name``."""
        import shlex

        spec = self.spec(name, label)
        args = ["--method", spec.method]
        for k, v in sorted(spec.options.items()):
            args += ["--option", f"{k}={json.dumps(v)}"]
        return " ".join(shlex.quote(a) for a in args)


# ---------------------------------------------------------------------------------------------
# helpers for the user's Snakefile

_PLANS: list[Plan] = []


def register(plan: Plan) -> Plan:
    """Called by the rule file; makes the plan visible to the helpers below.

    Also puts the folder of the running interpreter first on PATH (if it is not already), so the
    rules' ``samplewright`` commands run from the same environment as the Snakemake that planned
    them, activated or not.
    """
    import os

    bin_dir = str(Path(sys.executable).parent)
    parts = os.environ.get("PATH", "").split(os.pathsep)
    if parts[:1] != [bin_dir]:
        os.environ["PATH"] = os.pathsep.join([bin_dir, *parts])
    _PLANS.append(plan)
    return plan


def current_plan() -> Plan:
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


def keyed(template: str, *datasets: str) -> str:
    """A content-addressed path for *your* downstream outputs.

    ``{key}`` in ``template`` is replaced by a key of the selected samplers of ``datasets``
    (their select keys), so every output made from the same samplers shares one key. Use it for
    a downstream rule's output (and in
    ``rule all``) so that reverting the data finds the earlier results again instead of
    recomputing them. Only for datasets known at parse time (not ``produced: true``).

    >>> # keyed("results/{key}/season.json", "repair_hours")  ->  "results/3f0c.../season.json"
    """
    plan = current_plan()
    if "{key}" not in template:
        raise ConfigError(f"keyed: template {template!r} has no '{{key}}' placeholder")
    keys = []
    for name in datasets:
        _dataset(plan, name)
        if plan.is_produced(name):
            raise ConfigError(
                f"keyed: dataset {name!r} is produced by the workflow; its key is "
                "known only after the checkpoint"
            )
        keys.append([name, plan.select_key(name)])
    return template.replace("{key}", _h("keyed", keys, plan.results_version))


def targets() -> list[Any]:
    """Every artifact the plugin's rules can make: for ``rule all: input: targets()``."""
    plan = current_plan()
    out: list[Any] = []
    for name in plan.datasets:
        if plan.is_produced(name):
            out.append(lambda wildcards, n=name: plan.dataset_targets(n))
        else:
            out.extend(plan.dataset_targets(name))
    return out
