"""Unit tests of the Kaplan–Meier method: its sampler, its fit and its tail rules.

Small data sets are invented; expected values are hand computations of the product-limit
formula (common practice, no source). Checks against lifelines, scipy and published numbers are
in tests/reference/test_censoring_reference.py.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate

import samplewright as sw
from samplewright.core.errors import MethodError
from samplewright.distributions.choices import TAIL_RULES
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.kaplan_meier import KaplanMeierSampler
from samplewright.fitting.kaplan_meier import estimate_survival, fit_kaplan_meier
from samplewright.fitting.registry import sampler_class

Cli = Callable[..., tuple[int, str, str]]

# Invented repair times (hours); True = the job was still open when the log was cut.
X = np.array([1.5, 2.0, 2.0, 3.5, 4.0, 4.0, 6.0, 7.5, 9.0, 12.0])
C = np.array([False, False, True, False, True, False, False, True, False, True])


def _sampler(tail: str = "at_last") -> KaplanMeierSampler:
    return fit_kaplan_meier(X, C, tail=tail)  # type: ignore[arg-type]


# --- the product-limit table -----------------------------------------------------------------


def test_survival_table_matches_a_hand_computation() -> None:
    """Survival falls only at event times, by (1 - d/n), with tied censorings still at risk."""
    r = estimate_survival(X, C)
    assert r.time.tolist() == [1.5, 2.0, 3.5, 4.0, 6.0, 7.5, 9.0, 12.0]
    assert r.n_at_risk.tolist() == [10, 9, 7, 6, 4, 3, 2, 1]
    assert r.n_events.tolist() == [1, 1, 1, 1, 1, 0, 1, 0]
    assert r.n_censored.tolist() == [0, 1, 0, 1, 0, 1, 0, 1]
    # hand computation (common practice, no source): running products of (1 - d/n)
    s = np.cumprod([9 / 10, 8 / 9, 6 / 7, 5 / 6, 3 / 4, 1.0, 1 / 2, 1.0])
    np.testing.assert_allclose(r.survival, s, rtol=0, atol=1e-15)


def test_integer_weights_equal_repeated_rows() -> None:
    """A frequency weight k gives the same table as the row repeated k times."""
    w = np.array([1, 3, 1, 2, 1, 1, 4, 1, 2, 1])
    a = estimate_survival(X, C, weights=w)
    b = estimate_survival(np.repeat(X, w), np.repeat(C, w))
    np.testing.assert_array_equal(a.time, b.time)
    np.testing.assert_allclose(a.survival, b.survival, rtol=0, atol=1e-15)
    np.testing.assert_array_equal(a.n_at_risk, b.n_at_risk)


def test_flags_may_be_zero_one_numbers() -> None:
    """0/1 numbers as censoring flags give the same table as booleans."""
    a = estimate_survival(X, C.astype(int))
    np.testing.assert_array_equal(a.survival, estimate_survival(X, C).survival)


# --- without censoring it is the empirical distribution --------------------------------------


@pytest.mark.parametrize("weighted", [False, True])
def test_no_censoring_equals_the_empirical_sampler(weighted: bool) -> None:
    """Without censored values, CDF, pmf, quantile, moments and support are the empirical ones."""
    rng = np.random.default_rng(11)
    x = np.round(rng.gamma(2.0, 3.0, 60), 1)  # rounding makes ties
    w = rng.integers(1, 5, x.size).astype(float) if weighted else None
    km = fit_kaplan_meier(x, None, weights=w)
    km_flags = fit_kaplan_meier(x, np.zeros(x.size, bool), weights=w, tail="exponential")
    emp = EmpiricalSampler(x, w)
    grid = np.linspace(x.min() - 1, x.max() + 1, 501)
    for s in (km, km_flags):
        np.testing.assert_allclose(s.cdf(grid), emp.cdf(grid), rtol=0, atol=2e-15)
        np.testing.assert_allclose(s.pmf(x), emp.pmf(x), rtol=0, atol=2e-15)
        u = rng.random(2000)
        np.testing.assert_array_equal(s.quantile(u), emp.quantile(u))
        assert s.mean == pytest.approx(emp.mean, rel=1e-14)
        assert s.var == pytest.approx(emp.var, rel=1e-13)
        assert s.support == emp.support
        assert s.params["survival_at_last"] == 0.0


# --- the tail rules -------------------------------------------------------------------------


def test_at_last_puts_the_remaining_mass_on_the_largest_value() -> None:
    """tail='at_last' adds an atom of mass S_last at the largest (censored) value."""
    s = _sampler("at_last")
    s_last = 9 / 10 * 8 / 9 * 6 / 7 * 5 / 6 * 3 / 4 * 1 / 2  # hand computation, no source
    assert s.params["survival_at_last"] == pytest.approx(s_last, rel=1e-15)
    assert s.pmf(12.0).item() == pytest.approx(s_last, rel=1e-14)
    assert s.cdf(12.0).item() == 1.0 and s.cdf(11.99).item() == pytest.approx(1 - s_last)
    assert s.support == (1.5, 12.0)
    assert s.draw(20_000, rng=5).max() == 12.0


def test_at_last_when_the_largest_value_is_both_event_and_censored() -> None:
    """A censoring tied with the last event adds no atom: the event's atom absorbs S_last."""
    s = fit_kaplan_meier([1.0, 2.0, 3.0, 3.0], [False, False, False, True])
    assert s.time.tolist() == [1.0, 2.0, 3.0]
    # hand computation: S(3) = 3/4 * 2/3 * (1 - 1/2) = 1/4, so the atom at 3 is 1/4 + 1/4
    assert s.pmf([1.0, 2.0, 3.0]).tolist() == pytest.approx([0.25, 0.25, 0.5])
    assert s.params["survival_at_last"] == pytest.approx(0.25)
    assert s.params["last_censored"] is True


