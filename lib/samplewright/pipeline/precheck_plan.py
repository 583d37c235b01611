"""Refuse, while planning, a method that cannot fit a dataset's data (one hook in the plan).

Planning already knows each dataset's data: its column snapshot once the snapshot job has run,
or the data file itself when the fingerprint was just computed. For every candidate whose
artifact does not exist yet, :func:`precheck_plan` runs the cheap
:func:`samplewright.check.precheck.precheck` on those values and raises a
:class:`~samplewright.core.errors.ConfigError` naming the dataset, the method and the reason,
so the workflow stops before any job runs instead of failing inside a fit job with the reason in
a log file. Candidates already fitted are not looked at, so a workflow whose fits exist reads
nothing here.

The values come from the snapshot when it exists, else from the data file when it is at most
:data:`MAX_READ_BYTES` (a larger file is left to the fit job, which says the same thing in its
log). Datasets made by the workflow (``produced``), drawn CDFs, elicited inputs and datasets
read by role (truncation, interval rows) are not prechecked.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from samplewright.core.errors import ConfigError, SamplewrightError

__all__ = ["MAX_READ_BYTES", "precheck_plan"]

MAX_READ_BYTES = 256 * 2**20


def _values(plan: Any, name: str) -> tuple[Any, Any, Any] | None:
    """(values, weights, censored) of a dataset's column, or None when not read cheaply."""
    ds = plan.datasets[name]
    snapshot = Path(plan.snapshot_path(name))
    try:
        if snapshot.is_file():
            from samplewright.store.snapshots import read_data

            data, _ = read_data(snapshot, None)
        else:
            path = Path(ds["path"])
            if not path.is_file() or path.stat().st_size > MAX_READ_BYTES:
                return None
            from samplewright.intake.columns import read_column
            from samplewright.pipeline.config import READING_OPTIONS

            options = {k: ds[k] for k in READING_OPTIONS if k in ds}
            data = read_column(path, ds["column"], **options)
    except (SamplewrightError, OSError):
        return None  # the snapshot job or the fit job reports it with its own message
    return data.values, data.weights, data.censored


def precheck_plan(plan: Any) -> None:
    """Precheck every candidate not fitted yet (module docstring); ConfigError on the first
    that cannot fit its data."""
    for name, ds in plan.datasets.items():
        simple = plan.has_check(name) if hasattr(plan, "has_check") else not plan.is_knots(name)
        if not simple or plan.is_produced(name):
            continue
        specs = list(plan.specs[name])
        if all(Path(plan.fit_path(name, s.label)).is_file() for s in specs):
            continue
        found = _values(plan, name)
        if found is None:
            continue
        values, weights, censored = found
        from samplewright.check.precheck import precheck

        for i, spec in enumerate(specs):
            if Path(plan.fit_path(name, spec.label)).is_file():
                continue
            reason = precheck(values, spec.method, spec.options, weights=weights, censored=censored)
            if reason is not None:
                raise ConfigError(
                    f"samplewright.datasets.{name}.methods[{i}]: method {spec.method!r} cannot "
                    f"fit column {ds.get('column')!r} of {ds.get('path')}: {reason}"
                )
