"""Row-aligned columns of one file for the pipeline: joint inputs and incomplete-data datasets.

Two kinds of dataset read several columns of one file together, row by row:

* a **joint input** (``joint:`` in the config): its chosen columns, cleaned by
  :func:`samplewright.intake.tables.read_table` (a row with a missing or infinite value in any
  column is refused or dropped as a whole);
* a dataset with **incomplete data**: its columns by *role* (:data:`ROLES`): ``value`` (or
  ``lower`` and ``upper`` for interval rows), ``truncation`` (per-row lower truncation points),
  ``weight`` and ``censor``. The ``missing`` / ``infinite`` policy applies to the value column;
  a ``lower``, ``upper`` or ``truncation`` cell may be ``inf`` or ``-inf`` (an open end, "no
  deductible") but never empty (an unknown deductible is not "no deductible"); weights are
  finite and >= 0 (rows of weight 0 are dropped by the fit, as everywhere); censoring flags are
  0/1 or true/false.

Both are stored as a **table snapshot**: a Parquet file holding the cleaned columns under their
own names, with metadata key :data:`TABLE_SNAPSHOT_KEY` recording the source, the roles or
columns, the rows read and dropped, and the fingerprint. Reading a table snapshot with the same
columns gives the same arrays (the cleaning is a no-op the second time), so the commands read a
snapshot and a raw file alike; file-format options do not apply to a snapshot.

Fingerprints (:func:`table_fingerprint`) hash each used array under a stable name: the role for
incomplete data, the position for joint columns, so renaming a column in the file and the config
changes nothing, and reordering joint columns (which reorders the draws) changes the key.
:class:`TableFingerprints` memoises them in the store's fingerprint memo, as single columns are.
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from samplewright.core.canonical import canonical_bytes, canonical_json, parse_json
from samplewright.core.errors import InputDataError
from samplewright.core.versions import SNAPSHOT_FORMAT_VERSION
from samplewright.store.fingerprints import FingerprintCache

__all__ = [
    "ROLES",
    "TABLE_SNAPSHOT_KEY",
    "RoleData",
    "TableFingerprints",
    "joint_fingerprint",
    "read_joint_table",
    "read_roles",
    "table_fingerprint",
    "table_snapshot_info",
    "write_table_snapshot",
]

ROLES = ("value", "lower", "upper", "truncation", "weight", "censor")
TABLE_SNAPSHOT_KEY = b"samplewright-table-snapshot"
_FORMAT_OPTIONS = ("separator", "decimal", "missing_markers", "encoding")


@dataclass(frozen=True)
class RoleData:
    """Cleaned columns of an incomplete-data dataset, by role.

    Attributes
    ----------
    roles : dict
        Role -> the file's column name (see :data:`ROLES`).
    arrays : dict
        Role -> float64 values of the rows kept (censoring flags as 0.0 / 1.0).
    source : str
        The file read (the original source when a snapshot was read).
    n_rows_read : int
        Data rows in the source file.
    dropped : dict
        Rows dropped, by reason (``"missing"``, ``"infinite"``).
    """

    roles: dict[str, str]
    arrays: dict[str, np.ndarray]
    source: str
    n_rows_read: int
    dropped: dict[str, int] = field(default_factory=dict)

    @property
    def n(self) -> int:
        """Rows kept."""
        return int(next(iter(self.arrays.values())).size)

    @property
    def fingerprint(self) -> str:
        """Hash of the used arrays, each under its role."""
        return table_fingerprint([(r, self.arrays[r]) for r in ROLES if r in self.arrays])

    def get(self, role: str) -> np.ndarray | None:
        """The values of ``role``, or None when the dataset has no such column."""
        return self.arrays.get(role)


def table_fingerprint(named: Sequence[tuple[str, Any]]) -> str:
    """Hex sha256 of the ``(name, fingerprint of the array)`` pairs, in order; each array is
    fingerprinted as a value column is (:func:`samplewright.store.fingerprints.fingerprint_arrays`).

    >>> a = table_fingerprint([("value", [1.0, 2.0]), ("truncation", [0.5, 0.5])])
    >>> a == table_fingerprint([("value", [1, 2]), ("truncation", [0.5, 0.5])])
    True
    >>> a == table_fingerprint([("truncation", [1.0, 2.0]), ("value", [0.5, 0.5])])
    False
    """
    from samplewright.store.fingerprints import fingerprint_arrays

    parts = [[name, fingerprint_arrays(np.asarray(arr))] for name, arr in named]
    text = canonical_json([f"samplewright-table-fingerprint-v{SNAPSHOT_FORMAT_VERSION}", parts])
    return hashlib.sha256(text.encode()).hexdigest()


def joint_fingerprint(values: np.ndarray) -> str:
    """Fingerprint of a joint input's kept rows (n, d): its columns by position."""
    return table_fingerprint([(str(j), values[:, j]) for j in range(values.shape[1])])


