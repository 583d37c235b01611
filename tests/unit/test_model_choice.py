"""Method 'auto': candidate ranking, recorded statistics, reproducibility, errors, CLI display."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import samplewright as sw
from samplewright.check.auto import (
    COUNTS,
    NON_NEGATIVE,
    POSITIVE,
    default_candidates,
    dense_share,
    fit_auto,
    read_integers,
)
from samplewright.core.errors import MethodError
from samplewright.pipeline.cli import main


def _gamma_data() -> np.ndarray:
    # Generated from numpy's gamma generator (shape 2, scale 3); common practice, no source.
    return np.random.default_rng(11).gamma(2.0, 3.0, 400)


def test_auto_picks_lowest_aic_and_records_every_candidate() -> None:
    """The chosen family has the lowest AIC of the ranking, and every candidate has KS/AD/CvM."""
    s = sw.fit(_gamma_data(), method="auto", n_resamples=19)
    auto = s.diagnostics["auto"]
    ranking = auto["ranking"]
    assert s.method == "auto" and s.family.name == ranking[0]["family"] == auto["chosen"]
    aics = [r["aic"] for r in ranking if r["error"] is None]
    assert aics == sorted(aics)
    assert {r["family"] for r in ranking} == set(auto["candidates"])
    for row in ranking:
        assert set(row["statistics"]) == {"ks", "ad", "cvm"} == set(row["pvalues"])
        assert all(0 < p <= 1 for p in row["pvalues"].values())
    # source: scipy.stats.kstest with the chosen parameters gives the same KS statistic
    best = ranking[0]
    dist = s.family.frozen(best["params"])
    assert best["statistics"]["ks"] == pytest.approx(
        stats.kstest(_gamma_data(), dist.cdf).statistic, rel=1e-9
    )
    # AIC = 2k - 2 loglik (Akaike 1974)
    assert best["aic"] == pytest.approx(2 * best["n_params"] - 2 * best["loglik"])


def test_auto_equals_direct_fit_of_the_winner() -> None:
    """The winner's parameters and log-likelihood are those of fitting that family directly."""
    s = sw.fit(_gamma_data(), method="auto", n_resamples=0)
    direct = sw.fit(_gamma_data(), method=s.family.name)
    assert s.params == pytest.approx(direct.params)
    assert s.loglik == pytest.approx(direct.loglik)


def test_auto_is_reproducible_from_its_seed() -> None:
    """Same data and seed give identical diagnostics; another seed changes only p-values."""
    a = sw.fit(_gamma_data(), method="auto", n_resamples=19, seed=3).diagnostics
    b = sw.fit(_gamma_data(), method="auto", n_resamples=19, seed=3).diagnostics
    c = sw.fit(_gamma_data(), method="auto", n_resamples=19, seed=4).diagnostics
    assert a == b
    assert [r["aic"] for r in a["auto"]["ranking"]] == [r["aic"] for r in c["auto"]["ranking"]]
    assert [r["pvalues"] for r in a["auto"]["ranking"]] != [
        r["pvalues"] for r in c["auto"]["ranking"]
    ]


def test_auto_default_candidates_follow_the_data() -> None:
    """Counts get discrete candidates; signed data get real-line families."""
    rng = np.random.default_rng(5)
    counts = sw.fit(rng.negative_binomial(3, 0.4, 300).astype(float), method="auto", n_resamples=0)
    assert counts.diagnostics["auto"]["candidates"] == ["poisson", "negative_binomial", "geometric"]
    assert counts.family.name == "negative_binomial"
    assert "dispersion" in counts.diagnostics and counts.diagnostics["dispersion"]["overdispersed"]
    signed = sw.fit(rng.normal(0.0, 1.0, 300), method="auto", n_resamples=0)
    assert "normal" in signed.diagnostics["auto"]["candidates"]


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"candidates": ["gamma", "gamm"]}, "unknown family 'gamm'"),
        ({"criterion": "hqc"}, "option 'criterion' of auto"),
        ({"n_resamples": -1}, "option 'n_resamples' of auto"),
        ({"bins": 3}, "unknown option 'bins' for auto"),
        ({"integers": "yes"}, "option 'integers' of auto: expected one of detect, counts"),
        ({"seed": -3}, "option 'seed' of auto: expected an int >= 0"),
        ({"candidates": []}, "option 'candidates' of auto: expected a list of family names"),
    ],
)
def test_auto_rejects_bad_options(options: dict, message: str) -> None:
    """Bad options of auto raise a MethodError naming the option."""
    with pytest.raises(MethodError, match=message):
        sw.fit(_gamma_data(), method="auto", **options)


