"""Unit tests for joint inputs: samplewright.distributions.joint and samplewright.fitting.joint."""

from __future__ import annotations

import functools
import math
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import samplewright as sw
from samplewright.core.errors import InputDataError, MethodError
from samplewright.core.uniforms import draw_uniforms
from samplewright.distributions.joint import JointSampler, spearman_matrix
from samplewright.fitting.copulas import gaussian_copula_uniforms, t_copula_uniforms
from samplewright.fitting.joint import fit_joint
from samplewright.intake.tables import read_table
from samplewright.store.artifacts import load_sampler, write_sampler

R3 = np.array([[1.0, 0.6, -0.3], [0.6, 1.0, 0.2], [-0.3, 0.2, 1.0]])  # invented, PD
COUPLINGS = ("rows", "rank_correlation", "gaussian_copula", "t_copula")


def _data(n: int = 600, seed: int = 11) -> dict[str, np.ndarray]:
    """Invented repair data: hours, crew-hour cost (dependent on hours) and parts cost."""
    rng = np.random.default_rng(seed)
    z = rng.multivariate_normal(np.zeros(3), R3, size=n)
    return {
        "hours": np.exp(1.0 + 0.5 * z[:, 0]),
        "cost": 50.0 + 10.0 * stats.gamma.ppf(stats.norm.cdf(z[:, 1]), 3.0),
        "parts": np.round(100.0 * np.exp(0.4 * z[:, 2]), 0),
    }


@functools.cache
def _marginals() -> tuple[sw.Sampler, ...]:
    """Three fitted marginals of the invented data: a family, a spliced tail, an empirical.

    Cached: samplers hold no randomness and these tests never change them.
    """
    data = _data()
    return (
        sw.fit(data["hours"], "lognormal"),
        sw.fit(data["cost"], "spliced", threshold_quantile=0.85),
        sw.fit(data["parts"], "empirical"),
    )


def _sampler(coupling: str) -> JointSampler:
    """A joint sampler of each coupling over the three invented columns."""
    names = ["hours", "cost", "parts"]
    if coupling == "rows":
        data = _data()
        return JointSampler(names, coupling="rows", rows=np.column_stack(list(data.values())))
    if coupling == "rank_correlation":
        return JointSampler(
            names, coupling="rank_correlation", marginals=_marginals(), rank_correlation=R3
        )
    if coupling == "gaussian_copula":
        return JointSampler(
            names, coupling="gaussian_copula", marginals=_marginals(), correlation=R3
        )
    return JointSampler(names, coupling="t_copula", marginals=_marginals(), correlation=R3, df=4.0)


@pytest.mark.parametrize("coupling", COUPLINGS)
def test_joint_draws_keep_each_marginal(coupling: str) -> None:
    """Each column of joint draws passes a two-sample KS test against its marginal's own draws."""
    s = _sampler(coupling)
    x = s.draw(8000, rng=1)
    assert x.shape == (8000, 3)
    for j, name in enumerate(s.columns):
        alone = s.marginal(name).draw(8000, rng=2)
        # common practice, no source: identical distributions give p < 0.001 once in 1000
        assert stats.ks_2samp(x[:, j], alone).pvalue > 0.001, name


def test_rank_correlation_draws_reach_the_target_spearman() -> None:
    """Iman-Conover draws have Spearman correlations within 0.01 of the 3x3 target.

    Measured when written: largest gap 0.0004 (the method fixes the score correlation exactly,
    so the gap is far below Spearman's sampling error of about 0.006 at this n).
    """
    x = _sampler("rank_correlation").draw(20_000, rng=3)
    # common practice, no source: tolerance 0.01, well above the measured gap
    np.testing.assert_allclose(spearman_matrix(x), R3, atol=0.01)


@pytest.mark.parametrize("coupling", ["gaussian_copula", "t_copula"])
def test_copula_draws_reach_kendalls_tau_of_the_correlation(coupling: str) -> None:
    """Kendall's tau of elliptical-copula draws is (2 / pi) asin(r) within 0.02."""
    x = _sampler(coupling).draw(6000, rng=4)
    for i, j in [(0, 1), (0, 2), (1, 2)]:
        tau = stats.kendalltau(x[:, i], x[:, j]).statistic
        # source: tau = (2/pi) arcsin(r) for every elliptical copula (Lindskog, McNeil &
        # Schmock 2003); ties in the empirical column lower tau-b by under 0.01 here
        assert tau == pytest.approx(2.0 / math.pi * math.asin(R3[i, j]), abs=0.02)


