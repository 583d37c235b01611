"""The ``samplewright`` section of a workflow configuration: schema, defaults and checks.

:func:`load_config` validates the section against ``schemas/config.schema.json`` (which rejects
unknown keys), fills in the schema's defaults and then checks what a schema cannot: that files
exist, that every method and option is known to the method catalog, that labels are unique, that
``choose`` names a rule or a label and that a likelihood rule (``aic``, ``bic``) is not asked to
rank a density against a probability mass (:mod:`samplewright.check.comparable`). Every error is
a :class:`ConfigError` naming the key
(``samplewright.datasets.pumps.methods[1]: unknown method 'gama' ...``).

A dataset is one of four kinds (:func:`dataset_kind`): ``"data"`` (a ``path``, with a
``column`` or interval columns ``lower``/``upper``), ``"knots"`` (a drawn CDF), ``"quantiles"``
or ``"three_points"`` (expert judgement, no file). The ``joint`` entries are checked by
:mod:`samplewright.pipeline.config_joint`.

Nothing here imports scipy or pandas on a plain configuration: Snakemake runs it on every parse.
Only datasets with incomplete data (``truncation``, ``lower``/``upper``) import the fitting
module that lists the methods able to fit them.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from samplewright.check.selection import SELECTION_RULES
from samplewright.core.canonical import canonical_json
from samplewright.core.errors import ConfigError, SamplewrightError

__all__ = [
    "DATASET_PATTERN",
    "DATA_FREE_KINDS",
    "LABEL_PATTERN",
    "READING_OPTIONS",
    "SELECTION_RULES",
    "MethodSpec",
    "check_method",
    "dataset_kind",
    "load_config",
    "load_schema",
    "method_specs",
    "table_roles",
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
# what a dataset is made from (the keys that say so); the last three need no data file
_SOURCES = ("path", "knots", "quantiles", "three_points")
DATA_FREE_KINDS = ("knots", "quantiles", "three_points")
# keys a dataset without a data file may carry besides its source
_DATA_FREE_KEYS = frozenset({"draws", "sequence", "units"})


def _where(path: Any) -> str:
    out = "samplewright"
    for part in path:
        out += f"[{part}]" if isinstance(part, int) else f".{part}"
    return out


def load_schema() -> dict[str, Any]:
    """The configuration's JSON Schema, with the allowed values filled in from where they are
    listed: reading options from :mod:`samplewright.intake.options`, the other choices from
    :mod:`samplewright.pipeline.choices`."""
    from samplewright.intake.options import DECIMALS, SEPARATORS

    schema: dict[str, Any] = json.loads(_SCHEMA_PATH.read_text())
    from samplewright.pipeline import choices

    defs = schema["$defs"]
    for section in ("dataset", "joint"):
        props = defs[section]["properties"]
        props["separator"]["enum"] = [None, *SEPARATORS]
        props["decimal"]["enum"] = list(DECIMALS)
        props["sequence"]["enum"] = list(choices.SEQUENCES)
    schema["properties"]["sequence"]["enum"] = list(choices.SEQUENCES)
    ds = defs["dataset"]["properties"]
    ds["quantiles"]["properties"]["family"]["enum"] = list(choices.QUANTILE_FAMILIES)
    ds["three_points"]["properties"]["family"]["enum"] = list(choices.THREE_POINT_FAMILIES)
    ds["replicates"]["properties"]["kind"]["enum"] = list(choices.REPLICATIONS)
    defs["interval"]["properties"]["method"]["enum"] = list(choices.INTERVAL_METHODS)
    defs["interval"]["properties"]["scheme"]["enum"] = list(choices.SCHEMES)
    defs["joint"]["properties"]["coupling"]["enum"] = list(choices.COUPLINGS)
    defs["joint"]["properties"]["correlation_method"]["enum"] = list(choices.CORRELATION_METHODS)
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
        if err.validator == "minProperties":
            raise ConfigError(
                f"{where}: expected at least {err.validator_value} entries, found "
                f"{len(err.instance)}"
            )
        raise ConfigError(f"{where}: {err.message}")
    cfg = json.loads(json.dumps(dict(raw)))  # deep copy, plain types
    top = schema["properties"]
    for key in ("store", "root_seed", "draws", "choose", "sequence", "joint", "report"):
        cfg.setdefault(key, top[key]["default"])
    _fill(cfg["report"], top["report"]["properties"])
    defs = schema["$defs"]
    for name, ds in cfg["datasets"].items():
        kind = dataset_kind(name, ds)
        if kind == "data":
            _fill(ds, defs["dataset"]["properties"])
            ds.setdefault("choose", cfg["choose"])
        ds.setdefault("draws", cfg["draws"])
        ds.setdefault("sequence", cfg["sequence"])
        _check_dataset(name, ds, kind, defs)
    from samplewright.pipeline.config_joint import check_joint

    for name, entry in cfg["joint"].items():
        if name in cfg["datasets"]:
            raise ConfigError(
                f"samplewright.joint.{name}: the name is also a dataset's; give the joint input "
                "its own name"
            )
        _fill(entry, defs["joint"]["properties"])
        entry.setdefault("draws", cfg["draws"])
        entry.setdefault("sequence", cfg["sequence"])
        check_joint(name, entry)
    return cfg


def _fill(section: dict[str, Any], props: Mapping[str, Any]) -> None:
    """Set every key of ``props`` that has a schema default and is absent from ``section``."""
    for key, spec in props.items():
        if "default" in spec:
            section.setdefault(key, json.loads(json.dumps(spec["default"])))


def dataset_kind(name: str, ds: Mapping[str, Any]) -> str:
    """``"data"``, ``"knots"``, ``"quantiles"`` or ``"three_points"``: what ``ds`` is made from.

    >>> dataset_kind("d", {"knots": "k.yaml"}), dataset_kind("d", {"path": "d.csv"})
    ('knots', 'data')
    """
    given = [k for k in _SOURCES if k in ds]
    if len(given) > 1:
        raise ConfigError(
            f"samplewright.datasets.{name}: give one of {', '.join(map(repr, _SOURCES))}, "
            f"found {given[0]!r} and {given[1]!r}"
        )
    if not given:
        raise ConfigError(
            f"samplewright.datasets.{name}: missing key 'path' (or one of 'knots', "
            "'quantiles', 'three_points' for an input without data)"
        )
    return "data" if given[0] == "path" else given[0]


def table_roles(ds: Mapping[str, Any]) -> dict[str, str] | None:
    """The columns of a dataset by role when it needs a table snapshot, else None.

    A data dataset needs one when its ``truncation`` names a column or it gives interval
    columns ``lower``/``upper``; roles are ``value`` (or ``lower`` and ``upper``),
    ``truncation``, ``weight`` and ``censor``.

    >>> table_roles({"column": "x", "truncation": 100, "weights": None, "censor": None})
    >>> table_roles({"column": "paid", "truncation": "deductible", "censor": "capped"})
    {'value': 'paid', 'truncation': 'deductible', 'censor': 'capped'}
    """
    interval = "lower" in ds or "upper" in ds
    if not interval and not isinstance(ds.get("truncation"), str):
        return None
    roles: dict[str, str] = {}
    if interval:
        roles["lower"], roles["upper"] = ds["lower"], ds["upper"]
    else:
        roles["value"] = ds["column"]
    for role, key in (("truncation", "truncation"), ("weight", "weights"), ("censor", "censor")):
        if isinstance(ds.get(key), str):
            roles[role] = ds[key]
    return roles


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


def check_method(where: str, method: str, options: Mapping[str, Any]) -> MethodSpec:
    """``method`` with ``options`` checked against the method catalog (errors name ``where``)."""
    from samplewright.fitting.catalog import METHOD_OPTIONS, METHODS

    if method not in METHODS:
        from samplewright.pipeline.cli.method_help import nearest  # the CLI's rule (difflib)

        near = nearest(method, METHODS)
        hint = f"; did you mean {near!r}?" if near else ""
        raise ConfigError(
            f"{where}: unknown method {method!r}{hint} ('samplewright fit --help' lists every "
            "method)"
        )
    bad = sorted(set(options) - METHOD_OPTIONS[method])
    if bad:
        from samplewright.pipeline.cli.method_help import nearest

        allowed = ", ".join(sorted(METHOD_OPTIONS[method])) or "none"
        near = nearest(bad[0], sorted(METHOD_OPTIONS[method]))
        hint = f"; did you mean {near!r}?" if near else ""
        raise ConfigError(
            f"{where}.options: unknown option {bad[0]!r} for {method}{hint} (allowed: {allowed})"
        )
    spec = MethodSpec(method, method, dict(options))
    try:
        spec.canonical  # noqa: B018 - a value that cannot enter a key is refused here
    except ValueError as exc:
        raise ConfigError(f"{where}.options: {exc}") from None
    return spec


def _elicited_spec(kind: str, section: Mapping[str, Any]) -> MethodSpec:
    """The one 'method' of a quantiles / three_points dataset: its settings, defaults filled
    (so writing a default or leaving it out gives the same key); the points are the data."""
    points = ("probabilities", "values") if kind == "quantiles" else ("low", "mode", "high")
    return MethodSpec(kind, kind, {k: v for k, v in section.items() if k not in points})


def method_specs(name: str, ds: Mapping[str, Any]) -> list[MethodSpec]:
    """The candidate methods of dataset ``name``, each checked against the method catalog."""
    if "knots" in ds:
        return [MethodSpec("knots", "knots")]
    for kind in ("quantiles", "three_points"):
        if kind in ds:
            return [_elicited_spec(kind, ds[kind])]
    specs = []
    for i, item in enumerate(ds.get("methods") or []):
        where = f"samplewright.datasets.{name}.methods[{i}]"
        if isinstance(item, str):
            item = {"method": item}
        checked = check_method(where, item["method"], item.get("options") or {})
        specs.append(MethodSpec(item.get("label", checked.method), checked.method, checked.options))
    labels = [s.label for s in specs]
    dup = next((lab for lab in labels if labels.count(lab) > 1), None)
    if dup:
        raise ConfigError(
            f"samplewright.datasets.{name}.methods: label {dup!r} appears twice; give each "
            "repeated method a distinct 'label'"
        )
    return specs


def _check_dataset(name: str, ds: dict[str, Any], kind: str, defs: Mapping[str, Any]) -> None:
    where = f"samplewright.datasets.{name}"
    if kind != "data":
        extra = sorted(k for k in ds if k != kind and k not in _DATA_FREE_KEYS)
        if extra:
            raise ConfigError(f"{where}: a {kind} dataset takes no {extra[0]!r}")
        ds["choose"] = "first"
        if kind == "knots":
            if not Path(ds["knots"]).is_file():
                raise ConfigError(f"{where}.knots: file {ds['knots']!r} not found")
            ds["methods"] = [{"method": "knots"}]
            return
        _check_elicited(where, kind, ds[kind], defs)
        ds["methods"] = [{"method": kind}]
        return
    interval = "lower" in ds or "upper" in ds
    for key in ("lower", "upper") if interval else ("column",):
        if key not in ds:
            raise ConfigError(f"{where}: missing key {key!r}")
    if interval:
        for key in ("column", "censor"):
            if ds.get(key) is not None:
                raise ConfigError(
                    f"{where}.{key}: interval rows (lower, upper) take no {key!r}; an upper end "
                    "of inf marks a right-censored row"
                )
    if "methods" not in ds:
        raise ConfigError(f"{where}: missing key 'methods'")
    roles = table_roles(ds)
    if ds["produced"] and roles is not None:
        raise ConfigError(
            f"{where}.produced: data made by the workflow is read one column at a time; "
            "truncation, lower and upper columns need a file present when planning"
        )
    if not ds["produced"] and not Path(ds["path"]).is_file():
        raise ConfigError(f"{where}.path: file {ds['path']!r} not found")
    specs = method_specs(name, ds)
    choose = ds["choose"]
    if choose not in SELECTION_RULES and choose not in {s.label for s in specs}:
        raise ConfigError(
            f"{where}.choose: {choose!r} is neither a rule (aic, bic, first) nor one of the "
            f"method labels ({', '.join(s.label for s in specs)})"
        )
    from samplewright.check.comparable import check_comparable

    try:
        check_comparable([(s.label, s.method, s.options) for s in specs], choose)
    except SamplewrightError as exc:
        raise ConfigError(f"{where}.choose: {exc}") from None
    incomplete = interval or ds.get("truncation") is not None
    if incomplete:
        _check_incomplete(where, specs)
    if "intervals" in ds:
        _check_intervals(where, ds, defs["interval"]["properties"], incomplete)
    if "replicates" in ds:
        if incomplete:
            raise ConfigError(
                f"{where}.replicates: parameter replicates are not offered for truncated or "
                "interval data (the replicate fits take no truncation)"
            )
        _fill(ds["replicates"], defs["dataset"]["properties"]["replicates"]["properties"])


def _check_elicited(
    where: str, kind: str, section: dict[str, Any], defs: Mapping[str, Any]
) -> None:
    """Defaults and the checks a schema cannot make; the points themselves are checked by
    fitting them once while planning (see :class:`samplewright.pipeline.plan.Plan`)."""
    where = f"{where}.{kind}"
    props = defs["dataset"]["properties"][kind]["properties"]
    if kind == "quantiles":
        n_p, n_x = len(section["probabilities"]), len(section["values"])
        if n_p != n_x:
            raise ConfigError(
                f"{where}: expected as many values as probabilities ({n_p}), found {n_x}"
            )
    elif section.get("family", "pert") != "pert" and "shape" in section:
        raise ConfigError(f"{where}.shape: only family 'pert' takes a shape")
    elif section.get("family", "pert") == "pert":
        section.setdefault("shape", 4.0)
    _fill(section, props)
    for key in ("lower", "upper", "shape"):  # 4 and 4.0 are one setting, and one key
        if section.get(key) is not None:
            section[key] = float(section[key])


def _check_incomplete(where: str, specs: list[MethodSpec]) -> None:
    """Every candidate must fit truncated / interval rows (imports the fitting module); ``auto``
    ranks its candidates on them (:mod:`samplewright.check.auto_incomplete`)."""
    from samplewright.fitting.interval_api import INCOMPLETE_METHODS

    for i, spec in enumerate(specs):
        if spec.method not in INCOMPLETE_METHODS:
            raise ConfigError(
                f"{where}.methods[{i}]: method {spec.method!r} does not fit truncated or "
                f"interval data; expected one of: {', '.join(INCOMPLETE_METHODS)}"
            )


def _check_intervals(
    where: str, ds: dict[str, Any], props: Mapping[str, Any], incomplete: bool
) -> None:
    if incomplete or ds.get("censor") is not None:
        raise ConfigError(
            f"{where}.intervals: bootstrap intervals of the values need every value observed; "
            "this dataset has censored, truncated or interval rows"
        )
    from samplewright.resample.statistics import parse_statistic

    for i, item in enumerate(ds["intervals"]):
        at = f"{where}.intervals[{i}]"
        try:
            parse_statistic(item["statistic"])
        except SamplewrightError as exc:
            raise ConfigError(f"{at}.statistic: {str(exc).removeprefix('statistic: ')}") from None
        explicit_block = "block_length" in item
        _fill(item, props)
        item["confidence_level"] = float(item["confidence_level"])
        if item["scheme"] == "iid":
            if explicit_block:
                raise ConfigError(f"{at}.block_length: only the block schemes take a block length")
            item["block_length"] = None  # not used: kept out of the key
        elif item["method"] == "bca":
            raise ConfigError(
                f"{at}.method: 'bca' needs independent resamples; with scheme "
                f"{item['scheme']!r} use 'percentile' or 'basic'"
            )
