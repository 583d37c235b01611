"""The resampling commands (interval, replicate, spread, mc-error) through their handlers."""

from __future__ import annotations

import argparse
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from samplewright.core.canonical import canonical_json
from samplewright.core.errors import MethodError
from samplewright.core.randomness import stream_rng
from samplewright.pipeline.cli.resample import add_commands
from samplewright.resample.intervals import bootstrap_interval

# invented daily counts with serial dependence (an AR(1) level) and repair hours
_rng = np.random.default_rng(12)
_level = np.zeros(120)
for _t in range(1, 120):
    _level[_t] = 0.7 * _level[_t - 1] + _rng.normal()
DAILY = np.round(5 + 2 * _level + _rng.normal(0, 0.5, 120))
HOURS = np.random.default_rng(13).lognormal(1.0, 0.5, 60)


def _run(*argv: object) -> argparse.Namespace:
    """Parse ``argv`` with the group's parsers and run the chosen handler."""
    parser = argparse.ArgumentParser(prog="samplewright")
    add_commands(parser.add_subparsers(dest="command", required=True))
    args = parser.parse_args([str(a) for a in argv])
    assert args.func(args) == 0
    return args


@pytest.fixture
def data_csv(tmp_path: Path) -> Path:
    """A CSV with daily counts and repair hours (demo data)."""
    f = tmp_path / "ops.csv"
    pd.DataFrame({"daily": DAILY, "hours": HOURS[np.arange(120) % 60]}).to_csv(f, index=False)
    return f


def test_interval_writes_what_bootstrap_interval_gives(data_csv: Path, tmp_path: Path) -> None:
    """The JSON holds each statistic's interval, from the stream of the seed and its name."""
    out = tmp_path / "iv.json"
    _run(
        "interval", data_csv, "-c", "daily", "-s", "mean", "-s", "quantile:0.9",
        "--method", "percentile", "--scheme", "stationary", "--block-length", "auto",
        "--resamples", "500", "--seed", "4", "--out", out,
    )  # fmt: skip
    doc = json.loads(out.read_text())
    assert [r["statistic"] for r in doc["intervals"]] == ["mean", "quantile:0.9"]
    item = {"statistic": "quantile:0.9", "method": "percentile", "confidence_level": 0.95,
            "scheme": "stationary", "block_length": "auto", "n_resamples": 500}  # fmt: skip
    ref = bootstrap_interval(
        DAILY, "quantile:0.9", method="percentile", n_resamples=500, scheme="stationary",
        block_length="auto", rng=stream_rng(4, "daily", "interval", canonical_json(item)),
    )  # fmt: skip
    got = doc["intervals"][1]
    assert (got["low"], got["high"], got["block_length"]) == (ref.low, ref.high, ref.block_length)
    assert doc["data"]["n_obs"] == 120 and doc["data"]["fingerprint"]


def test_interval_items_in_the_config_form_give_the_same_numbers(
    data_csv: Path, tmp_path: Path
) -> None:
    """--items (the workflow config's list) and --statistic give equal intervals per item."""
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    _run("interval", data_csv, "-c", "daily", "-s", "std", "--resamples", "300", "--out", a)
    items = json.dumps([{"statistic": "std", "n_resamples": 300, "block_length": "auto"}])
    _run("interval", data_csv, "-c", "daily", "--items", items, "--key", "k1", "--out", b)
    got_a, got_b = json.loads(a.read_text()), json.loads(b.read_text())
    assert got_a["intervals"] == got_b["intervals"] and got_b["key"] == "k1"
    with pytest.raises(MethodError, match="exactly one of --items or --statistic"):
        _run("interval", data_csv, "-c", "daily", "--out", a)
    with pytest.raises(MethodError, match="each interval needs 'statistic'"):
        _run("interval", data_csv, "-c", "daily", "--items", '[{"stat": "mean"}]', "--out", a)


def test_interval_refuses_censored_rows(data_csv: Path, tmp_path: Path) -> None:
    """Statistics of the values need every value observed: a censor column is refused."""
    f = tmp_path / "cens.csv"
    pd.DataFrame({"h": HOURS, "c": (HOURS > 4).astype(int)}).to_csv(f, index=False)
    with pytest.raises(MethodError, match="--censor: .* rows are censored"):
        _run("interval", f, "-c", "h", "--censor", "c", "-s", "mean", "--out", tmp_path / "x.json")


