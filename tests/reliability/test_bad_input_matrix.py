"""Bad and hostile input through the real command line: one line, exit 2, nothing written.

Each case builds a small folder, runs ``python -m samplewright ...`` in a subprocess (the real
entry point, so an uncaught exception would show as a traceback), and checks: exit code 2, a
single-line message on stderr that names what is wrong, no traceback, and the folder byte for
byte as it was (nothing written, nothing damaged). The cases are the kinds of broken input an
independent review tried; the README's "Reliability" section quotes their count.
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import json
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from samplewright.pipeline.cli import main


def _parquet_bytes(table: pa.Table) -> bytes:
    sink = pa.BufferOutputStream()
    pq.write_table(table, sink)
    return sink.getvalue().to_pybytes()


def _corrupt_parquet() -> bytes:
    raw = bytearray(_parquet_bytes(pa.table({"hours": np.linspace(1.0, 9.0, 500)})))
    raw[200:260] = b"\xff" * 60  # inside the data page
    return bytes(raw)


def _duplicate_parquet() -> bytes:
    arr = pa.array([1.0, 2.0, 3.0])
    return _parquet_bytes(pa.Table.from_arrays([arr, arr], names=["hours", "hours"]))


GOOD_CSV = b"hours,cost,w,c\n1.5,10,1,0\n2.5,12,2,0\n3.25,9,1,1\n4.0,11,1,0\n6.5,13,3,0\n"


@dataclass(frozen=True)
class Case:
    """One bad input: files to make, the command (``{d}``: the folder), words the message names."""

    id: str
    argv: tuple[str, ...]
    names: tuple[str, ...]
    files: dict[str, bytes] = field(default_factory=dict)
    code: int = 2


def fit(data: str, *more: str, column: str = "hours", method: str = "lognormal") -> tuple[str, ...]:
    return ("fit", f"{{d}}/{data}", "--column", column, "--method", method, *more,
            "--out", "{d}/out.parquet")  # fmt: skip


CASES = [
    # --- malformed CSV files
    Case(
        "one-field-header-two-field-rows",
        fit("a.csv", column="x"),
        ("a.csv",),
        {"a.csv": b"x\n1,5\n2,5\n"},
    ),
    Case("ragged-rows", fit("a.csv"), ("a.csv",), {"a.csv": b"hours,b\n1,2\n3\n4,5,6\n"}),
    Case("nul-bytes", fit("a.csv"), ("a.csv",), {"a.csv": b"hours\n1\n2\x00\n3\n"}),
    Case(
        "utf16-without-bom",
        fit("a.csv"),
        ("a.csv",),
        {"a.csv": "hours\n1\n2\n".encode("utf-16-le")},
    ),
    Case("latin1-value", fit("a.csv"), ("a.csv",), {"a.csv": b"hours\n1\n2\xe9\n"}),
    Case("unbalanced-quote", fit("a.csv"), ("a.csv",), {"a.csv": b'hours\n"1\n2\n3\n'}),
    Case(
        "duplicate-csv-columns",
        fit("a.csv"),
        ("a.csv", "hours"),
        {"a.csv": b"hours,hours\n1,2\n3,4\n"},
    ),
    Case("empty-file", fit("a.csv"), ("a.csv",), {"a.csv": b""}),
    Case("header-only", fit("a.csv"), ("a.csv",), {"a.csv": b"hours\n"}),
    Case(
        "binary-garbage",
        fit("a.csv"),
        ("a.csv",),
        {"a.csv": bytes(np.random.default_rng(1).integers(0, 256, 3000, dtype=np.uint8))},
    ),
    Case(
        "semicolon-file-without-option",
        fit("a.csv"),
        ("a.csv",),
        {"a.csv": b"hours;cost\n1,5;2\n2,5;3\n"},
    ),
    Case(
        "non-numeric-cell",
        fit("a.csv"),
        ("a.csv", "hours", "row"),
        {"a.csv": b"hours\n1\n2\nabc\n4\n"},
    ),
    Case(
        "integer-above-2-53",
        fit("a.csv"),
        ("a.csv", "hours"),
        {"a.csv": b"hours\n1\n9007199254740993\n3\n"},
    ),
    Case("nan-and-inf", fit("a.csv"), ("a.csv", "hours"), {"a.csv": b"hours\n1\ninf\n3\n"}),
    Case(
        "all-missing-dropped",
        fit("a.csv", "--missing", "drop"),
        ("a.csv", "hours"),
        {"a.csv": b"hours,b\n,1\n,2\n"},
    ),
    # --- wrong files and folders
    Case("missing-file", fit("nope.csv"), ("nope.csv",)),
    Case("directory-as-data", fit("sub"), ("sub",), {"sub/keep.txt": b"x"}),
    Case("unknown-extension", fit("a.xlsx"), ("a.xlsx",), {"a.xlsx": GOOD_CSV}),
    Case(
        "missing-column-suggests",
        fit("a.csv", column="hour"),
        ("hour", "hours"),
        {"a.csv": GOOD_CSV},
    ),
    # --- Parquet
    Case(
        "duplicate-parquet-columns",
        fit("a.parquet"),
        ("a.parquet", "hours"),
        {"a.parquet": _duplicate_parquet()},
    ),
    Case("corrupt-parquet", fit("a.parquet"), ("a.parquet",), {"a.parquet": _corrupt_parquet()}),
    Case(
        "truncated-parquet",
        fit("a.parquet"),
        ("a.parquet",),
        {"a.parquet": _parquet_bytes(pa.table({"hours": [1.0, 2.0]}))[:-9]},
    ),
    # --- methods, options, data the method cannot take
    Case(
        "unknown-method-suggests",
        fit("a.csv", method="gama"),
        ("gama", "gamma"),
        {"a.csv": GOOD_CSV},
    ),
    Case("unknown-option", fit("a.csv", "--option", "shape=2"), ("shape",), {"a.csv": GOOD_CSV}),
    Case("option-not-a-number", fit("a.csv", "--option", "loc=abc"), ("loc",), {"a.csv": GOOD_CSV}),
    Case("option-not-key-value", fit("a.csv", "--option", "loc"), ("loc",), {"a.csv": GOOD_CSV}),
    Case("too-few-values", fit("a.csv", method="gamma"), ("gamma",), {"a.csv": b"hours\n3.5\n"}),
    Case(
        "constant-data",
        fit("a.csv", method="normal"),
        ("normal",),
        {"a.csv": b"hours\n2\n2\n2\n2\n"},
    ),
    Case(
        "zero-for-rayleigh",
        fit("a.csv", method="rayleigh"),
        ("rayleigh", "0"),
        {"a.csv": b"hours\n0\n1.5\n2.5\n"},
    ),
    Case(
        "negative-weight",
        fit("a.csv", "--weights", "w"),
        ("w",),
        {"a.csv": b"hours,w\n1,1\n2,-1\n3,1\n"},
    ),
    Case(
        "non-numeric-weight",
        fit("a.csv", "--weights", "w"),
        ("w",),
        {"a.csv": b"hours,w\n1,1\n2,x\n3,1\n"},
    ),
    Case(
        "censor-flag-not-0-1",
        fit("a.csv", "--censor", "c", method="weibull"),
        ("c",),
        {"a.csv": b"hours,c\n1,0\n2,2\n3,0\n"},
    ),
    Case(
        "missing-column-option",
        ("fit", "{d}/a.csv", "--method", "normal", "--out", "{d}/o.parquet"),
        ("--column",),
        {"a.csv": GOOD_CSV},
    ),
    # --- outputs that would destroy inputs or cannot be written
    Case(
        "fit-out-equals-data",
        (
            "fit",
            "{d}/a.parquet",
            "--column",
            "hours",
            "--method",
            "normal",
            "--out",
            "{d}/a.parquet",
        ),
        ("a.parquet",),
        {"a.parquet": _parquet_bytes(pa.table({"hours": [1.0, 2.0, 4.0]}))},
    ),
    Case(
        "fit-out-is-a-folder",
        ("fit", "{d}/a.csv", "--column", "hours", "--method", "normal", "--out", "{d}/sub"),
        ("sub",),
        {"a.csv": GOOD_CSV, "sub/keep.txt": b"x"},
    ),
    Case(
        "fit-out-under-a-file",
        (
            "fit",
            "{d}/a.csv",
            "--column",
            "hours",
            "--method",
            "normal",
            "--out",
            "{d}/a.csv/o.parquet",
        ),
        ("a.csv",),
        {"a.csv": GOOD_CSV},
    ),
    Case(
        "fit-out-name-too-long",
        (
            "fit",
            "{d}/a.csv",
            "--column",
            "hours",
            "--method",
            "normal",
            "--out",
            "{d}/" + "o" * 300 + ".parquet",
        ),
        ("--out",),
        {"a.csv": GOOD_CSV},
    ),
    Case(
        "snapshot-out-equals-data",
        ("snapshot", "{d}/a.csv", "--column", "hours", "--out", "{d}/a.csv"),
        ("a.csv",),
        {"a.csv": GOOD_CSV},
    ),
    Case(
        "fingerprint-json-out-equals-data",
        ("fingerprint", "{d}/a.csv", "--column", "hours", "--json-out", "{d}/a.csv"),
        ("a.csv",),
        {"a.csv": GOOD_CSV},
    ),
    # --- knots
    Case(
        "knots-p-decreasing",
        ("knots", "--file", "{d}/k.yaml", "--out", "{d}/k.parquet"),
        ("p",),
        {"k.yaml": b"x: [1, 2, 3]\np: [0, 0.7, 0.5]\n"},
    ),
    Case(
        "knots-not-ending-at-1",
        ("knots", "--file", "{d}/k.yaml", "--out", "{d}/k.parquet"),
        ("p",),
        {"k.yaml": b"x: [1, 2, 3]\np: [0, 0.5, 0.9]\n"},
    ),
    Case(
        "knots-not-yaml",
        ("knots", "--file", "{d}/k.yaml", "--out", "{d}/k.parquet"),
        ("k.yaml",),
        {"k.yaml": b"x: [1, 2\np: ]]\n"},
    ),
    # --- artifacts that are not artifacts
    Case("show-a-csv", ("show", "{d}/a.csv"), ("a.csv",), {"a.csv": GOOD_CSV}),
    Case(
        "show-plain-parquet",
        ("show", "{d}/a.parquet"),
        ("a.parquet",),
        {"a.parquet": _parquet_bytes(pa.table({"hours": [1.0]}))},
    ),
    Case("verify-missing", ("verify", "{d}/none.parquet"), ("none.parquet",)),
    Case(
        "draw-from-missing",
        ("draw", "{d}/none.parquet", "-n", "5", "--seed", "1", "--out", "{d}/d.parquet"),
        ("none.parquet",),
    ),
]


def _state(folder: Path) -> dict[str, str]:
    """Every file under ``folder`` with the sha256 of its bytes (folders as '<dir>')."""
    out = {}
    for p in sorted(folder.rglob("*")):
        rel = str(p.relative_to(folder))
        out[rel] = "<dir>" if p.is_dir() else hashlib.sha256(p.read_bytes()).hexdigest()
    return out


def _run(
    argv: tuple[str, ...], folder: Path, *, subprocess_run: bool = False
) -> subprocess.CompletedProcess[str]:
    """Run the command line on ``argv``: in-process (an uncaught exception fails the test just as
    a traceback would), or through ``python -m samplewright`` in a subprocess."""
    args = [a.replace("{d}", str(folder)) for a in argv]
    if subprocess_run:
        return subprocess.run(
            [sys.executable, "-m", "samplewright", *args],
            capture_output=True,
            text=True,
            timeout=120,
            cwd=folder,
        )
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(args)
    return subprocess.CompletedProcess(args, code, out.getvalue(), err.getvalue())


def _check(result: subprocess.CompletedProcess[str], case: Case) -> None:
    err = result.stderr.strip()
    assert "Traceback" not in result.stderr, result.stderr
    assert result.returncode == case.code, (result.returncode, err)
    assert err, "no message on stderr"
    assert len(err.splitlines()) == 1, err
    for word in case.names:
        assert word in err, f"{word!r} not named in: {err}"


@pytest.mark.parametrize("case", CASES, ids=lambda c: c.id)
def test_bad_input_is_one_line_exit_2_and_nothing_written(case: Case, tmp_path: Path) -> None:
    """A bad input gives exit 2, one line naming the problem, and leaves the folder untouched."""
    for name, content in case.files.items():
        (tmp_path / name).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / name).write_bytes(content)
    before = _state(tmp_path)
    result = _run(case.argv, tmp_path)
    _check(result, case)
    assert _state(tmp_path) == before


def _artifact(tmp_path: Path) -> Path:
    data = tmp_path / "a.csv"
    data.write_bytes(GOOD_CSV)
    out = tmp_path / "s.parquet"
    done = _run(("fit", str(data), "--column", "hours", "--method", "lognormal", "--out",
                 str(out)), tmp_path)  # fmt: skip
    assert done.returncode == 0, done.stderr
    return out


@pytest.mark.parametrize("n", ["-5", "abc", "1e20", "0.5"])
def test_impossible_number_of_draws(n: str, tmp_path: Path) -> None:
    """``draw -n`` that is negative, not a number, absurdly large or fractional is refused."""
    art = _artifact(tmp_path)
    before = _state(tmp_path)
    result = _run(
        ("draw", str(art), "-n", n, "--seed", "1", "--out", str(tmp_path / "d.parquet")), tmp_path
    )
    _check(result, Case("n", (), ("-n",)))
    assert _state(tmp_path) == before


def test_draw_out_equal_to_its_artifact(tmp_path: Path) -> None:
    """``draw a.parquet --out a.parquet`` is refused before the artifact is touched."""
    art = _artifact(tmp_path)
    before = _state(tmp_path)
    result = _run(("draw", str(art), "-n", "10", "--seed", "1", "--out", str(art)), tmp_path)
    _check(result, Case("draw-self", (), (art.name,)))
    assert _state(tmp_path) == before


def test_deeply_nested_metadata_is_refused(tmp_path: Path) -> None:
    """An artifact whose metadata JSON nests thousands deep is refused in one line (exit 2 or 3)."""
    art = _artifact(tmp_path)
    table = pq.read_table(art)
    meta = dict(table.schema.metadata or {})
    key = next(k for k in meta if b"samplewright" in k)
    deep = "[" * 100_000 + "]" * 100_000
    record = json.loads(meta[key])
    meta[key] = json.dumps(record)[:-1].encode() + b',"deep":' + deep.encode() + b"}"
    pq.write_table(table.replace_schema_metadata(meta), art)
    before = _state(tmp_path)
    result = _run(("show", str(art)), tmp_path)
    assert "Traceback" not in result.stderr
    assert result.returncode in (2, 3)
    assert len(result.stderr.strip().splitlines()) == 1
    assert art.name in result.stderr
    assert _state(tmp_path) == before


SUBPROCESS_CASES = ("nul-bytes", "corrupt-parquet", "fit-out-equals-data")


@pytest.mark.parametrize("case_id", SUBPROCESS_CASES)
def test_real_entry_point_prints_no_traceback(case_id: str, tmp_path: Path) -> None:
    """Through ``python -m samplewright`` too: exit 2, one line, the folder untouched."""
    case = next(c for c in CASES if c.id == case_id)
    for name, content in case.files.items():
        (tmp_path / name).write_bytes(content)
    before = _state(tmp_path)
    _check(_run(case.argv, tmp_path, subprocess_run=True), case)
    assert _state(tmp_path) == before


def test_matrix_has_at_least_forty_kinds() -> None:
    """The matrix covers at least 40 kinds of bad input (the README quotes the count)."""
    assert len(CASES) + 4 + 2 >= 40


@pytest.mark.parametrize("method", ["gamma", "normal", "lognormal", "empirical"])
def test_values_spanning_1e_minus_300_to_1e300_fit_without_traceback(
    method: str, tmp_path: Path
) -> None:
    """Values from 1e-300 to 1e300 give a valid fit (finite parameters) or one clear line."""
    data = tmp_path / "a.csv"
    data.write_bytes(b"hours\n1e-300\n1\n1e300\n5\n")
    out = tmp_path / "o.parquet"
    result = _run(("fit", str(data), "--column", "hours", "--method", method, "--out", str(out)),
                  tmp_path)  # fmt: skip
    assert "Traceback" not in result.stderr
    if result.returncode == 0:
        import samplewright as sw

        params = sw.load_sampler(out).params
        numbers = [v for v in params.values() if isinstance(v, float)]
        assert all(np.isfinite(numbers)), params
    else:
        assert result.returncode == 2 and len(result.stderr.strip().splitlines()) == 1
        assert not out.exists()
