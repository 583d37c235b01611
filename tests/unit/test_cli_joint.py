"""The command line for joint inputs and quasi-random draws (fit-joint, draw --sequence)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
from scipy import stats

from samplewright.core.randomness import stream_rng
from samplewright.store.artifacts import load_sampler, read_metadata

Cli = Callable[..., tuple[int, str, str]]


@pytest.fixture
def repairs_csv(tmp_path: Path) -> Path:
    """Invented repair hours and crew-hour costs that move together, plus a deductible column."""
    rng = np.random.default_rng(21)
    z = rng.multivariate_normal([0.0, 0.0], [[1.0, 0.7], [0.7, 1.0]], 400)
    f = tmp_path / "repairs.csv"
    pd.DataFrame(
        {"hours": np.exp(1.0 + 0.5 * z[:, 0]), "cost": 80.0 + 10.0 * z[:, 1], "site": "a"}
    ).to_csv(f, index=False)
    return f


def test_given_rank_correlation_is_reached_by_the_draws(
    tmp_path: Path, repairs_csv: Path, run_cli: Cli
) -> None:
    """fit-joint with an analyst's Spearman 0.3: draws through `draw` keep each marginal and
    reach that rank correlation; the file has one column per input."""
    art, out = tmp_path / "j.parquet", tmp_path / "d.parquet"
    code, stdout, err = run_cli(
        "fit-joint", repairs_csv, "--columns", "hours,cost", "--marginal", "hours=lognormal",
        "--marginal", "cost=normal", "--rank-correlation", "[[1, 0.3], [0.3, 1]]",
        "--seed", "4", "--out", art,
    )  # fmt: skip
    assert (code, err) == (0, "")
    assert stdout.splitlines()[-1] == f"{art}: coupling rank_correlation; Spearman 0.3"
    s = load_sampler(art)
    assert s.diagnostics["achieved"]["n_draws"] == 4096  # the check draws of --seed
    code, _, err = run_cli("draw", art, "-n", "20000", "--seed", "9", "--out", out)
    assert code == 0, err
    table = pq.read_table(out)
    assert table.column_names == ["hours", "cost"]
    hours, cost = (table.column(c).to_numpy() for c in ("hours", "cost"))
    # source: scipy.stats.spearmanr; Iman & Conover (1982) reorder to the target rank correlation
    assert stats.spearmanr(hours, cost).statistic == pytest.approx(0.3, abs=0.03)
    # source: scipy.stats.kstest against the fitted marginal's own CDF
    assert stats.kstest(hours, s.marginal("hours").cdf).pvalue > 0.001
    direct = s.draw(20000, rng=stream_rng(9, "draws"))
    np.testing.assert_array_equal(np.column_stack([hours, cost]), direct)


def test_rows_coupling_resamples_observed_pairs(
    tmp_path: Path, repairs_csv: Path, run_cli: Cli
) -> None:
    """coupling rows draws only observed (hours, cost) pairs, written as CSV columns."""
    art, out = tmp_path / "r.parquet", tmp_path / "d.csv"
    code, _, err = run_cli("fit-joint", repairs_csv, "--columns", "hours,cost",
                           "--coupling", "rows", "--out", art)  # fmt: skip
    assert code == 0, err
    code, _, err = run_cli("draw", art, "-n", "300", "--seed", "1", "--out", out)
    assert code == 0, err
    data = pd.read_csv(repairs_csv, float_precision="round_trip")
    drawn = pd.read_csv(out, float_precision="round_trip")
    observed = set(zip(data["hours"], data["cost"], strict=True))
    assert list(drawn.columns) == ["hours", "cost"]
    assert set(zip(drawn["hours"], drawn["cost"], strict=True)) <= observed


def test_an_invalid_matrix_is_repaired_with_a_note(
    tmp_path: Path, repairs_csv: Path, run_cli: Cli
) -> None:
    """A matrix that is not positive semi-definite is repaired; the command says how far."""
    f = tmp_path / "three.csv"
    data = pd.read_csv(repairs_csv)
    data.assign(extra=data["hours"] * 0.5 + data["cost"]).to_csv(f, index=False)
    matrix = "[[1, 0.9, -0.9], [0.9, 1, 0.9], [-0.9, 0.9, 1]]"
    art = tmp_path / "j.parquet"
    code, stdout, err = run_cli("fit-joint", f, "--columns", "hours,cost,extra",
                                "--rank-correlation", matrix, "--out", art)  # fmt: skip
    assert code == 0
    assert err.startswith("samplewright: note: rank_correlation: not positive semi-definite")
    assert "matrix repaired by" in stdout
    target = np.array(load_sampler(art).params["rank_correlation"])
    # source: numpy.linalg.eigvalsh; a valid correlation matrix has no negative eigenvalue
    assert np.linalg.eigvalsh(target).min() > -1e-10


def test_sobol_draws_fill_every_stratum(tmp_path: Path, run_cli: Cli) -> None:
    """draw --sequence sobol at n = 2^10 puts one draw in each 1/n stratum of the CDF, so the
    empirical CDF is within 1/n of the sampler's; the draws record the sequence."""
    art, out = tmp_path / "t.parquet", tmp_path / "d.parquet"
    assert run_cli("elicit", "--three-points", "40,55,90", "--out", art)[0] == 0
    code, _, err = run_cli("draw", art, "-n", "1024", "--seed", "3", "--sequence", "sobol",
                           "--out", out)  # fmt: skip
    assert (code, err) == (0, "")
    values = pq.read_table(out).column("value").to_numpy()
    s = load_sampler(art)
    # source: a scrambled Sobol' set of 2^m points in one dimension is a (0, m, 1)-net: exactly
    # one point per interval [k/n, (k+1)/n) (Owen 1995); scipy.stats.kstest gives sup|F_n - F|
    assert stats.kstest(values, s.cdf).statistic <= 1 / 1024 + 1e-12
    u = np.sort(s.cdf(values))
    np.testing.assert_array_equal(np.floor(u * 1024), np.arange(1024))
    record = pq.read_metadata(out).metadata[b"samplewright-draws"]
    assert b'"sequence": "sobol"' in record


