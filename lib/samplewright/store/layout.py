"""Where each file of a store lives: the only place a store path is spelled.

A store is one folder (``store:`` in the workflow configuration)::

    <store>/fingerprints.json                         fingerprint memo (see store.fingerprints)
    <store>/columns/<dataset>/<fingerprint>.parquet   column snapshots
    <store>/samplers/<dataset>/<label>/<key>.parquet  fitted candidates (and knots samplers)
    <store>/selected/<dataset>/<key>.parquet          the sampler chosen among the candidates
    <store>/draws/<dataset>/<key>.parquet             draws for consumers outside Python
    <store>/checks/<dataset>/<key>.json (and .md)     check summaries
    <store>/tables/<name>/<fingerprint>.parquet       table snapshots (joint inputs; datasets
                                                      whose truncation, lower, upper are columns)
    <store>/intervals/<dataset>/<key>.json            bootstrap intervals of the data
    <store>/replicates/<dataset>/<key>.parquet        parameter replicates of the selected method
    <store>/joint/<name>/<key>.parquet                joint samplers
    <store>/joint_draws/<name>/<key>.parquet          draws of joint samplers (one column each)
    <store>/reports/<dataset>/<key>.html (and .json)  check reports
    <store>/produced/<dataset>.json                   fingerprints of data a workflow makes
    <store>/logs/<step>/...log                        one log per job
    <store>/benchmarks/<step>/...tsv                  benchmarks of the heavy jobs

The plan computes every path through :class:`StoreLayout` and the rule files ask the plan's
layout for their output, log and benchmark patterns (passing wildcards such as ``"{dataset}"``
as the parts), so the two can never disagree. Paths are plain strings joined with ``/``, as
Snakemake wants them.

>>> layout = StoreLayout("store/")
>>> layout.sampler("pumps", "weibull", "0123abcd")
'store/samplers/pumps/weibull/0123abcd.parquet'
>>> layout.log("fit", "{dataset}", "{label}", "{key}")
'store/logs/fit/{dataset}/{label}/{key}.log'
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["FINGERPRINT_CACHE_NAME", "StoreLayout"]

FINGERPRINT_CACHE_NAME = "fingerprints.json"


@dataclass(frozen=True)
class StoreLayout:
    """The paths of one store folder.

    Attributes
    ----------
    root : str
        The store folder as given (a trailing ``/`` is dropped).
    """

    root: str

    def __post_init__(self) -> None:
        object.__setattr__(self, "root", self.root.rstrip("/"))

    def _join(self, *parts: str) -> str:
        return "/".join([self.root, *parts])

    @property
    def fingerprint_cache(self) -> str:
        """The fingerprint memo of this store."""
        return self._join(FINGERPRINT_CACHE_NAME)

    def snapshot(self, dataset: str, fingerprint: str) -> str:
        """Column snapshot of ``dataset`` with (the short form of) ``fingerprint``."""
        return self._join("columns", dataset, f"{fingerprint}.parquet")

    def sampler(self, dataset: str, label: str, key: str) -> str:
        """Fitted candidate ``label`` of ``dataset`` under fit key ``key``."""
        return self._join("samplers", dataset, label, f"{key}.parquet")

    def selected(self, dataset: str, key: str) -> str:
        """The selected sampler of ``dataset`` under select key ``key``."""
        return self._join("selected", dataset, f"{key}.parquet")

    def draws(self, dataset: str, key: str) -> str:
        """Draws of ``dataset`` under draws key ``key``."""
        return self._join("draws", dataset, f"{key}.parquet")

    def check(self, dataset: str, key: str) -> str:
        """Check summary (JSON) of ``dataset`` under select key ``key``."""
        return self._join("checks", dataset, f"{key}.json")

    def check_markdown(self, dataset: str, key: str) -> str:
        """The Markdown written beside :meth:`check`."""
        return self._join("checks", dataset, f"{key}.md")

    def table_snapshot(self, name: str, fingerprint: str) -> str:
        """Table snapshot of ``name`` (several row-aligned columns) with ``fingerprint``."""
        return self._join("tables", name, f"{fingerprint}.parquet")

    def intervals(self, dataset: str, key: str) -> str:
        """Bootstrap intervals (JSON) of ``dataset`` under intervals key ``key``."""
        return self._join("intervals", dataset, f"{key}.json")

    def replicates(self, dataset: str, key: str) -> str:
        """Parameter replicates (one ensemble artifact) of ``dataset`` under ``key``."""
        return self._join("replicates", dataset, f"{key}.parquet")

    def joint(self, name: str, key: str) -> str:
        """Joint sampler ``name`` under joint key ``key``."""
        return self._join("joint", name, f"{key}.parquet")

    def joint_draws(self, name: str, key: str) -> str:
        """Draws of joint sampler ``name`` (one column per input) under ``key``."""
        return self._join("joint_draws", name, f"{key}.parquet")

    def report(self, dataset: str, key: str) -> str:
        """Check report (HTML) of ``dataset`` under report key ``key``."""
        return self._join("reports", dataset, f"{key}.html")

    def report_json(self, dataset: str, key: str) -> str:
        """The JSON written beside :meth:`report`."""
        return self._join("reports", dataset, f"{key}.json")

    def produced(self, dataset: str) -> str:
        """Fingerprint record of a dataset made by the workflow (the checkpoint's output)."""
        return self._join("produced", f"{dataset}.json")

    def log(self, step: str, *parts: str) -> str:
        """Log of one job of ``step``; ``parts`` name the job (dataset, label, key...)."""
        return self._join("logs", step, *parts[:-1], f"{parts[-1]}.log")

    def benchmark(self, step: str, *parts: str) -> str:
        """Benchmark record of one job of ``step``, named like its log."""
        return self._join("benchmarks", step, *parts[:-1], f"{parts[-1]}.tsv")
