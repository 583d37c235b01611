"""Sampler artifacts: one Parquet file per sampler, verified on load.

Layout
------
* The table holds the payload and nothing else: ``value`` (and ``weight``) for an empirical
  sampler, ``x`` and ``p`` for a piecewise-linear CDF; a sampler without payload (a parametric
  one) gets a single empty column ``no_payload`` (zero rows), because some readers (duckdb)
  refuse a Parquet file without columns. The placeholder is not part of the payload nor of the
  content hash. All columns are float64. Any Parquet reader can open it.
* The schema metadata holds one key, ``samplewright``, whose value is a JSON document (field list
  in the README, "Artifact format"). Its ``content_hash`` is BLAKE3 (written ``blake3:`` and 64
  hex digits) of the canonical content: the prefix ``samplewright-content-v2``, the payload
  columns as little-endian float64 (``|name|length|`` then the bytes, in table order) and the
  sorted-key JSON of ``format_version``, ``sampler``, ``fingerprint``, ``key``, ``data`` and
  ``diagnostics``. It is independent of the Parquet writer, of the time and of the host, so the
  same fit on a laptop and on a cluster gives the same content hash. ``record_hash`` is BLAKE3 of
  the prefix ``samplewright-record-v2`` and the whole JSON document but itself (provenance and
  ``content_hash`` included, so the payload too), so any edit is detected while the payload is
  hashed once, on write and on load.
* The payload's order is part of what the content hash covers, so a sampler rebuilt from a
  verified payload may trust the order it was written in (an empirical sampler's sorted values).
* Artifacts of the first format (``sha256:`` hashes, samplewright before the BLAKE3 change) are
  refused with a one-line error asking for them to be written again; nothing was released with
  them.
* The metadata is stored once, as the file's key-value metadata (see :mod:`.tables`); a file
  that also carries it in a stored Arrow schema is refused unless both copies are equal.
* Writing is atomic (:mod:`.atomic`): a killed job never leaves a half-written artifact under a
  final name.
* The JSON texts hashed are canonical JSON (:mod:`samplewright.core.canonical`).

No pickle is used anywhere: loading an artifact cannot run code.
"""

from __future__ import annotations

import datetime as _dt
import platform
import sys
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import blake3
import numpy as np
import pyarrow as pa

from samplewright.core.canonical import canonical_bytes, parse_json
from samplewright.core.errors import ArtifactError, IntegrityError, SamplewrightError
from samplewright.core.versions import ARTIFACT_FORMAT_VERSION
from samplewright.distributions.base import Sampler
from samplewright.store.tables import FloatColumnError, read_float_columns, write_table

# the one empty column of an artifact whose sampler has no payload (readers need a column)
NO_PAYLOAD = "no_payload"

__all__ = [
    "FORMAT_VERSION",
    "METADATA_KEY",
    "content_hash",
    "load_sampler",
    "read_metadata",
    "verify_artifact",
    "write_sampler",
]

FORMAT_VERSION = ARTIFACT_FORMAT_VERSION
METADATA_KEY = b"samplewright"
_HASHED = ("format_version", "sampler", "fingerprint", "key", "data", "diagnostics")
_HASH = "blake3"
_CONTENT_PREFIX = b"samplewright-content-v2"
_RECORD_PREFIX = b"samplewright-record-v2"
_PARALLEL_BYTES = 1 << 20  # hash payloads above 1 MiB on every core


def _le_float64(arr: Any) -> np.ndarray:
    """``arr`` as one contiguous little-endian float64 vector (a view when it already is one)."""
    return np.ascontiguousarray(np.asarray(arr, dtype="<f8")).reshape(-1)


def _arrow(values: np.ndarray) -> pa.Array:
    """A float64 Arrow array over ``values``'s memory (no copy; unlike ``pa.array``, no pandas
    import: pyarrow 26 loads pandas to inspect any Python object it converts)."""
    return pa.Array.from_buffers(pa.float64(), values.size, [None, pa.py_buffer(values)])