def test_replicate_writes_an_ensemble_artifact(data_csv: Path, tmp_path: Path) -> None:
    """replicate writes one artifact that loads as the ensemble fit_replicates makes."""
    from samplewright.fitting.replicates import fit_replicates
    from samplewright.store.artifacts import load_sampler

    out = tmp_path / "ens.parquet"
    _run("replicate", data_csv, "-c", "hours", "-m", "lognormal", "--replicates", "30",
         "--kind", "parametric", "--seed", "2", "--out", out)  # fmt: skip
    ens = load_sampler(out)
    values = pd.read_csv(data_csv, float_precision="round_trip")["hours"].to_numpy()
    direct = fit_replicates(values, "lognormal", n_replicates=30, kind="parametric",
                            rng=stream_rng(2, "hours", "replicates", "lognormal"))  # fmt: skip
    assert ens.describe() == direct.describe()
    assert ens.metadata["provenance"]["stream"] == ["hours"]


def test_replicate_takes_method_and_options_from_an_artifact(
    data_csv: Path, tmp_path: Path, run_cli
) -> None:
    """--method-from reuses the method and options a fitted artifact records."""
    from samplewright.store.artifacts import load_sampler

    fitted = tmp_path / "gamma.parquet"
    code, _, err = run_cli("fit", data_csv, "-c", "hours", "-m", "gamma", "-o", "loc=0.1",
                           "--out", fitted)  # fmt: skip
    assert code == 0, err
    out = tmp_path / "ens.parquet"
    _run("replicate", data_csv, "-c", "hours", "--method-from", fitted, "--replicates", "5",
         "--out", out)  # fmt: skip
    ens = load_sampler(out)
    assert ens.method == "gamma" and ens.replicate(0).params["loc"] == 0.1
    with pytest.raises(MethodError, match="exactly one of --method or --method-from"):
        _run("replicate", data_csv, "-c", "hours", "--out", out)


def test_spread_writes_markdown_and_json(tmp_path: Path, data_csv: Path) -> None:
    """spread tabulates the candidates' figures; an ensemble adds its intervals."""
    from samplewright.fitting.api import fit
    from samplewright.store.artifacts import write_sampler

    paths = []
    for m in ("lognormal", "gamma"):
        paths.append(tmp_path / f"{m}.parquet")
        write_sampler(fit(HOURS, m), paths[-1])
    ens = tmp_path / "ens.parquet"
    _run("replicate", data_csv, "-c", "hours", "-m", "gamma", "--replicates", "20", "--out", ens)
    md, js = tmp_path / "spread.md", tmp_path / "spread.json"
    _run("spread", *paths, "--ensemble", f"gamma={ens}", "-p", "0.5", "-p", "0.99", "--out", md)
    lines = md.read_text().splitlines()
    assert lines[0] == "| candidate | Q(0.5) | Q(0.99) | mean beyond Q(0.99) |"
    assert lines[3].startswith("| gamma |") and "[" in lines[3]
    _run("spread", *paths, "--label", "ln", "--label", "ga", "--out", js)
    doc = json.loads(js.read_text())
    assert [c["label"] for c in doc["candidates"]] == ["ln", "ga"]
    with pytest.raises(MethodError, match="--ensemble: no candidate labelled 'weibull'"):
        _run("spread", *paths, "--ensemble", f"weibull={ens}", "--out", md)


def test_mc_error_reports_errors_and_draws_needed(tmp_path: Path) -> None:
    """mc-error writes each statistic's Monte Carlo error and the draws for a target."""
    from samplewright.check.mc_error import mc_error

    draws = np.random.default_rng(3).gamma(2.0, 1.5, 20_000)
    f = tmp_path / "draws.csv"
    pd.DataFrame({"value": draws}).to_csv(f, index=False)
    out = tmp_path / "mc.json"
    _run("mc-error", f, "-s", "mean", "-s", "quantile:0.99", "--target", "0.01", "--out", out)
    doc = json.loads(out.read_text())
    values = pd.read_csv(f, float_precision="round_trip")["value"].to_numpy()
    ref = mc_error(values, "quantile:0.99", target_relative_error=0.01)
    got = doc["errors"][1]
    assert (got["low"], got["high"], got["n_draws_needed"]) == (
        ref.low,
        ref.high,
        ref.n_draws_needed,
    )
