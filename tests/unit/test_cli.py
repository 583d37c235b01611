"""Unit tests for the samplewright command line: happy paths, bad input and exit codes."""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from samplewright.core.randomness import stream_rng
from samplewright.pipeline.cli import build_parser, main
from samplewright.store.artifacts import METADATA_KEY, load_sampler, read_metadata
from samplewright.store.fingerprints import fingerprint_file

Cli = Callable[..., tuple[int, str, str]]
HOURS = [2.5, 1.25, 4.0, 3.5, 0.75, 6.0, 2.0, 5.5]  # demo data
EXE = Path(sys.executable).with_name("samplewright")


@pytest.fixture
def data_csv(tmp_path: Path) -> Path:
    """A small, clean CSV of repair hours with a weight column (demo data)."""
    f = tmp_path / "repairs.csv"
    pd.DataFrame({"hours": HOURS, "w": [1, 2, 1, 1, 3, 1, 2, 1]}).to_csv(f, index=False)
    return f


@pytest.fixture
def gamma_artifact(tmp_path: Path, data_csv: Path, run_cli: Cli) -> Path:
    """A gamma artifact fitted through the CLI."""
    out = tmp_path / "gamma.parquet"
    code, _, err = run_cli("fit", data_csv, "-c", "hours", "-m", "gamma", "--out", out)
    assert code == 0, err
    return out


def _subcommands() -> list[str]:
    parser = build_parser()
    action = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return sorted(action.choices)


# --- help and version ----------------------------------------------------------------------


def test_documented_subcommands_exist() -> None:
    """Every subcommand the README documents is in the parser."""
    assert {"fit", "knots", "draw", "show", "verify", "fingerprint"} <= set(_subcommands())
    # the commands of the resampling, joint-input and expert-judgement stages
    assert {"fit-joint", "elicit", "interval", "replicate", "snapshot-table"} <= set(_subcommands())


@pytest.mark.parametrize("command", _subcommands())
def test_help_of_every_subcommand_exits_0(command: str, capsys: pytest.CaptureFixture[str]) -> None:
    """`samplewright COMMAND --help` prints usage and exits with status 0."""
    with pytest.raises(SystemExit) as info:
        main([command, "--help"])
    assert info.value.code == 0
    assert f"usage: samplewright {command}" in capsys.readouterr().out


def test_top_level_help_and_version(capsys: pytest.CaptureFixture[str]) -> None:
    """--help and --version exit 0; --version prints the package version."""
    with pytest.raises(SystemExit) as info:
        main(["--help"])
    assert info.value.code == 0
    assert capsys.readouterr().out.startswith("usage: samplewright")
    with pytest.raises(SystemExit) as info:
        main(["--version"])
    assert info.value.code == 0
    assert capsys.readouterr().out.strip().startswith("samplewright 0.")


# --- fit -------------------------------------------------------------------------------------


def test_fit_writes_a_verified_artifact(tmp_path: Path, data_csv: Path, run_cli: Cli) -> None:
    """fit writes one artifact, prints a one-line summary and records where the data came from."""
    out = tmp_path / "out" / "gamma.parquet"
    code, stdout, err = run_cli("fit", data_csv, "-c", "hours", "-m", "gamma", "--out", out)
    assert (code, err) == (0, "")
    assert stdout.startswith(f"{out}: gamma (shape=") and stdout.count("\n") == 1
    s = load_sampler(out)
    meta = s.metadata  # type: ignore[attr-defined]
    assert meta["fingerprint"] == fingerprint_file(data_csv, "hours")
    assert meta["data"] == {
        "n_obs": 8,
        "n_rows_read": 8,
        "dropped": {},
        "weighted": False,
        "censored": 0,
    }
    assert (meta["provenance"]["source"], meta["provenance"]["column"]) == (str(data_csv), "hours")
    assert [p.name for p in out.parent.iterdir()] == ["gamma.parquet"]


def test_fit_with_weights_and_option(tmp_path: Path, data_csv: Path, run_cli: Cli) -> None:
    """--weights and --option loc=... reach the fit and are recorded."""
    out = tmp_path / "a.parquet"
    code, _, err = run_cli(
        "fit",
        data_csv,
        "-c",
        "hours",
        "-m",
        "weibull",
        "--weights",
        "w",
        "--option",
        "loc=0.5",
        "--out",
        out,
    )
    assert code == 0, err
    meta = read_metadata(out)
    assert meta["sampler"]["params"]["loc"] == 0.5
    assert meta["data"]["weighted"] is True
    assert meta["provenance"]["options"] == {"loc": 0.5}
    assert meta["provenance"]["weight_column"] == "w"


