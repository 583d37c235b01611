"""Config validation of the keys for resampling, joint inputs, incomplete data and judgement."""

from __future__ import annotations

import importlib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from samplewright.core.errors import ConfigError
from samplewright.pipeline import choices
from samplewright.pipeline.config import load_config, load_schema
from samplewright.pipeline.plan import Plan


@pytest.fixture
def data_dir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A working folder with one CSV of invented values: hours, costs, deductibles, bins."""
    monkeypatch.chdir(tmp_path)
    rng = np.random.default_rng(7)
    n = 120
    hours = rng.gamma(2.0, 2.0, n)
    ded = rng.choice([0.25, 0.5], n)
    pd.DataFrame(
        {
            "hours": hours,
            "cost": 40.0 * hours + rng.normal(0.0, 5.0, n),
            "loss": ded + rng.exponential(3.0, n),
            "ded": ded,
            "lo": np.floor(hours),
            "hi": np.floor(hours) + 1.0,
            "units": rng.integers(1, 4, n),
            "breaks": rng.poisson(2.0, n),
        }
    ).to_csv("d.csv", index=False)
    return tmp_path


def _data(**extra: object) -> dict:
    return {"path": "d.csv", "column": "hours", "methods": ["gamma", "empirical"], **extra}


def _cfg(datasets: dict | None = None, **top: object) -> dict:
    return {"store": "st", "datasets": datasets or {"hours": _data()}, **top}


JOINT = {"path": "d.csv", "columns": {"hours": "gamma", "cost": "empirical"}}

BAD = [
    (_cfg(sequence="sobel"), "samplewright.sequence: 'sobel' is not one of"),
    (
        _cfg({"hours": _data(sequence="qmc")}),
        "samplewright.datasets.hours.sequence: 'qmc' is not one of",
    ),
    (
        _cfg({"hours": _data(intervals=[{"statistic": "median"}])}),
        "samplewright.datasets.hours.intervals[0].statistic: expected a callable or a name",
    ),
    (
        _cfg({"hours": _data(intervals=[{"statistic": "mean", "scheme": "moving"}])}),
        "samplewright.datasets.hours.intervals[0].method: 'bca' needs independent resamples",
    ),
    (
        _cfg({"hours": _data(intervals=[{"statistic": "mean", "block_length": 5}])}),
        "samplewright.datasets.hours.intervals[0].block_length: only the block schemes",
    ),
    (
        _cfg({"hours": _data(intervals=[{"statistic": "mean", "confidence_level": 95}])}),
        "samplewright.datasets.hours.intervals[0].confidence_level: 95 is greater than",
    ),
    (
        _cfg({"hours": _data(intervals=[{"stat": "mean"}])}),
        "samplewright.datasets.hours.intervals[0]: unknown key 'stat'",
    ),
    (
        _cfg({"hours": _data(replicates={"n_replicates": 1})}),
        "samplewright.datasets.hours.replicates.n_replicates: 1 is less than the minimum of 2",
    ),
    (
        _cfg({"hours": _data(replicates={"kind": "jackknife"})}),
        "samplewright.datasets.hours.replicates.kind: 'jackknife' is not one of",
    ),
    (
        _cfg({"c": _data(column="loss", truncation="ded", methods=["gamma", "beta"])}),
        "samplewright.datasets.c.methods[1]: method 'beta' does not fit truncated or interval",
    ),
    (
        _cfg({"c": _data(column="loss", truncation=0.25, methods=["gamma"], replicates={})}),
        "samplewright.datasets.c.replicates: parameter replicates are not offered",
    ),
    (
        _cfg(
            {
                "c": _data(
                    column="loss",
                    truncation="ded",
                    methods=["gamma"],
                    intervals=[{"statistic": "mean"}],
                )
            }
        ),
        "samplewright.datasets.c.intervals: bootstrap intervals of the values need every value",
    ),
    (
        _cfg({"g": {"path": "d.csv", "lower": "lo", "methods": ["turnbull"]}}),
        "samplewright.datasets.g: missing key 'upper'",
    ),
    (
        _cfg({"g": _data(lower="lo", upper="hi", methods=["turnbull"])}),
        "samplewright.datasets.g.column: interval rows (lower, upper) take no 'column'",
    ),
    (
        _cfg({"g": _data(column="loss", truncation="deductible", methods=["lognormal"])}),
        "samplewright.datasets.g: d.csv: ... no column 'deductible'",
    ),
    (
        _cfg({"q": {"quantiles": {"probabilities": [0.1, 0.9], "values": [1, 2, 3]}}}),
        "samplewright.datasets.q.quantiles: expected as many values as probabilities (2), found 3",
    ),
    (
        _cfg({"q": {"quantiles": {"probabilities": [0.1, 0.5, 0.9], "values": [40, 35, 90]}}}),
        "samplewright.datasets.q.quantiles: values: must increase with probability",
    ),
    (
        _cfg({"q": {"quantiles": {"probabilities": [0.1, 1.5], "values": [1, 2]}}}),
        "samplewright.datasets.q.quantiles.probabilities[1]: 1.5 is greater than or equal",
    ),
    (
        _cfg({"q": {"quantiles": {"probabilities": [0.1, 0.9], "values": [1, 2]}, "column": "x"}}),
        "samplewright.datasets.q: a quantiles dataset takes no 'column'",
    ),
    (
        _cfg(
            {
                "t": {
                    "three_points": {
                        "low": 1,
                        "mode": 2,
                        "high": 3,
                        "family": "triangular",
                        "shape": 4,
                    }
                }
            }
        ),  # fmt: skip
        "samplewright.datasets.t.three_points.shape: only family 'pert' takes a shape",
    ),
    (
        _cfg({"t": {"three_points": {"low": 5, "mode": 2, "high": 3}}}),
        "samplewright.datasets.t.three_points: ",
    ),
    (
        _cfg({"t": {"three_points": {"low": 1, "mode": 2, "high": 3}, "path": "d.csv"}}),
        "samplewright.datasets.t: give one of 'path', 'knots', 'quantiles', 'three_points', "
        "found 'path' and 'three_points'",
    ),
    (
        _cfg({"c": _data(column="breaks", methods=["poisson", "normal"])}),
        "samplewright.datasets.c.choose: choose 'aic': 'poisson' models counts",
    ),
    (
        _cfg(joint={"job": {**JOINT, "coupling": "copula"}}),
        "samplewright.joint.job.coupling: 'copula' is not one of",
    ),
    (
        _cfg(joint={"job": {**JOINT, "columns": {"hours": "gama", "cost": "empirical"}}}),
        "samplewright.joint.job.columns.hours: unknown method 'gama'",
    ),
    (
        _cfg(
            joint={
                "job": {
                    **JOINT,
                    "columns": {"hours": {"method": "gamma", "colour": 1}, "cost": "empirical"},
                }
            }
        ),  # fmt: skip
        "samplewright.joint.job.columns.hours.options: unknown option 'colour' for gamma",
    ),
    (
        _cfg(joint={"job": {**JOINT, "coupling": "rows"}}),
        "samplewright.joint.job.columns.hours: coupling 'rows' resamples whole rows",
    ),
    (
        _cfg(joint={"job": {**JOINT, "rank_correlation": [[1, 0.5, 0], [0.5, 1, 0]]}}),
        "samplewright.joint.job.rank_correlation: expected a 2 x 2 matrix",
    ),
    (
        _cfg(joint={"job": {**JOINT, "rank_correlation": [[1, 0.5], [0.4, 1]]}}),
        "samplewright.joint.job.rank_correlation[0][1]: expected a symmetric matrix",
    ),
    (
        _cfg(
            joint={
                "job": {**JOINT, "rank_correlation": [[1, 0.5], [0.5, 1]], "coupling": "t_copula"}
            }
        ),  # fmt: skip
        "samplewright.joint.job.rank_correlation: a given matrix is used by couplings",
    ),
    (
        _cfg(joint={"hours": JOINT}),
        "samplewright.joint.hours: the name is also a dataset's",
    ),
    (
        _cfg(joint={"job": {**JOINT, "columns": {"hours": "gamma"}}}),
        "samplewright.joint.job.columns: expected at least 2 entries, found 1",
    ),
    (
        _cfg(joint={"job": {**JOINT, "path": "nope.csv"}}),
        "samplewright.joint.job.path: file 'nope.csv' not found",
    ),
    (_cfg(report={"drift_threshold": 0}), "samplewright.report.drift_threshold: 0 is less than"),
]


@pytest.mark.parametrize(("cfg", "message"), BAD)
def test_bad_new_keys_name_the_key_in_one_line(data_dir: Path, cfg: dict, message: str) -> None:
    """Each invalid use of a new key is one ConfigError line that names the key."""
    with pytest.raises(ConfigError) as err:
        Plan(cfg)
    text = str(err.value)
    assert "\n" not in text
    if " ... " in message:  # a message whose middle part comes from the reader
        head, tail = message.split(" ... ")
        assert text.startswith(head) and tail in text, text
    else:
        assert text.startswith(message), text


def test_counts_against_densities_pass_when_not_ranked(data_dir: Path) -> None:
    """A poisson and a normal candidate are allowed when the choice is not by likelihood."""
    Plan(_cfg({"c": _data(column="breaks", methods=["poisson", "normal"], choose="first")}))
    Plan(_cfg({"c": _data(column="breaks", methods=["poisson", "empirical_pmf"])}))


def test_defaults_of_the_new_keys(data_dir: Path) -> None:
    """Omitted settings get their documented defaults (sequence inherits the global one)."""
    cfg = load_config(
        _cfg(
            {
                "hours": _data(intervals=[{"statistic": "mean"}], replicates={}),
                "q": {"quantiles": {"probabilities": [0.1, 0.9], "values": [1, 2]}},
                "t": {"three_points": {"low": 1, "mode": 2, "high": 4}, "sequence": "halton"},
            },
            sequence="sobol",
            joint={"job": JOINT},
        )
    )
    ds = cfg["datasets"]
    # source: the defaults written in CONFIG_CONTRACT.md and the schema
    assert ds["hours"]["intervals"] == [
        {
            "statistic": "mean",
            "method": "bca",
            "confidence_level": 0.95,
            "scheme": "iid",
            "block_length": None,
            "n_resamples": 1999,
        }
    ]
    assert ds["hours"]["replicates"] == {"n_replicates": 200, "kind": "nonparametric"}
    assert ds["hours"]["sequence"] == "sobol" and ds["t"]["sequence"] == "halton"
    assert ds["q"]["quantiles"]["family"] == "metalog" and ds["q"]["choose"] == "first"
    assert ds["t"]["three_points"] == {"low": 1, "mode": 2, "high": 4, "family": "pert",
                                       "shape": 4.0}  # fmt: skip
    job = cfg["joint"]["job"]
    assert (job["coupling"], job["correlation_method"], job["sequence"]) == (
        "rank_correlation",
        "kendall",
        "sobol",
    )
    assert job["draws"] == cfg["draws"] == 10000 and cfg["report"] == {"drift_threshold": 0.05}


def test_block_schemes_default_to_an_automatic_block_length(data_dir: Path) -> None:
    """A block scheme without a block length uses 'auto' (Politis-White)."""
    item = {"statistic": "mean", "scheme": "stationary", "method": "percentile"}
    cfg = load_config(_cfg({"hours": _data(intervals=[item])}))
    assert cfg["datasets"]["hours"]["intervals"][0]["block_length"] == "auto"


@pytest.mark.parametrize(
    ("name", "module", "attr"),
    [
        ("SEQUENCES", "samplewright.core.uniforms", "SEQUENCES"),
        ("COUPLINGS", "samplewright.distributions.joint", "COUPLINGS"),
        ("CORRELATION_METHODS", "samplewright.fitting.copulas", "CORRELATION_METHODS"),
        ("INTERVAL_METHODS", "samplewright.resample.intervals", "METHODS"),
        ("SCHEMES", "samplewright.resample.schemes", "SCHEMES"),
        ("REPLICATIONS", "samplewright.distributions.ensemble", "REPLICATIONS"),
        ("QUANTILE_FAMILIES", "samplewright.fitting.expert", "QUANTILE_METHODS"),
        ("THREE_POINT_FAMILIES", "samplewright.fitting.expert", "THREE_POINT_FAMILIES"),
    ],
)
def test_light_choices_mirror_the_library(name: str, module: str, attr: str) -> None:
    """The pipeline's light copy of each choice list equals the library's own tuple."""
    assert tuple(getattr(choices, name)) == tuple(getattr(importlib.import_module(module), attr))


def test_schema_enums_come_from_the_choices() -> None:
    """The schema's enums are filled from samplewright.pipeline.choices, in one place."""
    schema = load_schema()
    defs = schema["$defs"]
    assert schema["properties"]["sequence"]["enum"] == list(choices.SEQUENCES)
    assert defs["joint"]["properties"]["coupling"]["enum"] == list(choices.COUPLINGS)
    assert defs["interval"]["properties"]["scheme"]["enum"] == list(choices.SCHEMES)
    family = defs["dataset"]["properties"]["quantiles"]["properties"]["family"]
    assert family["enum"] == list(choices.QUANTILE_FAMILIES)