def test_show_prints_the_ranking(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    """`samplewright fit --method auto` stores the ranking; `show` prints one row per candidate."""
    data = tmp_path / "x.csv"
    data.write_text("v\n" + "\n".join(f"{v:.6f}" for v in _gamma_data()) + "\n")
    out = tmp_path / "a.parquet"
    assert (
        main(["fit", str(data), "-c", "v", "-m", "auto", "-o", "n_resamples=9", "--out", str(out)])
        == 0
    )
    meta = sw.read_metadata(out)
    assert meta["diagnostics"]["auto"]["n_resamples"] == 9
    capsys.readouterr()
    assert main(["show", str(out)]) == 0
    shown = capsys.readouterr().out
    for fam in meta["diagnostics"]["auto"]["candidates"]:
        assert fam in shown
    assert f"chosen: {meta['diagnostics']['auto']['chosen']}" in shown


def test_poor_fit_is_flagged_when_every_candidate_is_rejected() -> None:
    """A clearly wrong candidate set is flagged poor_fit at the default 99 resamples."""
    # Generated bimodal data (two normals 10 sd apart); common practice, no source.
    rng = np.random.default_rng(8)
    x = np.concatenate([rng.normal(5.0, 1.0, 300), rng.normal(15.0, 1.0, 300)])
    s = sw.fit(x, method="auto", candidates=["exponential", "rayleigh"])
    assert s.diagnostics["auto"]["poor_fit"] is True
    good = sw.fit(_gamma_data(), method="auto", candidates=["gamma"])
    assert good.diagnostics["auto"]["poor_fit"] is False


def test_whole_numbers_are_read_by_the_dense_share_rule_or_as_stated() -> None:
    """Dense small integers are counts, sparse whole amounts measurements; 'integers' overrides."""
    rng = np.random.default_rng(21)
    counts = rng.poisson(4.0, 200).astype(float)
    amounts = np.round(rng.lognormal(6.0, 1.0, 200))
    assert default_candidates(counts) == COUNTS and default_candidates(amounts) == POSITIVE
    assert default_candidates(counts, integers="measurements") == NON_NEGATIVE  # zeros occur
    assert default_candidates(amounts, integers="counts") == COUNTS
    stepped = 5.0 * rng.poisson(20.0, 300)  # minutes in steps of 5: about a fifth of the integers
    assert read_integers(stepped)[0] == "measurements" and read_integers(stepped)[1] <= 0.25
    s = sw.fit(amounts, "auto", n_resamples=0)
    assert s.diagnostics["auto"]["reading"] == {
        "as": "measurements",
        "integers": "detect",
        "dense_share": pytest.approx(dense_share(amounts)),
    }
    assert dense_share(counts, np.full(counts.size, 3.0)) == dense_share(np.repeat(counts, 3))


def test_coarse_recording_is_warned_and_recorded() -> None:
    """Values on a grid with many ties get a recording_resolution warning and the grid."""
    x = np.round(np.random.default_rng(22).gamma(5.0, 3.0, 120), 0) + 0.5  # grid 0.5
    s = sw.fit(x, "auto", n_resamples=0)
    assert s.diagnostics["auto"]["resolution"]["step"] == 0.5
    kinds = [w["kind"] for w in s.diagnostics["warnings"]]
    assert kinds == ["recording_resolution"]
    fine = sw.fit(np.random.default_rng(22).gamma(5.0, 3.0, 120), "auto", n_resamples=0)
    assert (
        fine.diagnostics["warnings"] == []
        and fine.diagnostics["auto"]["resolution"]["step"] is None
    )


def test_seed_and_rng_exclude_each_other_and_the_record_says_where_it_came_from() -> None:
    """rng= and option seed= cannot both be given; the seed used is recorded."""
    x = _gamma_data()
    with pytest.raises(MethodError, match="give either rng or seed, not both"):
        fit_auto(x, rng=1, seed=2, n_resamples=0)
    assert fit_auto(x, rng=5, n_resamples=0).diagnostics["auto"]["seed"] == 5
    s = sw.fit(x, "auto", seed=7, n_resamples=0).diagnostics["auto"]
    assert (s["seed"], s["seed_source"]) == (7, "option")


def test_unreliable_pvalues_do_not_flag_a_poor_fit(monkeypatch: pytest.MonkeyPatch) -> None:
    """Candidates record n_failed and pvalues_reliable; unreliable p-values never set poor_fit."""
    from samplewright.check import gof

    real = gof.fit_family
    calls = {"n": 0}

    def flaky(name, x, w=None, **options):
        calls["n"] += 1
        if calls["n"] > 1 and calls["n"] % 2 == 0:
            raise MethodError("refused on purpose")
        return real(name, x, w, **options)

    monkeypatch.setattr(gof, "fit_family", flaky)
    monkeypatch.setattr(gof, "_closed_form_u", lambda name, sims, options: None)  # refit each
    rng = np.random.default_rng(8)
    x = np.concatenate([rng.normal(5.0, 1.0, 300), rng.normal(15.0, 1.0, 300)])
    s = sw.fit(x, "auto", candidates=["exponential"], n_resamples=99)
    row = s.diagnostics["auto"]["ranking"][0]
    assert row["n_failed"] > 10 and row["pvalues_reliable"] is False
    assert s.diagnostics["auto"]["poor_fit"] is False
