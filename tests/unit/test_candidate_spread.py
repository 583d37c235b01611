"""candidate_spread: figures per candidate, spread across candidates, replicate intervals."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from samplewright.check.candidate_spread import (
    candidate_spread,
    render_candidate_spread_markdown,
    tail_mean,
)
from samplewright.core.errors import MethodError
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.fitting.replicates import fit_replicates
from samplewright.resample.intervals import interval_from_distribution


def _exp(scale: float) -> ParametricSampler:
    return ParametricSampler("exponential", {"scale": scale, "loc": 0.0})


def test_exponential_figures_match_closed_forms() -> None:
    """Quantiles -s log(1-p); tail mean beyond q is q + s (memoryless)."""
    r = candidate_spread([_exp(2.0)], ["exp"], probabilities=[0.5, 0.99])
    fig = r.candidates[0].figures
    # source: closed form of the exponential quantile and of its mean excess (lack of memory)
    assert fig["quantile:0.5"] == pytest.approx(2.0 * math.log(2.0), rel=1e-14)
    assert fig["tail_mean:0.99"] == pytest.approx(-2.0 * math.log(0.01) + 2.0, rel=1e-6)


def test_lognormal_tail_mean_matches_the_closed_form() -> None:
    """The tail mean of a lognormal equals exp(mu + s^2/2) Phi(s - z_p) / (1 - p)."""
    mu, s, p = 1.0, 0.8, 0.99
    got = tail_mean(ParametricSampler("lognormal", {"mu": mu, "sigma": s, "loc": 0.0}), p)
    # source: lognormal partial expectation E[X; X > q] = e^(mu+s^2/2) Phi(s - z_p), from memory
    expected = math.exp(mu + s * s / 2) * stats.norm.cdf(s - stats.norm.ppf(p)) / (1 - p)
    assert got == pytest.approx(expected, rel=1e-6)


def test_empirical_tail_mean_is_exact() -> None:
    """For 1..10 the mean beyond the 0.8 level is the mean of 9 and 10."""
    # source: hand computation, (9 + 10) / 2
    assert tail_mean(EmpiricalSampler(np.arange(1.0, 11.0)), 0.8) == 9.5


def test_spread_names_extremes_and_their_ratio() -> None:
    """Smallest, largest, which candidate, difference and ratio for every figure."""
    r = candidate_spread([_exp(1.0), _exp(3.0), _exp(2.0)], ["a", "b", "c"])
    assert r.figures == (
        "quantile:0.5",
        "quantile:0.9",
        "quantile:0.99",
        "quantile:0.999",
        "tail_mean:0.99",
    )
    for s in r.spread:
        assert (s.smallest_label, s.largest_label) == ("a", "b")
        assert s.ratio == pytest.approx(3.0, rel=1e-6)
        assert s.difference == pytest.approx(s.largest - s.smallest)


def test_ratio_is_nan_for_values_of_mixed_sign() -> None:
    """A ratio of a negative and a positive value is reported as NaN, the difference kept."""
    a = ParametricSampler("normal", {"mu": -1.0, "sigma": 0.1})
    b = ParametricSampler("normal", {"mu": 1.0, "sigma": 0.1})
    s = candidate_spread([a, b], ["a", "b"], probabilities=[0.5]).spread[0]
    assert math.isnan(s.ratio) and s.difference == pytest.approx(2.0)


def test_intervals_are_percentiles_of_the_replicate_figures() -> None:
    """With an ensemble, each interval is the percentile interval of the replicates' figures."""
    x = np.random.default_rng(3).lognormal(0.5, 0.7, 80)
    ens = fit_replicates(x, "lognormal", n_replicates=60, rng=4)
    r = candidate_spread([ens.point], ["lognormal"], probabilities=[0.9], ensembles=[ens])
    row = r.candidates[0]
    q90 = [float(ens.replicate(i).quantile(0.9)) for i in range(60)]
    low, high = interval_from_distribution(q90, row.figures["quantile:0.9"], confidence_level=0.95)
    ci = row.intervals["quantile:0.9"]
    assert (ci.low, ci.high) == pytest.approx((low, high), rel=1e-12)
    assert row.n_replicates == 60 and ci.low < row.figures["quantile:0.9"] < ci.high


def test_markdown_table_has_a_row_per_candidate_and_the_spread() -> None:
    """The Markdown lists each candidate, brackets its intervals and ends with the spread rows."""
    x = np.random.default_rng(5).gamma(2.0, 1.0, 60)
    ens = fit_replicates(x, "gamma", n_replicates=20, rng=1)
    r = candidate_spread(
        [ens.point, _exp(2.0)], ["gamma", "exp"], probabilities=[0.5], ensembles=[ens, None]
    )
    text = render_candidate_spread_markdown(r, digits=3)
    lines = text.splitlines()
    assert lines[0] == "| candidate | Q(0.5) | mean beyond Q(0.99) |"
    assert lines[2].startswith("| gamma | ") and "[" in lines[2]
    assert lines[3].startswith("| exp | ") and "[" not in lines[3]
    assert [ln.split(" |")[0] for ln in lines[4:7]] == [
        "| smallest",
        "| largest",
        "| largest / smallest",
    ]
    assert "95% percentile intervals across 20 parameter replicates" in lines[-1]


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"labels": ["a"]}, "expected 2 distinct labels"),
        ({"probabilities": [0.5, 1.0]}, r"probabilities: expected a number in \(0, 1\)"),
        ({"tail_level": 1.0}, r"tail_level: expected a number in \(0, 1\)"),
        ({"ensembles": [None]}, "ensembles: expected 2 entries"),
        ({"confidence_level": 1.5}, "confidence_level"),
    ],
)
def test_bad_arguments_are_refused(kwargs: dict, match: str) -> None:
    """Labels, levels and ensembles are checked with one-line messages."""
    args = {"labels": ["a", "b"], **kwargs}
    with pytest.raises(MethodError, match=match):
        candidate_spread([_exp(1.0), _exp(2.0)], **args)
