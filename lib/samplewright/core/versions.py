"""Version numbers that decide when pipelines rebuild (one place for each).

* :data:`RESULTS_VERSION`: bump whenever a change makes any artifact's *content* differ (a new
  algorithm, a fixed defect, a new metadata field). Every rule from fitting down carries it in
  ``params:``, so bumping it on purpose is what makes pipelines refit after an upgrade, and a
  release that changes nothing does not.
* :data:`SNAPSHOT_FORMAT_VERSION`: bump whenever column snapshots or data fingerprints change
  (the hash, the canonical form of the values, the snapshot table). Snapshot rules carry it
  instead of the results version, so a results bump does not re-read the raw data.
* :data:`ARTIFACT_FORMAT_VERSION`: the layout of a sampler artifact (schema metadata, payload
  columns). Readers refuse a format newer than they know.
"""

from __future__ import annotations

__all__ = ["ARTIFACT_FORMAT_VERSION", "RESULTS_VERSION", "SNAPSHOT_FORMAT_VERSION"]

RESULTS_VERSION = 3
SNAPSHOT_FORMAT_VERSION = 2
ARTIFACT_FORMAT_VERSION = 1