def test_gaussian_rank_correlation_attribute_is_pearsons_relation() -> None:
    """A Gaussian copula's rank_correlation is (6 / pi) asin(r / 2); a t copula has none."""
    expected = 6.0 / math.pi * np.arcsin(R3 / 2.0)  # source: Pearson 1907, bivariate normal
    np.fill_diagonal(expected, 1.0)
    np.testing.assert_allclose(_sampler("gaussian_copula").rank_correlation, expected)
    assert _sampler("t_copula").rank_correlation is None


@pytest.mark.parametrize("sequence", ["random", "sobol", "latin_hypercube"])
def test_rows_coupling_never_draws_a_row_not_in_the_data(sequence: str) -> None:
    """Every drawn row is one of the observed rows, whatever the uniform source."""
    s = _sampler("rows")
    seen = {tuple(r) for r in np.asarray(s.rows)}
    drawn = s.draw(4096, rng=5, sequence=sequence)  # type: ignore[arg-type]
    assert {tuple(r) for r in drawn} <= seen


def test_rows_coupling_latin_hypercube_draws_each_row_equally_often() -> None:
    """With n draws per row, Latin hypercube rows are each drawn exactly n times."""
    s = JointSampler(["a", "b"], coupling="rows", rows=[[1.0, 2.0], [3.0, 4.0], [5.0, 9.0]])
    x = s.draw(300, rng=6, sequence="latin_hypercube")
    assert sorted(np.unique(x[:, 0], return_counts=True)[1].tolist()) == [100, 100, 100]


@pytest.mark.parametrize("coupling", COUPLINGS)
def test_payload_round_trip_gives_identical_draws(coupling: str) -> None:
    """from_payload(payload(), describe()) rebuilds the same sampler: same draws, same tables."""
    s = _sampler(coupling)
    again = JointSampler.from_payload(s.payload(), {"kind": "joint", **s.describe()})
    for sequence in ("random", "sobol"):
        np.testing.assert_array_equal(
            again.draw(512, rng=7, sequence=sequence),  # type: ignore[arg-type]
            s.draw(512, rng=7, sequence=sequence),  # type: ignore[arg-type]
        )
    assert again.describe() == s.describe()
    assert list(again.payload()) == list(s.payload())
    for name, col in s.payload().items():
        np.testing.assert_array_equal(again.payload()[name], col)


def test_payload_pads_marginals_with_nan_under_prefixes() -> None:
    """Marginal payload columns are prefixed m<i>: and padded with NaN to one length."""
    s = _sampler("rank_correlation")
    payload = s.payload()
    assert set(payload) == {"m1:value", "m2:value"}  # the lognormal has no payload
    lengths = {len(c) for c in payload.values()}
    assert len(lengths) == 1
    n_spliced = s.describe()["marginals"][1]["payload_rows"]
    assert n_spliced < 600 and np.isnan(payload["m1:value"][n_spliced:]).all()


@pytest.mark.parametrize("coupling", COUPLINGS)
def test_artifact_round_trip_through_the_store(coupling: str, tmp_path: Path) -> None:
    """write_sampler then load_sampler gives a verified joint sampler with the same draws."""
    s = _sampler(coupling)
    write_sampler(s, tmp_path / "joint.parquet")  # type: ignore[arg-type]
    loaded = load_sampler(tmp_path / "joint.parquet")
    assert isinstance(loaded, JointSampler)
    assert loaded.metadata["sampler"]["params"]["coupling"] == coupling
    np.testing.assert_array_equal(loaded.draw(300, rng=8), s.draw(300, rng=8))


@pytest.mark.parametrize(("coupling", "extra"), [("gaussian_copula", 0), ("t_copula", 1)])
def test_sobol_uniforms_have_one_coordinate_per_column(coupling: str, extra: int) -> None:
    """A copula draw with sequence='sobol' uses d (t: d + 1) Sobol' coordinates from the stream."""
    s = _sampler(coupling)
    x = s.draw(1024, rng=9, sequence="sobol")
    u = draw_uniforms(1024, rng=9, sequence="sobol", dimension=3 + extra)
    if coupling == "gaussian_copula":
        v = gaussian_copula_uniforms(R3, u)
    else:
        v = t_copula_uniforms(R3, 4.0, u)
    expected = np.column_stack([m.quantile(v[:, j]) for j, m in enumerate(s.marginals)])
    np.testing.assert_array_equal(x, expected)
    assert s.uniform_dimension == 3 + extra


