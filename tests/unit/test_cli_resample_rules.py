"""The resampling commands as the workflow rules run them (interval --items, replicate
--method-from a selected artifact), checked against scipy."""

from __future__ import annotations

import json
import shlex
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from samplewright.core.canonical import canonical_json
from samplewright.core.randomness import stream_rng
from samplewright.pipeline.plan import Plan
from samplewright.store.artifacts import load_sampler

Cli = Callable[..., tuple[int, str, str]]
HOURS = np.random.default_rng(31).gamma(2.0, 1.5, 80)  # invented repair hours


@pytest.fixture
def work(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A working folder with the repair hours as a CSV."""
    monkeypatch.chdir(tmp_path)
    pd.DataFrame({"hours": HOURS}).to_csv("d.csv", index=False, float_format="%.17g")
    return tmp_path


def test_the_rules_interval_command_matches_scipy(work: Path, run_cli: Cli) -> None:
    """The plan's interval arguments with the rule's seed and streams give, per item, the
    interval scipy.stats.bootstrap gives on the same stream."""
    items = [
        {"statistic": "mean", "method": "percentile", "n_resamples": 999},
        {"statistic": "std", "n_resamples": 999},
    ]
    ds = {"path": "d.csv", "column": "hours", "methods": ["gamma"], "intervals": items}
    plan = Plan({"store": "st", "root_seed": 3, "datasets": {"h": ds}})
    out = work / "iv.json"
    args = shlex.split(plan.interval_args("h"))
    code, _, err = run_cli("interval", "d.csv", "-c", "hours", *args, "--seed", 3,
                           "--stream", "h", "--stream", "intervals", "--out", out)  # fmt: skip
    assert code == 0, err
    rows = json.loads(out.read_text())["intervals"]
    for item, row, func, method in zip(
        plan.datasets["h"]["intervals"], rows, (np.mean, np.std), ("percentile", "BCa"),
        strict=True,
    ):  # fmt: skip
        rng = stream_rng(3, "h", "intervals", "interval", canonical_json(item))
        ref = stats.bootstrap((HOURS,), func, method=method, n_resamples=999, rng=rng)
        # source: scipy.stats.bootstrap (1.17) on the same resamples of the same stream
        assert row["low"] == pytest.approx(ref.confidence_interval.low, rel=1e-9)
        assert row["high"] == pytest.approx(ref.confidence_interval.high, rel=1e-9)


def test_replicates_of_a_selected_auto_refit_its_family(work: Path, run_cli: Cli) -> None:
    """--method-from an 'auto' artifact replicates the family auto chose (not auto itself), and
    the spread of the lognormal mu across bootstrap replicates is about sigma / sqrt(n)."""
    auto = work / "auto.parquet"
    code, _, err = run_cli("fit", "d.csv", "-c", "hours", "-m", "auto",
                           "-o", 'candidates=["lognormal"]', "--out", auto)  # fmt: skip
    assert code == 0, err
    out = work / "ens.parquet"
    code, stdout, err = run_cli("replicate", "d.csv", "-c", "hours", "--method-from", auto,
                                "--replicates", "200", "--seed", 1, "--out", out)  # fmt: skip
    assert code == 0, err
    assert stdout.startswith(f"{out}: lognormal, 200 nonparametric replicates")
    ens = load_sampler(out)
    mus = np.array([ens.replicate(i).params["mu"] for i in range(ens.n_replicates)])
    sigma = float(np.std(np.log(HOURS)))
    # source: the standard error of the mean of log values, sigma / sqrt(n) (common practice);
    # 200 bootstrap replicates estimate it within about 10 % (sd of an sd estimate: 1/sqrt(2B))
    assert np.std(mus, ddof=1) == pytest.approx(sigma / np.sqrt(HOURS.size), rel=0.2)
