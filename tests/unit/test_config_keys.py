"""Planning keys of the new stages: stable under reformatting, moved only by what they hash."""

from __future__ import annotations

import copy
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import samplewright.pipeline.helpers as helpers
from samplewright.core.errors import ConfigError
from samplewright.core.versions import RESULTS_VERSION
from samplewright.pipeline.plan import Plan, content_key
from samplewright.store.fingerprints import fingerprint_arrays
from samplewright.store.layout import StoreLayout


@pytest.fixture
def data_dir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A working folder with one CSV of invented claims, repair hours and bins."""
    monkeypatch.chdir(tmp_path)
    rng = np.random.default_rng(11)
    n = 150
    hours = rng.gamma(2.0, 2.0, n)
    ded = rng.choice([0.25, 0.5], n)
    frame = pd.DataFrame(
        {
            "hours": hours,
            "cost": 40.0 * hours + rng.normal(0.0, 5.0, n),
            "loss": ded + rng.exponential(3.0, n),
            "ded": ded,
            "lo": np.floor(hours),
            "hi": np.floor(hours) + 1.0,
            "units": rng.integers(1, 4, n),
        }
    )
    frame.to_csv("d.csv", index=False, float_format="%.17g")
    return tmp_path


BASE: dict = {
    "store": "st",
    "root_seed": 5,
    "draws": 500,
    "datasets": {
        "hours": {
            "path": "d.csv",
            "column": "hours",
            "methods": ["gamma", "empirical"],
            "intervals": [{"statistic": "quantile:0.9"}],
            "replicates": {"n_replicates": 20},
        },
        "claims": {
            "path": "d.csv",
            "column": "loss",
            "truncation": "ded",
            "methods": ["lognormal"],
        },  # fmt: skip
        "flat": {"path": "d.csv", "column": "loss", "truncation": 0.25, "methods": ["lognormal"]},
        "grouped": {
            "path": "d.csv",
            "lower": "lo",
            "upper": "hi",
            "weights": "units",
            "methods": ["turnbull"],
        },  # fmt: skip
        "cost": {"quantiles": {"probabilities": [0.1, 0.5, 0.9], "values": [40, 55, 90]}},
        "lead": {"three_points": {"low": 40, "mode": 55, "high": 90}},
    },
    "joint": {"job": {"path": "d.csv", "columns": {"hours": "gamma", "cost": "empirical"}}},
}


def _cfg(edit=None) -> dict:  # type: ignore[no-untyped-def]
    cfg = copy.deepcopy(BASE)
    if edit is not None:
        edit(cfg)
    return cfg


def _keys(plan: Plan) -> dict[str, str]:
    """Every key of the plan, by what it is."""
    out = {}
    for name in plan.datasets:
        out[f"select:{name}"] = plan.select_key(name)
        out[f"draws:{name}"] = plan.draws_key(name)
        for spec in plan.specs[name]:
            out[f"fit:{name}:{spec.label}"] = plan.fit_key(name, spec.label)
    out["intervals:hours"] = plan.intervals_key("hours")
    out["replicates:hours"] = plan.replicates_key("hours")
    out["joint:job"] = plan.joint_key("job")
    out["joint_draws:job"] = plan.joint_draws_key("job")
    return out


def _changed(a: Plan, b: Plan) -> set[str]:
    ka, kb = _keys(a), _keys(b)
    return {k for k in ka if ka[k] != kb[k]}


def test_keys_are_stable_across_plans_and_dataset_order(data_dir: Path) -> None:
    """Two plans of one config, and one with its datasets listed in reverse, share every key."""
    a = Plan(_cfg())
    b = Plan(_cfg())

    def reverse(cfg: dict) -> None:
        cfg["datasets"] = dict(reversed(list(cfg["datasets"].items())))

    assert _keys(a) == _keys(b) == _keys(Plan(_cfg(reverse)))


def test_writing_out_the_defaults_changes_no_key(data_dir: Path) -> None:
    """Writing a setting's default (4 or 4.0, 'metalog', 'bca', ...) leaves every key as it was."""

    def explicit(cfg: dict) -> None:
        cfg["datasets"]["lead"]["three_points"] |= {"family": "pert", "shape": 4}
        cfg["datasets"]["cost"]["quantiles"] |= {"family": "metalog", "lower": None}
        cfg["datasets"]["hours"]["intervals"][0] |= {"method": "bca", "n_resamples": 1999}
        cfg["datasets"]["hours"]["replicates"]["kind"] = "nonparametric"
        cfg["sequence"] = "random"
        cfg["joint"]["job"] |= {"coupling": "rank_correlation", "correlation_method": "kendall"}

    assert _changed(Plan(_cfg()), Plan(_cfg(explicit))) == set()


