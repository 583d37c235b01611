"""The terminal side of the CLI: show's layout, fit's warnings, help from the catalog, typos."""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import samplewright as sw
from samplewright.distributions.piecewise import from_knots
from samplewright.fitting.catalog import CATALOG, METHODS
from samplewright.pipeline.cli import main

Cli = Callable[..., tuple[int, str, str]]
EXE = Path(sys.executable).with_name("samplewright")


@pytest.fixture(scope="module")
def spliced_artifact(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A spliced sampler whose tail threshold fell back to the default (few points above it)."""
    x = np.random.default_rng(5).gamma(2.0, 3.0, 120)  # invented repair hours
    s = sw.fit(x, "spliced")
    assert s.diagnostics["threshold_choice"]["rule"] == "fallback"
    out = tmp_path_factory.mktemp("show") / "spliced.parquet"
    sw.write_sampler(s, out, diagnostics=s.diagnostics, data={"n_obs": 120})
    return out


def test_show_separates_names_from_values_and_rounds(spliced_artifact: Path, run_cli: Cli) -> None:
    """Every fact line is 'name  value' with a gap; floats have at most 6 significant digits."""
    code, out, err = run_cli("show", spliced_artifact)
    assert (code, err) == (0, "")
    lines = out.splitlines()
    facts = [ln for ln in lines if re.match(r"^  \S", ln) and ln.strip() != "diagnostics"]
    for ln in facts:
        assert re.match(r"^  [a-z][a-z ,]*[a-z] {2,}\S", ln), ln
    params = next(ln for ln in lines if ln.startswith("  parameters"))
    assert "threshold = " in params and "threshold6" not in out
    # common practice, no source: repr of a float has up to 17 digits; shown ones have <= 6
    numbers = re.findall(r"\d+\.\d+(?:e[+-]\d+)?", out.split("content hash")[0])
    assert numbers and all(len(n.split("e")[0].replace(".", "").lstrip("0")) <= 6 for n in numbers)


def test_show_prints_every_diagnostic_value_uncut(spliced_artifact: Path, run_cli: Cli) -> None:
    """Every number of every diagnostics list is printed (nothing cut at a fixed width)."""
    meta = sw.read_metadata(spliced_artifact)
    code, out, _ = run_cli("show", spliced_artifact)
    assert code == 0
    me = meta["diagnostics"]["mean_excess"]["n_exceedances"]
    line = out[out.index("n_exceedances: [") :]
    shown = line[: line.index("]") + 1]
    assert [int(v) for v in re.findall(r"\d+", shown)] == me


def test_show_lists_the_recorded_warnings(spliced_artifact: Path, run_cli: Cli) -> None:
    """The fallback tail threshold appears under 'warnings' with its kind."""
    _, out, _ = run_cli("show", spliced_artifact)
    assert "  warnings" in out
    assert re.search(r"- \[small_n\] no stable tail threshold was found", out)


def test_show_of_a_drawn_cdf_speaks_of_knots(tmp_path: Path, run_cli: Cli) -> None:
    """A drawn CDF is described by its knots, never as 'n=0 read=None'."""
    path = tmp_path / "k.parquet"
    sw.write_sampler(from_knots([0, 2, 5], [0, 0.4, 1]), path, data={"n_obs": 0, "n_knots": 3})
    code, out, _ = run_cli("show", path)
    assert code == 0
    assert "a drawn CDF of 3 knots" in out
    assert "None" not in out.split("source")[0] and "n=0" not in out


@pytest.mark.slow
def test_show_piped_into_a_reader_that_stops_ends_quietly(spliced_artifact: Path) -> None:
    """Writing to a pipe whose reader has gone (``| head``) exits 0 with nothing on stderr."""
    read_end, write_end = os.pipe()
    os.close(read_end)  # the reader is gone before anything is written: every write gets EPIPE
    proc = subprocess.run(
        [str(EXE), "show", str(spliced_artifact)],
        stdout=write_end,
        stderr=subprocess.PIPE,
        text=True,
        check=False,
    )
    os.close(write_end)
    assert (proc.returncode, proc.stderr) == (0, "")
    # and through a real `head`, the first line arrives and nothing else is said
    proc = subprocess.run(
        f"{EXE} show {spliced_artifact} | head -n 1",
        shell=True,
        capture_output=True,
        text=True,
        check=True,
    )
    assert proc.stdout.strip() == str(spliced_artifact)
    assert proc.stderr == ""


@pytest.fixture
def counts_csv(tmp_path: Path) -> Path:
    """Over-dispersed counts (a negative binomial, variance far above the mean): invented."""
    c = np.random.default_rng(2).negative_binomial(2, 0.3, 300)
    path = tmp_path / "breaks.csv"
    pd.DataFrame({"breaks": c}).to_csv(path, index=False)
    return path


def test_fit_prints_recorded_warnings_on_stderr_and_succeeds(
    tmp_path: Path, counts_csv: Path, run_cli: Cli
) -> None:
    """A poisson fitted to over-dispersed counts: exit 0, artifact written, one warning line."""
    out = tmp_path / "p.parquet"
    code, stdout, err = run_cli("fit", counts_csv, "-c", "breaks", "-m", "poisson", "--out", out)
    assert code == 0 and out.is_file()
    lines = err.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith("samplewright: warning: [poor_fit] the counts are over-dispersed")
    assert "warning" not in stdout
    # the same fit as a negative binomial records no such warning
    code, _, err = run_cli(
        "fit", counts_csv, "-c", "breaks", "-m", "negative_binomial", "--out", tmp_path / "nb.pq"
    )
    assert code == 0 and "warning" not in err


def test_fit_warns_about_a_fallback_tail_threshold(tmp_path: Path, run_cli: Cli) -> None:
    """A spliced fit whose threshold fell back says so, naming the points the tail rests on."""
    data = tmp_path / "h.csv"
    x = np.random.default_rng(5).gamma(2.0, 3.0, 120)
    pd.DataFrame({"h": x}).to_csv(data, index=False)
    code, _, err = run_cli("fit", data, "-c", "h", "-m", "spliced", "--out", tmp_path / "s.pq")
    assert code == 0
    assert re.search(r"warning: \[small_n\] no stable tail threshold .* rests on \d+ points", err)


def test_fit_help_lists_every_method_and_its_options(capsys: pytest.CaptureFixture[str]) -> None:
    """`fit --help` shows each catalog method with its summary and each option's summary."""
    with pytest.raises(SystemExit) as info:
        main(["fit", "--help"])
    assert info.value.code == 0
    text = " ".join(capsys.readouterr().out.split())
    for name in METHODS:
        spec = CATALOG[name]
        assert f"{name} {' '.join(spec.summary.split())}" in text, name
        for opt in spec.options:
            assert f"{opt.name}: {' '.join(opt.summary.split())}" in text, (name, opt.name)


def test_fit_usage_shows_the_column_as_required(capsys: pytest.CaptureFixture[str]) -> None:
    """The usage line names --column without brackets (required for a data file)."""
    with pytest.raises(SystemExit):
        main(["fit", "--help"])
    usage = capsys.readouterr().out.split("\n\n")[0]
    assert "(--column COLUMN | --lower COLUMN --upper COLUMN)" in usage
    assert "[--column" not in usage


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["-m", "gama"], "unknown method 'gama'; did you mean 'gamma'?"),
        (["-m", "lognorml"], "did you mean 'lognormal'?"),
        (["-m", "weibul"], "did you mean 'weibull'?"),
        (["-m", "gamma", "-o", "lco=free"], "gamma has no option 'lco'; did you mean 'loc'?"),
    ],
)
def test_a_typo_gets_the_nearest_name_not_the_whole_list(
    tmp_path: Path, counts_csv: Path, run_cli: Cli, args: list[str], message: str
) -> None:
    """An unknown method or option is refused with the nearest name, in one line."""
    code, _, err = run_cli("fit", counts_csv, "-c", "breaks", *args, "--out", tmp_path / "x.pq")
    assert code == 2
    assert message in err and len(err.strip().splitlines()) == 1
    assert "negative_binomial, normal" not in err  # not the whole list


def test_show_json_stays_exact(spliced_artifact: Path, run_cli: Cli) -> None:
    """`show --json` prints the stored metadata exactly (no rounding there)."""
    _, out, _ = run_cli("show", spliced_artifact, "--json")
    assert json.loads(out) == sw.read_metadata(spliced_artifact)
