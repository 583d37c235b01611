"""Unit tests for samplewright.store.fingerprints: value fingerprints and their stat-keyed cache."""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

import samplewright.intake.columns as intake_mod
from samplewright.core.errors import InputDataError
from samplewright.store.fingerprints import fingerprint_arrays, fingerprint_file

VALUES = np.random.default_rng(11).gamma(2.0, 3.0, 40)  # demo data
WEIGHTS = np.random.default_rng(12).uniform(0.5, 2.0, 40)  # demo data


def _frame() -> pd.DataFrame:
    return pd.DataFrame({"id": np.arange(VALUES.size), "hours": VALUES, "w": WEIGHTS})


@pytest.fixture
def csv_file(tmp_path: Path) -> Path:
    """A CSV with an id, a value column and a weight column, written at full precision."""
    f = tmp_path / "repairs.csv"
    _frame().to_csv(f, index=False, float_format="%.17g")
    return f


def test_same_values_in_tsv_and_parquet_give_the_csv_fingerprint(
    tmp_path: Path, csv_file: Path
) -> None:
    """CSV, TSV and Parquet files holding the same numbers have one fingerprint."""
    tsv = tmp_path / "repairs.tsv"
    _frame().to_csv(tsv, sep="\t", index=False, float_format="%.17g")
    par = tmp_path / "repairs.parquet"
    pq.write_table(pa.Table.from_pandas(_frame(), preserve_index=False), par)
    ref = fingerprint_file(csv_file, "hours")
    assert fingerprint_file(tsv, "hours") == ref
    assert fingerprint_file(par, "hours") == ref
    assert fingerprint_file(par, "hours", weights="w") == fingerprint_file(
        csv_file, "hours", weights="w"
    )


def test_fingerprint_is_that_of_the_values(csv_file: Path) -> None:
    """A file's fingerprint equals fingerprint_arrays of the column's numbers."""
    assert fingerprint_file(csv_file, "hours") == fingerprint_arrays(VALUES)


def test_extra_and_reordered_columns_do_not_change_it(tmp_path: Path, csv_file: Path) -> None:
    """Adding columns and reordering them leaves the fingerprint unchanged."""
    other = _frame().assign(note="x", extra=1.0)[["note", "w", "extra", "hours", "id"]]
    f = tmp_path / "other.csv"
    other.to_csv(f, index=False, float_format="%.17g")
    assert fingerprint_file(f, "hours") == fingerprint_file(csv_file, "hours")


def test_renaming_the_column_does_not_change_it(tmp_path: Path, csv_file: Path) -> None:
    """Column names are not part of the fingerprint."""
    f = tmp_path / "renamed.csv"
    _frame().rename(columns={"hours": "duration"}).to_csv(f, index=False, float_format="%.17g")
    assert fingerprint_file(f, "duration") == fingerprint_file(csv_file, "hours")


def test_changing_one_value_changes_it(tmp_path: Path, csv_file: Path) -> None:
    """Changing a single used value by one ulp gives a new fingerprint."""
    frame = _frame()
    frame.loc[17, "hours"] = np.nextafter(frame.loc[17, "hours"], np.inf)
    f = tmp_path / "changed.csv"
    frame.to_csv(f, index=False, float_format="%.17g")
    assert fingerprint_file(f, "hours") != fingerprint_file(csv_file, "hours")


def test_changing_an_unused_column_does_not_change_it(tmp_path: Path, csv_file: Path) -> None:
    """Editing a column that is not used leaves the fingerprint alone."""
    frame = _frame()
    frame.loc[3, "id"] = 999
    f = tmp_path / "changed.csv"
    frame.to_csv(f, index=False, float_format="%.17g")
    assert fingerprint_file(f, "hours") == fingerprint_file(csv_file, "hours")


def test_order_of_values_matters() -> None:
    """The same values in another order are other data (a new fingerprint)."""
    assert fingerprint_arrays(VALUES[::-1]) != fingerprint_arrays(VALUES)


def test_roles_are_kept_apart() -> None:
    """Values with weights, values with censoring flags and values alone all differ."""
    ones = np.ones(VALUES.size)
    fps = {
        fingerprint_arrays(VALUES),
        fingerprint_arrays(VALUES, weights=ones),
        fingerprint_arrays(VALUES, censored=ones),
        fingerprint_arrays(np.concatenate([VALUES, ones])),
    }
    assert len(fps) == 4


def test_negative_zero_and_dtype_do_not_matter() -> None:
    """-0.0 equals 0.0, and ints equal the same floats."""
    assert fingerprint_arrays(np.array([-0.0, 1.0])) == fingerprint_arrays(np.array([0.0, 1.0]))
    assert fingerprint_arrays(np.array([0, 1], dtype=np.int32)) == fingerprint_arrays(
        np.array([0.0, 1.0])
    )