@pytest.mark.parametrize(
    "method", ["empirical", "interpolated", "normal", "lognormal", "exponential"]
)
def test_fit_each_basic_method(tmp_path: Path, data_csv: Path, run_cli: Cli, method: str) -> None:
    """fit works for the non-parametric methods and the closed-form families."""
    out = tmp_path / f"{method}.parquet"
    code, _, err = run_cli("fit", data_csv, "-c", "hours", "-m", method, "--out", out)
    assert code == 0, err
    assert load_sampler(out).method == method


def test_fit_missing_drop_records_dropped_count(tmp_path: Path, run_cli: Cli) -> None:
    """--missing drop fits the rest and the artifact's data.dropped records how many."""
    f = tmp_path / "d.csv"
    f.write_text("hours,id\n1.5,a\nNA,b\n2.5,c\n,d\n4,e\n")
    out = tmp_path / "a.parquet"
    code, _, err = run_cli(
        "fit", f, "-c", "hours", "-m", "empirical", "--missing", "drop", "--out", out
    )
    assert code == 0, err
    data = read_metadata(out)["data"]
    assert data["dropped"] == {"missing": 2}
    assert (data["n_obs"], data["n_rows_read"]) == (3, 5)


def test_fit_infinite_drop_records_dropped_count(tmp_path: Path, run_cli: Cli) -> None:
    """--infinite drop records the infinite values it removed."""
    f = tmp_path / "d.csv"
    f.write_text("hours\n1.5\ninf\n2.5\n")
    out = tmp_path / "a.parquet"
    code, _, err = run_cli(
        "fit", f, "-c", "hours", "-m", "empirical", "--infinite", "drop", "--out", out
    )
    assert code == 0, err
    assert read_metadata(out)["data"]["dropped"] == {"infinite": 1}


# --- bad input: exit 2, one line, nothing written -----------------------------------------

BAD_INPUTS = {
    # name: (file name, file text, extra CLI args, expected message)
    "missing-file": (None, "", ["-c", "hours", "-m", "empirical"], "nope.csv: data file not found"),
    "missing-column": (
        "d.csv",
        "a,b\n1,2\n",
        ["-c", "hours", "-m", "empirical"],
        "no column 'hours' (columns: 'a', 'b')",
    ),
    "non-numeric": (
        "repairs.csv",
        "hours\n1\n2\nn/a\n4\n",
        ["-c", "hours", "-m", "empirical"],
        "column 'hours' in repairs.csv has 1 non-numeric value (first at row 3: 'n/a')",
    ),
    "infinite": (
        "d.csv",
        "hours\n1\n-inf\n",
        ["-c", "hours", "-m", "empirical"],
        "column 'hours' in d.csv has 1 infinite value (first at row 2)",
    ),
    "nan": (
        "d.csv",
        "hours\n1\nNaN\n",
        ["-c", "hours", "-m", "empirical"],
        "column 'hours' in d.csv has 1 missing value (first at row 2)",
    ),
    "no-rows-left": (
        "d.csv",
        "hours,id\nNA,a\n,b\n",
        ["-c", "hours", "-m", "empirical", "--missing", "drop"],
        "column 'hours' in d.csv: no rows left to use",
    ),
    "too-few-for-gamma": (
        "d.csv",
        "hours\n3.5\n",
        ["-c", "hours", "-m", "gamma"],
        "d.csv: gamma needs at least 2 values, found 1",
    ),
    "negative-weight": (
        "d.csv",
        "hours,w\n1,1\n2,-1\n",
        ["-c", "hours", "-m", "empirical", "--weights", "w"],
        "weight column 'w' in d.csv has 1 weight <= 0 (first at row 2: -1.0)",
    ),
    "zero-weight": (
        "d.csv",
        "hours,w\n1,0\n2,1\n",
        ["-c", "hours", "-m", "empirical", "--weights", "w"],
        "weight column 'w' in d.csv has 1 weight <= 0 (first at row 1: 0.0)",
    ),
    "bad-censor": (
        "d.csv",
        "hours,c\n1,0\n2,2\n",
        ["-c", "hours", "-m", "weibull", "--censor", "c"],
        "censoring column 'c' in d.csv must hold 0/1 or true/false (first bad value at row 2",
    ),
    "value-below-support": (
        "d.csv",
        "hours\n1\n0\n2\n",
        ["-c", "hours", "-m", "gamma"],
        "d.csv: gamma needs every value > 0",
    ),
    "unknown-method": (
        "d.csv",
        "hours\n1\n2\n",
        ["-c", "hours", "-m", "nosuch"],
        "--method: unknown method",
    ),
    "unknown-suffix": (
        "d.txt",
        "hours\n1\n",
        ["-c", "hours", "-m", "empirical"],
        "unknown file type '.txt'",
    ),
}


