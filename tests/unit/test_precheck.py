"""The planning precheck: a method that cannot fit the data is refused before any job runs."""

from __future__ import annotations

import itertools
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import samplewright as sw
from samplewright.check.precheck import precheck
from samplewright.core.errors import ConfigError, SamplewrightError
from samplewright.fitting.catalog import CATALOG
from samplewright.pipeline.plan import Plan

RNG = np.random.default_rng(20261203)
# invented data of several shapes: positive, with a zero, on the real line, counts, in (0, 1),
# all equal, one value, two values, weighted
DATA = {
    "positive": RNG.gamma(2.0, 3.0, 40),
    "with_zero": np.r_[0.0, RNG.gamma(2.0, 3.0, 39)],
    "real_line": RNG.normal(0.0, 1.0, 40),
    "counts": RNG.poisson(3.0, 40).astype(float),
    "unit": RNG.beta(2.0, 3.0, 40),
    "equal": np.full(12, 2.5),
    "one": np.array([1.5]),
    "two": np.array([1.5, 2.5]),
}
FAST = sorted(m for m in CATALOG if m not in ("auto", "mixture", "gev", "student_t"))


def _fit_fails(x: np.ndarray, method: str, censored: np.ndarray | None) -> bool:
    options = {"n_trials": 10} if method == "binomial" else {}
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            sw.fit(x, method, censored=censored, **options)
    except SamplewrightError:
        return True
    return False


@pytest.mark.parametrize("censoring", [False, True])
def test_precheck_never_refuses_what_fit_accepts(censoring: bool) -> None:
    """Over a grid of methods and data, every refusal of precheck is a refusal of fit itself
    (the reference is samplewright's own fit), and it refuses at least the obvious cases."""
    refused = 0
    for (name, x), method in itertools.product(DATA.items(), FAST):
        c = None
        if censoring:
            c = np.zeros(x.size, dtype=bool)
            c[::4] = True
        options = {"n_trials": 10} if method == "binomial" else {}
        reason = precheck(x, method, options, censored=c)
        if reason is not None:
            refused += 1
            assert _fit_fails(x, method, c), (name, method, reason)
    # common practice, no source: counts refuse non-integers, positive families refuse <= 0, ...
    assert refused >= 40


@pytest.mark.parametrize(
    ("values", "method", "options", "needle"),
    [
        ([1.0, -2.0, 3.0], "lognormal", {}, "lognormal needs every value > 0"),
        ([1.0, 0.0, 3.0], "gamma", {}, "value 2 = 0.0"),
        ([1.5, 2.0, 3.0], "poisson", {}, "whole numbers >= 0"),
        ([1.0, 2.0, 12.0], "binomial", {"n_trials": 10}, "n_trials = 10"),
        ([0.2, 1.0, 0.5], "beta", {}, "strictly inside (0, 1)"),
        ([3.0], "normal", {}, "needs at least 2 values, found 1"),
        ([2.0, 2.0, 2.0], "weibull", {}, "all 3 values equal 2.0"),
        ([3.0, 2.0, 4.0, 3.0], "negative_binomial", {}, "variance > mean"),
    ],
)
def test_precheck_names_what_the_method_needs(
    values: list[float], method: str, options: dict, needle: str
) -> None:
    """The reason names the method, what it needs and the first value that breaks it."""
    reason = precheck(values, method, options)
    assert reason is not None and needle in reason
    with pytest.raises(SamplewrightError):
        sw.fit(values, method, **options)


def test_precheck_lets_a_free_location_and_censored_zeros_through() -> None:
    """A free location, or a right-censored value at the location, is not refused."""
    assert precheck([1.0, 0.0, -3.0, 2.0], "lognormal", {"loc": "free"}) is None
    c = np.array([True, False, False, False])
    assert precheck([0.0, 2.0, 3.0, 5.0], "weibull", {}, censored=c) is None
    assert precheck([1.0, 2.0], "uniform", {}, censored=[True, True]) is not None


def test_precheck_refuses_censoring_and_weights_a_method_cannot_take() -> None:
    """Censored values for a method without censored fits, weights for one without weights."""
    assert "right-censored" in str(precheck([1.0, 2.0, 3.0], "poisson", censored=[1, 0, 0]))
    assert "does not take weights" in str(
        precheck([1.0, 2.0, 3.0], "interpolated", weights=[1.0, 2.0, 1.0])
    )
    # rows of weight 0 do not count toward the minimum
    assert "found 1" in str(precheck([1.0, 2.0], "normal", weights=[1.0, 0.0]))


def _workflow(tmp_path: Path, methods: list, values: list[float]) -> dict:
    data = tmp_path / "hours.csv"
    pd.DataFrame({"hours": values}).to_csv(data, index=False)
    return {
        "store": str(tmp_path / "store"),
        "datasets": {"pumps": {"path": str(data), "column": "hours", "methods": methods}},
    }


def test_planning_refuses_a_method_that_cannot_fit_the_data(tmp_path: Path) -> None:
    """Planning fails with the dataset, the method's index and the reason, before any job."""
    cfg = _workflow(tmp_path, ["normal", "lognormal"], [2.0, 0.0, 4.5, 3.0, 7.5])
    cfg["datasets"]["pumps"]["choose"] = "normal"
    with pytest.raises(ConfigError) as info:
        Plan(cfg)
    msg = str(info.value)
    assert msg.startswith("samplewright.datasets.pumps.methods[1]: method 'lognormal'")
    assert "needs every value > 0" in msg and "hours.csv" in msg


def test_planning_skips_the_precheck_of_candidates_already_fitted(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Once a candidate's artifact exists, planning does not look at its data again."""
    import samplewright.pipeline.precheck_plan as hook

    cfg = _workflow(tmp_path, ["lognormal"], [2.0, 0.0, 4.5, 3.0, 7.5])
    with pytest.raises(ConfigError):
        Plan(cfg)
    with monkeypatch.context() as m:
        m.setattr(hook, "precheck_plan", lambda plan: None)
        path = Path(Plan(cfg).fit_path("pumps", "lognormal"))
    path.parent.mkdir(parents=True)
    sw.write_sampler(sw.fit([2.0, 4.5, 3.0, 7.5], "lognormal"), path)
    assert Plan(cfg).fit_path("pumps", "lognormal") == str(path)
