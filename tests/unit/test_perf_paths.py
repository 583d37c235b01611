"""Behaviour of the fast paths: what a rule job imports, and that each shortcut gives the same
numbers as the plain way it replaces (pyarrow's own conversions, numpy's own sort)."""

from __future__ import annotations

import argparse
import subprocess
import sys
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.intake.options import MISSING_TOKENS, ReadOptions
from samplewright.intake.parquet import _numbers
from samplewright.pipeline.cli import build_parser, main
from samplewright.pipeline.cli.draws import _arrow_table
from samplewright.pipeline.cli.main import COMMANDS, GROUPS, UsageError

HEAVY = ("scipy", "pandas", "pyarrow.compute")
OPTIONS = ReadOptions(separator=None, decimal=".", markers=MISSING_TOKENS, encoding=None)


def _loaded_after(code: str, cwd: Path) -> set[str]:
    """The heavy modules loaded in a fresh interpreter after running ``code``."""
    probe = (
        f"{code}\nimport sys\n"
        f"print('loaded:' + ','.join(m for m in {HEAVY!r} if m in sys.modules))\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", probe], cwd=cwd, check=True, capture_output=True, text=True
    )
    line = out.stdout.strip().splitlines()[-1]
    assert line.startswith("loaded:")
    return set(filter(None, line.removeprefix("loaded:").split(",")))


