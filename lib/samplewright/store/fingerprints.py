"""Content fingerprints of the data a sampler is made from, with a stat-keyed cache.

A fingerprint hashes the *values* of the columns used, not the file's bytes: each role
(``value``, and ``weight`` / ``censor`` when given) contributes its name, its length and its values
as little-endian float64, after the same cleaning that fitting applies. So the same numbers in CSV
or Parquet, with other columns added, removed or reordered, give the same fingerprint, and any
change of a used value gives a new one. Column *names* do not enter it (renaming a column in the
file and in the configuration changes nothing).

Hashing a large file on every Snakemake parse would be slow, so results are memoised in a JSON
file: each entry's key is the canonical JSON of (absolute path, columns, cleaning policy,
fingerprint version) and its value records the file's size, mtime_ns and inode when it was
hashed, the fingerprint, and a check digest over all of these. The file is small and replaced
atomically, so concurrent writers may lose an entry but never corrupt it.

The memo is never trusted blindly: an entry that is not exactly of that shape (a hand edit, a
damaged file, an older layout) is dropped when the memo is read and the fingerprint is computed
again; :meth:`FingerprintCache.forget` drops an entry that proved wrong (the snapshot job does so
when the data's fingerprint is not the one planned), so the next plan recomputes it.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from samplewright.core.canonical import canonical_bytes, canonical_json, parse_json
from samplewright.core.versions import SNAPSHOT_FORMAT_VERSION
from samplewright.store.atomic import write_text
from samplewright.store.layout import FINGERPRINT_CACHE_NAME

if TYPE_CHECKING:  # intake pulls in pandas and pyarrow: only needed when a file is read
    from samplewright.intake.columns import ColumnData

__all__ = [
    "FINGERPRINT_VERSION",
    "FingerprintCache",
    "fingerprint_arrays",
    "fingerprint_column",
    "fingerprint_file",
    "knots_fingerprint",
]

FINGERPRINT_VERSION = SNAPSHOT_FORMAT_VERSION
_HEX64 = re.compile(r"[0-9a-f]{64}")
# reading options and their defaults; the file-format ones enter a cache key only when set
_ROLE_DEFAULTS: dict[str, Any] = {
    "weights": None,
    "censor": None,
    "missing": "error",
    "infinite": "error",
}
_FORMAT_DEFAULTS: dict[str, Any] = {
    "separator": None,
    "decimal": ".",
    "missing_markers": [],
    "encoding": None,
}
_STAT_FIELDS = ("size", "mtime_ns", "inode")


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


def knots_fingerprint(x: np.ndarray, p: np.ndarray) -> str:
    """Fingerprint of a user-drawn CDF: its knots' x values, then their probabilities."""
    return fingerprint_arrays(np.concatenate([np.asarray(x, float), np.asarray(p, float)]))


def fingerprint_column(data: ColumnData) -> str:
    """Fingerprint of cleaned column data."""
    return fingerprint_arrays(data.values, data.weights, data.censored)


def _stat_key(path: Path) -> dict[str, int]:
    st = path.stat()
    return {"size": st.st_size, "mtime_ns": st.st_mtime_ns, "inode": st.st_ino}


def _reading(options: dict[str, Any]) -> dict[str, Any]:
    """``options`` completed with the defaults (``missing_markers`` as a list); unknown names
    are a TypeError, as for a function call."""
    unknown = sorted(set(options) - set(_ROLE_DEFAULTS) - set(_FORMAT_DEFAULTS))
    if unknown:
        raise TypeError(f"unexpected reading option {unknown[0]!r}")
    out = {**_ROLE_DEFAULTS, **_FORMAT_DEFAULTS, **options}
    out["missing_markers"] = list(out["missing_markers"] or [])
    return out


def _entry_check(key: str, stat: dict[str, int], fingerprint: str) -> str:
    digest = hashlib.sha256(canonical_bytes([key, [stat[k] for k in _STAT_FIELDS], fingerprint]))
    return digest.hexdigest()[:16]


def _valid_entry(key: Any, entry: Any) -> bool:
    """Whether a memo entry has exactly the shape this version writes, check digest included."""
    if not isinstance(key, str) or not isinstance(entry, dict):
        return False
    if set(entry) != {*_STAT_FIELDS, "fingerprint", "check"}:
        return False
    stat = {k: entry[k] for k in _STAT_FIELDS}
    if not all(type(v) is int and v >= 0 for v in stat.values()):
        return False
    fp = entry["fingerprint"]
    if not isinstance(fp, str) or _HEX64.fullmatch(fp) is None:
        return False
    try:
        parts = parse_json(key)
    except ValueError:
        return False
    if not isinstance(parts, list) or not parts or parts[-1] != FINGERPRINT_VERSION:
        return False
    if canonical_json(parts) != key:
        return False
    return bool(entry["check"] == _entry_check(key, stat, fp))


