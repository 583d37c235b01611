"""Unit tests for samplewright.store.fingerprints: value fingerprints and their stat-keyed cache."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

import samplewright.intake.columns as intake_mod
import samplewright.store.fingerprints as fps
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


def test_fingerprint_follows_the_documented_construction() -> None:
    """A fingerprint is the hex BLAKE3 of the prefix and, per role, ``|role|length|`` and the
    BLAKE3 digest of the values as little-endian float64 with -0.0 written as 0.0 (README
    "Fingerprints"), also across the chunks the values are checked and hashed in."""
    import blake3

    # source: BLAKE3 reference test vectors (test_vectors.json, input length 0), from memory
    empty = "af1349b9f5f9a1a6a0404dea36dcc9499bcb25c9adc112b7cc9a93cae41f3262"
    assert blake3.blake3(b"").hexdigest() == empty
    n = 2 * fps._CHUNK + 3  # crosses two chunk boundaries
    values = np.random.default_rng(13).normal(size=n)  # demo data
    values[[0, fps._CHUNK, n - 1]] = -0.0
    weights = np.arange(1, n + 1)
    # Changed from sha256 "samplewright-fingerprint-v1" with the BLAKE3 change (issue 10,
    # SNAPSHOT_FORMAT_VERSION 2): the pinned construction is the new one.
    h = blake3.blake3(b"samplewright-fingerprint-v2")  # source: README "Fingerprints"
    h.update(f"|value|{n}|".encode() + _digest(values + 0.0))
    h.update(f"|weight|{n}|".encode() + _digest(weights))
    fp = fingerprint_arrays(values, weights)
    assert fp == h.hexdigest()
    assert len(fp) == 64 and set(fp) <= set("0123456789abcdef")
    with_nan = np.array([1.0, np.nan, 2.0])
    h = blake3.blake3(b"samplewright-fingerprint-v2")
    h.update(b"|value|3|" + _digest(with_nan + 0.0))
    assert fingerprint_arrays(with_nan) == h.hexdigest()


def _digest(values: np.ndarray) -> bytes:
    import blake3

    return bytes(blake3.blake3(np.asarray(values, "<f8").tobytes()).digest())


def test_layout_and_byte_order_of_the_array_do_not_matter() -> None:
    """A strided view, a big-endian copy and a 2-d array of the same values hash alike."""
    base = np.random.default_rng(14).normal(size=2 * fps._CHUNK + 10)  # demo data
    ref = fingerprint_arrays(base)
    wide = np.repeat(base, 2)[::2]
    assert not wide.flags.c_contiguous
    assert fingerprint_arrays(wide) == ref
    assert fingerprint_arrays(base.astype(">f8")) == ref
    assert fingerprint_arrays(base.reshape(2, -1)) == ref


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


def _modules_after(code: str, *args: str) -> list[str]:
    """The heavy libraries a fresh interpreter has loaded after running ``code``."""
    probe = (
        f"{code}\n"
        "import sys\n"
        "heavy = ('scipy', 'pandas', 'pyarrow', 'matplotlib')\n"
        "print(','.join(m for m in heavy if m in sys.modules), file=sys.stderr)\n"
    )
    proc = subprocess.run(
        [sys.executable, "-c", probe, *args], capture_output=True, text=True, check=True
    )
    return [m for m in proc.stderr.strip().split(",") if m]


def test_a_memo_hit_imports_no_reader(tmp_path: Path, csv_file: Path) -> None:
    """Answering from the memo loads neither pyarrow, pandas nor scipy (planning stays light)."""
    cache = tmp_path / "cache"
    first = fingerprint_file(csv_file, "hours", cache_dir=cache)
    code = (
        "import sys\n"
        "from samplewright.store.fingerprints import fingerprint_file\n"
        "assert fingerprint_file(sys.argv[1], 'hours', cache_dir=sys.argv[2]) == sys.argv[3]"
    )
    assert _modules_after(code, str(csv_file), str(cache), first) == []


def test_fingerprint_and_snapshot_commands_import_no_scipy(tmp_path: Path) -> None:
    """`samplewright fingerprint` and `samplewright snapshot` of a Parquet column load no scipy."""
    par = tmp_path / "repairs.parquet"
    pq.write_table(pa.table({"hours": VALUES}), par)
    code = (
        "import sys\n"
        "from samplewright.pipeline.cli.main import main\n"
        "p, out = sys.argv[1], sys.argv[2]\n"
        "assert main(['fingerprint', p, '-c', 'hours']) == 0\n"
        "assert main(['snapshot', p, '-c', 'hours', '--out', out]) == 0"
    )
    assert "scipy" not in _modules_after(code, str(par), str(tmp_path / "snap.parquet"))


# --- the streamed Parquet path gives what the reader gives (issue 10) --------------------------


def _groups(path: Path, x: np.ndarray | pa.Array, **kw: object) -> None:
    """One column 'x' in row groups of 50 rows, without dictionary pages."""
    pq.write_table(pa.table({"x": x}), path, row_group_size=50, use_dictionary=False, **kw)


def _overwrite(path: Path, old: float, new: float) -> None:
    """Overwrite one stored double in place (the footer statistics are left as they were)."""
    raw = bytearray(path.read_bytes())
    pos = bytes(raw).find(np.float64(old).tobytes())
    raw[pos : pos + 8] = np.float64(new).tobytes()
    path.write_bytes(bytes(raw))


def _damaged_stats(path: Path) -> None:
    """Row groups of 50 values; value 101 (inside a group, so not in any page statistics)
    overwritten in place by 1e300, beyond the bounds its group's footer records."""
    _groups(path, np.linspace(1.0, 9.0, 500), compression="none")
    _overwrite(path, np.linspace(1.0, 9.0, 500)[101], 1e300)