def test_exponential_tail_continues_the_survival_with_the_whole_sample_rate() -> None:
    """tail='exponential' gives S(t) = S_last exp(-rate (t - t_max)), rate = events / exposure."""
    s = _sampler("exponential")
    rate = 6 / X.sum()  # 6 events over 51.5 hours at risk (hand computation)
    assert s.tail_rate == pytest.approx(rate, rel=1e-15)
    s_last = s.params["survival_at_last"]
    t = np.array([12.5, 20.0, 60.0])
    np.testing.assert_allclose(1 - s.cdf(t), s_last * np.exp(-rate * (t - 12.0)), rtol=1e-13)
    assert s.cdf(12.0).item() == pytest.approx(1 - s_last, rel=1e-15)  # continuous at t_max
    assert s.support == (1.5, np.inf)
    assert s.quantile(1.0).item() == np.inf
    np.testing.assert_allclose(s.quantile(s.cdf(t)), t, rtol=1e-12)
    assert integrate.quad(lambda v: s.pdf(v).item(), 12.0, np.inf)[0] == pytest.approx(s_last)


@pytest.mark.parametrize("tail", TAIL_RULES)
def test_moments_equal_integrals_of_the_survival_function(tail: str) -> None:
    """mean = ∫ S dt and E[X²] = ∫ 2t S dt for a non-negative variable (both tail rules)."""
    s = _sampler(tail)
    hi = 12.0 if tail == "at_last" else np.inf
    knots = [0.0, *s.time.tolist(), 12.0]
    pieces = list(zip(knots[:-1], knots[1:], strict=True)) + [(12.0, hi)]
    m1 = sum(integrate.quad(lambda v: 1 - s.cdf(v).item(), a, b)[0] for a, b in pieces if b > a)
    m2 = sum(
        integrate.quad(lambda v: 2 * v * (1 - s.cdf(v).item()), a, b)[0] for a, b in pieces if b > a
    )
    assert s.mean == pytest.approx(m1, rel=1e-9)
    assert s.var == pytest.approx(m2 - m1**2, rel=1e-8)


@pytest.mark.parametrize("tail", TAIL_RULES)
def test_quantile_is_the_generalised_inverse(tail: str) -> None:
    """Q(u) is the smallest x with F(x) >= u: F(Q(u)) >= u and F just below Q(u) is < u."""
    s = _sampler(tail)
    u = np.random.default_rng(3).random(5000)
    q = s.quantile(u)
    assert np.all(s.cdf(q) >= u - 1e-15)
    atoms = q <= 12.0
    assert np.all(s.cdf(np.nextafter(q[atoms], -np.inf)) < u[atoms])
    assert s.quantile(0.0).item() == 1.5


@pytest.mark.parametrize("tail", TAIL_RULES)
def test_draw_frequencies_follow_the_atoms(tail: str) -> None:
    """Draws are reproducible per seed and land on each atom about as often as its mass."""
    s = _sampler(tail)
    a = s.draw(40_000, rng=2026)
    np.testing.assert_array_equal(a, s.draw(40_000, rng=2026))
    assert a.dtype == np.float64
    freq = np.array([np.mean(a == t) for t in s.time])
    mass = s.pmf(s.time)
    # 5 binomial standard errors (common practice, no source)
    assert np.all(np.abs(freq - mass) < 5 * np.sqrt(mass * (1 - mass) / a.size))
    if tail == "exponential":
        assert np.mean(a > 12.0) == pytest.approx(s.params["survival_at_last"], abs=0.01)


# --- fit dispatch, artifacts, diagnostics ----------------------------------------------------