def _load_cache(cache: Path) -> tuple[dict[str, dict], int]:
    """The valid entries of the memo file and the number of entries dropped as invalid."""
    try:
        data = parse_json(cache.read_bytes())
    except FileNotFoundError:
        return {}, 0
    except (OSError, ValueError):
        return {}, 1
    if not isinstance(data, dict):
        return {}, 1
    valid = {k: v for k, v in data.items() if _valid_entry(k, v)}
    return valid, len(data) - len(valid)


class FingerprintCache:
    """The stat-keyed fingerprint memo in ``cache_dir``/fingerprints.json.

    Load once, look up many files, save once: planning a workflow with hundreds of datasets reads
    and writes the JSON a single time.
    """

    def __init__(self, cache_dir: str | Path | None) -> None:
        self.path = Path(cache_dir) / FINGERPRINT_CACHE_NAME if cache_dir is not None else None
        self.entries, self.n_dropped = _load_cache(self.path) if self.path else ({}, 0)
        self.dirty = self.n_dropped > 0
        self._forgotten: set[str] = set()

    @staticmethod
    def _key(path: Path, what: list[Any]) -> str:
        return canonical_json([str(path.resolve()), *what, FINGERPRINT_VERSION])

    def _memo(self, path: Path, what: list[Any], compute: Callable[[], str]) -> str:
        """The cached fingerprint of ``what`` in ``path`` if its stat is unchanged, else
        ``compute()`` (remembered only if the file did not change while it was read)."""
        entry_key = self._key(path, what)
        stat = _stat_key(path)
        hit = self.entries.get(entry_key)
        if hit is not None and all(hit.get(k) == v for k, v in stat.items()):
            return str(hit["fingerprint"])
        fp = compute()
        if _stat_key(path) == stat:
            self.entries[entry_key] = {
                **stat,
                "fingerprint": fp,
                "check": _entry_check(entry_key, stat, fp),
            }
            self._forgotten.discard(entry_key)
            self.dirty = True
        return fp

    @staticmethod
    def _what(column: str, options: dict[str, Any]) -> list[Any]:
        """The cache-key parts of reading ``column`` with ``options`` (see :func:`_reading`)."""
        opts = _reading(options)
        what = [column, *(opts[k] for k in ("weights", "censor", "missing", "infinite"))]
        extra = {k: opts[k] for k, default in _FORMAT_DEFAULTS.items() if opts[k] != default}
        return [*what, extra] if extra else what

    def forget(self, path: str | Path, column: str, **options: Any) -> bool:
        """Drop the entry of a column of ``path`` (it proved wrong); True if there was one.

        ``options`` are the reading options of :meth:`fingerprint`. The drop is written by
        :meth:`save`, also over entries other processes wrote meanwhile.
        """
        key = self._key(Path(path), self._what(column, options))
        self._forgotten.add(key)
        self.dirty = True
        return self.entries.pop(key, None) is not None

    def fingerprint(self, path: str | Path, column: str, **options: Any) -> str:
        """Fingerprint of a column of a data file (see :func:`fingerprint_file`).

        ``options`` are :func:`~samplewright.intake.columns.read_column`'s: ``weights``,
        ``censor``, ``missing``, ``infinite``, ``separator``, ``decimal``, ``missing_markers``,
        ``encoding``.
        """
        from samplewright.intake.columns import read_column

        path = Path(path)
        opts = _reading(options)
        if not path.is_file():
            read_column(path, column)  # raises the standard "not found" error

        def compute() -> str:
            return fingerprint_column(read_column(path, column, **opts))

        return self._memo(path, self._what(column, opts), compute)

    def fingerprint_knots(self, path: str | Path) -> str:
        """Fingerprint of a user-drawn CDF file (its knots x then p), memoised the same way."""
        from samplewright.fitting.api import read_knots

        path = Path(path)

        def compute() -> str:
            knots = read_knots(path)
            return knots_fingerprint(knots.x, knots.p)

        return self._memo(path, ["<knots>"], compute)

    def save(self) -> None:
        """Write the memo if anything was added (merging with entries written meanwhile)."""
        if self.path is None or not self.dirty:
            return
        merged = {**_load_cache(self.path)[0], **self.entries}
        for key in self._forgotten:
            merged.pop(key, None)
        write_text(self.path, canonical_json(merged) + "\n")
        self.dirty = False


def fingerprint_file(
    path: str | Path,
    column: str,
    *,
    cache_dir: str | Path | None = None,
    **options: Any,
) -> str:
    """Fingerprint of a column of a data file, memoised in ``cache_dir``/fingerprints.json.

    ``options`` are the reading options of
    :func:`~samplewright.intake.columns.read_column` (``weights``, ``censor``, ``missing``,
    ``infinite``, ``separator``, ``decimal``, ``missing_markers``, ``encoding``). Raises the same
    one-line :class:`~samplewright.core.errors.InputDataError` as reading would.
    """
    cache = FingerprintCache(cache_dir)
    fp = cache.fingerprint(path, column, **options)
    cache.save()
    return fp