def content_hash(payload: Mapping[str, np.ndarray], meta: Mapping[str, Any]) -> str:
    """BLAKE3 of the canonical content (see module docstring), as ``"blake3:<64 hex>"``.

    The payload is hashed where it lies (no copy of a float64 vector), on every core when it is
    large.
    """
    columns = {name: _le_float64(arr) for name, arr in payload.items()}
    size = sum(c.nbytes for c in columns.values())
    threads = blake3.blake3.AUTO if size > _PARALLEL_BYTES else 1
    h = blake3.blake3(_CONTENT_PREFIX, max_threads=threads)
    for name, canon in columns.items():
        h.update(f"|{name}|{canon.size}|".encode())
        h.update(canon.view(np.uint8).data)
    h.update(canonical_bytes({k: meta.get(k) for k in _HASHED}))
    return f"{_HASH}:{h.hexdigest()}"


def _record_hash(meta: Mapping[str, Any]) -> str:
    """BLAKE3 of the whole metadata but ``record_hash`` (the payload enters via content_hash)."""
    h = blake3.blake3(_RECORD_PREFIX)
    h.update(canonical_bytes({k: v for k, v in meta.items() if k != "record_hash"}))
    return f"{_HASH}:{h.hexdigest()}"


def _installed(name: str) -> str:
    """The version of library ``name``: from the module if it is loaded, else from its installed
    metadata (recording it imports no scipy or pandas into a job that needs neither)."""
    module = sys.modules.get(name)
    version = getattr(module, "__version__", None)
    if isinstance(version, str):
        return version
    from importlib import metadata

    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "not installed"


def _versions() -> dict[str, str]:
    from samplewright import __version__

    return {
        "samplewright": __version__,
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": _installed("scipy"),
        "pandas": _installed("pandas"),
        "pyarrow": pa.__version__,
    }