def test_sobol_size_not_a_power_of_two_warns() -> None:
    """A Sobol' joint draw of 1000 points warns, naming the nearest powers of two."""
    with pytest.warns(UserWarning, match="not a power of two.*512 and 1024"):
        _sampler("rank_correlation").draw(1000, rng=10, sequence="sobol")


def test_sobol_joint_draws_estimate_a_mean_better_than_random() -> None:
    """Over 16 scramblings, Sobol' RMSE of E[X + Y] is at least 5x below plain Monte Carlo's.

    Measured when written (2**12 points, Gaussian copula r = 0.5, normal and lognormal marginals):
    RMSE 0.00092 (Sobol') vs 0.052 (random), a ratio of 57; the assertion leaves a wide margin.
    """
    s = JointSampler(
        ["a", "b"],
        coupling="gaussian_copula",
        marginals=[sw.fit([0.0, 1.0, 3.0], "normal"), sw.fit([1.0, 2.0, 5.0], "lognormal")],
        correlation=[[1.0, 0.5], [0.5, 1.0]],
    )
    exact = s.marginals[0].mean + s.marginals[1].mean  # source: linearity of expectation

    def rmse(sequence: str) -> float:
        streams = np.random.default_rng(12).spawn(16)
        means = [s.draw(2**12, rng=g, sequence=sequence).sum(axis=1).mean() for g in streams]  # type: ignore[arg-type]
        return float(np.sqrt(np.mean((np.array(means) - exact) ** 2)))

    assert rmse("random") / rmse("sobol") >= 5.0


def test_dependence_makes_the_tail_of_a_sum_heavier() -> None:
    """The 99.5% quantile of a sum is higher with rank correlation 0.8 than with independence."""
    m = _marginals()[:2]
    dep = JointSampler(
        ["h", "c"],
        coupling="rank_correlation",
        marginals=m,
        rank_correlation=[[1.0, 0.8], [0.8, 1.0]],
    )
    ind = JointSampler(
        ["h", "c"], coupling="rank_correlation", marginals=m, rank_correlation=np.eye(2)
    )
    scale = np.array([40.0, 1.0])  # hours priced at 40 per hour (invented)
    q_dep = np.quantile(dep.draw(50_000, rng=13) @ scale, 0.995)
    q_ind = np.quantile(ind.draw(50_000, rng=13) @ scale, 0.995)
    # common practice, no source: positive dependence fattens the tail of a sum
    assert q_dep > 1.03 * q_ind


def test_fit_joint_estimates_the_data_spearman_and_records_rows() -> None:
    """fit_joint aims at the data's Spearman matrix and records the rows it used."""
    data = _data()
    s = fit_joint(data, {"hours": "lognormal", "cost": {"method": "gamma"}, "parts": "empirical"})
    x = np.column_stack(list(data.values()))
    # source: scipy.stats.spearmanr of the same rows
    np.testing.assert_allclose(s.rank_correlation, stats.spearmanr(x).statistic, atol=1e-12)
    assert s.diagnostics["rows"] == {"n_used": 600, "n_read": None, "dropped": {}}
    assert s.marginal("cost").method == "gamma"


def test_fit_joint_drops_incomplete_rows_and_counts_them() -> None:
    """A NaN or None in any chosen column drops the whole row, counted as missing."""
    data = {k: v.astype(object) for k, v in _data(50).items()}
    data["hours"][3] = None
    data["cost"][7] = np.nan
    data["cost"][3] = np.nan  # same row as above: counted once
    s = fit_joint(data, {"hours": {"method": "empirical"}, "cost": "empirical"}, coupling="rows")
    assert s.diagnostics["rows"]["dropped"] == {"missing": 2}
    assert np.asarray(s.rows).shape == (48, 2)


def test_fit_joint_reads_a_dataframe_with_pandas_missing_values() -> None:
    """A DataFrame's NA drops its row; unchosen columns are ignored."""
    df = pd.DataFrame(_data(40))
    df["hours"] = df["hours"].astype("Float64")
    df.loc[5, "hours"] = pd.NA
    df["note"] = "text"
    s = fit_joint(df, {"hours": "lognormal", "parts": "empirical"}, coupling="gaussian_copula")
    assert s.diagnostics["rows"]["n_used"] == 39
    assert s.columns == ("hours", "parts")


