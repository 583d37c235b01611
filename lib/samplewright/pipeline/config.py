"""The ``samplewright`` section of a workflow configuration: schema, defaults and checks.

:func:`load_config` validates the section against ``schemas/config.schema.json`` (which rejects
unknown keys), fills in the schema's defaults and then checks what a schema cannot: that files
exist, that every method and option is known to the method catalog, that labels are unique and
that ``choose`` names a rule or a label. Every error is a :class:`ConfigError` naming the key
(``samplewright.datasets.pumps.methods[1]: unknown method 'gama' ...``).

Nothing here imports scipy or pandas: Snakemake runs it on every parse.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from samplewright.check.selection import SELECTION_RULES
from samplewright.core.canonical import canonical_json
from samplewright.core.errors import ConfigError

__all__ = [
    "DATASET_PATTERN",
    "LABEL_PATTERN",
    "READING_OPTIONS",
    "SELECTION_RULES",
    "MethodSpec",
    "load_config",
    "load_schema",
    "method_specs",
]

LABEL_PATTERN = r"[A-Za-z0-9][A-Za-z0-9_.\-]*"
DATASET_PATTERN = r"[A-Za-z][A-Za-z0-9_]*"
# dataset keys that say how to read the data file (passed on to samplewright.intake)
READING_OPTIONS = (
    "weights",
    "censor",
    "missing",
    "infinite",
    "separator",
    "decimal",
    "missing_markers",
    "encoding",
)
_SCHEMA_PATH = Path(__file__).resolve().parent / "schemas" / "config.schema.json"


def _where(path: Any) -> str:
    out = "samplewright"
    for part in path:
        out += f"[{part}]" if isinstance(part, int) else f".{part}"
    return out


def load_schema() -> dict[str, Any]:
    """The configuration's JSON Schema, with the allowed reading options filled in from
    :mod:`samplewright.intake.options` (the one place they are listed)."""
    from samplewright.intake.options import DECIMALS, SEPARATORS

    schema: dict[str, Any] = json.loads(_SCHEMA_PATH.read_text())
    props = schema["$defs"]["dataset"]["properties"]
    props["separator"]["enum"] = [None, *SEPARATORS]
    props["decimal"]["enum"] = list(DECIMALS)
    return schema


def load_config(raw: Any) -> dict[str, Any]:
    """Validate the ``samplewright`` section against the JSON Schema and fill in defaults.

    Raises :class:`ConfigError` naming the offending key.
    """
    import jsonschema

    if not isinstance(raw, Mapping):
        raise ConfigError(f"samplewright: expected a mapping, found {type(raw).__name__}")
    schema = load_schema()
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
    """One candidate method of a dataset.

    Attributes
    ----------
    label : str
        The candidate's name in store paths (the method unless the config gives a label).
    method : str
        A method of the catalog.
    options : dict
        The method's options as configured.
    """

    label: str
    method: str
    options: dict[str, Any] = field(default_factory=dict)

    @property
    def canonical(self) -> str:
        """Canonical JSON of the method and its options (what the fit key hashes)."""
        return canonical_json({"method": self.method, "options": self.options})


def method_specs(name: str, ds: Mapping[str, Any]) -> list[MethodSpec]:
    """The candidate methods of dataset ``name``, each checked against the method catalog."""
    if "knots" in ds:
        return [MethodSpec("knots", "knots")]
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
        spec = MethodSpec(item.get("label", method), method, options)
        try:
            spec.canonical  # noqa: B018 - a value that cannot enter a key is refused here
        except ValueError as exc:
            raise ConfigError(f"{where}.options: {exc}") from None
        specs.append(spec)
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
    specs = method_specs(name, ds)
    choose = ds["choose"]
    if choose not in SELECTION_RULES and choose not in {s.label for s in specs}:
        raise ConfigError(
            f"{where}.choose: {choose!r} is neither a rule (aic, bic, first) nor one of the "
            f"method labels ({', '.join(s.label for s in specs)})"
        )