def write_sampler(
    sampler: Sampler,
    path: str | Path,
    *,
    fingerprint: str | None = None,
    key: str | None = None,
    data: Mapping[str, Any] | None = None,
    diagnostics: Mapping[str, Any] | None = None,
    provenance: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """Write ``sampler`` to a Parquet artifact atomically; return the metadata written.

    >>> import tempfile, os
    >>> from samplewright.distributions.piecewise import from_knots
    >>> d = tempfile.mkdtemp()
    >>> meta = write_sampler(from_knots([0, 1], [0, 1]), os.path.join(d, "u.parquet"))
    >>> meta["sampler"]["method"], meta["content_hash"][:7]
    ('knots', 'blake3:')
    """
    path = Path(path)
    payload = sampler.payload()
    meta: dict[str, Any] = {
        "format": "samplewright-sampler",
        "format_version": FORMAT_VERSION,
        "sampler": {"kind": sampler.kind, **sampler.describe()},
        "fingerprint": fingerprint,
        "key": key,
        "data": dict(data or {}),
        # what the fit recorded travels with the sampler unless the caller says otherwise
        "diagnostics": dict(
            (getattr(sampler, "diagnostics", None) or {}) if diagnostics is None else diagnostics
        ),
    }
    try:
        meta["content_hash"] = content_hash(payload, meta)
        meta["provenance"] = {
            **dict(provenance or {}),
            "created_at": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds"),
            "versions": _versions(),
        }
        meta["record_hash"] = _record_hash(meta)
        text = canonical_bytes(meta)
    except (TypeError, ValueError) as exc:
        raise ArtifactError(f"{path}: the sampler's metadata cannot be stored ({exc})") from None
    columns = {k: _le_float64(v) for k, v in payload.items()}
    if not columns:
        columns = {NO_PAYLOAD: np.empty(0, dtype="<f8")}
    table = pa.Table.from_arrays([_arrow(v) for v in columns.values()], names=list(columns))
    write_table(path, table, {METADATA_KEY: text}, compression="zstd")
    return meta


def _parse(path: Path, raw: bytes | None) -> dict[str, Any]:
    """The samplewright metadata of an artifact, checked for its shape and format version."""
    if raw is None:
        raise ArtifactError(f"{path}: no samplewright metadata (not a samplewright artifact)")
    try:
        meta = parse_json(raw)
    except ValueError as exc:
        raise ArtifactError(f"{path}: samplewright metadata is unusable: {exc}") from None
    if not isinstance(meta, dict) or meta.get("format") != "samplewright-sampler":
        raise ArtifactError(f"{path}: metadata does not describe a samplewright sampler")
    if meta.get("format_version") != FORMAT_VERSION:
        raise ArtifactError(
            f"{path}: format_version {meta.get('format_version')!r} is not supported "
            f"(this samplewright reads {FORMAT_VERSION})"
        )
    if not isinstance(meta.get("sampler"), dict):
        raise ArtifactError(f"{path}: metadata field 'sampler' is not a JSON object")
    return meta


def _read(path: Path) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
    if not path.is_file():
        raise ArtifactError(f"{path}: artifact not found")
    found: list[dict[str, Any]] = []
    try:  # the metadata is checked before any payload column is decoded
        payload, _ = read_float_columns(
            path, METADATA_KEY, before=lambda raw: found.append(_parse(path, raw))
        )
    except SamplewrightError:
        raise
    except FloatColumnError as exc:
        raise ArtifactError(f"{path}: payload {exc}") from None
    except Exception as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise ArtifactError(f"{path}: not a readable Parquet file ({reason})") from None
    if list(payload) == [NO_PAYLOAD] and not len(payload[NO_PAYLOAD]):
        payload = {}
    return payload, found[0]


def read_metadata(path: str | Path, *, verify: bool = True) -> dict[str, Any]:
    """The artifact's metadata (verified unless ``verify=False``)."""
    payload, meta = _read(Path(path))
    if verify:
        _verify(Path(path), payload, meta)
    return meta


def _verify(path: Path, payload: Mapping[str, np.ndarray], meta: Mapping[str, Any]) -> None:
    stored = meta.get("content_hash")
    if isinstance(stored, str) and stored.startswith("sha256:"):
        raise ArtifactError(
            f"{path}: written by an older samplewright (sha256 content hash, before "
            f"{_HASH}); write it again with this version (fit, or the workflow's fit rule)"
        )
    try:
        expected = content_hash(payload, meta)
        record = _record_hash(meta)
    except (TypeError, ValueError) as exc:
        raise IntegrityError(f"{path}: metadata cannot be hashed ({exc})") from None
    if meta.get("content_hash") != expected:
        raise IntegrityError(
            f"{path}: content hash mismatch (stored {meta.get('content_hash')}, computed "
            f"{expected}); the payload or sampler metadata was altered"
        )
    if meta.get("record_hash") != record:
        raise IntegrityError(
            f"{path}: record hash mismatch (stored {meta.get('record_hash')}, computed {record});"
            " the metadata was altered"
        )


def verify_artifact(path: str | Path) -> dict[str, Any]:
    """Check an artifact's hashes and that it rebuilds into a sampler; return its metadata."""
    payload, meta = _read(Path(path))
    _verify(Path(path), payload, meta)
    _build(Path(path), payload, meta)
    return meta


# kinds whose payload holds other samplers (their parts are rebuilt through SAMPLER_KINDS)
_NESTING_KINDS = frozenset({"joint", "point_mass", "averaged", "ensemble"})


def _build(path: Path, payload: Mapping[str, np.ndarray], meta: Mapping[str, Any]) -> Sampler:
    described = meta.get("sampler") or {}
    kind = described.get("kind")
    from samplewright.fitting.registry import sampler_class

    cls = sampler_class(str(kind))  # imports that kind's module only
    if kind in _NESTING_KINDS:  # samplers made of samplers rebuild their parts by kind too
        from samplewright.fitting.registry import load_sampler_kinds

        load_sampler_kinds()
    if cls is None:
        raise ArtifactError(f"{path}: unknown sampler kind {kind!r} (newer samplewright?)")
    try:
        sampler = cls.from_payload(dict(payload), dict(described))
    except (KeyError, TypeError, ValueError, IndexError, SamplewrightError) as exc:
        raise ArtifactError(f"{path}: cannot rebuild the {kind!r} sampler ({exc})") from None
    sampler.metadata = dict(meta)
    return sampler


def load_sampler(path: str | Path) -> Sampler:
    """Load and verify an artifact; the sampler carries the metadata as ``.metadata``.

    Raises :class:`~samplewright.core.errors.IntegrityError` if the content was altered.
    """
    payload, meta = _read(Path(path))
    _verify(Path(path), payload, meta)
    return _build(Path(path), payload, meta)