@pytest.fixture(scope="module")
def job_files(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A float64 Parquet column and an empirical artifact fitted to it (demo data)."""
    folder = tmp_path_factory.mktemp("jobs")
    values = np.random.default_rng(20240614).lognormal(1.0, 0.5, 500)
    pq.write_table(pa.table({"hours": values}), folder / "data.parquet")
    code = main(
        [
            "fit",
            str(folder / "data.parquet"),
            "-c",
            "hours",
            "-m",
            "empirical",
            "--out",
            str(folder / "emp.parquet"),
        ]
    )
    assert code == 0
    return folder


# --- which libraries a rule job loads ---------------------------------------------------------
# common practice, no source: a job that needs no scipy or pandas should not pay their ~1 s
# and ~0.4 s of start-up


def test_importing_the_draw_command_loads_no_scipy(tmp_path: Path) -> None:
    """Importing the draw command group loads neither scipy nor pandas."""
    assert _loaded_after("import samplewright.pipeline.cli.draws", tmp_path) == set()


def test_drawing_from_an_empirical_artifact_loads_no_scipy_or_pandas(job_files: Path) -> None:
    """A plain draw from an empirical artifact into Parquet runs without scipy and pandas."""
    code = (
        "from samplewright.pipeline.cli.main import main\n"
        "assert main(['draw', 'emp.parquet', '-n', '100', '--seed', '1', "
        "'--out', 'draws.parquet']) == 0\n"
    )
    assert _loaded_after(code, job_files) & {"scipy", "pandas"} == set()


def test_fingerprint_of_a_clean_parquet_column_loads_no_pandas(job_files: Path) -> None:
    """Fingerprinting a clean float64 Parquet column needs neither pandas nor pyarrow.compute."""
    code = (
        "from samplewright.pipeline.cli.main import main\n"
        "assert main(['fingerprint', 'data.parquet', '-c', 'hours']) == 0\n"
    )
    assert _loaded_after(code, job_files) == set()


def test_reading_a_parquet_float_column_loads_no_pandas(job_files: Path) -> None:
    """read_column of a float64 Parquet column (the intake of every fit) loads no pandas."""
    code = (
        "from samplewright.intake.columns import read_column\n"
        "assert read_column('data.parquet', 'hours').n == 500\n"
    )
    assert "pandas" not in _loaded_after(code, job_files)


# --- the parser built for one command -----------------------------------------------------------


def _registered() -> dict[str, str]:
    """Command -> group, from what each group's add_commands registers."""
    out: dict[str, str] = {}
    for name in GROUPS:
        sub = argparse.ArgumentParser().add_subparsers()
        __import__(f"samplewright.pipeline.cli.{name}", fromlist=["add_commands"]).add_commands(sub)
        out.update(dict.fromkeys(sub.choices, name))
    return out


def test_command_table_matches_the_groups() -> None:
    """COMMANDS names every command each group adds, with that group (common practice)."""
    assert _registered() == COMMANDS


@pytest.mark.parametrize("command", ["fit", "draw", "verify", "select", "fingerprint"])
def test_one_group_parser_gives_the_full_help(
    command: str, capsys: pytest.CaptureFixture[str]
) -> None:
    """`samplewright CMD --help` prints what the parser of every command prints for it."""
    with pytest.raises(SystemExit):
        build_parser().parse_args([command, "--help"])
    full = capsys.readouterr().out
    with pytest.raises(SystemExit):
        main([command, "--help"])
    assert capsys.readouterr().out == full


def test_usage_error_of_one_group_parser_is_the_full_parsers(
    capsys: pytest.CaptureFixture[str],
) -> None:
    """A bad option after a known command gives the full parser's one-line error."""
    args = ["verify", "--no-such-option", "x.parquet"]
    with pytest.raises(UsageError) as full:
        build_parser().parse_args(args)
    assert main(args) == 2
    assert capsys.readouterr().err.strip() == f"samplewright: error: {full.value}"


# --- Parquet values through Arrow buffers equal pyarrow's to_numpy ------------------------------


def _columns() -> dict[str, pa.ChunkedArray]:
    g = np.random.default_rng(5)
    f = g.normal(size=300)
    mask = g.random(300) < 0.2
    ints = g.integers(-50, 50, 300)
    return {
        "float64": pa.chunked_array([pa.array(f)]),
        "float64, sliced chunks": pa.chunked_array(
            [pa.array(f).slice(7, 100), pa.array(f).slice(3, 11)]
        ),
        "float64 with nulls": pa.chunked_array(
            [pa.array(f, mask=mask).slice(5, 200), pa.array(f, mask=mask).slice(13, 50)]
        ),
        "float32 with nulls": pa.chunked_array([pa.array(f.astype(np.float32), mask=mask)]),
        "bool with nulls": pa.chunked_array([pa.array(f > 0, mask=mask).slice(9)]),
        "int16": pa.chunked_array([pa.array(ints.astype(np.int16))]),
        "uint32 with nulls": pa.chunked_array(
            [pa.array(np.abs(ints).astype(np.uint32), mask=mask).slice(1, 150)] * 2
        ),
        "int64 with nulls": pa.chunked_array([pa.array(ints, mask=mask).slice(17)]),
    }


@pytest.mark.parametrize("name", list(_columns()))
def test_parquet_numbers_equal_pyarrow_to_numpy(name: str) -> None:
    """Values read through Arrow's buffers are pyarrow's own conversion, NaN where null."""
    col = _columns()[name]
    got = _numbers(col, "x.parquet", "c", OPTIONS, False)
    # source: pyarrow's ChunkedArray.cast + to_numpy (nulls become NaN in a float64 array)
    want = col.cast(pa.float64()).to_numpy()
    assert got.dtype == np.float64
    assert got.tobytes() == np.asarray(want, dtype=np.float64).tobytes()


# --- the empirical sampler's sort and its step CDF ---------------------------------------------


def test_empirical_sort_is_numpys_stable_argsort_bit_for_bit() -> None:
    """Unweighted values are sorted as numpy's stable argsort orders them (0.0 and -0.0 too)."""
    x = np.array([0.0, -0.0, 2.0, -0.0, 0.0, -1.0, 2.0, 0.0] * 25)
    s = EmpiricalSampler(x)
    # source: numpy.argsort(kind="stable") keeps equal values in their order
    assert s.values.tobytes() == x[np.argsort(x, kind="stable")].tobytes()


def test_empirical_cdf_after_draws_is_the_ecdf() -> None:
    """After draws, the CDF and quantiles are the textbook ECDF ones (i / n at the i-th value)."""
    x = np.random.default_rng(3).gamma(2.0, 1.0, 1000)
    s = EmpiricalSampler(x)
    s.draw(10, rng=1)
    q = np.linspace(-1.0, 12.0, 57)
    # source: the ECDF definition, #{x <= q} / n, by numpy.searchsorted
    ref = np.searchsorted(np.sort(x), q, side="right") / x.size
    assert np.array_equal(s.cdf(q), ref)
    assert np.array_equal(s.quantile([0.001, 0.5, 1.0]), np.sort(x)[[0, 499, 999]])


# --- the draws table --------------------------------------------------------------------------


def test_draws_table_equals_pyarrows_table() -> None:
    """The draws table built over numpy memory equals pyarrow.table of the same columns."""
    g = np.random.default_rng(8)
    joint = g.normal(size=(50, 2))
    columns = {
        "a": joint[:, 0],  # a strided column of a joint draw
        "b": joint[:, 1],
        "n": g.integers(0, 9, 50),
        "flag": g.random(50) < 0.5,
    }
    # source: pyarrow.table on the numpy arrays themselves
    assert _arrow_table(columns).equals(pa.table(columns))