@pytest.mark.parametrize("case", list(BAD_INPUTS))
def test_bad_input_exits_2_with_one_line_and_writes_nothing(
    tmp_path: Path, run_cli: Cli, names_in: Callable[[Path], list[str]], case: str
) -> None:
    """Each kind of bad input: exit 2, one 'samplewright: error:' line, no artifact or temp."""
    name, text, args, message = BAD_INPUTS[case]
    data_dir = tmp_path / "data"
    data_dir.mkdir()
    data = data_dir / (name or "nope.csv")
    if name is not None:
        data.write_text(text)
    before = names_in(data_dir)
    out = tmp_path / "out" / "a.parquet"
    code, stdout, err = run_cli("fit", data, *args, "--out", out)
    assert code == 2
    assert stdout == ""
    assert err.startswith("samplewright: error: ") and err.count("\n") == 1
    assert message in err
    assert not out.parent.exists() or names_in(out.parent) == []
    assert names_in(data_dir) == before


def test_bad_input_in_the_same_folder_leaves_no_temp_files(
    tmp_path: Path, run_cli: Cli, names_in: Callable
) -> None:
    """With data and artifact in one folder, a failed fit leaves only the data file there."""
    f = tmp_path / "d.csv"
    f.write_text("hours\n1\nx\n")
    code, _, _ = run_cli(
        "fit", f, "-c", "hours", "-m", "empirical", "--out", tmp_path / "a.parquet"
    )
    assert code == 2 and names_in(tmp_path) == ["d.csv"]


def test_fingerprint_of_bad_input_exits_2(tmp_path: Path, run_cli: Cli) -> None:
    """fingerprint refuses bad data with the same one-line error as fit."""
    f = tmp_path / "d.csv"
    f.write_text("hours\n1\nx\n")
    code, stdout, err = run_cli("fingerprint", f, "-c", "hours")
    assert (code, stdout) == (2, "")
    assert "non-numeric value (first at row 2: 'x')" in err


def test_installed_command_reports_bad_input(tmp_path: Path) -> None:
    """The installed samplewright script exits 2 with one stderr line and writes nothing."""
    assert EXE.is_file(), f"{EXE} missing: is the package installed in this environment?"
    f = tmp_path / "repairs.csv"
    f.write_text("hours\n1.5\nabc\n2\nn/a\n")
    out = tmp_path / "a.parquet"
    proc = subprocess.run(
        [str(EXE), "fit", str(f), "-c", "hours", "-m", "gamma", "--out", str(out)],
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert proc.stderr == (
        "samplewright: error: column 'hours' in repairs.csv has 2 non-numeric "
        "values (first at row 2: 'abc')\n"
    )
    assert sorted(p.name for p in tmp_path.iterdir()) == ["repairs.csv"]


def test_installed_command_fits_and_verifies(tmp_path: Path, data_csv: Path) -> None:
    """The installed script fits an artifact (exit 0) that `verify` accepts."""
    out = tmp_path / "a.parquet"
    fit = subprocess.run(
        [str(EXE), "fit", str(data_csv), "-c", "hours", "-m", "lognormal", "--out", str(out)],
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert fit.returncode == 0, fit.stderr
    check = subprocess.run(
        [str(EXE), "verify", str(out)], capture_output=True, text=True, timeout=60
    )
    assert check.returncode == 0 and check.stdout.startswith("ok ")


# --- draw --------------------------------------------------------------------------------


@pytest.mark.parametrize("suffix", [".csv", ".parquet"])
def test_draw_writes_one_value_column_with_n_rows(
    tmp_path: Path, gamma_artifact: Path, run_cli: Cli, suffix: str
) -> None:
    """draw writes exactly one column 'value' with n rows, equal to the sampler's own draws."""
    out = tmp_path / f"draws{suffix}"
    code, stdout, err = run_cli("draw", gamma_artifact, "-n", 1000, "--seed", 7, "--out", out)
    assert code == 0, err
    assert stdout.startswith(f"{out}: 1000 draws")
    if suffix == ".csv":  # pandas' default CSV float parser is not correctly rounded
        frame = pd.read_csv(out, float_precision="round_trip")
    else:
        frame = pq.read_table(out).to_pandas()
    assert list(frame.columns) == ["value"] and len(frame) == 1000
    expected = load_sampler(gamma_artifact).draw(1000, rng=stream_rng(7, "draws"))
    np.testing.assert_array_equal(frame["value"].to_numpy(), expected)


def test_draw_is_reproducible_and_stream_dependent(
    tmp_path: Path, gamma_artifact: Path, run_cli: Cli
) -> None:
    """The same seed and stream repeat the draws; another stream changes them."""
    paths = [tmp_path / f"{i}.parquet" for i in range(3)]
    run_cli("draw", gamma_artifact, "-n", 50, "--seed", 3, "--stream", "a", "--out", paths[0])
    run_cli("draw", gamma_artifact, "-n", 50, "--seed", 3, "--stream", "a", "--out", paths[1])
    run_cli("draw", gamma_artifact, "-n", 50, "--seed", 3, "--stream", "b", "--out", paths[2])
    v = [pq.read_table(p).column("value").to_numpy() for p in paths]
    np.testing.assert_array_equal(v[0], v[1])
    assert not np.array_equal(v[0], v[2])
    info = json.loads(pq.read_schema(paths[0]).metadata[b"samplewright-draws"])
    assert info["content_hash"] == read_metadata(gamma_artifact)["content_hash"]
    assert (info["seed"], info["stream"], info["n"]) == (3, ["a"], 50)


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["-n", "-1", "--seed", "1", "--out", "d.csv"], "-n: expected a count >= 0"),
        (["-n", "5", "--seed", "1", "--out", "d.txt"], "--out: expected a .parquet or .csv file"),
        (["-n", "5", "--seed", "-1", "--out", "d.csv"], "--seed: expected a non-negative int"),
    ],
)
def test_draw_rejects_bad_arguments(
    tmp_path: Path, gamma_artifact: Path, run_cli: Cli, args: list[str], message: str
) -> None:
    """A negative count or seed, or an unknown output type, is an error and writes nothing."""
    args = [a if not a.startswith("d.") else str(tmp_path / a) for a in args]
    code, _, err = run_cli("draw", gamma_artifact, *args)
    assert code == 2 and message in err
    assert not any(p.name.startswith(("d.", ".d.")) for p in tmp_path.iterdir())