def test_a_sobol_size_off_a_power_of_two_is_a_note(tmp_path: Path, run_cli: Cli) -> None:
    """A Sobol' size that is not a power of two still draws, with one note line on stderr."""
    art, out = tmp_path / "t.parquet", tmp_path / "d.parquet"
    assert run_cli("elicit", "--three-points", "1,2,5", "--out", art)[0] == 0
    code, _, err = run_cli("draw", art, "-n", "1000", "--seed", "3", "--sequence", "sobol",
                           "--out", out)  # fmt: skip
    assert code == 0 and err.count("\n") == 1
    assert err.startswith("samplewright: note: sequence='sobol': size 1000 is not a power of two")


def test_plain_draws_are_unchanged_by_sequences(tmp_path: Path, run_cli: Cli) -> None:
    """Without --sequence (or with random) draws are the sampler's native draws of the stream
    and the draws record carries no sequence field, as before sequences existed."""
    art, a, b = tmp_path / "t.parquet", tmp_path / "a.parquet", tmp_path / "b.parquet"
    assert run_cli("elicit", "--three-points", "1,2,5", "--family", "triangular",
                   "--out", art)[0] == 0  # fmt: skip
    assert run_cli("draw", art, "-n", "500", "--seed", "8", "--out", a)[0] == 0
    assert run_cli("draw", art, "-n", "500", "--seed", "8", "--sequence", "random",
                   "--out", b)[0] == 0  # fmt: skip
    values = pq.read_table(a).column("value").to_numpy()
    np.testing.assert_array_equal(values, pq.read_table(b).column("value").to_numpy())
    np.testing.assert_array_equal(values, load_sampler(art).draw(500, rng=stream_rng(8, "draws")))
    assert b"sequence" not in pq.read_metadata(a).metadata[b"samplewright-draws"]


def test_joint_artifact_records_where_it_came_from(
    tmp_path: Path, repairs_csv: Path, run_cli: Cli
) -> None:
    """The artifact's data and provenance sections name the columns, rows and methods."""
    art = tmp_path / "j.parquet"
    code, _, err = run_cli(
        "fit-joint", repairs_csv, "--columns", "cost,hours", "--marginal", "hours=gamma",
        "--marginal-option", "hours:loc=0", "--coupling", "gaussian_copula", "--out", art,
    )  # fmt: skip
    assert code == 0, err
    meta = read_metadata(art)
    assert meta["data"]["columns"] == ["cost", "hours"] and meta["data"]["n_obs"] == 400
    assert meta["provenance"]["marginals"] == {
        "cost": "empirical",
        "hours": {"method": "gamma", "loc": 0},
    }
    assert load_sampler(art).columns == ("cost", "hours")


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--columns", "hours"], "--columns: expected two or more distinct column names"),
        (["--columns", "hours,cost", "--marginal", "site=gamma"],
         "--marginal: column 'site' is not one of --columns ['hours', 'cost']"),
        (["--columns", "hours,cost", "--marginal", "hours"], "--marginal: expected COLUMN=..."),
        (["--columns", "hours,cost", "--rank-correlation", "[[1, 0.5], [0.5"],
         "--rank-correlation: not valid JSON"),
        (["--columns", "hours,cost", "--coupling", "rows", "--marginal", "hours=gamma"],
         "marginals: coupling 'rows' resamples whole rows"),
        (["--columns", "hours,cost", "--stream", "x"], "--stream: names a stream under --seed"),
        (["--columns", "hours,wage"], "no column 'wage'"),
        (["--columns", "hours,cost", "--coupling", "vine"], "argument --coupling: invalid choice"),
    ],
)  # fmt: skip
def test_bad_joint_input_is_one_line_exit_2(
    tmp_path: Path, repairs_csv: Path, run_cli: Cli, args: list[str], message: str
) -> None:
    """Each bad fit-joint command line exits 2 with one error line; nothing is written."""
    out = tmp_path / "j.parquet"
    code, _, err = run_cli("fit-joint", repairs_csv, *args, "--out", out)
    assert code == 2
    assert err.count("\n") == 1 and message in err, err
    assert not out.exists()


def test_bad_draw_sequence_is_a_usage_error(tmp_path: Path, run_cli: Cli) -> None:
    """An unknown --sequence is refused by the parser in one line."""
    art = tmp_path / "t.parquet"
    assert run_cli("elicit", "--three-points", "1,2,5", "--out", art)[0] == 0
    code, _, err = run_cli("draw", art, "-n", "8", "--seed", "1", "--sequence", "qmc",
                           "--out", tmp_path / "d.parquet")  # fmt: skip
    assert code == 2 and err.count("\n") == 1 and "invalid choice: 'qmc'" in err