def test_plain_draws_keep_their_earlier_key(data_dir: Path) -> None:
    """With sequence 'random' the draws key is the formula from before sequences existed;
    another sequence changes the draws key and nothing else."""
    plan = Plan(_cfg())
    # source: the key formula documented in samplewright/pipeline/plan.py (the earlier one)
    expected = content_key("draws", plan.select_key("hours"), 500, 5, RESULTS_VERSION)
    assert plan.draws_key("hours") == expected

    def sobol(cfg: dict) -> None:
        cfg["datasets"]["hours"]["sequence"] = "sobol"

    assert _changed(plan, Plan(_cfg(sobol))) == {"draws:hours"}


def test_each_setting_moves_only_its_keys(data_dir: Path) -> None:
    """An interval item, the replicate count, the truncation point, a joint setting and the root
    seed each move exactly the keys built from them."""

    def items(cfg: dict) -> None:
        cfg["datasets"]["hours"]["intervals"].append({"statistic": "mean"})

    def reps(cfg: dict) -> None:
        cfg["datasets"]["hours"]["replicates"]["n_replicates"] = 30

    def point(cfg: dict) -> None:
        cfg["datasets"]["flat"]["truncation"] = 0.3

    def coupling(cfg: dict) -> None:
        cfg["joint"]["job"]["coupling"] = "gaussian_copula"

    def joint_sequence(cfg: dict) -> None:
        cfg["joint"]["job"]["sequence"] = "sobol"

    def seed(cfg: dict) -> None:
        cfg["root_seed"] = 6

    base = Plan(_cfg())
    assert _changed(base, Plan(_cfg(items))) == {"intervals:hours"}
    assert _changed(base, Plan(_cfg(reps))) == {"replicates:hours"}
    assert _changed(base, Plan(_cfg(point))) == {"fit:flat:lognormal", "select:flat", "draws:flat"}
    assert _changed(base, Plan(_cfg(coupling))) == {"joint:job", "joint_draws:job"}
    assert _changed(base, Plan(_cfg(joint_sequence))) == {"joint_draws:job"}
    seeded = {k for k in _keys(base) if k.split(":")[0] in ("draws", "intervals", "replicates")}
    assert _changed(base, Plan(_cfg(seed))) == seeded | {"joint:job", "joint_draws:job"}


def test_renamed_columns_keep_the_dataset_keys(data_dir: Path) -> None:
    """Renaming columns in the file and the config changes no dataset key; a joint input's keys
    move, since its columns' names and order are those of its draws (so does a swap)."""
    base = Plan(_cfg())
    frame = pd.read_csv("d.csv", float_precision="round_trip")
    frame.rename(columns={"ded": "deductible", "hours": "h"}).to_parquet("renamed.parquet")

    def renamed(cfg: dict) -> None:
        for ds in cfg["datasets"].values():
            if "path" in ds:
                ds["path"] = "renamed.parquet"
                if ds.get("column") == "hours":
                    ds["column"] = "h"
        cfg["datasets"]["claims"]["truncation"] = "deductible"
        cfg["joint"]["job"] |= {"path": "renamed.parquet",
                                "columns": {"h": "gamma", "cost": "empirical"}}  # fmt: skip

    def swapped(cfg: dict) -> None:
        cfg["joint"]["job"]["columns"] = {"cost": "empirical", "hours": "gamma"}

    assert _changed(base, Plan(_cfg(renamed))) == {"joint:job", "joint_draws:job"}
    assert _changed(base, Plan(_cfg(swapped))) == {"joint:job", "joint_draws:job"}


