"""Refuse, while planning, a method that cannot fit a dataset's data (one hook in the plan).

Planning already knows each dataset's data: its snapshot once the snapshot job has run, or the
data file itself when the fingerprint was just computed. For every candidate whose artifact does
not exist yet, :func:`precheck_plan` runs the cheap checks of :mod:`samplewright.check.precheck`
on those values and raises a :class:`~samplewright.core.errors.ConfigError` naming the dataset,
the method and the reason, so the workflow (``snakemake -n`` too) stops before any job runs
instead of failing inside a fit job with the reason in a log file. Candidates already fitted are
not looked at, so a workflow whose fits exist reads nothing here.

Plain values go to :func:`~samplewright.check.precheck.precheck`; datasets with truncation (a
number or a column), or interval rows (``lower``/``upper``), go to
:func:`~samplewright.check.precheck.precheck_rows` with their rows as the fit job reads them
(the table snapshot, or the file with the dataset's reading options).

The values come from the snapshot when it exists, else from the data file when it is at most
:data:`MAX_READ_BYTES` (a larger file is left to the fit job, which says the same thing in its
log). Datasets made by the workflow (``produced``), drawn CDFs and elicited inputs are not
prechecked.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from samplewright.core.errors import ConfigError, SamplewrightError

__all__ = ["MAX_READ_BYTES", "precheck_plan"]

MAX_READ_BYTES = 256 * 2**20


def _source(plan: Any, name: str) -> Path | None:
    """The snapshot when it exists, else the data file when small enough, else None."""
    snapshot = Path(plan.snapshot_path(name))
    if snapshot.is_file():
        return snapshot
    path = Path(plan.datasets[name]["path"])
    if not path.is_file() or path.stat().st_size > MAX_READ_BYTES:
        return None
    return path


def _values(plan: Any, name: str) -> dict[str, Any] | None:
    """What the fit job reads, as keyword arguments of the precheck (None: not read cheaply)."""
    ds = plan.datasets[name]
    source = _source(plan, name)
    if source is None:
        return None
    roles = plan.roles.get(name) if hasattr(plan, "roles") else None
    try:
        if roles is not None:
            from samplewright.pipeline.table_data import read_roles

            reading = {} if source != Path(ds["path"]) else plan.reading(ds)
            table = read_roles(source, roles, **reading)
            c = table.get("censor")
            t = table.get("truncation") if "truncation" in roles else ds.get("truncation")
            found = {"truncation": t, "weights": table.get("weight")}
            if "lower" in roles:
                return {**found, "lower": table.arrays["lower"], "upper": table.arrays["upper"]}
            return {**found, "values": table.arrays["value"], "censored": c}
        if source == Path(ds["path"]):
            from samplewright.intake.columns import read_column
            from samplewright.pipeline.config import READING_OPTIONS

            options = {k: ds[k] for k in READING_OPTIONS if k in ds}
            data = read_column(source, ds["column"], **options)
        else:
            from samplewright.store.snapshots import read_data

            data, _ = read_data(source, None)
    except (SamplewrightError, OSError):
        return None  # the snapshot job or the fit job reports it with its own message
    out = {"values": data.values, "weights": data.weights, "censored": data.censored}
    if ds.get("truncation") is not None:
        out["truncation"] = ds["truncation"]
    return out


def _what(ds: dict[str, Any]) -> str:
    if "lower" in ds or "upper" in ds:
        return f"columns {ds.get('lower')!r}, {ds.get('upper')!r} of {ds.get('path')}"
    return f"column {ds.get('column')!r} of {ds.get('path')}"


def precheck_plan(plan: Any) -> None:
    """Precheck every candidate not fitted yet (module docstring); ConfigError on the first
    that cannot fit its data."""
    for name, ds in plan.datasets.items():
        if not plan.has_data(name) or plan.is_produced(name):
            continue
        specs = list(plan.specs[name])
        if all(Path(plan.fit_path(name, s.label)).is_file() for s in specs):
            continue
        found = _values(plan, name)
        if found is None:
            continue
        from samplewright.check.precheck import precheck, precheck_rows

        incomplete = plan.is_incomplete(name)
        for i, spec in enumerate(specs):
            if Path(plan.fit_path(name, spec.label)).is_file():
                continue
            if incomplete:
                reason = precheck_rows(spec.method, spec.options, **found)
            else:
                reason = precheck(values=found["values"], method=spec.method,
                                  options=spec.options, weights=found["weights"],
                                  censored=found["censored"])  # fmt: skip
            if reason is not None:
                raise ConfigError(
                    f"samplewright.datasets.{name}.methods[{i}]: method {spec.method!r} cannot "
                    f"fit {_what(ds)}: {reason}"
                )
