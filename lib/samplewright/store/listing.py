"""Reading a whole store: list its files, find earlier selections, verify, prune and clean.

The store's folders are those :class:`~samplewright.store.layout.StoreLayout` spells; each file
under them is one :class:`StoreEntryResult`: its area (``samplers``, ``selected``, ``draws``,
...), dataset, label (candidates only), key, method, creation time, number of observations or
rows, size, and whether the current configuration references it (when the caller says which
paths it references). Sampler artifacts are read through their metadata key alone (the payload
is not loaded), so listing a large store stays cheap.

Pruning works on *versions*: the files of one area, dataset (and label) that share a key (a
check's ``.json`` and ``.md``, a report's ``.html`` and ``.json``). A version is removed only
when no file of it is referenced; the newest ``keep`` unreferenced versions of each group are
kept, so the previous selection of a dataset (which the next check compares with) survives a
prune unless ``keep=0``. Only the areas in :data:`PRUNABLE` are pruned; logs, benchmarks, the
fingerprint memo and produced-data records are left alone. :func:`plan_prune` only says what
would go; :func:`remove_versions` deletes.

:func:`previous_selection` finds the most recent selected sampler of a dataset other than the
current one, for the check's drift comparison.
"""

from __future__ import annotations

import datetime as _dt
import os
from collections.abc import Collection, Iterable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from samplewright.core.canonical import parse_json
from samplewright.core.errors import SamplewrightError
from samplewright.store.atomic import clean_stale_temps, is_temp_name

__all__ = [
    "AREAS",
    "PRUNABLE",
    "StoreEntryResult",
    "VerifyEntryResult",
    "clean_store",
    "list_store",
    "plan_prune",
    "previous_selection",
    "remove_versions",
    "verify_store",
]

# area -> depth of folders between the area and the file (dataset, and label for candidates)
AREAS: dict[str, int] = {
    "columns": 1,
    "tables": 1,
    "samplers": 2,
    "selected": 1,
    "draws": 1,
    "checks": 1,
    "reports": 1,
    "intervals": 1,
    "replicates": 1,
    "joint": 1,
    "joint_draws": 1,
}
PRUNABLE = frozenset(AREAS)
_ARTIFACT_AREAS = ("samplers", "selected", "replicates", "joint")
_SNAPSHOT_AREAS = ("columns", "tables")
_ROW_AREAS = ("draws", "joint_draws")


@dataclass(frozen=True)
class StoreEntryResult:
    """One file of a store.

    Attributes
    ----------
    path : str
        The file's path (as found under the root given).
    area : str
        Its top folder (a key of :data:`AREAS`).
    dataset : str
        The dataset (or joint input) it belongs to.
    label : str or None
        The candidate's label (``samplers`` only).
    key : str
        The content key (the file name without its suffix; a fingerprint for snapshots).
    kind : str
        ``artifact``, ``snapshot``, ``rows`` (draws) or ``document`` (JSON, Markdown, HTML).
    method : str or None
        The sampler's method (artifacts).
    created : str or None
        When it was made: the artifact's recorded time, else the file's modification time (UTC).
    n : int or None
        Observations a sampler was fitted to, or rows of a snapshot or draws file.
    size : int
        Bytes.
    referenced : bool or None
        Whether the current configuration uses it (None: not known).
    content_hash, fingerprint : str or None
        From an artifact's metadata.
    problem : str or None
        Why its metadata could not be read (the file is still listed).
    """

    path: str
    area: str
    dataset: str
    label: str | None
    key: str
    kind: str
    method: str | None
    created: str | None
    n: int | None
    size: int
    referenced: bool | None = None
    content_hash: str | None = None
    fingerprint: str | None = None
    problem: str | None = None

    @property
    def version(self) -> tuple[str, str, str | None, str]:
        """``(area, dataset, label, key)``: files sharing it are one version."""
        return (self.area, self.dataset, self.label, self.key)

    def as_dict(self) -> dict[str, Any]:
        """Plain JSON (for ``--json`` output)."""
        return {k: getattr(self, k) for k in self.__dataclass_fields__}


@dataclass(frozen=True)
class VerifyEntryResult:
    """The verification of one store file: ``ok``, or the ``problem`` found."""

    path: str
    area: str
    ok: bool
    detail: str
    integrity: bool = False  # True when the content was altered (hash or fingerprint mismatch)