def test_a_changed_deductible_moves_only_its_dataset(data_dir: Path) -> None:
    """Changing one deductible in the file moves the truncated dataset's keys and snapshot, and
    no other dataset's (no other reads that column)."""
    base = Plan(_cfg())
    frame = pd.read_csv("d.csv", float_precision="round_trip")
    frame.loc[0, "ded"] = 0.125
    frame.to_csv("d.csv", index=False, float_format="%.17g")
    after = Plan(_cfg())
    assert _changed(base, after) == {"fit:claims:lognormal", "select:claims", "draws:claims"}
    assert after.snapshot_path("claims") != base.snapshot_path("claims")


def test_judgement_keys_come_from_the_points(data_dir: Path) -> None:
    """A quantiles dataset is fingerprinted from its probabilities then values (no file)."""
    plan = Plan(_cfg())
    # source: the rule written in samplewright/pipeline/plan.py (points as one float array)
    assert plan.fingerprint("cost") == fingerprint_arrays([0.1, 0.5, 0.9, 40.0, 55.0, 90.0])
    assert plan.fingerprint("lead") == fingerprint_arrays([40.0, 55.0, 90.0])

    def moved(cfg: dict) -> None:
        cfg["datasets"]["cost"]["quantiles"]["values"][1] = 56

    assert _changed(plan, Plan(_cfg(moved))) == {
        "fit:cost:quantiles",
        "select:cost",
        "draws:cost",
    }


def test_paths_targets_and_helpers(data_dir: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Paths are the layout's for the plan's keys; targets list each configured output once;
    the helpers give those paths and name what is not configured."""
    monkeypatch.setattr(helpers, "_PLANS", [])
    plan = helpers.register(Plan(_cfg()))
    layout = StoreLayout("st")
    assert helpers.intervals("hours") == layout.intervals("hours", plan.intervals_key("hours"))
    assert helpers.replicates("hours") == layout.replicates("hours", plan.replicates_key("hours"))
    assert helpers.joint("job") == layout.joint("job", plan.joint_key("job"))
    assert helpers.joint_draws("job") == layout.joint_draws("job", plan.joint_draws_key("job"))
    assert helpers.report("hours") == layout.report("hours", plan.report_key("hours"))
    assert plan.snapshot_path("claims") == layout.table_snapshot(
        "claims", plan.fingerprint("claims")[:20]
    )
    assert plan.snapshot_path("flat") == layout.snapshot("flat", plan.fingerprint("flat")[:20])
    targets = helpers.targets()
    assert len(targets) == len(set(targets))
    assert {helpers.intervals("hours"), helpers.joint_draws("job")} <= set(targets)
    # a check summary for every dataset read from data (truncated and interval rows too),
    # none for inputs without data (drawn CDFs, elicited values)
    checks = {n for n in plan.datasets if plan.check_path(n) in targets}
    assert checks == {n for n in plan.datasets if plan.has_data(n)}
    assert "hours" in checks and len(checks) < len(plan.datasets)
    assert helpers.report("hours") not in targets
    plan.enable_reports()
    assert helpers.report("hours") in helpers.targets()
    with pytest.raises(ConfigError, match="datasets.claims: no 'intervals' in the config"):
        helpers.intervals("claims")
    with pytest.raises(ConfigError, match="no joint input 'jobs'"):
        helpers.joint("jobs")


def test_rule_arguments_name_the_columns_by_role(data_dir: Path) -> None:
    """Fit and snapshot arguments carry the truncation, interval and weight columns."""
    plan = Plan(_cfg())
    assert (
        plan.fit_args("claims", "lognormal") == "--method lognormal --column loss --truncation ded"
    )
    assert plan.fit_args("flat", "lognormal") == "--method lognormal --truncation 0.25"
    assert plan.table_snapshot_args("grouped") == (
        "--lower lo --upper hi --weights units --missing error --infinite error"
    )
    assert plan.table_snapshot_args("job").startswith("--columns hours,cost ")
    assert plan.elicit_args("lead") == "--three-points 40.0,55.0,90.0 --family pert --shape 4.0"
    assert plan.replicate_args("hours") == "--replicates 20 --kind nonparametric"
