"""The planning precheck: a method that cannot fit the data is refused before any job runs."""

from __future__ import annotations

import itertools
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import samplewright as sw
from samplewright.check.precheck import precheck, precheck_rows
from samplewright.core.errors import ConfigError, SamplewrightError
from samplewright.fitting.catalog import CATALOG
from samplewright.fitting.interval_api import INCOMPLETE_METHODS, fit_interval, fit_truncated
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


# --- spliced, hurdle, zero-inflated: the fitters' own minimums ----------------------------------

# 37 values up to 9 and three above 10 (invented)
FEW_ABOVE = np.r_[np.linspace(1.0, 9.0, 37), 11.0, 12.0, 15.0]


@pytest.mark.parametrize(
    ("values", "method", "options", "needle"),
    [
        (FEW_ABOVE, "spliced", {"threshold": 10}, "at least 10 values above its threshold"),
        # common practice, no source: the 0.95 inverse-CDF quantile of 40 values is the 38th, 11
        (FEW_ABOVE, "spliced", {"threshold_quantile": 0.95}, "(threshold_quantile: 11), found 2"),
        (FEW_ABOVE, "spliced", {"threshold": 0.5}, "a value at or below its threshold"),
        (np.zeros(5), "hurdle", {}, "every value equals at=0"),
        (np.r_[np.zeros(5), 2.0], "hurdle", {}, "needs at least 2 values other than at=0"),
        (np.r_[np.zeros(5), -2.0, 3.0], "hurdle", {}, "hurdle body 'lognormal': lognormal needs"),
        (np.r_[np.zeros(5), 4.0, 4.0], "hurdle", {"body": "gamma"}, "all 2 values equal 4.0"),
        (np.zeros(6), "zero_inflated", {}, "every count is 0"),
    ],
)
def test_precheck_applies_the_fitters_minimums(
    values: np.ndarray, method: str, options: dict, needle: str
) -> None:
    """A threshold with too few exceedances, a hurdle without enough other values, counts all 0:
    refused by the precheck, and by the fit itself."""
    reason = precheck(values, method, options)
    assert reason is not None and needle in reason, reason
    assert "\n" not in reason
    with pytest.raises(SamplewrightError):
        sw.fit(values, method, **options)


def test_precheck_lets_enough_exceedances_through() -> None:
    """Ten values above the threshold pass, as the fit accepts them."""
    x = np.r_[np.linspace(1.0, 9.0, 30), np.linspace(11.0, 30.0, 10)]
    assert precheck(x, "spliced", {"threshold": 10}) is None
    sw.fit(x, "spliced", threshold=10)
    assert precheck(np.r_[np.zeros(5), 2.0, 3.5], "hurdle", {}) is None


# --- truncated, censored and interval rows ------------------------------------------------------

INF = np.inf
ROWS = {
    "truncated": {
        "values": np.r_[RNG.gamma(2.0, 3.0, 30) + 1.0],
        "censored": np.arange(30) % 5 == 0,
        "truncation": 1.0,
    },
    "intervals_from_zero": {
        "lower": np.r_[0.0, 0.0, 1.0, 2.0, 4.0, 3.0],
        "upper": np.r_[1.0, 0.0, 2.0, 4.0, INF, 3.0],
    },
    "all_right": {"values": np.array([1.0, 2.0, 3.0]), "censored": np.ones(3, bool)},
    "real_line": {"lower": np.r_[-3.0, -1.0, 0.5, 2.0], "upper": np.r_[-1.0, -1.0, 1.5, 2.0]},
    "one_row": {"lower": np.r_[1.0], "upper": np.r_[2.0]},
    "equal_exact": {"values": np.full(6, 2.5), "censored": np.zeros(6, bool)},
}
ROW_METHODS = [m for m in INCOMPLETE_METHODS if m not in ("auto", "gev", "student_t")]