# --- show, verify, fingerprint ---------------------------------------------------------------


def test_show_describes_the_artifact(gamma_artifact: Path, run_cli: Cli) -> None:
    """show exits 0 and mentions the method."""
    code, stdout, err = run_cli("show", gamma_artifact)
    assert (code, err) == (0, "")
    assert "gamma" in stdout


def test_show_json_prints_the_metadata(gamma_artifact: Path, run_cli: Cli) -> None:
    """show --json prints exactly the stored metadata."""
    code, stdout, _ = run_cli("show", gamma_artifact, "--json")
    assert code == 0
    assert json.loads(stdout) == read_metadata(gamma_artifact)


def test_verify_accepts_good_artifacts(
    tmp_path: Path, gamma_artifact: Path, data_csv: Path, run_cli: Cli
) -> None:
    """verify prints 'ok' for each good artifact and exits 0."""
    other = tmp_path / "emp.parquet"
    run_cli("fit", data_csv, "-c", "hours", "-m", "empirical", "--out", other)
    code, stdout, _ = run_cli("verify", gamma_artifact, other)
    assert code == 0
    assert [ln.split()[0] for ln in stdout.splitlines()] == ["ok", "ok"]


def _tamper(path: Path) -> None:
    """Change a parameter in the metadata, leaving the stored hashes as they were."""
    table = pq.read_table(path)
    meta = json.loads(table.schema.metadata[METADATA_KEY])
    meta["sampler"]["params"]["shape"] *= 1.5
    pq.write_table(table.replace_schema_metadata({METADATA_KEY: json.dumps(meta).encode()}), path)


def test_verify_exits_3_on_a_tampered_artifact(
    tmp_path: Path, gamma_artifact: Path, data_csv: Path, run_cli: Cli
) -> None:
    """One edited artifact among good ones makes verify print FAIL for it and exit 3."""
    good = tmp_path / "emp.parquet"
    run_cli("fit", data_csv, "-c", "hours", "-m", "empirical", "--out", good)
    _tamper(gamma_artifact)
    code, stdout, _ = run_cli("verify", good, gamma_artifact)
    assert code == 3
    lines = stdout.splitlines()
    assert lines[0].startswith("ok ") and lines[1].startswith("FAIL ")
    assert "content hash mismatch" in lines[1]


def test_verify_exits_3_on_edited_payload(tmp_path: Path, data_csv: Path, run_cli: Cli) -> None:
    """A payload value changed under unchanged metadata makes verify exit 3."""
    path = tmp_path / "emp.parquet"
    run_cli("fit", data_csv, "-c", "hours", "-m", "empirical", "--out", path)
    table = pq.read_table(path)
    values = table.column("value").to_numpy().copy()
    values[0] += 0.5
    pq.write_table(pa.table({"value": values}).replace_schema_metadata(table.schema.metadata), path)
    assert run_cli("verify", path)[0] == 3


@pytest.mark.parametrize(
    "command", [["show"], ["show", "--json"], ["draw", "-n", "5", "--seed", "1", "--out", "D.csv"]]
)
def test_commands_refuse_a_tampered_artifact_with_exit_3(
    tmp_path: Path, gamma_artifact: Path, run_cli: Cli, command: list[str]
) -> None:
    """show and draw refuse an edited artifact with exit 3 and write no draws."""
    _tamper(gamma_artifact)
    args = [
        command[0],
        gamma_artifact,
        *[str(tmp_path / a) if a == "D.csv" else a for a in command[1:]],
    ]
    code, stdout, err = run_cli(*args)
    assert (code, stdout) == (3, "")
    assert err.startswith("samplewright: error: ") and "hash mismatch" in err
    assert not (tmp_path / "D.csv").exists()