def _mtime(path: Path) -> str:
    t = _dt.datetime.fromtimestamp(path.stat().st_mtime, _dt.UTC)
    return t.isoformat(timespec="seconds")


def _parquet_rows(path: Path) -> int | None:
    import pyarrow.parquet as pq

    try:
        return int(pq.ParquetFile(path).metadata.num_rows)
    except Exception:  # noqa: BLE001 - a damaged file is still listed
        return None


def _artifact_fields(path: Path) -> dict[str, Any]:
    from samplewright.store.artifacts import METADATA_KEY
    from samplewright.store.tables import read_key

    try:
        raw = read_key(path, METADATA_KEY)
        meta = parse_json(raw) if raw is not None else None
    except Exception as exc:  # noqa: BLE001 - listed with the reason
        return {"problem": str(exc).splitlines()[0] if str(exc) else type(exc).__name__}
    if not isinstance(meta, dict):
        return {"problem": "no samplewright metadata"}
    data = meta.get("data") or {}
    n = data.get("n_obs") if isinstance(data, dict) else None
    return {
        "method": (meta.get("sampler") or {}).get("method"),
        "created": (meta.get("provenance") or {}).get("created_at"),
        "n": n if isinstance(n, int) else None,
        "content_hash": meta.get("content_hash"),
        "fingerprint": meta.get("fingerprint"),
    }


def _entry(root: Path, path: Path, area: str) -> StoreEntryResult | None:
    parts = path.relative_to(root / area).parts
    depth = AREAS[area]
    if len(parts) != depth + 1 or is_temp_name(path.name):
        return None
    dataset = parts[0]
    label = parts[1] if depth == 2 else None
    key = path.name.split(".", 1)[0]
    fields: dict[str, Any] = {"method": None, "created": None, "n": None}
    suffix = path.suffix.lower()
    if area in _ARTIFACT_AREAS and suffix == ".parquet":
        kind = "artifact"
        fields.update(_artifact_fields(path))
    elif suffix == ".parquet":
        kind = "snapshot" if area in _SNAPSHOT_AREAS else "rows"
        fields["n"] = _parquet_rows(path)
    else:
        kind = "document"
    created = fields.pop("created", None) or _mtime(path)
    return StoreEntryResult(
        path=str(path),
        area=area,
        dataset=dataset,
        label=label,
        key=key,
        kind=kind,
        created=created,
        size=path.stat().st_size,
        **fields,
    )


def _canon(path: str | Path) -> str:
    return os.path.realpath(os.path.abspath(path))


def list_store(
    root: str | Path,
    *,
    referenced: Collection[str] | None = None,
    areas: Iterable[str] = AREAS,
) -> list[StoreEntryResult]:
    """Every file under the store's areas, sorted by area, dataset, label and time.

    ``referenced`` is the set of paths the current configuration uses (any spelling: they are
    compared resolved); without it ``referenced`` is None on every entry.
    """
    root = Path(root)
    refs = None if referenced is None else {_canon(p) for p in referenced}
    out: list[StoreEntryResult] = []
    for area in areas:
        folder = root / area
        if not folder.is_dir():
            continue
        for path in sorted(folder.rglob("*")):
            if not path.is_file():
                continue
            entry = _entry(root, path, area)
            if entry is None:
                continue
            if refs is not None:
                entry = replace(entry, referenced=_canon(path) in refs)
            out.append(entry)
    out.sort(key=lambda e: (e.area, e.dataset, e.label or "", e.created or "", e.path))
    return out


def previous_selection(
    root: str | Path, dataset: str, *, current: str | Path | None = None
) -> StoreEntryResult | None:
    """The most recently made selected sampler of ``dataset`` other than ``current`` (and
    other than any file with the same content hash), or None."""
    entries = [e for e in list_store(root, areas=["selected"]) if e.dataset == dataset]
    now = None
    if current is not None and Path(current).is_file():
        now = next((e for e in entries if _canon(e.path) == _canon(current)), None)
    others = [
        e
        for e in entries
        if e.kind == "artifact"
        and e.problem is None
        and (current is None or _canon(e.path) != _canon(current))
        and (now is None or e.content_hash != now.content_hash)
    ]
    return max(others, key=lambda e: (e.created or "", e.path), default=None)


