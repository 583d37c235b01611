"""Composites in 'auto': mixtures and zero-inflated counts ranked in, a hurdle for an atom at 0."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import samplewright as sw
from samplewright.check.auto import COUNTS, POSITIVE
from samplewright.distributions.mixture import MixtureSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.point_mass import PointMassSampler

# invented samples, fixed generators
G = np.random.default_rng(20261204)
BIMODAL = np.concatenate([G.lognormal(0.0, 0.3, 300), G.lognormal(2.0, 0.3, 200)])
GAMMA = G.gamma(3.0, 2.0, 400)
WITH_ZEROS = np.concatenate([np.zeros(45), G.lognormal(1.0, 0.6, 255)])  # 15% exactly 0
ZIP = np.where(G.random(500) < 0.3, 0.0, G.poisson(4.0, 500))  # Lambert's model, pi = 0.3


def test_a_bimodal_sample_is_answered_by_a_two_component_mixture() -> None:
    """Two well separated lognormal groups: the mixture joins and wins by AIC over every single
    family (common practice: a two-group sample is a mixture, no single family fits it)."""
    s = sw.fit(BIMODAL, "auto", n_resamples=0)
    auto = s.diagnostics["auto"]
    assert isinstance(s, MixtureSampler) and s.method == "auto" and s.n_components == 2
    assert auto["chosen"] == "mixture_lognormal" == auto["ranking"][0]["family"]
    assert auto["composites"]["added"] == ["mixture_lognormal"]
    singles = [r for r in auto["ranking"] if r["family"] in POSITIVE]
    assert len(singles) == len(POSITIVE) and all(r["aic"] > s.aic for r in singles)
    # common practice, no source: the fitted weights recover the groups' shares 0.6 / 0.4
    assert sorted(s.weights.round(1).tolist()) == [0.4, 0.6]
    # the record names how to refit the answer with the choice held
    refit = auto["refit"]
    again = sw.fit(BIMODAL, refit["method"], **refit["options"])
    assert again.loglik == pytest.approx(s.loglik, rel=1e-9)  # type: ignore[attr-defined]


def test_a_plain_gamma_sample_gets_no_composite_and_the_same_answer() -> None:
    """One family explains the data: nothing joins, and the answer equals that of auto told
    its candidates (which screens nothing)."""
    s = sw.fit(GAMMA, "auto", n_resamples=0)
    listed = sw.fit(GAMMA, "auto", n_resamples=0, candidates=list(POSITIVE))
    comp = s.diagnostics["auto"]["composites"]
    assert comp["added"] == [] and comp["screen"]["bic_gain"] < 10.0
    assert isinstance(s, ParametricSampler) and s.family.name == listed.family.name  # type: ignore[attr-defined]
    assert s.params == listed.params
    assert s.diagnostics["auto"]["ranking"] == listed.diagnostics["auto"]["ranking"]
    assert "composites" not in listed.diagnostics["auto"]


def test_an_atom_at_zero_is_answered_by_a_hurdle_over_autos_choice() -> None:
    """15% exact zeros: a point mass at 0 with p0 the share of zeros, and the continuous part
    auto's answer on the other values; the log-likelihood adds the binomial part."""
    s = sw.fit(WITH_ZEROS, "auto", n_resamples=0)
    auto = s.diagnostics["auto"]
    assert isinstance(s, PointMassSampler) and s.method == "auto" and auto["chosen"] == "hurdle"
    assert s.p0 == pytest.approx(45 / 300) and s.at == 0.0
    rest = sw.fit(WITH_ZEROS[WITH_ZEROS > 0], "auto", n_resamples=0)
    assert s.inner.params == rest.params  # type: ignore[attr-defined]
    assert s.diagnostics["hurdle"]["body"] == rest.family.name  # type: ignore[attr-defined]
    assert [r["family"] for r in auto["ranking"]] == [
        r["family"] for r in rest.diagnostics["auto"]["ranking"]
    ]
    p0 = 45 / 300
    body = rest.loglik  # type: ignore[attr-defined]
    expected = 45 * np.log(p0) + 255 * np.log1p(-p0) + body
    assert s.loglik == pytest.approx(expected, rel=1e-12)
    # the hurdle method with that body gives the same model (samplewright's own, refit record)
    refit = auto["refit"]
    assert refit == {"method": "hurdle", "options": {"body": rest.family.name}}
    again = sw.fit(WITH_ZEROS, "hurdle", **refit["options"])
    assert again.loglik == pytest.approx(s.loglik, rel=1e-9)  # type: ignore[attr-defined]
    assert "a density puts no mass on a point" in auto["composites"]["why"]