def table_snapshot_info(path: str | Path) -> dict[str, Any] | None:
    """The record of a table snapshot, or None if ``path`` is not one."""
    from samplewright.store.tables import read_key

    path = Path(path)
    if path.suffix.lower() not in (".parquet", ".pq") or not path.is_file():
        return None
    try:
        raw = read_key(path, TABLE_SNAPSHOT_KEY)
    except Exception:  # not readable as Parquet: reading it as data gives the precise error
        return None
    if raw is None:
        return None
    info = parse_json(raw)
    if not isinstance(info, dict):
        raise InputDataError(f"{path}: table snapshot metadata is not a JSON object")
    return info


def write_table_snapshot(
    path: str | Path, columns: Mapping[str, np.ndarray], info: Mapping[str, Any]
) -> None:
    """Write the cleaned ``columns`` (name -> values) with their record, atomically."""
    import pyarrow as pa

    from samplewright.store.tables import write_table

    table = pa.table(
        {name: pa.array(np.asarray(v, dtype=np.float64)) for name, v in columns.items()}
    )
    write_table(path, table, {TABLE_SNAPSHOT_KEY: canonical_bytes(dict(info))})


def _reading(path: Path, reading: Mapping[str, Any]) -> tuple[dict[str, Any], dict | None]:
    """Reading options for ``path``: without the file-format ones when it is a snapshot."""
    info = table_snapshot_info(path)
    opts = {k: v for k, v in reading.items() if info is None or k not in _FORMAT_OPTIONS}
    return opts, info


def read_joint_table(path: str | Path, columns: Sequence[str], **reading: Any) -> Any:
    """The kept rows of ``columns`` (a :class:`~samplewright.intake.tables.TableResult`) and the
    snapshot record when ``path`` is a table snapshot (else None)."""
    from samplewright.intake.tables import TableResult, read_table

    path = Path(path)
    opts, info = _reading(path, reading)
    table = read_table(path, list(columns), **opts)
    if info is not None:  # report the original file, not the snapshot
        table = TableResult(
            columns=table.columns,
            values=table.values,
            source=str(info.get("source", path)),
            n_rows_read=int(info.get("n_rows_read", table.n_rows_read)),
            dropped=dict(info.get("dropped") or {}),
        )
    return table, info


def _empty_cells(column: str, where: str, mask: np.ndarray) -> InputDataError:
    from samplewright.intake.cells import count_noun, first_row

    return InputDataError(
        f"column {column!r} in {where} has {count_noun(int(mask.sum()), 'empty cell')} (first at "
        f"row {first_row(mask)}); write inf or -inf for an open end, never leave it empty"
    )