def verify_store(root: str | Path) -> list[VerifyEntryResult]:
    """Verify every artifact (content and record hashes, rebuild) and every snapshot (its
    values hash to the fingerprint it records and is named by)."""
    from samplewright.core.errors import IntegrityError
    from samplewright.store.artifacts import verify_artifact

    out = []
    for e in list_store(root):
        if e.kind == "artifact":
            try:
                meta = verify_artifact(e.path)
            except IntegrityError as exc:
                out.append(VerifyEntryResult(e.path, e.area, False, str(exc), integrity=True))
            except SamplewrightError as exc:
                out.append(VerifyEntryResult(e.path, e.area, False, str(exc)))
            else:
                detail = f"{meta['sampler']['method']} {meta['content_hash'][:19]}"
                out.append(VerifyEntryResult(e.path, e.area, True, detail))
        elif e.kind == "snapshot" and e.area == "columns":
            out.append(_verify_snapshot(e))
    return out


def _verify_snapshot(e: StoreEntryResult) -> VerifyEntryResult:
    from samplewright.store.fingerprints import fingerprint_column
    from samplewright.store.snapshots import read_data

    try:
        data, info = read_data(e.path, None)
    except (SamplewrightError, OSError) as exc:
        return VerifyEntryResult(e.path, e.area, False, str(exc))
    recorded = str((info or {}).get("fingerprint") or "")
    actual = fingerprint_column(data)
    if actual != recorded or not actual.startswith(e.key):
        return VerifyEntryResult(
            e.path,
            e.area,
            False,
            f"{e.path}: its values have fingerprint {actual[:20]}, but it records "
            f"{recorded[:20] or 'none'} and is named {e.key}",
            integrity=True,
        )
    return VerifyEntryResult(e.path, e.area, True, f"snapshot {data.n} values")


def plan_prune(entries: Sequence[StoreEntryResult], *, keep: int = 1) -> list[StoreEntryResult]:
    """The entries a prune removes: whole unreferenced versions beyond the newest ``keep`` of
    each (area, dataset, label). Entries whose ``referenced`` is None are never removed."""
    if keep < 0:
        raise ValueError(f"keep: expected an int >= 0, found {keep}")
    versions: dict[tuple[str, str, str | None, str], list[StoreEntryResult]] = {}
    for e in entries:
        if e.area in PRUNABLE:
            versions.setdefault(e.version, []).append(e)
    groups: dict[tuple[str, str, str | None], list[list[StoreEntryResult]]] = {}
    for version, files in versions.items():
        if all(f.referenced is False for f in files):
            groups.setdefault(version[:3], []).append(files)
    out: list[StoreEntryResult] = []
    for unused in groups.values():
        unused.sort(key=lambda fs: max(f.created or "" for f in fs), reverse=True)
        for files in unused[keep:]:
            out.extend(files)
    return sorted(out, key=lambda e: e.path)


def remove_versions(entries: Iterable[StoreEntryResult]) -> tuple[int, int]:
    """Delete the entries' files; ``(files removed, bytes freed)``. Empty folders left behind
    are removed too."""
    n = size = 0
    folders: set[Path] = set()
    for e in entries:
        path = Path(e.path)
        try:
            path.unlink()
        except FileNotFoundError:
            continue
        n += 1
        size += e.size
        folders.add(path.parent)
    for folder in sorted(folders, key=lambda p: len(p.parts), reverse=True):
        for f in (folder, folder.parent):
            try:
                f.rmdir()  # only succeeds when empty
            except OSError:
                pass
    return n, size


def clean_store(root: str | Path, *, max_age_s: float | None = None) -> list[Path]:
    """Remove stale temporary files of interrupted writes in every folder of the store (see
    :func:`~samplewright.store.atomic.clean_stale_temps`); the paths removed."""
    root = Path(root)
    removed: list[Path] = []
    if not root.is_dir():
        return removed
    kwargs = {} if max_age_s is None else {"max_age_s": max_age_s}
    for folder in [root, *sorted(p for p in root.rglob("*") if p.is_dir())]:
        removed += clean_stale_temps(folder, **kwargs)
    return removed
