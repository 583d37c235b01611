"""Content fingerprints of the data a sampler is made from, with a stat-keyed cache.

A fingerprint hashes the *values* of the columns used, not the file's bytes: each role
(``value``, and ``weight`` / ``censor`` when given) contributes its name, its length and its values
as little-endian float64, after the same cleaning that fitting applies. So the same numbers in CSV
or Parquet, with other columns added, removed or reordered, give the same fingerprint, and any
change of a used value gives a new one. Column *names* do not enter it (renaming a column in the
file and in the configuration changes nothing).

Hashing a large file on every Snakemake parse would be slow, so results are memoised in a JSON
file keyed by (absolute path, size, mtime_ns, inode, columns, cleaning policy). The file is small,
and replaced atomically, so concurrent writers may lose an entry but never corrupt it.
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from samplewright.core.versions import SNAPSHOT_FORMAT_VERSION

if TYPE_CHECKING:  # intake pulls in pandas and pyarrow: only needed when a file is read
    from samplewright.intake.columns import ColumnData, Policy

__all__ = [
    "FINGERPRINT_VERSION",
    "FingerprintCache",
    "fingerprint_arrays",
    "fingerprint_column",
    "fingerprint_file",
]

FINGERPRINT_VERSION = SNAPSHOT_FORMAT_VERSION
CACHE_NAME = "fingerprints.json"


def fingerprint_arrays(
    values: np.ndarray, weights: np.ndarray | None = None, censored: np.ndarray | None = None
) -> str:
    """Hex sha256 over the canonical form of the used arrays.

    >>> fingerprint_arrays(np.array([1.0, 2.0])) == fingerprint_arrays(np.array([1, 2]))
    True
    """
    h = hashlib.sha256(f"samplewright-fingerprint-v{FINGERPRINT_VERSION}".encode())
    for role, arr in (("value", values), ("weight", weights), ("censor", censored)):
        if arr is None:
            continue
        canon = np.ascontiguousarray(np.asarray(arr, dtype=np.float64), dtype="<f8")
        # -0.0 and 0.0 are the same value; NaN payloads are normalised too.
        canon = canon + 0.0
        h.update(f"|{role}|{canon.size}|".encode())
        h.update(canon.tobytes())
    return h.hexdigest()


def fingerprint_column(data: ColumnData) -> str:
    """Fingerprint of cleaned column data."""
    return fingerprint_arrays(data.values, data.weights, data.censored)


def _stat_key(path: Path) -> dict[str, int]:
    st = path.stat()
    return {"size": st.st_size, "mtime_ns": st.st_mtime_ns, "inode": st.st_ino}


def _load_cache(cache: Path) -> dict[str, dict]:
    try:
        data = json.loads(cache.read_text())
    except (OSError, ValueError):
        return {}
    return data if isinstance(data, dict) else {}


def _store_cache(cache: Path, data: dict[str, dict]) -> None:
    cache.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{cache.name}.", dir=cache.parent)
    try:
        with os.fdopen(fd, "w") as fh:
            json.dump(data, fh, sort_keys=True, indent=0)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, cache)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


class FingerprintCache:
    """The stat-keyed fingerprint memo in ``cache_dir``/fingerprints.json.

    Load once, look up many files, save once: planning a workflow with hundreds of datasets reads
    and writes the JSON a single time.
    """

    def __init__(self, cache_dir: str | Path | None) -> None:
        self.path = Path(cache_dir) / CACHE_NAME if cache_dir is not None else None
        self.entries = _load_cache(self.path) if self.path is not None else {}
        self.dirty = False

    def _memo(self, path: Path, what: list[Any], compute: Callable[[], str]) -> str:
        """The cached fingerprint of ``what`` in ``path`` if its stat is unchanged, else
        ``compute()`` (remembered only if the file did not change while it was read)."""
        entry_key = json.dumps([str(path.resolve()), *what, FINGERPRINT_VERSION])
        stat = _stat_key(path)
        hit = self.entries.get(entry_key)
        if hit is not None and all(hit.get(k) == v for k, v in stat.items()):
            return str(hit["fingerprint"])
        fp = compute()
        if _stat_key(path) == stat:
            self.entries[entry_key] = {**stat, "fingerprint": fp}
            self.dirty = True
        return fp

    def fingerprint(
        self,
        path: str | Path,
        column: str,
        *,
        weights: str | None = None,
        censor: str | None = None,
        missing: Policy = "error",
        infinite: Policy = "error",
    ) -> str:
        """Fingerprint of a column of a data file (see :func:`fingerprint_file`)."""
        from samplewright.intake.columns import read_column

        path = Path(path)
        if not path.is_file():
            read_column(path, column)  # raises the standard "not found" error

        def compute() -> str:
            return fingerprint_column(
                read_column(
                    path, column, weights=weights, censor=censor, missing=missing, infinite=infinite
                )
            )

        return self._memo(path, [column, weights, censor, missing, infinite], compute)

    def fingerprint_knots(self, path: str | Path) -> str:
        """Fingerprint of a user-drawn CDF file (its knots x then p), memoised the same way."""
        from samplewright.fitting.api import read_knots

        path = Path(path)

        def compute() -> str:
            knots = read_knots(path)
            return fingerprint_arrays(np.concatenate([knots.x, knots.p]))

        return self._memo(path, ["<knots>"], compute)

    def save(self) -> None:
        """Write the memo if anything was added (merging with entries written meanwhile)."""
        if self.path is None or not self.dirty:
            return
        merged = {**_load_cache(self.path), **self.entries}
        _store_cache(self.path, merged)
        self.dirty = False


def fingerprint_file(
    path: str | Path,
    column: str,
    *,
    weights: str | None = None,
    censor: str | None = None,
    missing: Policy = "error",
    infinite: Policy = "error",
    cache_dir: str | Path | None = None,
) -> str:
    """Fingerprint of a column of a data file, memoised in ``cache_dir``/fingerprints.json.

    Raises the same one-line :class:`~samplewright.core.errors.InputDataError` as reading would.
    """
    cache = FingerprintCache(cache_dir)
    fp = cache.fingerprint(
        path, column, weights=weights, censor=censor, missing=missing, infinite=infinite
    )
    cache.save()
    return fp
