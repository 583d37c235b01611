"""Unit tests of count data: the empirical pmf method and the index-of-dispersion check.

Small data sets are invented; expected values are hand computations (common practice, no
source). Checks against statsmodels, scipy and published data are in
tests/reference/test_counts_reference.py.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

import samplewright as sw
from samplewright.check.dispersion import DispersionResult, count_diagnostics, dispersion_check
from samplewright.core.errors import MethodError
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.empirical_pmf import EmpiricalPmfSampler
from samplewright.fitting.counts import fit_empirical_pmf
from samplewright.fitting.registry import sampler_class

Cli = Callable[..., tuple[int, str, str]]

# Invented daily call-outs of a maintenance crew.
CALLS = np.array([0, 2, 1, 0, 3, 2, 2, 7, 1, 0, 4, 2, 0, 1, 9, 2, 1, 0, 3, 2], dtype=float)


def test_pmf_table_matches_a_hand_count() -> None:
    """Distinct values and their shares are the tallies divided by n."""
    s = fit_empirical_pmf(CALLS)
    assert s.values.tolist() == [0, 1, 2, 3, 4, 7, 9]
    # hand count (common practice, no source): 5 zeros, 4 ones, 6 twos, 2 threes, ...
    assert s.probs.tolist() == pytest.approx(
        [5 / 20, 4 / 20, 6 / 20, 2 / 20, 1 / 20, 1 / 20, 1 / 20], rel=1e-15
    )
    assert s.pmf([0, 5, 2, 2.5]).tolist() == pytest.approx([0.25, 0.0, 0.3, 0.0])
    assert s.params == {"n_values": 7, "n_obs": 20.0}


def test_agrees_with_the_empirical_sampler() -> None:
    """CDF, quantile, mean, var and support equal those of EmpiricalSampler on the raw counts."""
    s, e = fit_empirical_pmf(CALLS), EmpiricalSampler(CALLS)
    grid = np.linspace(-1, 11, 241)
    np.testing.assert_allclose(s.cdf(grid), e.cdf(grid), rtol=0, atol=1e-15)
    u = np.random.default_rng(9).random(5000)
    np.testing.assert_array_equal(s.quantile(u), e.quantile(u))
    assert s.mean == pytest.approx(e.mean, rel=1e-15)
    assert s.var == pytest.approx(e.var, rel=1e-14)
    assert s.support == e.support == (0.0, 9.0)


def test_weights_equal_repeated_counts() -> None:
    """An integer frequency weight acts like the count repeated that many times."""
    w = np.arange(1, CALLS.size + 1)
    a = fit_empirical_pmf(CALLS, weights=w)
    b = fit_empirical_pmf(np.repeat(CALLS, w))
    np.testing.assert_array_equal(a.values, b.values)
    np.testing.assert_allclose(a.probs, b.probs, rtol=1e-14)
    assert a.n_obs == b.n_obs == float(w.sum())


def test_draws_are_observed_counts_with_the_right_frequencies() -> None:
    """Draws are float64 whole numbers seen in the data, each about as often as its share."""
    s = fit_empirical_pmf(CALLS)
    d = s.draw(50_000, rng=2026)
    np.testing.assert_array_equal(d, s.draw(50_000, rng=2026))
    assert d.dtype == np.float64 and set(np.unique(d)) <= set(s.values)
    freq = np.array([np.mean(d == v) for v in s.values])
    # 5 binomial standard errors (common practice, no source)
    assert np.all(np.abs(freq - s.probs) < 5 * np.sqrt(s.probs * (1 - s.probs) / d.size))


@pytest.mark.parametrize(
    ("values", "pattern"),
    [
        ([0, 2, 2.5, -1], r"^empirical_pmf: counts must be non-negative integers; value 3 is 2.5$"),
        ([0, -3, 1.5], r"^empirical_pmf: .* value 2 is -3.0$"),
        ([1, np.inf], r"^values: every value must be finite; value 2 is inf$"),
        ([], r"^empirical_pmf needs at least 1 value, found 0$"),
    ],
)
def test_bad_counts_name_the_first_offender(values: list[float], pattern: str) -> None:
    """A negative, fractional or infinite value is refused, naming the first one and where."""
    with pytest.raises(MethodError, match=pattern):
        fit_empirical_pmf(values)


def test_fit_dispatch_refuses_censoring_and_options() -> None:
    """sw.fit dispatches empirical_pmf, and refuses censored counts and unknown options."""
    assert isinstance(sw.fit(CALLS, method="empirical_pmf"), EmpiricalPmfSampler)
    assert "empirical_pmf" in sw.known_methods()
    with pytest.raises(MethodError, match=r"^censored: method 'empirical_pmf' does not handle"):
        sw.fit(CALLS, method="empirical_pmf", censored=CALLS > 5)
    with pytest.raises(MethodError, match=r"^unknown option 'alpha' for empirical_pmf \(allowed:"):
        sw.fit(CALLS, method="empirical_pmf", alpha=0.1)


# --- dispersion ------------------------------------------------------------------------------


def test_dispersion_statistic_matches_a_hand_computation() -> None:
    """The statistic is Σ (x - mean)² / mean and the index is the sample variance over the mean."""
    r = dispersion_check(CALLS)
    m = 42 / 20  # hand computation (common practice, no source)
    ss = float(np.sum((CALLS - m) ** 2))
    assert r.mean == pytest.approx(m, rel=1e-15)
    assert r.statistic == pytest.approx(ss / m, rel=1e-13)
    assert r.variance == pytest.approx(ss / 19, rel=1e-13)
    assert r.index == pytest.approx(ss / 19 / m, rel=1e-13)
    assert (r.df, r.n_obs, r.alpha) == (19.0, 20.0, 0.05)
    assert r.overdispersed and "over-dispersed" in r.message and "negative_binomial" in r.message


def test_under_and_normal_dispersion_are_not_flagged() -> None:
    """Nearly constant counts are called under-dispersed; Poisson-like ones consistent."""
    under = dispersion_check([5, 5, 4, 5, 6, 5, 5, 4, 6, 5, 5, 5])
    assert not under.overdispersed and "under-dispersed" in under.message
    ok = dispersion_check([0, 1, 1, 2, 0, 3, 1, 2, 1, 0, 2, 1])
    assert not ok.overdispersed and "consistent with a poisson" in ok.message
    assert 0.05 < ok.pvalue < 0.95


def test_alpha_sets_the_flag() -> None:
    """The same counts are flagged at a level above their p-value and not below it."""
    x = [0, 1, 3, 0, 2, 4, 1, 0, 5, 1, 0, 3]
    p = dispersion_check(x).pvalue
    assert dispersion_check(x, alpha=min(1.0, p * 1.01)).overdispersed
    assert not dispersion_check(x, alpha=p * 0.99).overdispersed


def test_weights_in_the_dispersion_check_equal_repeated_counts() -> None:
    """Frequency weights count as repeated observations (n is their total)."""
    w = np.arange(1, CALLS.size + 1)
    a = dispersion_check(CALLS, weights=w)
    b = dispersion_check(np.repeat(CALLS, w))
    assert a.n_obs == b.n_obs == float(w.sum())
    assert a.statistic == pytest.approx(b.statistic, rel=1e-12)
    assert a.pvalue == pytest.approx(b.pvalue, rel=1e-9)


def test_dispersion_errors_name_the_argument() -> None:
    """Too few counts, all zeros, a bad alpha and bad weights raise a MethodError saying so."""
    with pytest.raises(MethodError, match=r"at least 2 counts are needed, found 1"):
        dispersion_check([3])
    with pytest.raises(MethodError, match=r"every count is 0"):
        dispersion_check([0, 0, 0])
    with pytest.raises(MethodError, match=r"^alpha: expected a number strictly between 0 and 1"):
        dispersion_check(CALLS, alpha=1.5)
    with pytest.raises(MethodError, match=r"^weights: expected 20 weights, found 2$"):
        dispersion_check(CALLS, weights=[1, 2])
    with pytest.raises(MethodError, match=r"^dispersion_check: counts must be non-negative"):
        dispersion_check([1, 2, 0.5])


def test_count_diagnostics_mirror_the_check_and_never_raise_on_degenerate_data() -> None:
    """count_diagnostics holds dispersion_check's fields; all-zero counts give None numbers."""
    d = count_diagnostics(CALLS)["dispersion"]
    assert d == dispersion_check(CALLS).as_dict()
    assert set(d) == set(DispersionResult.__dataclass_fields__)
    z = count_diagnostics([0, 0, 0, 0])["dispersion"]
    assert z["statistic"] is None and z["overdispersed"] is False
    assert z["message"].startswith("not tested: ") and z["n_obs"] == 4.0
    json.dumps(z, allow_nan=False)


