"""The command line on incomplete data: truncation columns and points, interval rows, table
snapshots (fit --truncation / --lower --upper, snapshot-table)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import lifelines.datasets as ld
import numpy as np
import pandas as pd
import pytest
from lifelines import WeibullFitter

from samplewright.pipeline.table_data import read_roles, table_snapshot_info
from samplewright.store.artifacts import load_sampler, read_metadata

Cli = Callable[..., tuple[int, str, str]]


@pytest.fixture
def aids_csv(tmp_path: Path) -> Path:
    """lifelines' multicenter AIDS cohort: entry W (delayed entry), time T, D = 1 death."""
    df = ld.load_multicenter_aids_cohort_study()
    out = tmp_path / "aids.csv"
    df.assign(C=1 - df["D"]).to_csv(out, index=False)
    return out


@pytest.fixture
def diabetes_csv(tmp_path: Path) -> Path:
    """lifelines' diabetes data: interval-censored ages (left == right: observed exactly)."""
    out = tmp_path / "diabetes.csv"
    ld.load_diabetes().to_csv(out, index=False)
    return out


def test_truncation_column_and_censoring_match_lifelines(
    tmp_path: Path, aids_csv: Path, run_cli: Cli
) -> None:
    """fit --truncation W --censor C gives lifelines' Weibull fit with entry=W."""
    out = tmp_path / "w.parquet"
    code, stdout, err = run_cli(
        "fit", aids_csv, "-c", "T", "--truncation", "W", "--censor", "C", "-m", "weibull",
        "--out", out,
    )  # fmt: skip
    assert code == 0, err
    df = ld.load_multicenter_aids_cohort_study()
    ref = WeibullFitter().fit(df["T"], df["D"], entry=df["W"])
    s = load_sampler(out)
    # source: lifelines 0.30 WeibullFitter.fit(..., entry=) on its bundled AIDS cohort;
    # S(t) = exp(-(t / lambda_)^rho_), so scale = lambda_, shape = rho_
    assert s.params["scale"] == pytest.approx(ref.lambda_, rel=1e-3)
    assert s.params["shape"] == pytest.approx(ref.rho_, rel=1e-3)
    assert s.loglik == pytest.approx(ref.log_likelihood_, abs=1e-3)
    meta = read_metadata(out)
    assert meta["data"]["truncated"] and meta["data"]["censored"] == int((df["D"] == 0).sum())
    assert meta["provenance"]["columns"] == {"value": "T", "truncation": "W", "censor": "C"}


def test_interval_rows_match_lifelines(tmp_path: Path, diabetes_csv: Path, run_cli: Cli) -> None:
    """fit --lower left --upper right gives lifelines' interval-censored Weibull fit."""
    out = tmp_path / "w.parquet"
    code, _, err = run_cli(
        "fit", diabetes_csv, "--lower", "left", "--upper", "right", "-m", "weibull", "--out", out
    )
    assert code == 0, err
    df = ld.load_diabetes()
    ref = WeibullFitter().fit_interval_censoring(df["left"], df["right"])
    s = load_sampler(out)
    # source: lifelines 0.30 WeibullFitter.fit_interval_censoring on its bundled diabetes data
    assert s.params["scale"] == pytest.approx(ref.lambda_, rel=1e-3)
    assert s.params["shape"] == pytest.approx(ref.rho_, rel=1e-3)


def test_a_truncation_point_for_every_row_is_memoryless_for_exponential(
    tmp_path: Path, run_cli: Cli
) -> None:
    """With one deductible d, the exponential MLE scale is the mean excess over d."""
    x = np.array([1.4, 2.9, 0.7, 5.2, 3.3, 1.1, 8.0, 2.2])  # invented losses above 0.5
    f = tmp_path / "x.csv"
    pd.DataFrame({"x": x}).to_csv(f, index=False)
    out = tmp_path / "e.parquet"
    code, _, err = run_cli("fit", f, "-c", "x", "--truncation", "0.5", "-m", "exponential",
                           "--out", out)  # fmt: skip
    assert code == 0, err
    # source: the exponential is memoryless, so the excess over a deductible is exponential with
    # the same scale; its MLE is the mean excess (Klugman, Panjer & Willmot, Loss Models; from
    # memory)
    assert load_sampler(out).params["scale"] == pytest.approx(np.mean(x - 0.5), rel=1e-6)
    assert read_metadata(out)["provenance"]["truncation"] == 0.5


