"""Sampler artifacts: one Parquet file per sampler, verified on load.

Layout
------
* The table holds the payload and nothing else: ``value`` (and ``weight``) for an empirical
  sampler, ``x`` and ``p`` for a piecewise-linear CDF, no columns and no rows for a parametric one.
  All columns are float64. Any Parquet reader can open it.
* The schema metadata holds one key, ``samplewright``, whose value is a JSON document (field list
  in the README, "Artifact format"). Its ``content_hash`` covers the canonical content: the
  payload columns as little-endian float64 (name, length, bytes, in table order) followed by the
  sorted-key JSON of ``format_version``, ``sampler``, ``fingerprint``, ``key``, ``data`` and
  ``diagnostics``. It is independent of the Parquet writer, of the time and of the host, so the
  same fit on a laptop and on a cluster gives the same content hash. ``record_hash`` covers the
  whole JSON document (provenance included) plus the payload, so any edit is detected.
* The metadata is stored once, as the file's key-value metadata (see :mod:`.tables`); a file
  that also carries it in a stored Arrow schema is refused unless both copies are equal.
* Writing is atomic (:mod:`.atomic`): a killed job never leaves a half-written artifact under a
  final name.
* The JSON texts hashed are canonical JSON (:mod:`samplewright.core.canonical`).

No pickle is used anywhere: loading an artifact cannot run code.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import platform
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa

from samplewright.core.canonical import canonical_bytes, parse_json
from samplewright.core.errors import ArtifactError, IntegrityError, SamplewrightError
from samplewright.core.versions import ARTIFACT_FORMAT_VERSION
from samplewright.distributions.base import Sampler
from samplewright.store.tables import read_table, write_table

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


def _hash_payload(h: Any, payload: Mapping[str, np.ndarray]) -> None:
    for name, arr in payload.items():
        canon = np.ascontiguousarray(np.asarray(arr, dtype=np.float64), dtype="<f8")
        h.update(f"|{name}|{canon.size}|".encode())
        h.update(canon.tobytes())


def content_hash(payload: Mapping[str, np.ndarray], meta: Mapping[str, Any]) -> str:
    """sha256 of the canonical content (see module docstring)."""
    h = hashlib.sha256(b"samplewright-content-v1")
    _hash_payload(h, payload)
    h.update(canonical_bytes({k: meta.get(k) for k in _HASHED}))
    return "sha256:" + h.hexdigest()


def _record_hash(payload: Mapping[str, np.ndarray], meta: Mapping[str, Any]) -> str:
    h = hashlib.sha256(b"samplewright-record-v1")
    _hash_payload(h, payload)
    h.update(canonical_bytes({k: v for k, v in meta.items() if k != "record_hash"}))
    return "sha256:" + h.hexdigest()


def _versions() -> dict[str, str]:
    import pandas
    import scipy

    from samplewright import __version__

    return {
        "samplewright": __version__,
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "pandas": pandas.__version__,
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
    ('knots', 'sha256:')
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
        "diagnostics": dict(diagnostics or {}),
    }
    try:
        meta["content_hash"] = content_hash(payload, meta)
        meta["provenance"] = {
            **dict(provenance or {}),
            "created_at": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds"),
            "versions": _versions(),
        }
        meta["record_hash"] = _record_hash(payload, meta)
        text = canonical_bytes(meta)
    except (TypeError, ValueError) as exc:
        raise ArtifactError(f"{path}: the sampler's metadata cannot be stored ({exc})") from None
    table = pa.table({k: pa.array(np.asarray(v, dtype=np.float64)) for k, v in payload.items()})
    write_table(path, table, {METADATA_KEY: text}, compression="zstd")
    return meta


def _read(path: Path) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
    if not path.is_file():
        raise ArtifactError(f"{path}: artifact not found")
    try:
        table, raw = read_table(path, METADATA_KEY)
    except IntegrityError:
        raise
    except Exception as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise ArtifactError(f"{path}: not a readable Parquet file ({reason})") from None
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
    names = table.column_names
    if len(set(names)) != len(names):
        raise ArtifactError(f"{path}: payload column names repeat ({', '.join(names)})")
    payload = {}
    for i, field in enumerate(table.schema):
        if not pa.types.is_float64(field.type):
            raise ArtifactError(
                f"{path}: payload column {field.name!r} is {field.type}, expected double"
            )
        payload[field.name] = table.column(i).to_numpy().astype(np.float64, copy=False)
    return payload, meta


def read_metadata(path: str | Path, *, verify: bool = True) -> dict[str, Any]:
    """The artifact's metadata (verified unless ``verify=False``)."""
    payload, meta = _read(Path(path))
    if verify:
        _verify(Path(path), payload, meta)
    return meta


def _verify(path: Path, payload: Mapping[str, np.ndarray], meta: Mapping[str, Any]) -> None:
    try:
        expected = content_hash(payload, meta)
        record = _record_hash(payload, meta)
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


def _build(path: Path, payload: Mapping[str, np.ndarray], meta: Mapping[str, Any]) -> Sampler:
    described = meta.get("sampler") or {}
    kind = described.get("kind")
    from samplewright.fitting.registry import sampler_class

    cls = sampler_class(str(kind))  # imports that kind's module only
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