def test_sampler_diagnostics_equal_the_check_on_the_raw_counts() -> None:
    """The empirical_pmf sampler's diagnostics are dispersion_check of the data it was fitted to."""
    s = fit_empirical_pmf(CALLS)
    assert s.diagnostics == {"dispersion": dispersion_check(CALLS).as_dict()}
    assert s.diagnostics["dispersion"]["overdispersed"] is True


@pytest.mark.parametrize("method", ["poisson", "negative_binomial", "geometric"])
def test_count_families_fitted_through_fit_carry_the_dispersion_check(method: str) -> None:
    """fit adds the dispersion check the catalog names for count families, and only for them."""
    s = sw.fit(CALLS, method)
    # every family fit also records its (here empty) list of fit warnings
    assert s.diagnostics == {"dispersion": dispersion_check(CALLS).as_dict(), "warnings": []}
    assert "dispersion" not in sw.fit(CALLS + 0.5, "gamma").diagnostics


def test_artifact_round_trip_keeps_sampler_diagnostics_and_hash(tmp_path: Path) -> None:
    """Reloaded, sampler and diagnostics are identical; a rewrite has the same hash."""
    s = fit_empirical_pmf(CALLS, weights=np.linspace(0.5, 2.0, CALLS.size))
    assert sampler_class("empirical_pmf") is EmpiricalPmfSampler
    m1 = sw.write_sampler(s, tmp_path / "a.parquet", diagnostics=s.diagnostics)
    back = sw.load_sampler(tmp_path / "a.parquet")
    assert isinstance(back, EmpiricalPmfSampler)
    np.testing.assert_array_equal(back.probs, s.probs)
    np.testing.assert_array_equal(back.draw(200, rng=4), s.draw(200, rng=4))
    assert back.diagnostics == s.diagnostics == m1["diagnostics"]
    m2 = sw.write_sampler(back, tmp_path / "b.parquet", diagnostics=back.diagnostics)
    assert m1["content_hash"] == m2["content_hash"]


def test_cli_fit_writes_dispersion_diagnostics(tmp_path: Path, run_cli: Cli) -> None:
    """samplewright fit -m empirical_pmf stores the dispersion check in the artifact."""
    f = tmp_path / "calls.csv"
    f.write_text("calls\n" + "".join(f"{int(v)}\n" for v in CALLS))
    out = tmp_path / "calls.parquet"
    code, _, err = run_cli("fit", f, "-c", "calls", "-m", "empirical_pmf", "--out", out)
    assert code == 0, err
    d = sw.read_metadata(out)["diagnostics"]["dispersion"]
    assert d["overdispersed"] is True and d["n_obs"] == 20.0