def test_fit_dispatches_kaplan_meier_with_its_option() -> None:
    """sw.fit(method='kaplan_meier', censored=..., tail=...) builds the same sampler."""
    s = sw.fit(X, method="kaplan_meier", censored=C, tail="exponential")
    assert isinstance(s, KaplanMeierSampler) and s.tail == "exponential"
    np.testing.assert_array_equal(s.survival, _sampler("exponential").survival)
    assert sw.fit(X, method="kaplan_meier", censored=C).tail == "at_last"  # the default
    assert "kaplan_meier" in sw.known_methods()


def test_diagnostics_report_counts_and_the_tail_rule() -> None:
    """diagnostics hold event and censoring counts, S at the largest value and the rule."""
    d = _sampler("exponential").diagnostics["censoring"]
    assert (d["n_events"], d["n_censored"], d["tail"]) == (6, 4, "exponential")
    assert d["last_value"] == 12.0 and d["last_censored"] is True
    assert d["tail_rate"] == pytest.approx(6 / 51.5)
    w = fit_kaplan_meier(X, C, weights=np.full(X.size, 2.5)).diagnostics["censoring"]
    assert (w["events_weight"], w["censored_weight"], w["tail_rate"]) == (15.0, 10.0, None)


@pytest.mark.parametrize("tail", TAIL_RULES)
def test_artifact_round_trip_keeps_sampler_and_hash(tmp_path: Path, tail: str) -> None:
    """Written and reloaded, the sampler is identical and rewriting it gives the same hash."""
    s = _sampler(tail)
    assert sampler_class("kaplan_meier") is KaplanMeierSampler
    json.dumps(s.describe(), allow_nan=False)
    m1 = sw.write_sampler(s, tmp_path / "a.parquet", diagnostics=s.diagnostics)
    back = sw.load_sampler(tmp_path / "a.parquet")
    assert isinstance(back, KaplanMeierSampler)
    grid = np.linspace(0, 40, 801)
    np.testing.assert_array_equal(back.cdf(grid), s.cdf(grid))
    np.testing.assert_array_equal(back.draw(100, rng=1), s.draw(100, rng=1))
    assert back.diagnostics == s.diagnostics
    m2 = sw.write_sampler(back, tmp_path / "b.parquet", diagnostics=back.diagnostics)
    assert m1["content_hash"] == m2["content_hash"]


def test_cli_fit_with_a_censor_column_records_diagnostics(tmp_path: Path, run_cli: Cli) -> None:
    """samplewright fit --censor --method kaplan_meier writes the censoring diagnostics."""
    f = tmp_path / "repairs.csv"
    f.write_text("hours,open\n" + "".join(f"{v},{int(c)}\n" for v, c in zip(X, C, strict=True)))
    out = tmp_path / "km.parquet"
    code, _, err = run_cli(
        "fit",
        f,
        "-c",
        "hours",
        "--censor",
        "open",
        "-m",
        "kaplan_meier",
        "--option",
        "tail=exponential",
        "--out",
        out,
    )
    assert code == 0, err
    meta = sw.read_metadata(out)
    assert meta["diagnostics"]["censoring"]["tail"] == "exponential"
    assert meta["diagnostics"]["censoring"]["n_censored"] == 4


# --- errors ---------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("kwargs", "pattern"),
    [
        (
            {"tail": "linear"},
            r"option 'tail' of kaplan_meier: expected one of at_last, exponential",
        ),
        ({"smooth": 1}, r"^unknown option 'smooth' for kaplan_meier \(allowed: tail\)$"),
    ],
)
def test_bad_options_are_named(kwargs: dict[str, object], pattern: str) -> None:
    """A bad tail rule or an unknown option raises a MethodError naming the option."""
    with pytest.raises(MethodError, match=pattern):
        sw.fit(X, method="kaplan_meier", censored=C, **kwargs)


def test_bad_inputs_are_named() -> None:
    """Bad flags, weights, all-censored data and negative values for the tail are refused."""
    with pytest.raises(MethodError, match=r"^censored: flags must be 0/1 .* flag 2 is 2$"):
        fit_kaplan_meier([1.0, 2.0], [0, 2])
    with pytest.raises(MethodError, match=r"^censored: expected 2 flags, found 3$"):
        fit_kaplan_meier([1.0, 2.0], [0, 1, 0])
    with pytest.raises(MethodError, match=r"^weights: .* weight 2 is -1.0$"):
        fit_kaplan_meier([1.0, 2.0], None, weights=[1.0, -1.0])
    with pytest.raises(MethodError, match=r"^censored: every value is censored"):
        fit_kaplan_meier([1.0, 2.0], [True, True])
    with pytest.raises(MethodError, match=r"'tail'='exponential' .* found -1.0$"):
        fit_kaplan_meier([-1.0, 2.0, 3.0], [False, False, True], tail="exponential")
    with pytest.raises(MethodError, match=r"^values: every value must be finite; value 2 is nan$"):
        fit_kaplan_meier([1.0, np.nan])
    fit_kaplan_meier([-1.0, 2.0, 3.0], [False, False, True])  # at_last accepts any real values