def test_fingerprint_prints_the_value_fingerprint(
    tmp_path: Path, data_csv: Path, run_cli: Cli
) -> None:
    """fingerprint prints the column's fingerprint and fills the cache when asked."""
    cache = tmp_path / "cache"
    code, stdout, _ = run_cli("fingerprint", data_csv, "-c", "hours", "--cache-dir", cache)
    assert code == 0
    assert stdout.strip() == fingerprint_file(data_csv, "hours")
    assert (cache / "fingerprints.json").is_file()
    _, with_w, _ = run_cli("fingerprint", data_csv, "-c", "hours", "--weights", "w")
    assert with_w.strip() != stdout.strip()


# --- knots -----------------------------------------------------------------------------------

KNOT_X = [0.0, 2.0, 2.0, 9.0]
KNOT_P = [0.0, 0.5, 0.7, 1.0]


def _check_knots(path: Path) -> None:
    s = load_sampler(path)
    np.testing.assert_array_equal(s.x, KNOT_X)  # type: ignore[attr-defined]
    np.testing.assert_array_equal(s.p, KNOT_P)  # type: ignore[attr-defined]
    assert s.method == "knots" and s.cdf(2.0) == 0.7


def test_knots_from_points(tmp_path: Path, run_cli: Cli) -> None:
    """--points 'x:p,...' writes a knots artifact with those points."""
    out = tmp_path / "k.parquet"
    code, stdout, err = run_cli("knots", "--points", "0:0,2:0.5,2:0.7,9:1", "--out", out)
    assert code == 0, err
    assert stdout.startswith(f"{out}: knots")
    _check_knots(out)
    assert read_metadata(out)["provenance"]["source"] == "--points"


def test_knots_from_csv(tmp_path: Path, run_cli: Cli) -> None:
    """--file with a CSV of columns x and p (others ignored) writes the same knots."""
    f = tmp_path / "k.csv"
    f.write_text("note,p,x\na,0,0\nb,0.5,2\nc,0.7,2\nd,1,9\n")
    out = tmp_path / "k.parquet"
    code, _, err = run_cli("knots", "--file", f, "--out", out)
    assert code == 0, err
    _check_knots(out)


@pytest.mark.parametrize(
    "text",
    ["x: [0, 2, 2, 9]\np: [0, 0.5, 0.7, 1]\n", "- [0, 0]\n- [2, 0.5]\n- [2, 0.7]\n- [9, 1]\n"],
    ids=["mapping", "pairs"],
)
def test_knots_from_yaml(tmp_path: Path, run_cli: Cli, text: str) -> None:
    """--file with YAML, as a mapping or as a list of pairs, writes the same knots."""
    f = tmp_path / "k.yaml"
    f.write_text(text)
    out = tmp_path / "k.parquet"
    code, _, err = run_cli("knots", "--file", f, "--out", out)
    assert code == 0, err
    _check_knots(out)


def test_knots_from_points_csv_and_yaml_have_one_content_hash(tmp_path: Path, run_cli: Cli) -> None:
    """The same knots from --points, CSV and YAML give the same content hash."""
    (tmp_path / "k.csv").write_text("x,p\n0,0\n2,0.5\n2,0.7\n9,1\n")
    (tmp_path / "k.yaml").write_text("x: [0, 2, 2, 9]\np: [0, 0.5, 0.7, 1]\n")
    run_cli("knots", "--points", "0:0,2:0.5,2:0.7,9:1", "--out", tmp_path / "a.parquet")
    run_cli("knots", "--file", tmp_path / "k.csv", "--out", tmp_path / "b.parquet")
    run_cli("knots", "--file", tmp_path / "k.yaml", "--out", tmp_path / "c.parquet")
    hashes = {read_metadata(tmp_path / f"{n}.parquet")["content_hash"] for n in "abc"}
    assert len(hashes) == 1


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (
            ["--points", "0:0,2:0.5,1:0.7,9:1"],
            "x must be non-decreasing, but point 3 (x=1) is below point 2 (x=2)",
        ),
        (["--points", "0:0,2:0.6,3:0.4,9:1"], "point 3 (p=0.4) is below point 2 (p=0.6)"),
        (["--points", "0:0.2,9:1"], "the first point must have p=0, found p=0.2"),
        (["--points", "0:0,9:0.9"], "the last point must have p=1, found p=0.9"),
        (["--points", "0:0,2"], "--points: expected 'x1:p1,x2:p2,...' with numbers"),
        (["--points", "0:0,a:1"], "--points: expected 'x1:p1,x2:p2,...' with numbers"),
        ([], "give exactly one of --file or --points"),
        (["--points", "0:0,1:1", "--file", "k.csv"], "give exactly one of --file or --points"),
    ],
)
def test_bad_knots_exit_2_naming_the_problem(
    tmp_path: Path,
    run_cli: Cli,
    names_in: Callable[[Path], list[str]],
    args: list[str],
    message: str,
) -> None:
    """Bad knots exit 2 with a message naming the offending point, and write nothing."""
    out = tmp_path / "out" / "k.parquet"
    code, _, err = run_cli("knots", *args, "--out", out)
    assert code == 2
    assert message in err and err.count("\n") == 1
    assert not out.parent.exists() or names_in(out.parent) == []


