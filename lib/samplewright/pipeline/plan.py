"""The plan: every content key and store path of a workflow, known at parse time.

The rule files (``workflow_rules/``) build a :class:`Plan` from the ``samplewright`` config
section when Snakemake parses the workflow. The plan fingerprints each dataset (memoised by file
stat), derives every content key, and so knows every artifact path before any job runs; the
paths themselves come from the store's :class:`~samplewright.store.layout.StoreLayout`.

Keys (:data:`KEY_LEN` hex characters of a sha256 of canonical JSON):

* fit key    = H("fit", data fingerprint, canonical method + options, RESULTS_VERSION)
* select key = H("select", fit keys of the candidates in order, selection rule, RESULTS_VERSION)
* draws key  = H("draws", select key, number of draws, root seed, RESULTS_VERSION)

Bump :data:`RESULTS_VERSION` whenever a change makes any artifact's content differ: that is what
makes pipelines refit after an upgrade (and only then).
"""

from __future__ import annotations

import hashlib
import math
import shlex
from collections.abc import Callable
from pathlib import Path
from typing import Any

from samplewright.core.canonical import canonical_json, parse_json
from samplewright.core.errors import ConfigError, InputDataError, KnotsError
from samplewright.core.versions import RESULTS_VERSION, SNAPSHOT_FORMAT_VERSION
from samplewright.pipeline.config import (
    DATASET_PATTERN,
    LABEL_PATTERN,
    READING_OPTIONS,
    SELECTION_RULES,
    MethodSpec,
    load_config,
    method_specs,
)
from samplewright.store.layout import StoreLayout

__all__ = ["KEY_LEN", "KEY_PATTERN", "RESULTS_VERSION", "Plan", "content_key", "snapshot_mem_mb"]

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


class Plan:
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

    def __init__(self, raw_config: Any, *, checkpoints: Any = None) -> None:
        self.config = load_config(raw_config)
        self.store = self.config["store"].rstrip("/")
        self.layout = StoreLayout(self.store)
        self.root_seed = int(self.config["root_seed"])
        self.results_version = RESULTS_VERSION
        self.snapshot_version = SNAPSHOT_FORMAT_VERSION
        self.checkpoints = checkpoints
        self.datasets: dict[str, dict[str, Any]] = self.config["datasets"]
        self.specs = {n: method_specs(n, ds) for n, ds in self.datasets.items()}
        self._fps: dict[str, str] = {}
        self._keys: dict[tuple[str, ...], str] = {}
        self._fingerprint_all()

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
                            ds["path"], ds["column"], **{k: ds[k] for k in READING_OPTIONS}
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

    def fit_key(self, name: str, label: str) -> str:
        return content_key(
            "fit", self.fingerprint(name), self.spec(name, label).canonical, self.results_version
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
        return choose if choose in SELECTION_RULES else "first"

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
        return content_key("draws", self.select_key(name), n, self.root_seed, self.results_version)

    def keyed_key(self, names: list[str]) -> str:
        """The key of outputs made from the selected samplers of datasets ``names``."""
        pairs = [[name, self.select_key(name)] for name in names]
        return content_key("keyed", pairs, self.results_version)

    # -- paths (spelled by the store layout) ---------------------------------------------------

    def snapshot_path(self, name: str) -> str:
        return self.layout.snapshot(name, self.fingerprint(name)[:KEY_LEN])

    def fit_path(self, name: str, label: str) -> str:
        return self.layout.sampler(name, label, self.fit_key(name, label))

    def candidate_paths(self, name: str) -> list[str]:
        return [self.fit_path(name, s.label) for s in self.candidates(name)]

    def selected_path(self, name: str) -> str:
        return self.layout.selected(name, self.select_key(name))

    def draws_path(self, name: str) -> str:
        return self.layout.draws(name, self.draws_key(name))

    def check_path(self, name: str) -> str:
        return self.layout.check(name, self.select_key(name))

    def fingerprint_record(self, name: str) -> str:
        return self.layout.produced(name)

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

    def snapshot_args(self, name: str) -> str:
        """Command-line arguments naming the column, weights, censoring and cleaning policy."""
        ds = self.datasets[name]
        args = ["--column", ds["column"]]
        for opt in ("weights", "censor"):
            if ds.get(opt):
                args += [f"--{opt}", ds[opt]]
        args += ["--missing", ds["missing"], "--infinite", ds["infinite"]]
        # file-format options only when set, so existing workflows keep their arguments
        if ds.get("separator") is not None:
            args += ["--separator", ds["separator"]]
        if ds.get("decimal", ".") != ".":
            args += ["--decimal", ds["decimal"]]
        for marker in ds.get("missing_markers") or []:
            args.append(f"--missing-marker={marker}")  # one word: a marker may start with '-'

        if ds.get("encoding") is not None:
            args += ["--encoding", ds["encoding"]]
        return " ".join(shlex.quote(a) for a in args)

    def fit_args(self, name: str, label: str) -> str:
        """Command-line arguments for fitting candidate ``label`` of dataset ``name``."""
        import json

        spec = self.spec(name, label)
        args = ["--method", spec.method]
        for k, v in sorted(spec.options.items()):
            args += ["--option", f"{k}={json.dumps(v)}"]
        return " ".join(shlex.quote(a) for a in args)

    def snapshot_mem_mb(self, path: str, input_mb: float) -> int:
        """Declared memory of the snapshot job reading ``path`` of ``input_mb`` MB."""
        return snapshot_mem_mb(str(path), input_mb)