def read_roles(
    path: str | Path,
    roles: Mapping[str, str],
    *,
    missing: str = "error",
    infinite: str = "error",
    separator: str | None = None,
    decimal: str = ".",
    missing_markers: Iterable[str] = (),
    encoding: str | None = None,
) -> RoleData:
    """Read and clean the columns of an incomplete-data dataset (module notes for the rules).

    ``roles`` maps a role of :data:`ROLES` to a column of the file: ``value``, or ``lower`` and
    ``upper``, and optionally ``truncation``, ``weight`` and ``censor``.
    """
    from samplewright.intake.cells import count_noun, first_row, policy_error
    from samplewright.intake.options import check_policy, read_options
    from samplewright.intake.tables import read_numbers

    path = Path(path)
    unknown = sorted(set(roles) - set(ROLES))
    if unknown:
        raise InputDataError(f"roles: unknown role {unknown[0]!r} (expected: {', '.join(ROLES)})")
    if ("value" in roles) == ("lower" in roles or "upper" in roles):
        raise InputDataError("roles: give a value column, or both lower and upper columns")
    if ("lower" in roles) != ("upper" in roles):
        raise InputDataError("roles: interval rows need both a lower and an upper column")
    policy = {
        "missing": check_policy("missing", missing),
        "infinite": check_policy("infinite", infinite),
    }
    fmt, info = _reading(
        path,
        {
            "separator": separator,
            "decimal": decimal,
            "missing_markers": missing_markers,
            "encoding": encoding,
        },
    )
    options = read_options(path, **fmt)
    cols = list(dict.fromkeys(roles.values()))
    censor = roles.get("censor")
    got, n_read = read_numbers(path, cols, options, flags=[censor] if censor else [])
    where = path.name
    keep = np.ones(n_read, dtype=bool)
    dropped: dict[str, int] = {}
    if "value" in roles:
        v = got[roles["value"]]
        for reason, mask in (("missing", np.isnan(v)), ("infinite", np.isinf(v))):
            if mask.any():
                if policy[reason] == "error":
                    raise policy_error(reason, roles["value"], where, mask)
                dropped[reason] = int(mask.sum())
                keep &= ~mask
    for role in ("lower", "upper", "truncation"):
        if role in roles:
            empty = np.isnan(got[roles[role]]) & keep
            if empty.any():
                raise _empty_cells(roles[role], where, empty)
    if "weight" in roles:
        w = got[roles["weight"]]
        bad = ~(np.isfinite(w) & (w >= 0)) & keep
        if bad.any():
            r = first_row(bad)
            raise InputDataError(
                f"weight column {roles['weight']!r} in {where} has "
                f"{count_noun(int(bad.sum()), 'weight')} that are missing, infinite or < 0 "
                f"(first at row {r}: {float(w[r - 1])!r}); weights must be finite and >= 0"
            )
    if censor is not None:
        bad = ~np.isin(got[censor], (0.0, 1.0)) & keep
        if bad.any():
            raise InputDataError(
                f"censoring column {censor!r} in {where} must hold 0/1 or true/false "
                f"(first bad value at row {first_row(bad)})"
            )
    if not keep.any():
        raise InputDataError(f"columns {cols} in {where}: no rows left to use")
    arrays = {}
    for role in ROLES:
        if role in roles:
            a = np.ascontiguousarray(got[roles[role]][keep], dtype=np.float64)
            a.flags.writeable = False
            arrays[role] = a
    if info is not None:
        return RoleData(
            dict(roles),
            arrays,
            str(info.get("source", path)),
            int(info.get("n_rows_read", n_read)),
            dict(info.get("dropped") or {}),
        )
    return RoleData(dict(roles), arrays, str(path), n_read, dropped)


class TableFingerprints(FingerprintCache):
    """The store's fingerprint memo, also for tables (roles or joint columns).

    Entries are keyed like single columns (absolute path, what was read, the fingerprint
    version) and checked against the file's stat in the same way.
    """

    @staticmethod
    def _roles_what(roles: Mapping[str, str], reading: Mapping[str, Any]) -> list[Any]:
        return ["<roles>", [[r, roles[r]] for r in ROLES if r in roles], _plain(reading)]

    @staticmethod
    def _joint_what(columns: Sequence[str], reading: Mapping[str, Any]) -> list[Any]:
        return ["<joint>", list(columns), _plain(reading)]

    def roles(self, path: str | Path, roles: Mapping[str, str], **reading: Any) -> str:
        """Fingerprint of an incomplete-data dataset (see :func:`read_roles`), memoised."""
        path = Path(path)
        if not path.is_file():
            raise InputDataError(f"{path}: file not found")
        return self._memo(
            path,
            self._roles_what(roles, reading),
            lambda: read_roles(path, roles, **reading).fingerprint,
        )

    def joint(self, path: str | Path, columns: Sequence[str], **reading: Any) -> str:
        """Fingerprint of a joint input's kept rows, memoised."""
        path = Path(path)
        if not path.is_file():
            raise InputDataError(f"{path}: file not found")
        return self._memo(
            path,
            self._joint_what(columns, reading),
            lambda: joint_fingerprint(read_joint_table(path, columns, **reading)[0].values),
        )

    def forget_table(self, path: str | Path, what: list[Any]) -> bool:
        """Drop the entry of ``what`` (one of the ``_*_what`` lists) that proved wrong."""
        key = self._key(Path(path), what)
        self._forgotten.add(key)
        self.dirty = True
        return self.entries.pop(key, None) is not None

    def forget_roles(self, path: str | Path, roles: Mapping[str, str], **reading: Any) -> bool:
        """Drop a roles entry that proved wrong; True if there was one."""
        return self.forget_table(path, self._roles_what(roles, reading))

    def forget_joint(self, path: str | Path, columns: Sequence[str], **reading: Any) -> bool:
        """Drop a joint entry that proved wrong; True if there was one."""
        return self.forget_table(path, self._joint_what(columns, reading))


def _plain(reading: Mapping[str, Any]) -> dict[str, Any]:
    """Reading options in a canonical form (defaults left out, markers as a list)."""
    defaults: dict[str, Any] = {
        "missing": "error",
        "infinite": "error",
        "separator": None,
        "decimal": ".",
        "missing_markers": [],
        "encoding": None,
    }
    out = {}
    for k, v in reading.items():
        v = list(v) if k == "missing_markers" else v
        if defaults.get(k, object()) != v:
            out[k] = v
    return out