def test_bad_knots_file_names_the_file_and_point(tmp_path: Path, run_cli: Cli) -> None:
    """A knots file that is not a CDF is reported with its path and the offending point."""
    f = tmp_path / "k.yaml"
    f.write_text("x: [0, 1, 2]\np: [0, 1.2, 1]\n")
    code, _, err = run_cli("knots", "--file", f, "--out", tmp_path / "k.parquet")
    assert code == 2
    assert f"{f}: knots:" in err and "point 3 (p=1) is below point 2 (p=1.2)" in err
    assert not (tmp_path / "k.parquet").exists()


@pytest.mark.parametrize(
    ("name", "text", "message"),
    [
        ("k.yaml", "just text\n", "expected a mapping with keys x and p"),
        ("k.yaml", "x: [0, 1\n", "not valid YAML"),
        ("k.csv", "x,q\n0,0\n1,1\n", "no column 'p'"),
        ("k.json", "{}", "knots file must be .csv, .tsv or .yaml"),
    ],
)
def test_unusable_knots_files_exit_2(
    tmp_path: Path, run_cli: Cli, name: str, text: str, message: str
) -> None:
    """Knots files of the wrong shape, syntax or type exit 2 with one line."""
    f = tmp_path / name
    f.write_text(text)
    code, _, err = run_cli("knots", "--file", f, "--out", tmp_path / "k.parquet")
    assert code == 2 and message in err and err.count("\n") == 1


def test_missing_knots_file_exits_2(tmp_path: Path, run_cli: Cli) -> None:
    """A knots file that does not exist is reported."""
    code, _, err = run_cli(
        "knots", "--file", tmp_path / "nope.yaml", "--out", tmp_path / "k.parquet"
    )
    assert code == 2 and "knots file not found" in err


def test_verify_exits_2_on_a_missing_artifact(tmp_path: Path, run_cli: Cli) -> None:
    """A path that is not there is an input error (exit 2), not an integrity failure (exit 3)."""
    code, stdout, _ = run_cli("verify", str(tmp_path / "absent.parquet"))
    assert code == 2 and stdout.startswith("FAIL") and "artifact not found" in stdout


# --- outputs that would destroy an input or cannot be written (issue 9 #14, #16) --------------


def _state(folder: Path) -> dict[str, tuple[bytes, int]]:
    """Content and modification time of every file under ``folder``."""
    return {
        str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_mtime_ns)
        for p in sorted(folder.rglob("*"))
        if p.is_file() or p.is_symlink()
    }


def _refused(run_cli: Cli, folder: Path, args: list[object], message: str) -> str:
    """Run a command that must be refused: exit 2, one line with ``message``, nothing changed."""
    before = _state(folder)
    code, stdout, err = run_cli(*args)
    assert (code, stdout) == (2, ""), err
    assert err.startswith("samplewright: error: ") and err.count("\n") == 1, err
    assert message in err, err
    assert _state(folder) == before
    return err


@pytest.fixture
def kit(tmp_path: Path, data_csv: Path, gamma_artifact: Path, run_cli: Cli) -> dict[str, Path]:
    """Inputs of every command: data, a snapshot, two artifacts and a knots file."""
    snap = tmp_path / "snap.parquet"
    assert run_cli("snapshot", data_csv, "-c", "hours", "--out", snap)[0] == 0
    other = tmp_path / "emp.parquet"
    assert run_cli("fit", data_csv, "-c", "hours", "-m", "empirical", "--out", other)[0] == 0
    knots = tmp_path / "k.csv"
    knots.write_text("x,p\n0,0\n2,0.5\n9,1\n")
    (tmp_path / "link.json").symlink_to(data_csv)
    return {"data": data_csv, "snap": snap, "art": gamma_artifact, "emp": other, "knots": knots}


