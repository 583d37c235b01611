"""The plan: every content key and store path of a workflow, known at parse time.

The rule files (``workflow_rules/``) build a :class:`Plan` from the ``samplewright`` config
section when Snakemake parses the workflow. The plan fingerprints each dataset (memoised by file
stat), derives every content key, and so knows every artifact path before any job runs; the
paths themselves come from the store's :class:`~samplewright.store.layout.StoreLayout`.

Keys (:data:`KEY_LEN` hex characters of a sha256 of canonical JSON):

* fit key        = H("fit", data key, canonical method + options, RESULTS_VERSION)
* select key     = H("select", fit keys of the candidates in order, selection rule,
  RESULTS_VERSION)
* draws key      = H("draws", select key, number of draws, root seed, RESULTS_VERSION
  [, {"sequence": s} when s is not "random"])
* intervals key  = H("intervals", data key, the interval items with defaults, root seed,
  RESULTS_VERSION)
* replicates key = H("replicates", select key, replicate settings, root seed, RESULTS_VERSION)
* joint key      = H("joint", table fingerprint, canonical columns + coupling, root seed,
  RESULTS_VERSION); joint draws key = H("joint_draws", joint key, n, root seed, sequence,
  RESULTS_VERSION)
* check key      = H("check", select key, root seed, drift threshold, RESULTS_VERSION)
* report key     = H("report", select key, check key, intervals key, replicates key, units,
  drift threshold, RESULTS_VERSION)

A candidate whose method draws random numbers while fitting (the catalog gives it option
``seed``: ``auto``'s goodness-of-fit bootstrap, ``mixture``'s EM starts) and whose config sets
no ``seed`` gets one from the root seed and stable names (:func:`derived_seed` of the dataset,
``"fit"`` and the label; a joint input's marginal: the joint name, ``"marginal"`` and the
column). It enters the candidate's options, so the fit key changes with the root seed, two
candidates never share a stream, and the fit job receives it as ``--option seed=N``; a seed the
config sets wins.

The *data key* is the data fingerprint, or, with one truncation point for every row, a hash of
the fingerprint and that point (its snapshot is the plain column's). Datasets without a data file
(knots, quantiles, three_points) are fingerprinted from their points: changing a point changes
the key, reformatting the config does not. Every random stream a rule uses comes from the root
seed and stable names (the dataset or joint name, and the purpose: ``draws``, ``intervals``,
``replicates``, ``check``), never from the order jobs run in.

Bump :data:`RESULTS_VERSION` whenever a change makes any artifact's content differ: that is what
makes pipelines refit after an upgrade (and only then).
"""

from __future__ import annotations

import hashlib
import math
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

from samplewright.core.canonical import canonical_json, parse_json
from samplewright.core.errors import ConfigError, InputDataError, KnotsError, SamplewrightError
from samplewright.core.versions import RESULTS_VERSION, SNAPSHOT_FORMAT_VERSION
from samplewright.pipeline.config import (
    DATA_FREE_KINDS,
    DATASET_PATTERN,
    LABEL_PATTERN,
    READING_OPTIONS,
    SELECTION_RULES,
    MethodSpec,
    dataset_kind,
    load_config,
    method_specs,
    table_roles,
)
from samplewright.pipeline.config_joint import marginal_specs
from samplewright.pipeline.plan_args import PlanArgs
from samplewright.store.layout import StoreLayout

__all__ = [
    "KEY_LEN",
    "KEY_PATTERN",
    "RESULTS_VERSION",
    "Plan",
    "content_key",
    "derived_seed",
    "seeded",
    "snapshot_mem_mb",
]

_FORMAT_OPTIONS = ("separator", "decimal", "missing_markers", "encoding")

KEY_LEN = 20
KEY_PATTERN = f"[0-9a-f]{{{KEY_LEN}}}"
# Declared memory of a snapshot job: a floor, or a base plus so many MB per MB of input file.
# Measured peaks (/usr/bin/time, 10 million rows of 5 columns): a 277 MB CSV 0.88 GB, the same
# rows as an 87 MB Parquet file 0.66 GB, a 27 MB CSV 0.30 GB; the factors leave about 2x room
# for other readers and wider files. Parquet is compressed, hence its larger factor.
SNAPSHOT_MEM_FLOOR_MB = 1000
SNAPSHOT_MEM_BASE_MB = 300
SNAPSHOT_MEM_PER_MB = {"csv": 6, "parquet": 10}