def _rows_fail(method: str, rows: dict) -> bool:
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            if "lower" in rows:
                fit_interval(rows["lower"], rows["upper"], method)
            else:
                fit_truncated(rows["values"], method, censored=rows["censored"],
                              truncation=rows.get("truncation"))  # fmt: skip
    except SamplewrightError:
        return True
    return False


def test_precheck_rows_never_refuses_what_the_fit_accepts() -> None:
    """Over a grid of incomplete datasets and methods, every refusal is a refusal of the fit
    (the reference is samplewright's own fit_truncated / fit_interval)."""
    refused = 0
    for (name, rows), method in itertools.product(ROWS.items(), ROW_METHODS):
        reason = precheck_rows(method, {}, **rows)
        if reason is not None:
            refused += 1
            assert _rows_fail(method, rows), (name, method, reason)
    # common practice, no source: every row right-censored, one row, exact zeros for lognormal
    assert refused >= 25


@pytest.mark.parametrize(
    ("method", "options", "rows", "needle"),
    [
        ("lognormal", {}, {"lower": [0.0, 2.0], "upper": [0.0, 3.0]}, "every exact value > 0.0"),
        ("kaplan_meier", {}, {"lower": [1.0, 2.0], "upper": [1.5, 2.0]}, "use method 'turnbull'"),
        ("gamma", {}, {"lower": [1.0], "upper": [2.0]}, "gamma needs at least 2 rows, found 1"),
        ("gamma", {"loc": "free"}, {"values": [1.0, 2.0]}, "'free' is not offered"),
        (
            "weibull",
            {},
            {"values": [1.0, 2.0, 3.0], "censored": [1, 1, 1]},
            "every informative row is right-censored",
        ),
        (
            "auto",
            {},
            {"values": [1.0, 2.0, 3.0], "censored": [1, 1, 1]},
            "auto: none of its candidates can fit these rows (first, lognormal:",
        ),
    ],
)
def test_precheck_rows_names_what_the_method_needs(
    method: str, options: dict, rows: dict, needle: str
) -> None:
    """The reason is the fitter's own message (one line), and the fit refuses too."""
    reason = precheck_rows(method, options, **rows)
    assert reason is not None and needle in reason and "\n" not in reason, reason
    with pytest.raises(SamplewrightError):
        if "lower" in rows:
            fit_interval(rows["lower"], rows["upper"], method, **options)
        else:
            sw.fit(rows["values"], method, censored=rows.get("censored"), truncation=0.0,
                   **options)  # fmt: skip


def test_precheck_rows_drops_rows_of_weight_zero() -> None:
    """Rows of weight 0 are not counted, as the fitters drop them."""
    rows = {"lower": [1.0, 2.0, 3.0], "upper": [1.0, 2.0, 3.0], "weights": [1.0, 0.0, 0.0]}
    assert "found 1" in str(precheck_rows("gamma", {}, **rows))


# --- planning ---------------------------------------------------------------------------------


def _table_workflow(tmp_path: Path, frame: pd.DataFrame, dataset: dict) -> dict:
    data = tmp_path / "claims.csv"
    frame.to_csv(data, index=False)
    return {
        "store": str(tmp_path / "store"),
        "datasets": {"claims": {"path": str(data), **dataset}},
    }