def _flipped_page(path: Path) -> None:
    """Page checksums written; one bit of the stored value 501.0 flipped afterwards."""
    _groups(path, np.arange(1000.0), compression="none", write_page_checksum=True)
    raw = bytearray(path.read_bytes())
    raw[bytes(raw).find(np.float64(501.0).tobytes())] ^= 1
    path.write_bytes(bytes(raw))


def _signed_zeros(path: Path) -> None:
    x = np.random.default_rng(15).normal(size=333)  # demo data
    x[[3, 120, 300]] = -0.0
    _groups(path, x)


PARQUET_CASES = {
    "positive": lambda p: _groups(p, VALUES),
    "negative": lambda p: _groups(p, -VALUES),
    "signed-zeros": _signed_zeros,
    "one-group": lambda p: pq.write_table(pa.table({"x": VALUES}), p),
    "nan": lambda p: _groups(p, np.where(np.arange(200) == 170, np.nan, np.arange(200.0))),
    "inf": lambda p: _groups(p, np.where(np.arange(200) == 70, np.inf, np.arange(200.0))),
    "null": lambda p: _groups(p, pa.array([1.0, None] * 60)),
    "float32": lambda p: _groups(p, VALUES.astype(np.float32)),
    "int64": lambda p: _groups(p, np.arange(120)),
    "damaged-statistics": _damaged_stats,
    "damaged-page": _flipped_page,
    "truncated": lambda p: p.write_bytes(b"PAR1" + b"\0" * 40),
    "empty": lambda p: pq.write_table(pa.table({"x": pa.array([], pa.float64())}), p),
    "no-column": lambda p: pq.write_table(pa.table({"y": VALUES}), p),
    "twice": lambda p: pq.write_table(
        pa.Table.from_arrays([pa.array(VALUES), pa.array(VALUES)], names=["x", "x"]), p
    ),
}


@pytest.mark.parametrize("policy", ["error", "drop"])
@pytest.mark.parametrize("case", list(PARQUET_CASES))
def test_parquet_fingerprint_is_that_of_what_the_reader_reads(
    tmp_path: Path, case: str, policy: str
) -> None:
    """For clean and damaged Parquet columns alike, fingerprint_file gives the fingerprint of
    what read_column reads, or the very error read_column raises."""
    from samplewright.store.fingerprints import fingerprint_column

    path = tmp_path / "d.parquet"
    PARQUET_CASES[case](path)
    opts = {"missing": policy, "infinite": policy}
    # source: intake's own reader, the reference the streamed path must agree with
    try:
        expected = fingerprint_column(intake_mod.read_column(path, "x", **opts))  # type: ignore[arg-type]
    except InputDataError as exc:
        with pytest.raises(InputDataError) as info:
            fingerprint_file(path, "x", **opts)
        assert str(info.value) == str(exc)
    else:
        assert fingerprint_file(path, "x", **opts) == expected


def test_clean_parquet_is_streamed_without_the_reader(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A clean float64 Parquet column is fingerprinted row group by row group, without
    read_column, to the fingerprint of its values."""
    path = tmp_path / "d.parquet"
    _signed_zeros(path)
    monkeypatch.setattr(intake_mod, "read_column", _fail_read)
    x = pq.read_table(path).column("x").to_numpy()
    assert fingerprint_file(path, "x") == fingerprint_arrays(x)