def test_the_hurdles_continuous_part_follows_scipy() -> None:
    """With a lognormal part, the part's log-likelihood is scipy's lognormal log-density sum at
    the fitted parameters (source: scipy.stats.lognorm)."""
    s = sw.fit(WITH_ZEROS, "auto", n_resamples=0, integers="measurements")
    inner = s.inner  # type: ignore[attr-defined]
    pos = WITH_ZEROS[WITH_ZEROS > 0]
    fam = inner.family.name
    ref = {
        "lognormal": lambda p: stats.lognorm(p["sigma"], scale=np.exp(p["mu"])),
        "gamma": lambda p: stats.gamma(p["shape"], scale=p["scale"]),
        "weibull": lambda p: stats.weibull_min(p["shape"], scale=p["scale"]),
        "inverse_gaussian": lambda p: stats.invgauss(p["mu"] / p["lambda"], scale=p["lambda"]),
        "exponential": lambda p: stats.expon(scale=p["scale"]),
    }[fam](inner.params)
    # source: scipy.stats (the family's logpdf summed over the values other than 0)
    assert s.diagnostics["hurdle"]["body_loglik"] == pytest.approx(ref.logpdf(pos).sum(), rel=1e-9)


def test_zero_inflated_counts_rank_with_the_count_families() -> None:
    """Zero-inflated Poisson data: both zero-inflated models join, are ranked by AIC with the
    count families, and the zero-inflated Poisson wins; candidates stay the count families."""
    s = sw.fit(ZIP, "auto", n_resamples=0)
    auto = s.diagnostics["auto"]
    labels = [r["family"] for r in auto["ranking"]]
    assert set(labels) == set(COUNTS) | {"zero_inflated_poisson", "zero_inflated_negative_binomial"}
    assert auto["candidates"] == list(COUNTS)
    ok = [r for r in auto["ranking"] if r["error"] is None]
    assert [r["aic"] for r in ok] == sorted(r["aic"] for r in ok)
    assert isinstance(s, PointMassSampler) and auto["chosen"] == "zero_inflated_poisson"
    # common practice, no source: the fitted inflation is near the generating 0.3
    assert s.p0 == pytest.approx(0.3, abs=0.06)
    assert "dispersion" in s.diagnostics and auto["refit"]["method"] == "zero_inflated"


def test_candidates_given_screen_nothing() -> None:
    """A list of candidates is the whole set: no composite joins, even on bimodal data."""
    s = sw.fit(BIMODAL, "auto", n_resamples=0, candidates=["lognormal", "gamma"])
    assert isinstance(s, ParametricSampler) and "composites" not in s.diagnostics["auto"]
    z = sw.fit(WITH_ZEROS, "auto", n_resamples=0, candidates=["exponential", "normal"])
    assert isinstance(z, ParametricSampler)


def test_composite_answers_are_proper_artifacts(tmp_path: Path) -> None:
    """Each composite answer is written, verified and read back as a sampler of its kind with
    method 'auto', the same quantiles and its ranking."""
    for name, data in (("mix", BIMODAL), ("hurdle", WITH_ZEROS), ("zi", ZIP)):
        s = sw.fit(data, "auto", n_resamples=0)
        path = tmp_path / f"{name}.parquet"
        sw.write_sampler(s, path)
        t = sw.load_sampler(path)
        assert type(t) is type(s) and t.method == "auto"
        u = np.array([0.05, 0.5, 0.95])
        np.testing.assert_allclose(t.quantile(u), s.quantile(u), rtol=1e-12)
        meta = t.metadata["diagnostics"]["auto"]
        assert meta["chosen"] == s.diagnostics["auto"]["chosen"]
        json.dumps(meta)


def test_the_bootstrap_stays_with_the_single_families() -> None:
    """With replicates, single families carry p-values and the composite row none; a composite
    chosen is not flagged as a poor fit."""
    s = sw.fit(BIMODAL, "auto", n_resamples=9, seed=2)
    rows = {r["family"]: r for r in s.diagnostics["auto"]["ranking"]}
    assert rows["mixture_lognormal"]["pvalues"] == {}
    assert all(rows[f]["pvalues"] for f in POSITIVE)
    assert s.diagnostics["auto"]["poor_fit"] is False
    # the mixture's EM seed comes from auto's stream: the same seed, the same record
    t = sw.fit(BIMODAL, "auto", n_resamples=9, seed=2)
    assert t.diagnostics == s.diagnostics