def content_key(*parts: Any) -> str:
    """The first :data:`KEY_LEN` hex digits of the sha256 of the canonical JSON of ``parts``.

    >>> content_key("fit", "ab" * 32, '{"method":"gamma","options":{}}', 1)
    '291bc14f528cdf82dfb2'
    """
    return hashlib.sha256(canonical_json(list(parts)).encode()).hexdigest()[:KEY_LEN]


def derived_seed(root_seed: int, *names: str) -> int:
    """A seed (an int below 2**53, so JSON keeps it exactly) from the root seed and stable names.

    The first 8 bytes of the sha256 of the canonical JSON of ``["seed", root_seed, *names]``,
    shifted right by 11 bits: the same on every machine and run, different for every name.

    >>> derived_seed(0, "repairs", "fit", "auto") == derived_seed(0, "repairs", "fit", "auto")
    True
    >>> derived_seed(0, "repairs", "fit", "auto") != derived_seed(1, "repairs", "fit", "auto")
    True
    """
    text = canonical_json(["seed", int(root_seed), *names])
    return int.from_bytes(hashlib.sha256(text.encode()).digest()[:8], "little") >> 11


def seeded(spec: MethodSpec, root_seed: int, *names: str) -> MethodSpec:
    """``spec`` with option ``seed`` derived from the root seed and ``names`` when its method
    takes a seed (catalog option ``seed``) and the config sets none; else ``spec`` itself."""
    from samplewright.fitting.catalog import METHOD_OPTIONS

    if "seed" not in METHOD_OPTIONS.get(spec.method, frozenset()) or "seed" in spec.options:
        return spec
    options = {**spec.options, "seed": derived_seed(root_seed, *names)}
    return MethodSpec(spec.label, spec.method, options)


def snapshot_mem_mb(path: str, input_mb: float) -> int:
    """Memory (MB) to declare for a snapshot job reading data file ``path`` of ``input_mb`` MB.

    >>> snapshot_mem_mb("small.csv", 1.5), snapshot_mem_mb("big.csv", 300)
    (1000, 2100)
    >>> snapshot_mem_mb("big.parquet", 300)
    3300
    """
    kind = "parquet" if Path(path).suffix.lower() in (".parquet", ".pq") else "csv"
    need = SNAPSHOT_MEM_BASE_MB + SNAPSHOT_MEM_PER_MB[kind] * max(0.0, float(input_mb))
    return max(SNAPSHOT_MEM_FLOOR_MB, math.ceil(need))


