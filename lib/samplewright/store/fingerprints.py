"""Content fingerprints of the data a sampler is made from, with a stat-keyed cache.

A fingerprint hashes the *values* of the columns used, not the file's bytes: each role
(``value``, and ``weight`` / ``censor`` when given) contributes its name, its length and the
BLAKE3 digest of its values as little-endian float64, after the same cleaning that fitting
applies (construction in :func:`fingerprint_arrays`). A plain float64 column of a Parquet file
(no nulls, every value finite and within its row group's footer statistics, no weight or
censoring column) is hashed row group by row group while the next one is decoded, so the column
is never held whole; anything else is read by :func:`~samplewright.intake.columns.read_column`,
which gives the same values in the clean case and the exact cleaning or error otherwise.

So the same numbers in CSV or Parquet, with other columns added, removed or reordered, give the
same fingerprint, and any change of a used value gives a new one. Column *names* do not enter
it (renaming a column in the file and in the configuration changes nothing).

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
from collections import deque
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from typing import TYPE_CHECKING, Any

import blake3
import numpy as np
import numpy.typing as npt

from samplewright.core.canonical import canonical_bytes, canonical_json, parse_json
from samplewright.core.versions import SNAPSHOT_FORMAT_VERSION
from samplewright.store.atomic import write_text
from samplewright.store.layout import FINGERPRINT_CACHE_NAME

if TYPE_CHECKING:  # intake pulls in pyarrow: only needed when a file is read
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


_CHUNK = 1 << 16  # values checked or normalised at a time: 512 KiB, stays in the CPU cache
_PARALLEL_BYTES = 1 << 20  # hash buffers above 1 MiB on every core


def _needs_normalising(flat: np.ndarray) -> bool:
    """Whether ``x + 0.0`` could change the bytes of any value: a -0.0 (to 0.0) or a NaN (whose
    payload the CPU may quieten). Checked chunk by chunk (no temporary of the array's size)."""
    for start in range(0, flat.size, _CHUNK):
        part = flat[start : start + _CHUNK]
        zero = part == 0.0
        if np.isnan(part).any() or (zero.any() and np.signbit(part[zero]).any()):
            return True
    return False


def _canonical(arr: npt.ArrayLike) -> np.ndarray:
    """``arr`` flattened (C order), as numbers numpy can add 0.0 to without a cast of the whole."""
    a = np.asarray(arr)
    if a.dtype.kind not in "biuf" or a.dtype.itemsize > 8:
        a = np.asarray(a, dtype=np.float64)  # object arrays, long doubles: as the cast gives
    return a.reshape(-1)


def _feed(h: Any, flat: np.ndarray, *, plain: bool | None = None) -> None:
    """Feed ``flat``'s canonical bytes to ``h``: little-endian float64 of ``x + 0.0`` (so -0.0
    hashes as 0.0). A contiguous float64 piece that ``+ 0.0`` leaves unchanged (``plain``, checked
    here when None) is hashed where it lies; any other is normalised one cache-sized chunk at a
    time. Neither copies the whole piece."""
    if flat.dtype == np.dtype("<f8") and flat.flags.c_contiguous:
        if plain is None:
            plain = not _needs_normalising(flat)
        if plain:
            h.update(flat.view(np.uint8).data)
            return
    buf = np.empty(min(flat.size, _CHUNK), dtype="<f8")
    for start in range(0, flat.size, _CHUNK):
        part = flat[start : start + _CHUNK]
        out = buf[: part.size]
        np.add(part, 0.0, out=out, casting="unsafe")
        h.update(out.view(np.uint8).data)


def _hasher(nbytes: int) -> Any:
    """A BLAKE3 hasher, on every core when the input is large."""
    return blake3.blake3(max_threads=blake3.blake3.AUTO if nbytes > _PARALLEL_BYTES else 1)


def _combine(parts: list[tuple[str, int, bytes]]) -> str:
    """The fingerprint of (role, number of values, digest of the values) triples."""
    h = blake3.blake3(f"samplewright-fingerprint-v{FINGERPRINT_VERSION}".encode())
    for role, n, digest in parts:
        h.update(f"|{role}|{n}|".encode())
        h.update(digest)
    return str(h.hexdigest())


def fingerprint_arrays(
    values: npt.ArrayLike,
    weights: npt.ArrayLike | None = None,
    censored: npt.ArrayLike | None = None,
) -> str:
    """Hex BLAKE3 over the canonical form of the used arrays.

    The hash takes the prefix ``samplewright-fingerprint-v<FINGERPRINT_VERSION>``, then for each
    role given (``value``, ``weight``, ``censor``, in that order) ``|role|length|`` and the
    32-byte BLAKE3 digest of the role's values as little-endian float64, ``-0.0`` written as
    ``0.0``. Hashing each role on its own lets a reader feed the values in pieces as it decodes
    them (see :func:`_streamed_parquet`), without knowing their number in advance.

    >>> fingerprint_arrays(np.array([1.0, 2.0])) == fingerprint_arrays(np.array([1, 2]))
    True
    """
    parts = []
    for role, arr in (("value", values), ("weight", weights), ("censor", censored)):
        if arr is None:
            continue
        flat = _canonical(arr)
        h = _hasher(8 * flat.size)
        _feed(h, flat)
        parts.append((role, int(flat.size), bytes(h.digest())))
    return _combine(parts)


def _group_bounds(pf: Any, column: str) -> list[tuple[float, float] | None] | None:
    """Per row group, the (min, max) its footer records for ``column`` (None where it records
    none); None if the footer records nulls, or the column is not one flat DOUBLE column."""
    meta = pf.metadata
    paths = [meta.schema.column(i).path for i in range(meta.num_columns)]
    if paths.count(column) != 1:
        return None
    index = paths.index(column)
    bounds: list[tuple[float, float] | None] = []
    for g in range(meta.num_row_groups):
        chunk = meta.row_group(g).column(index)
        st = chunk.statistics
        if chunk.physical_type != "DOUBLE" or (
            st is not None and st.has_null_count and st.null_count
        ):
            return None
        bounds.append((float(st.min), float(st.max)) if st is not None and st.has_min_max else None)
    return bounds


def _clean_doubles(
    chunk: Any, bound: tuple[float, float] | None
) -> tuple[np.ndarray, bool | None] | None:
    """The doubles of one decoded Arrow chunk, viewed in place, and whether they are known to
    hash as they are (all of one sign: no -0.0; None: to be checked); None if the chunk holds a
    null, a value that is not finite or one outside the footer's ``bound`` (what read_column
    refuses or drops)."""
    if chunk.null_count:
        return None
    n = len(chunk)
    if n == 0:
        return np.empty(0), True
    part = np.frombuffer(chunk.buffers()[1], "<f8", count=n, offset=chunk.offset * 8)
    lo, hi = float(part.min()), float(part.max())  # a NaN or an inf makes one not finite
    if not (np.isfinite(lo) and np.isfinite(hi)):
        return None
    if bound is not None and (lo < bound[0] or hi > bound[1]):
        return None
    return part, (True if lo > 0.0 or hi < 0.0 else None)


def _streamed_parquet(path: Path, column: str) -> str | None:
    """The fingerprint of a plain float64 Parquet column, each row group hashed while the next
    is decoded (the column is never held whole); None when the column is anything but plainly
    clean -- another type, nulls, a non-finite value, values outside the footer's statistics,
    a read error -- so that :func:`~samplewright.intake.columns.read_column` handles it with
    its exact cleaning or error.

    In the clean case ``read_column`` returns the stored doubles themselves, checked the same
    way (page checksums, footer statistics, finite values), so the fingerprint is the one of
    :func:`fingerprint_column` of what it reads.
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        pf = pq.ParquetFile(path, page_checksum_verification=True)
    except Exception:
        return None
    with pf:
        schema = pf.schema_arrow
        if schema.names.count(column) != 1 or schema.field(column).type != pa.float64():
            return None
        bounds = _group_bounds(pf, column)
        n_rows = pf.metadata.num_rows
        if bounds is None or n_rows == 0:
            return None
        h = _hasher(8 * n_rows)
        fed = 0

        def decode(g: int) -> pa.ChunkedArray:
            return pf.read_row_group(g, columns=[column], use_threads=False).column(0)

        with ThreadPoolExecutor(1) as pool:  # one decoder thread ahead of the hashing
            pending = deque(pool.submit(decode, g) for g in range(min(2, len(bounds))))
            for g, bound in enumerate(bounds):
                try:
                    col = pending.popleft().result()
                except Exception:
                    return None
                if g + 2 < len(bounds):
                    pending.append(pool.submit(decode, g + 2))
                for chunk in col.chunks:
                    clean = _clean_doubles(chunk, bound)
                    if clean is None:
                        return None
                    part, plain = clean
                    _feed(h, part, plain=plain)
                    fed += part.size
        if fed != n_rows:
            return None
    return _combine([("value", fed, bytes(h.digest()))])


def knots_fingerprint(x: np.ndarray, p: np.ndarray) -> str:
    """Fingerprint of a user-drawn CDF: its knots' x values, then their probabilities."""
    return fingerprint_arrays(np.concatenate([np.asarray(x, float), np.asarray(p, float)]))


def _streamable(path: Path, opts: dict[str, Any]) -> bool:
    """Whether a column read with ``opts`` may take :func:`_streamed_parquet`: a Parquet file,
    the value column alone, the file-format options at their defaults."""
    if path.suffix.lower() not in (".parquet", ".pq"):
        return False
    if opts["weights"] is not None or opts["censor"] is not None:
        return False
    return all(opts[k] == default for k, default in _FORMAT_DEFAULTS.items())


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
        path = Path(path)
        opts = _reading(options)
        if not path.is_file():
            from samplewright.intake.columns import read_column

            read_column(path, column)  # raises the standard "not found" error

        def compute() -> str:  # pyarrow is imported only on a memo miss, intake only if needed
            if _streamable(path, opts):
                fp = _streamed_parquet(path, column)
                if fp is not None:
                    return fp
            from samplewright.intake.columns import read_column

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