def test_fit_joint_reads_a_2d_array_with_column_names() -> None:
    """A 2-D array needs columns=; the default marginals are every column's empirical one."""
    x = np.column_stack(list(_data(80).values()))
    s = fit_joint(x, columns=["h", "c", "p"])
    assert s.columns == ("h", "c", "p")
    assert [m.method for m in s.marginals] == ["empirical"] * 3


def test_fit_joint_repairs_a_given_matrix_and_says_how_far() -> None:
    """A given rank correlation that is not PSD is repaired, with the distance in the warning."""
    bad = [[1.0, 0.9, -0.9], [0.9, 1.0, 0.9], [-0.9, 0.9, 1.0]]  # invented, not PSD
    with pytest.warns(UserWarning, match=r"nearest reachable rank correlation, Frobenius distance"):
        s = fit_joint(_data(), rank_correlation=bad)
    distance = s.diagnostics["coupling"]["repair_distance"]
    target = np.asarray(s.rank_correlation)
    assert distance == pytest.approx(float(np.linalg.norm(target - np.array(bad))))
    assert 0.1 < distance < 2.0
    assert np.linalg.eigvalsh(2.0 * np.sin(np.pi * target / 6.0))[0] > -1e-10
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the repaired target draws without another warning
        s.draw(1000, rng=14)


def test_fit_joint_gaussian_copula_from_a_given_spearman_matrix() -> None:
    """A given Spearman matrix sets a Gaussian copula's correlation to 2 sin(pi rho / 6)."""
    s = fit_joint(_data(), coupling="gaussian_copula", rank_correlation=R3)
    expected = 2.0 * np.sin(np.pi * R3 / 6.0)  # source: Pearson 1907, inverted
    np.fill_diagonal(expected, 1.0)
    np.testing.assert_allclose(np.asarray(s.correlation), expected, atol=1e-15)
    assert s.diagnostics["coupling"]["estimated_from"] == "given"


def test_fit_joint_takes_a_sampler_as_a_marginal() -> None:
    """A sampler given for a column (user-drawn knots) is used as it is."""
    knots = sw.from_knots([0.0, 2.0, 10.0], [0.0, 0.8, 1.0])
    s = fit_joint(_data(), {"hours": knots, "cost": "gamma"})
    assert s.marginal("hours") is knots
    assert float(s.draw(2000, rng=15)[:, 0].max()) <= 10.0


def test_fit_joint_records_the_achieved_rank_correlation_with_rng() -> None:
    """With rng, the diagnostics hold the Spearman matrix of 4096 check draws, near the target."""
    s = fit_joint(_data(), {"hours": "lognormal", "parts": "empirical"}, rng=16)
    achieved = s.diagnostics["achieved"]
    assert achieved["n_draws"] == 4096
    assert achieved["largest_gap"] < 0.05
    assert (
        "achieved"
        not in fit_joint(_data(), {"hours": "lognormal", "parts": "empirical"}).diagnostics
    )


def test_fit_joint_t_copula_on_tail_dependent_data() -> None:
    """A t copula fitted to t-dependent rows has df near the generating 3."""
    z = stats.multivariate_t(shape=[[1.0, 0.6], [0.6, 1.0]], df=3).rvs(size=3000, random_state=17)
    s = fit_joint(
        {"a": np.exp(z[:, 0]), "b": z[:, 1]},
        {"a": "lognormal", "b": "empirical"},
        coupling="t_copula",
    )
    assert s.df is not None and 2.0 < s.df < 5.0  # generated with df = 3 (invented)
    assert s.diagnostics["coupling"]["log_likelihood"] > 0.0


def test_same_seed_same_draws() -> None:
    """Draws depend only on the sampler and the seed."""
    s = _sampler("t_copula")
    np.testing.assert_array_equal(s.draw(100, rng=18), s.draw(100, rng=18))
    assert not np.array_equal(s.draw(100, rng=18), s.draw(100, rng=19))


@pytest.mark.parametrize(
    ("kwargs", "error", "match"),
    [
        ({"coupling": "vine"}, MethodError, "coupling: expected one of rows"),
        ({"marginals": {"nope": "gamma"}}, InputDataError, "no column 'nope'"),
        ({"marginals": {"hours": "gamma"}, "coupling": "rows"}, MethodError, "column 'hours'"),
        ({"coupling": "rows", "rank_correlation": R3}, MethodError, "rank_correlation: coupling"),
        ({"coupling": "t_copula", "rank_correlation": R3}, MethodError, "'t_copula' estimates"),
        ({"rank_correlation": np.eye(2)}, MethodError, "expected a 3x3 matrix"),
        ({"marginals": {"hours": 3}}, MethodError, "column 'hours', found int"),
        ({"marginals": {"hours": {"loc": 0}}}, MethodError, "need a 'method' name"),
        ({"columns": ["a"]}, MethodError, "columns: names only the columns of a 2-D array"),
        ({"correlation_method": "pearson"}, MethodError, "correlation_method: expected"),
    ],
)
def test_fit_joint_bad_arguments_named(
    kwargs: dict[str, object], error: type[Exception], match: str
) -> None:
    """Bad arguments give a one-line error naming the argument or column."""
    with pytest.raises(error, match=match):
        fit_joint(_data(50), **kwargs)  # type: ignore[arg-type]