def test_grouped_counts_give_the_bin_shares(tmp_path: Path, run_cli: Cli) -> None:
    """Disjoint bins with counts (grouped data): Turnbull's CDF at each upper edge is the
    cumulative share of the counts; a bin with count 0 is allowed."""
    f = tmp_path / "bins.csv"
    pd.DataFrame({"lo": [0, 10, 20, 40, 60], "hi": [10, 20, 40, 60, 90],
                  "n": [12, 9, 6, 0, 3]}).to_csv(f, index=False)  # fmt: skip
    out = tmp_path / "t.parquet"
    code, _, err = run_cli("fit", f, "--lower", "lo", "--upper", "hi", "--weights", "n",
                           "-m", "turnbull", "--out", out)  # fmt: skip
    assert code == 0, err
    s = load_sampler(out)
    # source: for disjoint intervals the nonparametric MLE gives each interval its share of the
    # counts (Turnbull 1976); the ogive spreads it uniformly inside (common practice)
    np.testing.assert_allclose(s.cdf([10.0, 20.0, 40.0, 60.0, 90.0]), [0.4, 0.7, 0.9, 0.9, 1.0])
    assert s.cdf(15.0) == pytest.approx(0.55)


def test_a_table_snapshot_fits_like_its_source(
    tmp_path: Path, aids_csv: Path, run_cli: Cli
) -> None:
    """snapshot-table keeps the roles' columns; fitting the snapshot gives the content hash of
    fitting the file, and the snapshot records the source and the fingerprint."""
    snap, direct, via = tmp_path / "s.parquet", tmp_path / "a.parquet", tmp_path / "b.parquet"
    roles = ["-c", "T", "--truncation", "W", "--censor", "C"]
    code, stdout, err = run_cli("snapshot-table", aids_csv, *roles, "--out", snap)
    assert code == 0, err
    info = table_snapshot_info(snap)
    assert info is not None and info["source"] == str(aids_csv) and info["kind"] == "roles"
    fp = read_roles(aids_csv, {"value": "T", "truncation": "W", "censor": "C"}).fingerprint
    assert info["fingerprint"] == fp and stdout.strip().endswith(fp[:16])
    for src, out in ((aids_csv, direct), (snap, via)):
        code, _, err = run_cli("fit", src, *roles, "-m", "lognormal", "--out", out)
        assert code == 0, err
    assert read_metadata(direct)["content_hash"] == read_metadata(via)["content_hash"]
    code, _, err = run_cli("snapshot-table", aids_csv, *roles, "--expect-fingerprint", "00" * 8,
                           "--out", tmp_path / "x.parquet")  # fmt: skip
    assert code == 2 and "changed after the workflow was planned" in err
    assert not (tmp_path / "x.parquet").exists()


@pytest.mark.parametrize(
    ("table", "args", "message"),
    [
        (
            {"x": [1.0, 2.0, 3.0], "t": [0.5, None, 0.5]},
            ["-c", "x", "--truncation", "t"],
            "column 't' in d.csv has 1 empty cell (first at row 2); write inf or -inf",
        ),
        (
            {"lo": [1.0, 2.0], "hi": [2.0, 3.0]},
            ["--lower", "lo"],
            "--lower/--upper: interval rows need both columns",
        ),
        (
            {"lo": [1.0, 2.0], "hi": [2.0, 3.0]},
            ["--lower", "lo", "--upper", "hi", "-c", "lo"],
            "--column: interval rows (--lower, --upper) take no --column",
        ),
        (
            {"lo": [1.0, 2.0], "hi": [2.0, 3.0], "c": [0, 1]},
            ["--lower", "lo", "--upper", "hi", "--censor", "c"],
            "--censor: interval rows (--lower, --upper) take no --censor",
        ),
        (
            {"lo": [1.0, 2.0], "hi": [2.0, 3.0], "n": [3, -1]},
            ["--lower", "lo", "--upper", "hi", "--weights", "n"],
            "weight column 'n' in d.csv has 1 weight that are missing, infinite or < 0",
        ),
        (
            {"x": [1.0, 2.0, 3.0], "t": [0.5, 0.5, 3.5]},
            ["-c", "x", "--truncation", "t"],
            "column 'x' in ",
        ),
        (
            {"x": [1.0, 2.0, 3.0], "t": [0.5, 0.5, 0.5]},
            ["-c", "x", "--truncation", "dd"],
            "d.csv: no column 'dd'",
        ),
    ],
)
def test_bad_incomplete_input_is_one_line_exit_2(
    tmp_path: Path, run_cli: Cli, table: dict, args: list[str], message: str
) -> None:
    """Each bad use exits 2 with one error line naming the column or option; nothing written."""
    f = tmp_path / "d.csv"
    pd.DataFrame(table).to_csv(f, index=False)
    out = tmp_path / "o.parquet"
    code, _, err = run_cli("fit", f, *args, "-m", "weibull", "--out", out)
    assert code == 2
    assert err.count("\n") == 1 and message in err, err
    assert not out.exists()