def test_planning_prechecks_interval_and_truncated_datasets(tmp_path: Path) -> None:
    """Interval rows with an exact 0 refuse lognormal, naming the dataset, the method and the
    columns; a truncation column with every value censored refuses weibull; auto passes."""
    frame = pd.DataFrame({"lo": [0.0, 1.0, 2.0, 3.0], "hi": [0.0, 2.0, 3.0, 5.0]})
    cfg = _table_workflow(tmp_path, frame, {"lower": "lo", "upper": "hi",
                                            "methods": ["turnbull", "lognormal"]})  # fmt: skip
    with pytest.raises(ConfigError) as info:
        Plan(cfg)
    msg = str(info.value)
    assert msg.startswith("samplewright.datasets.claims.methods[1]: method 'lognormal' cannot")
    assert "columns 'lo', 'hi'" in msg and "every exact value > 0.0" in msg and "\n" not in msg
    frame = pd.DataFrame({"paid": [5.0, 8.0, 9.0], "capped": [1, 1, 1], "ded": [1.0, 2.0, 1.0]})
    ds = {"column": "paid", "censor": "capped", "truncation": "ded", "methods": ["weibull"]}
    cfg = _table_workflow(tmp_path, frame, ds)
    with pytest.raises(ConfigError, match=r"methods\[0\]: method 'weibull' cannot fit column"):
        Plan(cfg)
    frame = pd.DataFrame({"paid": RNG.gamma(2.0, 3.0, 30) + 2.0, "ded": 2.0})
    cfg = _table_workflow(tmp_path, frame, {"column": "paid", "truncation": "ded",
                                            "methods": ["auto", "lognormal"]})  # fmt: skip
    Plan(cfg)  # nothing to refuse


def test_planning_refuses_a_threshold_with_too_few_exceedances(tmp_path: Path) -> None:
    """`threshold: 10` with 3 values above it stops planning with one line."""
    cfg = _workflow(tmp_path, [{"method": "spliced", "options": {"threshold": 10}}],
                    FEW_ABOVE.tolist())  # fmt: skip
    with pytest.raises(ConfigError) as info:
        Plan(cfg)
    assert str(info.value) == (
        f"samplewright.datasets.pumps.methods[0]: method 'spliced' cannot fit column 'hours' of "
        f"{tmp_path / 'hours.csv'}: spliced needs at least 10 values above its threshold "
        "(threshold: 10), found 3"
    )


def test_a_method_typo_in_the_config_gets_the_nearest_name(tmp_path: Path) -> None:
    """An unknown method or option gets the nearest known name, not the list of every method."""
    with pytest.raises(ConfigError) as info:
        Plan(_workflow(tmp_path, ["lognormall"], [1.0, 2.0, 3.0]))
    msg = str(info.value)
    assert "unknown method 'lognormall'; did you mean 'lognormal'?" in msg
    assert "kaplan_meier" not in msg
    with pytest.raises(ConfigError, match="unknown option 'treshold' for spliced; did you mean"):
        Plan(_workflow(tmp_path, [{"method": "spliced", "options": {"treshold": 3}}], [1.0, 2.0]))


@pytest.mark.slow
@pytest.mark.pipeline
def test_a_dry_run_says_why_in_one_line(tmp_path: Path) -> None:
    """`snakemake -n` on a workflow whose spliced threshold leaves 3 exceedances stops before
    any job with the dataset, the method and the reason on one line."""
    import subprocess
    import sys

    import yaml

    cfg = _workflow(tmp_path, [{"method": "spliced", "options": {"threshold": 10}}],
                    FEW_ABOVE.tolist())  # fmt: skip
    (tmp_path / "config.yaml").write_text(yaml.safe_dump({"samplewright": cfg}))
    (tmp_path / "Snakefile").write_text(
        'import samplewright\nconfigfile: "config.yaml"\n\n'
        "module samplewright:\n    snakefile:\n        samplewright.rules_path()\n"
        '    config:\n        config["samplewright"]\n\nuse rule * from samplewright\n'
    )
    snakemake = str(Path(sys.executable).parent / "snakemake")
    run = subprocess.run([snakemake, "-n", "--cores", "1"], cwd=tmp_path, capture_output=True,
                         text=True, timeout=300)  # fmt: skip
    out = run.stdout + run.stderr
    assert run.returncode != 0
    line = next(ln for ln in out.splitlines() if "samplewright.datasets.pumps.methods[0]" in ln)
    assert "method 'spliced' cannot fit column 'hours'" in line and "found 3" in line