OVERWRITES = {
    "fit-data": ["fit", "{data}", "-c", "hours", "-m", "gamma", "--out", "{data}"],
    "fit-snapshot": ["fit", "{snap}", "-m", "gamma", "--out", "{snap}"],
    "knots-file": ["knots", "--file", "{knots}", "--out", "{knots}"],
    "draw-artifact": ["draw", "{art}", "-n", "5", "--seed", "1", "--out", "{art}"],
    "check-through-link": ["check", "{data}", "{art}", "-c", "hours", "--out", "{dir}/link.json"],
    "check-candidate-md": ["check", "{data}", "{art}", "-c", "hours", "--out", "{dir}/gamma.json"],
    "snapshot-data": ["snapshot", "{snap}", "-c", "value", "--out", "{snap}"],
    "fingerprint-json": ["fingerprint", "{data}", "-c", "hours", "--json-out", "{data}"],
    "fingerprint-cache": [
        "fingerprint",
        "{dir}/fingerprints.json",
        "-c",
        "x",
        "--cache-dir",
        "{dir}",
    ],
    "select-candidate": ["select", "{art}", "{emp}", "--out", "{emp}"],
    "select-dotted": ["select", "{art}", "{emp}", "--out", "{dir}/sub/../gamma.parquet"],
}


@pytest.mark.parametrize("case", list(OVERWRITES))
def test_an_output_naming_an_input_is_refused_before_writing(
    tmp_path: Path, kit: dict[str, Path], run_cli: Cli, case: str
) -> None:
    """Every command refuses an output that is (or resolves to) one of its inputs, and leaves
    every file as it was."""
    if case == "check-candidate-md":
        (tmp_path / "gamma.md").symlink_to(kit["art"])  # the .md beside resolves to an input
    if case == "fingerprint-cache":
        (tmp_path / "fingerprints.json").write_text("{}")
    names = {k: str(v) for k, v in kit.items()} | {"dir": str(tmp_path)}
    args = [a.format(**names) for a in OVERWRITES[case]]
    _refused(run_cli, tmp_path, args, "refusing to overwrite an input")


@pytest.mark.parametrize(
    ("make_out", "message"),
    [
        (lambda d, data: d, "is a folder"),
        (lambda d, data: data / "a.parquet", "which is a file, not a folder"),
        (lambda d, data: data / "x" / "y" / "a.parquet", "which is a file, not a folder"),
        (lambda d, data: d / ("a" * 300 + ".parquet"), "the file system allows at most"),
        (lambda d, data: d / "/".join(["b" * 250] * 20) / "a.parquet", "longer than the file"),
    ],
    ids=["folder", "under-file", "deep-under-file", "long-name", "long-path"],
)
def test_unwritable_outputs_exit_2_naming_the_option(
    tmp_path: Path, data_csv: Path, run_cli: Cli, make_out: Callable, message: str
) -> None:
    """--out that is a folder, lies under a file or is too long: one line naming --out."""
    out = make_out(tmp_path, data_csv)
    err = _refused(
        run_cli, tmp_path, ["fit", data_csv, "-c", "hours", "-m", "gamma", "--out", out], message
    )
    assert "--out " in err


class _FullDisk:
    """Stands in for pq.ParquetWriter on a full disk: starts the file, then fails."""

    def __init__(self, where: str, *args: object, **kwargs: object) -> None:
        Path(where).write_bytes(b"PAR1")

    def __enter__(self) -> _FullDisk:
        return self

    def __exit__(self, *exc: object) -> None:
        return None

    def write_table(self, table: object) -> None:
        import errno

        raise OSError(errno.ENOSPC, "No space left on device")


@pytest.mark.parametrize("command", ["fit", "draw", "snapshot", "select"])
def test_a_full_disk_is_one_line_and_damages_nothing(
    tmp_path: Path,
    data_csv: Path,
    gamma_artifact: Path,
    run_cli: Cli,
    monkeypatch: pytest.MonkeyPatch,
    command: str,
) -> None:
    """A write that fails with ENOSPC exits 2 with one line naming the file; an existing
    output stays as it was and no temporary file is left."""
    out = tmp_path / "out" / "x.parquet"
    args = {
        "fit": ["fit", data_csv, "-c", "hours", "-m", "gamma", "--out", out],
        "draw": ["draw", gamma_artifact, "-n", "10", "--seed", "1", "--out", out],
        "snapshot": ["snapshot", data_csv, "-c", "hours", "--out", out],
        "select": ["select", gamma_artifact, "--out", out],
    }[command]
    assert run_cli(*args)[0] == 0  # a good output is in place first
    monkeypatch.setattr(pq, "ParquetWriter", _FullDisk)
    err = _refused(run_cli, tmp_path, args, f"{out}: No space left on device")
    assert [p.name for p in out.parent.iterdir()] == ["x.parquet"]
    assert err.count("\n") == 1


def test_a_full_disk_while_writing_json_is_one_line(
    tmp_path: Path, data_csv: Path, run_cli: Cli, monkeypatch: pytest.MonkeyPatch
) -> None:
    """fingerprint --json-out on a full disk: exit 2, one line naming the JSON file."""
    import errno

    def full(self: Path, data: bytes) -> int:
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(Path, "write_bytes", full)
    out = tmp_path / "fp.json"
    _refused(
        run_cli,
        tmp_path,
        ["fingerprint", data_csv, "-c", "hours", "--json-out", out],
        f"{out}: No space left on device",
    )