def test_fit_joint_bad_values_named_by_column_and_row() -> None:
    """An infinite value or a non-number is refused, naming the column and the row."""
    data = _data(20)
    data["cost"][4] = np.inf
    with pytest.raises(InputDataError, match=r"column 'cost': expected finite .* at row 4"):
        fit_joint(data)
    text = {"a": [1.0, 2.0, "x", 4.0], "b": [1.0, 2.0, 3.0, 4.0]}
    with pytest.raises(InputDataError, match=r"column 'a': expected numbers, found 'x' at row 2"):
        fit_joint(text)
    with pytest.raises(InputDataError, match=r"column 'b': constant"):
        fit_joint({"a": [1.0, 2.0, 3.0, 4.0], "b": [5.0] * 4})
    with pytest.raises(MethodError, match="a 2-D array table needs one name per column"):
        fit_joint(np.ones((5, 2)))


def test_a_marginal_fit_error_names_its_column() -> None:
    """A marginal's own fit error keeps its message and gains a note naming the column."""
    with pytest.raises(MethodError, match="unknown option 'colour'") as info:
        fit_joint(_data(50), {"hours": {"method": "gamma", "colour": 2}, "cost": "gamma"})
    assert "column 'hours'" in " ".join(info.value.__notes__)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"columns": ["a"], "coupling": "rows", "rows": [[1.0]]}, "at least 2 columns"),
        ({"columns": ["a", "a"], "coupling": "rows", "rows": [[1.0, 2.0]]}, "more than once"),
        ({"columns": ["a", "b"], "coupling": "gaussian_copula"}, "marginals: coupling"),
        ({"columns": ["a", "b"], "coupling": "rows", "rows": [[1.0, 2.0]], "df": 3.0}, "df:"),
    ],
)
def test_joint_sampler_refuses_inconsistent_parts(kwargs: dict[str, object], match: str) -> None:
    """Construction checks the columns and that the coupling gets exactly its parameters."""
    with pytest.raises(MethodError, match=match):
        JointSampler(**kwargs)  # type: ignore[arg-type]


def test_joint_sampler_refuses_an_unreachable_target_and_bad_draw_arguments() -> None:
    """A target Iman-Conover cannot reach, a too-small size and an unknown sequence are refused."""
    m = _marginals()[:2]
    with pytest.raises(MethodError, match="reachable by Iman-Conover"):
        JointSampler(
            ["a", "b", "c"],
            coupling="rank_correlation",
            marginals=[*m, m[0]],
            rank_correlation=[[1, 0.9, -0.9], [0.9, 1, 0.9], [-0.9, 0.9, 1]],
        )
    s = _sampler("rank_correlation")
    with pytest.raises(MethodError, match="needs more draws than columns"):
        s.draw(3, rng=1)
    with pytest.raises(MethodError, match="sequence: expected one of"):
        s.draw(10, rng=1, sequence="grid")  # type: ignore[arg-type]
    with pytest.raises(MethodError, match="column: expected one of"):
        s.marginal("other")
    assert s.draw(0, rng=1).shape == (0, 3)


def test_fit_joint_takes_a_table_read_from_a_file(tmp_path: Path) -> None:
    """Rows the file reader dropped are counted with the file's row count."""
    path = tmp_path / "repairs.csv"
    path.write_text("hours,cost,note\n1.5,80,a\nNA,90,b\n2.5,120,c\n3.0,,d\n4.0,150,e\n5.5,210,f\n")
    table = read_table(path, ["hours", "cost"], missing="drop")
    s = fit_joint(table, coupling="rows")
    assert s.diagnostics["rows"] == {"n_used": 4, "n_read": 6, "dropped": {"missing": 2}}
    np.testing.assert_array_equal(np.asarray(s.rows)[:, 1], [80.0, 120.0, 150.0, 210.0])