class Plan(PlanArgs):
    """Everything the rules need, derived from the validated config at parse time.

    Attributes
    ----------
    config : dict
        The validated ``samplewright`` section, defaults filled in.
    store : str
        The store folder; :attr:`layout` spells every path in it.
    layout : StoreLayout
        The store's paths (the rule files take their patterns from it).
    """

    key_pattern = KEY_PATTERN
    label_pattern = LABEL_PATTERN
    dataset_pattern = DATASET_PATTERN
    elicited_label_pattern = "quantiles|three_points"

    def __init__(self, raw_config: Any, *, checkpoints: Any = None) -> None:
        self.config = load_config(raw_config)
        self.store = self.config["store"].rstrip("/")
        self.layout = StoreLayout(self.store)
        self.root_seed = int(self.config["root_seed"])
        self.results_version = RESULTS_VERSION
        self.snapshot_version = SNAPSHOT_FORMAT_VERSION
        self.checkpoints = checkpoints
        self.datasets: dict[str, dict[str, Any]] = self.config["datasets"]
        self.joints: dict[str, dict[str, Any]] = self.config["joint"]
        self.kinds = {n: dataset_kind(n, ds) for n, ds in self.datasets.items()}
        self.roles = {
            n: table_roles(ds) if self.kinds[n] == "data" else None
            for n, ds in self.datasets.items()
        }
        self.specs = {
            n: [seeded(s, self.root_seed, n, "fit", s.label) for s in method_specs(n, ds)]
            for n, ds in self.datasets.items()
        }
        self.joint_specs = {
            n: [(c, seeded(s, self.root_seed, n, "marginal", c)) for c, s in marginal_specs(n, e)]
            for n, e in self.joints.items()
        }
        self.reports_enabled = False
        self._fps: dict[str, str] = {}
        self._joint_fps: dict[str, str] = {}
        self._keys: dict[tuple[str, ...], str] = {}
        self._fingerprint_all()
        self._fit_elicited()
        from samplewright.pipeline.precheck_plan import precheck_plan

        precheck_plan(self)  # a method that cannot fit the data stops the planning

    def _fingerprint_all(self) -> None:
        from samplewright.pipeline.table_data import TableFingerprints

        cache = TableFingerprints(self.store)
        try:
            for name, ds in self.datasets.items():
                self._fingerprint_dataset(cache, name, ds)
            for name, entry in self.joints.items():
                try:
                    self._joint_fps[name] = cache.joint(
                        entry["path"], list(entry["columns"]), **self.reading(entry)
                    )
                except InputDataError as exc:
                    raise ConfigError(f"samplewright.joint.{name}: {exc}") from None
        finally:
            cache.save()

    def _fingerprint_dataset(self, cache: Any, name: str, ds: dict[str, Any]) -> None:
        from samplewright.store.fingerprints import fingerprint_arrays

        where = f"samplewright.datasets.{name}"
        kind = self.kinds[name]
        if kind == "knots":
            try:
                self._fps[name] = cache.fingerprint_knots(ds["knots"])
            except KnotsError as exc:
                raise ConfigError(f"{where}.knots: {exc}") from None
        elif kind == "quantiles":
            q = ds["quantiles"]
            self._fps[name] = fingerprint_arrays(q["probabilities"] + q["values"])
        elif kind == "three_points":
            t = ds["three_points"]
            self._fps[name] = fingerprint_arrays([t["low"], t["mode"], t["high"]])
        elif not ds["produced"]:
            roles = self.roles[name]
            try:
                if roles is None:
                    self._fps[name] = cache.fingerprint(
                        ds["path"], ds["column"], **{k: ds[k] for k in READING_OPTIONS}
                    )
                else:
                    self._fps[name] = cache.roles(ds["path"], roles, **self.reading(ds))
            except InputDataError as exc:
                raise ConfigError(f"{where}: {exc}") from None

    def _fit_elicited(self) -> None:
        """Fit each quantiles / three_points dataset once, so that points no distribution
        passes through stop the workflow before any job runs (about 20 ms each)."""
        for name, kind in self.kinds.items():
            if kind not in ("quantiles", "three_points"):
                continue
            from samplewright.pipeline.elicited import fit_elicited

            try:
                fit_elicited(kind, self.datasets[name][kind])
            except SamplewrightError as exc:
                raise ConfigError(f"samplewright.datasets.{name}.{kind}: {exc}") from None

    @staticmethod
    def reading(section: dict[str, Any]) -> dict[str, Any]:
        """The reading options of a dataset or joint entry (missing, infinite, file format)."""
        keys = ("missing", "infinite", *_FORMAT_OPTIONS)
        return {k: section[k] for k in keys if k in section}

    # -- fingerprints and keys ---------------------------------------------------------------

    def is_knots(self, name: str) -> bool:
        return self.kinds[name] == "knots"

    def has_data(self, name: str) -> bool:
        """Whether the dataset is read from a data file (not knots, quantiles, three_points)."""
        return self.kinds[name] not in DATA_FREE_KINDS

    def is_table(self, name: str) -> bool:
        """Whether the dataset's snapshot is a table (truncation / interval columns)."""
        return self.roles.get(name) is not None

    def is_incomplete(self, name: str) -> bool:
        """Whether the dataset has truncated or interval rows."""
        ds = self.datasets[name]
        return self.is_table(name) or ds.get("truncation") is not None

    def has_check(self, name: str) -> bool:
        """Whether the check summary rule applies: data read as plain values (a check of
        truncated or interval rows against a plain empirical CDF would mislead)."""
        return self.has_data(name) and not self.is_incomplete(name)

    def is_produced(self, name: str) -> bool:
        return bool(self.datasets[name].get("produced"))

    def _pattern(self, names: list[str]) -> str:
        """A wildcard constraint matching exactly ``names`` (none: a pattern matching nothing)."""
        return "|".join(re.escape(n) for n in sorted(names)) or "(?!)"

    @property
    def data_pattern(self) -> str:
        """Datasets read from a data file (the fit rule's constraint)."""
        return self._pattern([n for n in self.datasets if self.has_data(n)])

    @property
    def knots_pattern(self) -> str:
        return self._pattern([n for n, k in self.kinds.items() if k == "knots"])

    @property
    def elicited_pattern(self) -> str:
        return self._pattern(
            [n for n, k in self.kinds.items() if k in ("quantiles", "three_points")]
        )

    @property
    def table_pattern(self) -> str:
        """Names with a table snapshot: incomplete-data datasets and joint inputs."""
        return self._pattern([n for n in self.datasets if self.is_table(n)] + list(self.joints))

    @property
    def joint_pattern(self) -> str:
        return self._pattern(list(self.joints))

    def enable_reports(self) -> None:
        """Called by a rule file that makes reports: :meth:`dataset_targets` then lists them."""
        self.reports_enabled = True

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
        try:
            record = parse_json(Path(out).read_bytes())
            return str(record["fingerprint"])
        except (ValueError, KeyError, TypeError) as exc:
            raise ConfigError(f"{out}: not a fingerprint record ({exc})") from None

    def spec(self, name: str, label: str) -> MethodSpec:
        for s in self.specs[name]:
            if s.label == label:
                return s
        raise KeyError(f"{name}/{label}")

    def data_key(self, name: str) -> str:
        """The fingerprint, with a truncation point shared by every row folded in."""
        t = self.datasets[name].get("truncation")
        fp = self.fingerprint(name)
        if t is None or isinstance(t, str):
            return fp
        return hashlib.sha256(canonical_json([fp, {"truncation": float(t)}]).encode()).hexdigest()

    def fit_key(self, name: str, label: str) -> str:
        return content_key(
            "fit", self.data_key(name), self.spec(name, label).canonical, self.results_version
        )

    def candidates(self, name: str) -> list[MethodSpec]:
        """Candidates in selection order (a fixed label choice goes first)."""
        specs = list(self.specs[name])
        choose = self.datasets[name]["choose"]
        if choose not in SELECTION_RULES:
            specs.sort(key=lambda s: s.label != choose)
        return specs

    def select_rule(self, name: str) -> str:
        choose = self.datasets[name]["choose"]
        return choose if choose in SELECTION_RULES else "named"  # a label the analyst named

    def select_key(self, name: str) -> str:
        keys = [self.fit_key(name, s.label) for s in self.candidates(name)]
        memo = ("select", name, *keys)
        if memo not in self._keys:
            self._keys[memo] = content_key(
                "select", keys, self.datasets[name]["choose"], self.results_version
            )
        return self._keys[memo]

    def draws_key(self, name: str) -> str:
        n = self.datasets[name]["draws"]
        parts: list[Any] = [self.select_key(name), n, self.root_seed, self.results_version]
        sequence = self.datasets[name]["sequence"]
        if sequence != "random":  # plain draws keep the keys they had before sequences existed
            parts.append({"sequence": sequence})
        return content_key("draws", *parts)

    def intervals_key(self, name: str) -> str:
        items = self.datasets[name]["intervals"]
        return content_key(
            "intervals", self.data_key(name), items, self.root_seed, self.results_version
        )

    def replicates_key(self, name: str) -> str:
        settings = self.datasets[name]["replicates"]
        return content_key(
            "replicates", self.select_key(name), settings, self.root_seed, self.results_version
        )

    def joint_fingerprint(self, name: str) -> str:
        return self._joint_fps[name]

    def joint_config(self, name: str) -> dict[str, Any]:
        """What of a joint entry makes its sampler (the columns as ordered pairs)."""
        e = self.joints[name]
        return {
            "columns": [
                [c, {"method": s.method, "options": s.options}] for c, s in self.joint_specs[name]
            ],
            "coupling": e["coupling"],
            "rank_correlation": e.get("rank_correlation"),
            "correlation_method": e["correlation_method"],
        }

    def joint_key(self, name: str) -> str:
        return content_key(
            "joint",
            self.joint_fingerprint(name),
            self.joint_config(name),
            self.root_seed,
            self.results_version,
        )

    def joint_draws_key(self, name: str) -> str:
        e = self.joints[name]
        return content_key(
            "joint_draws",
            self.joint_key(name),
            e["draws"],
            self.root_seed,
            e["sequence"],
            self.results_version,
        )

    def report_key(self, name: str) -> str:
        ds = self.datasets[name]
        return content_key(
            "report",
            self.select_key(name),
            self.check_key(name),
            self.intervals_key(name) if "intervals" in ds else None,
            self.replicates_key(name) if "replicates" in ds else None,
            ds.get("units"),
            self.config["report"]["drift_threshold"],
            self.results_version,
        )

    def keyed_key(self, names: list[str]) -> str:
        """The key of outputs made from the selected samplers of datasets ``names``."""
        pairs = [[name, self.select_key(name)] for name in names]
        return content_key("keyed", pairs, self.results_version)

    # -- paths (spelled by the store layout) ---------------------------------------------------

    def snapshot_path(self, name: str) -> str:
        """The snapshot fitting reads: a column snapshot, or a table snapshot (roles)."""
        if not self.has_data(name):
            raise ConfigError(
                f"samplewright.datasets.{name}: a {self.kinds[name]} dataset has no data"
            )
        if self.is_table(name):
            return self.layout.table_snapshot(name, self.fingerprint(name)[:KEY_LEN])
        return self.layout.snapshot(name, self.fingerprint(name)[:KEY_LEN])

    def joint_snapshot_path(self, name: str) -> str:
        return self.layout.table_snapshot(name, self.joint_fingerprint(name)[:KEY_LEN])

    def table_fingerprint(self, name: str) -> str:
        """The fingerprint of a table snapshot's source: a dataset's roles or a joint input."""
        return self.joint_fingerprint(name) if name in self.joints else self.fingerprint(name)

    def table_source(self, name: str) -> str:
        """The data file a table snapshot of ``name`` (dataset or joint input) reads."""
        return str((self.joints.get(name) or self.datasets[name])["path"])

    def fit_path(self, name: str, label: str) -> str:
        return self.layout.sampler(name, label, self.fit_key(name, label))

    def candidate_paths(self, name: str) -> list[str]:
        return [self.fit_path(name, s.label) for s in self.candidates(name)]

    def selected_path(self, name: str) -> str:
        return self.layout.selected(name, self.select_key(name))

    def draws_path(self, name: str) -> str:
        return self.layout.draws(name, self.draws_key(name))

    def check_key(self, name: str) -> str:
        """The check's key: its bootstrap draws from the root seed, its drift flag from the
        threshold, so either changing reruns it."""
        return content_key(
            "check",
            self.select_key(name),
            self.root_seed,
            self.config["report"]["drift_threshold"],
            self.results_version,
        )

    def check_path(self, name: str) -> str:
        return self.layout.check(name, self.check_key(name))

    def fingerprint_record(self, name: str) -> str:
        return self.layout.produced(name)

    def intervals_path(self, name: str) -> str:
        return self.layout.intervals(name, self.intervals_key(name))

    def replicates_path(self, name: str) -> str:
        return self.layout.replicates(name, self.replicates_key(name))

    def joint_path(self, name: str) -> str:
        return self.layout.joint(name, self.joint_key(name))

    def joint_draws_path(self, name: str) -> str:
        return self.layout.joint_draws(name, self.joint_draws_key(name))

    def report_path(self, name: str) -> str:
        return self.layout.report(name, self.report_key(name))

    def dataset_targets(self, name: str) -> list[str]:
        ds = self.datasets[name]
        from samplewright.pipeline import report_args

        out = [self.selected_path(name)]
        if report_args.checks(self, name):
            out.append(self.check_path(name))
        if ds["draws"] > 0:
            out.append(self.draws_path(name))
        if "intervals" in ds:
            out.append(self.intervals_path(name))
        if "replicates" in ds:
            out.append(self.replicates_path(name))
        if self.reports_enabled:
            out.append(self.report_path(name))
        return out

    def joint_targets(self, name: str) -> list[str]:
        from samplewright.pipeline import report_args

        out = [self.joint_path(name)]
        if self.joints[name]["draws"] > 0:
            out.append(self.joint_draws_path(name))
        if self.reports_enabled:
            out.append(report_args.joint_report_path(self, name))
        return out

    # -- for rule definitions ----------------------------------------------------------------

    def lazy(self, fn: Callable[[str], Any], name: str) -> Any:
        """``fn(name)`` now, or an input function for data produced by the workflow."""
        if self.is_produced(name):
            return lambda wildcards: fn(name)
        return fn(name)

    def snapshot_mem_mb(self, path: str, input_mb: float) -> int:
        """Declared memory of the snapshot job reading ``path`` of ``input_mb`` MB."""
        return snapshot_mem_mb(str(path), input_mb)