def _nested_artifact(path: Path, depth: int) -> None:
    meta = (
        '{"format": "samplewright-sampler", "format_version": 1, "sampler": '
        + "[" * depth
        + "]" * depth
        + "}"
    )
    pq.write_table(pa.table({"x": [1.0]}).replace_schema_metadata({METADATA_KEY: meta}), path)


@pytest.mark.parametrize("depth", [100, 100_000])
@pytest.mark.parametrize("command", ["show", "verify", "draw", "select"])
def test_deeply_nested_metadata_is_one_line(
    tmp_path: Path, run_cli: Cli, depth: int, command: str
) -> None:
    """An artifact whose metadata JSON nests absurdly deep is refused in one line (exit 2)."""
    art = tmp_path / "deep.parquet"
    _nested_artifact(art, depth)
    args = {
        "show": ["show", art],
        "verify": ["verify", art],
        "draw": ["draw", art, "-n", "3", "--seed", "1", "--out", tmp_path / "d.csv"],
        "select": ["select", art, "--out", tmp_path / "s.parquet"],
    }[command]
    before = _state(tmp_path)
    code, stdout, err = run_cli(*args)
    assert code == 2 and _state(tmp_path) == before
    line = stdout if command == "verify" else err
    assert line.count("\n") == 1 and str(art) in line
    assert "nested deeper" in line or "not a JSON object" in line


def test_malformed_cache_entry_is_recomputed_by_the_command(
    tmp_path: Path, data_csv: Path, run_cli: Cli
) -> None:
    """fingerprint with a damaged memo entry prints the right fingerprint and repairs the memo."""
    cache = tmp_path / "cache"
    run_cli("fingerprint", data_csv, "-c", "hours", "--cache-dir", cache)
    memo = cache / "fingerprints.json"
    doc = json.loads(memo.read_text())
    key = next(iter(doc))
    doc[key]["fingerprint"] = "not a fingerprint"
    memo.write_text(json.dumps(doc))
    code, stdout, err = run_cli("fingerprint", data_csv, "-c", "hours", "--cache-dir", cache)
    # source: the values as pandas reads them, hashed without any memo
    expected = fingerprint_file(data_csv, "hours")
    assert (code, err, stdout.strip()) == (0, "", expected)
    assert json.loads(memo.read_text())[key]["fingerprint"] == expected


def test_an_impossible_count_is_refused(tmp_path: Path, gamma_artifact: Path, run_cli: Cli) -> None:
    """-n beyond the machine's memory is refused in one line before any draw."""
    out = tmp_path / "d.parquet"
    _refused(
        run_cli,
        tmp_path,
        ["draw", gamma_artifact, "-n", 10**15, "--seed", 1, "--out", out],
        "-n: 1000000000000000 draws need",
    )


def test_version_and_help_import_no_heavy_library() -> None:
    """`samplewright --version` and `--help` load no numpy, scipy, pandas or pyarrow."""
    code = (
        "import sys\n"
        "from samplewright.pipeline.cli.main import main\n"
        "for argv in (['--version'], ['--help'], ['fit', '--help']):\n"
        "    try:\n"
        "        main(argv)\n"
        "    except SystemExit:\n"
        "        pass\n"
        "heavy = ('numpy', 'scipy', 'pandas', 'pyarrow')\n"
        "print(sorted(m for m in heavy if m in sys.modules), file=sys.stderr)\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert proc.stderr.strip() == "[]"


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["draw", "a.parquet", "-n", "abc", "--seed", "1", "--out", "d.csv"], "argument -n"),
        (["fit", "d.csv", "-m", "gamma"], "required: --out"),
        (["nosuch"], "invalid choice: 'nosuch'"),
        (["fit", "d.csv", "-m", "gamma", "--out", "a.parquet", "--colour", "red"], "--colour"),
    ],
)
def test_unparsable_command_lines_are_one_line(
    tmp_path: Path, run_cli: Cli, args: list[str], message: str
) -> None:
    """A command line argparse cannot parse gives exit 2 and one line naming the argument."""
    _refused(run_cli, tmp_path, args, message)


def test_verify_summarises_failures_on_stderr(
    tmp_path: Path, gamma_artifact: Path, run_cli: Cli
) -> None:
    """verify lists every artifact on stdout and names the first failure in one stderr line."""
    code, stdout, err = run_cli("verify", gamma_artifact, tmp_path / "none.parquet")
    assert code == 2 and stdout.splitlines()[0].startswith("ok ")
    assert err.count("\n") == 1 and "1 of 2 artifact(s) failed" in err and "none.parquet" in err
