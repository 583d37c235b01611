"""What moved between two samplers (samplewright.check.drift), checked against scipy."""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import stats

import samplewright as sw
from samplewright.check.drift import DEFAULT_DRIFT_THRESHOLD, compare_samplers, largest_gap
from samplewright.core.errors import MethodError
from samplewright.distributions.parametric import ParametricSampler


def _normal(mu: float, sigma: float = 1.0) -> ParametricSampler:
    return ParametricSampler("normal", {"mu": mu, "sigma": sigma})


def test_ks_distance_of_two_shifted_normals_matches_the_closed_form() -> None:
    """sup |Φ(x) − Φ(x − d)| = 2Φ(d/2) − 1, reached at x = d/2."""
    r = compare_samplers(_normal(0.0), _normal(0.5))
    # source: closed form via scipy.stats.norm (the gap is largest midway between the means)
    assert r.ks_distance == pytest.approx(2 * stats.norm.cdf(0.25) - 1, abs=1e-4)
    assert r.at == pytest.approx(0.25, abs=2e-3)
    assert r.flagged and r.threshold == DEFAULT_DRIFT_THRESHOLD == 0.05


def test_ks_distance_of_two_samples_matches_scipy_ks_2samp() -> None:
    """Between two empirical samplers the distance is the two-sample KS statistic."""
    rng = np.random.default_rng(8)
    a, b = rng.gamma(2.0, 3.0, 300), rng.gamma(2.2, 3.0, 250)
    r = compare_samplers(sw.fit(a, "empirical"), sw.fit(b, "empirical"))
    # source: scipy.stats.ks_2samp (two-sided D)
    assert r.ks_distance == pytest.approx(stats.ks_2samp(a, b).statistic, abs=1e-12)
    assert largest_gap(sw.fit(a, "empirical"), sw.fit(a, "empirical"))[0] == 0.0


def test_shifts_of_quantiles_mean_and_tail_mean() -> None:
    """Each key quantile, the mean and the 1% tail mean move as the closed forms say."""
    r = compare_samplers(_normal(10.0, 2.0), _normal(12.0, 3.0), threshold=0.5)
    for p, (old, new) in r.quantiles.items():
        # source: scipy.stats.norm.ppf
        assert old == pytest.approx(stats.norm.ppf(p, 10.0, 2.0), rel=1e-12)
        assert new == pytest.approx(stats.norm.ppf(p, 12.0, 3.0), rel=1e-12)
    assert r.mean == (10.0, 12.0)
    # source: expected shortfall of a normal, mu + sigma φ(z_p) / (1 − p) (McNeil, Frey &
    # Embrechts 2015, Quantitative Risk Management, example 2.14)
    z = stats.norm.ppf(0.99)
    es = stats.norm.pdf(z) / 0.01
    assert r.tail_mean[0] == pytest.approx(10.0 + 2.0 * es, rel=1e-4)
    assert r.tail_mean[1] == pytest.approx(12.0 + 3.0 * es, rel=1e-4)
    # source: the two CDFs cross once; the gap is largest where their densities are equal
    assert r.ks_distance < 0.5 and not r.flagged


def test_as_dict_is_strict_json_even_for_an_infinite_tail_mean() -> None:
    """A heavy tail without a mean gives null, never Infinity."""
    heavy = ParametricSampler("pareto", {"alpha": 0.8, "xm": 1.0, "loc": 0.0})
    doc = compare_samplers(_normal(3.0), heavy).as_dict()
    text = json.dumps(doc, allow_nan=False)
    assert json.loads(text)["tail_mean"]["new"] is None
    assert set(doc["quantiles"]) == {"p50", "p90", "p99", "p99.9"}


def test_bad_arguments_are_refused_by_name() -> None:
    """A probability outside (0, 1) or a threshold outside [0, 1] is one clear error."""
    with pytest.raises(MethodError, match="probabilities"):
        compare_samplers(_normal(0.0), _normal(1.0), probabilities=(0.5, 1.0))
    with pytest.raises(MethodError, match="threshold"):
        compare_samplers(_normal(0.0), _normal(1.0), threshold=2.0)