def test_fingerprint_is_a_hex_sha256() -> None:
    """A fingerprint is 64 lowercase hex digits."""
    fp = fingerprint_arrays(VALUES)
    assert len(fp) == 64 and set(fp) <= set("0123456789abcdef")


def test_cleaning_policy_is_applied_before_hashing(tmp_path: Path) -> None:
    """With missing='drop', a file with a missing row hashes like the file without that row."""
    a = tmp_path / "a.csv"
    a.write_text("v,id\n1,a\nNA,b\n2,c\n")
    b = tmp_path / "b.csv"
    b.write_text("v\n1\n2\n")
    assert fingerprint_file(a, "v", missing="drop") == fingerprint_file(b, "v")
    with pytest.raises(InputDataError, match="1 missing value "):
        fingerprint_file(a, "v")


def test_missing_file_raises_the_intake_error(tmp_path: Path) -> None:
    """A missing data file gives the standard 'data file not found' error."""
    with pytest.raises(InputDataError, match="data file not found"):
        fingerprint_file(tmp_path / "nope.csv", "v", cache_dir=tmp_path / "cache")
    assert not (tmp_path / "cache").exists()


def _fail_read(*args: object, **kwargs: object) -> None:
    raise AssertionError("read_column was called: the cache was not used")


def test_cache_is_used_on_the_second_call(
    tmp_path: Path, csv_file: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The second call for an unchanged file answers from fingerprints.json without reading."""
    cache = tmp_path / "cache"
    first = fingerprint_file(csv_file, "hours", cache_dir=cache)
    stored = json.loads((cache / "fingerprints.json").read_text())
    assert [e["fingerprint"] for e in stored.values()] == [first]
    monkeypatch.setattr(intake_mod, "read_column", _fail_read)
    assert fingerprint_file(csv_file, "hours", cache_dir=cache) == first


def test_cache_entry_is_keyed_by_column_and_policy(
    tmp_path: Path, csv_file: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Another column or another weight column of the same file is not served from the cache."""
    cache = tmp_path / "cache"
    fingerprint_file(csv_file, "hours", cache_dir=cache)
    calls: list[str] = []
    real = intake_mod.read_column

    def counting(path: Path, column: str, **kw: object) -> object:
        calls.append(column)
        return real(path, column, **kw)  # type: ignore[arg-type]

    monkeypatch.setattr(intake_mod, "read_column", counting)
    fingerprint_file(csv_file, "w", cache_dir=cache)
    fingerprint_file(csv_file, "hours", weights="w", cache_dir=cache)
    assert calls == ["w", "hours"]
    assert len(json.loads((cache / "fingerprints.json").read_text())) == 3


def test_cache_is_invalidated_when_the_file_changes_size(tmp_path: Path, csv_file: Path) -> None:
    """Appending a row changes the file's size and so its cached fingerprint is recomputed."""
    cache = tmp_path / "cache"
    first = fingerprint_file(csv_file, "hours", cache_dir=cache)
    with csv_file.open("a") as fh:
        fh.write(f"{VALUES.size},7.5,1.0\n")
    second = fingerprint_file(csv_file, "hours", cache_dir=cache)
    assert second != first
    assert second == fingerprint_arrays(np.append(VALUES, 7.5))


def test_cache_is_invalidated_when_only_mtime_changes(
    tmp_path: Path, csv_file: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A new modification time alone makes the next call read the file again."""
    cache = tmp_path / "cache"
    fingerprint_file(csv_file, "hours", cache_dir=cache)
    st = csv_file.stat()
    os.utime(csv_file, ns=(st.st_atime_ns, st.st_mtime_ns + 5_000_000_000))
    monkeypatch.setattr(intake_mod, "read_column", _fail_read)
    with pytest.raises(AssertionError, match="cache was not used"):
        fingerprint_file(csv_file, "hours", cache_dir=cache)


def test_same_size_edit_is_detected(tmp_path: Path) -> None:
    """Rewriting a file with the same size but a new value (and mtime) gives the new fingerprint."""
    f = tmp_path / "d.csv"
    f.write_text("v\n1.5\n2.5\n")
    cache = tmp_path / "cache"
    first = fingerprint_file(f, "v", cache_dir=cache)
    st = f.stat()
    f.write_text("v\n1.5\n3.5\n")
    os.utime(f, ns=(st.st_atime_ns, st.st_mtime_ns + 1_000_000_000))
    assert f.stat().st_size == st.st_size
    assert fingerprint_file(f, "v", cache_dir=cache) == fingerprint_arrays(np.array([1.5, 3.5]))
    assert first != fingerprint_arrays(np.array([1.5, 3.5]))


def test_corrupt_cache_is_ignored_and_replaced(tmp_path: Path, csv_file: Path) -> None:
    """An unreadable fingerprints.json is treated as empty and rewritten as valid JSON."""
    cache = tmp_path / "cache"
    cache.mkdir()
    (cache / "fingerprints.json").write_text("{not json")
    fp = fingerprint_file(csv_file, "hours", cache_dir=cache)
    assert fp == fingerprint_arrays(VALUES)
    assert [
        e["fingerprint"] for e in json.loads((cache / "fingerprints.json").read_text()).values()
    ] == [fp]
    assert sorted(p.name for p in cache.iterdir()) == ["fingerprints.json"]  # no temp files left


def test_without_cache_dir_nothing_is_written(tmp_path: Path, csv_file: Path) -> None:
    """No cache folder means no fingerprints.json anywhere near the data."""
    before = sorted(p.name for p in tmp_path.iterdir())
    fingerprint_file(csv_file, "hours")
    assert sorted(p.name for p in tmp_path.iterdir()) == before


def _fresh_csv(tmp_path: Path) -> Path:
    """The module's CSV, with a modification time well in the past."""
    f = tmp_path / "repairs.csv"
    _frame().to_csv(f, index=False, float_format="%.17g")
    os.utime(f, (1e9, 1e9))
    return f


def _one_entry(cache: Path) -> tuple[str, dict]:
    data = json.loads((cache / "fingerprints.json").read_text())
    assert len(data) == 1
    return next(iter(data.items()))


@pytest.mark.parametrize(
    "damage",
    [
        lambda k, e: {k: {**e, "fingerprint": "0" * 64}},  # edited value, check digest stale
        lambda k, e: {k: {**e, "fingerprint": 12345}},
        lambda k, e: {k: {**e, "size": "1500"}},
        lambda k, e: {k: {key: v for key, v in e.items() if key != "inode"}},
        lambda k, e: {k: [e]},
        lambda k, e: {k.replace(",", ", "): e},  # not the canonical key text
        lambda k, e: {k: {**e, "extra": 1}},
        lambda k, e: [k, e],  # the whole memo of the wrong type
        lambda k, e: "[" * 100_000 + "]" * 100_000,  # nested deeper than any reader allows
    ],
    ids=[
        "edited-fp",
        "fp-type",
        "size-type",
        "missing-field",
        "entry-type",
        "key-form",
        "extra-field",
        "memo-type",
        "deep",
    ],
)
def test_malformed_cache_entries_are_recomputed(tmp_path: Path, damage: object) -> None:
    """A damaged, edited or foreign-shaped memo entry is dropped, the fingerprint is computed
    from the file again, and the memo is rewritten with a valid entry only."""
    csv = _fresh_csv(tmp_path)
    cache = tmp_path / "cache"
    fingerprint_file(csv, "hours", cache_dir=cache)
    key, entry = _one_entry(cache)
    damaged = damage(key, entry)  # type: ignore[operator]
    text = damaged if isinstance(damaged, str) else json.dumps(damaged)
    (cache / "fingerprints.json").write_text(text)
    assert fingerprint_file(csv, "hours", cache_dir=cache) == fingerprint_arrays(VALUES)
    assert _one_entry(cache) == (key, entry)
    assert sorted(p.name for p in cache.iterdir()) == ["fingerprints.json"]


def test_a_wrong_entry_is_dropped_by_the_snapshot_job(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    """A well-formed but wrong memo entry (as after a rewrite within the file system's time
    resolution) fails the snapshot job once, which drops it, so the next plan is right."""
    import samplewright.store.fingerprints as fps
    from samplewright.pipeline.cli import main
    from samplewright.pipeline.plan import Plan

    monkeypatch.chdir(tmp_path)
    _fresh_csv(tmp_path)
    ds = {"path": "repairs.csv", "column": "hours", "methods": ["empirical"]}
    config = {"store": "st", "datasets": {"h": ds}}
    right = Plan(config).fingerprint("h")
    memo = tmp_path / "st" / "fingerprints.json"
    key, entry = next(iter(json.loads(memo.read_text()).items()))
    wrong = fingerprint_arrays(VALUES + 1.0)
    stat = {k: entry[k] for k in ("size", "mtime_ns", "inode")}
    forged = {**stat, "fingerprint": wrong, "check": fps._entry_check(key, stat, wrong)}
    memo.write_text(json.dumps({key: forged}))
    assert Plan(config).fingerprint("h") == wrong  # well-formed, so the plan believes it
    out = tmp_path / "snap.parquet"
    args = ["snapshot", "repairs.csv", "-c", "hours", "--expect-fingerprint", wrong[:20]]
    code = main([*args, "--cache-dir", "st", "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 2 and "changed after the workflow was planned" in err
    assert "cached fingerprint was dropped" in err and not out.exists()
    # source: the values as pandas reads them, hashed without the memo
    values = pd.read_csv("repairs.csv", float_precision="round_trip")["hours"].to_numpy()
    assert Plan(config).fingerprint("h") == right == fingerprint_arrays(values)
