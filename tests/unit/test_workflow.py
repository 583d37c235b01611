"""Workflow config validation, content keys and path helpers (samplewright.workflow)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import samplewright.pipeline.plan as wf
from samplewright.core.errors import ConfigError
from samplewright.pipeline.cli import main


@pytest.fixture
def data_dir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A working folder with one small CSV (invented values; only shapes matter here)."""
    monkeypatch.chdir(tmp_path)
    rng = np.random.default_rng(3)
    pd.DataFrame({"hours": rng.gamma(2.0, 2.0, 200), "site": "a"}).to_csv("d.csv", index=False)
    return tmp_path


def _cfg(**dataset: object) -> dict:
    ds = {"path": "d.csv", "column": "hours", "methods": ["gamma", "empirical"], **dataset}
    return {"store": "st", "datasets": {"hours": ds}}


def test_defaults_are_filled(data_dir: Path) -> None:
    """Omitted keys get the schema's defaults (store aside), per dataset too."""
    cfg = wf.load_config(_cfg())
    ds = cfg["datasets"]["hours"]
    assert cfg["root_seed"] == 0 and cfg["draws"] == 10000 and cfg["choose"] == "aic"
    assert ds["missing"] == "error" and ds["weights"] is None and ds["draws"] == 10000
    assert ds["produced"] is False


@pytest.mark.parametrize(
    ("cfg", "message"),
    [
        (
            {
                "datasets": {
                    "hours": {"path": "d.csv", "column": "hours", "methods": ["gamma"], "colour": 1}
                }
            },
            "samplewright.datasets.hours: unknown key 'colour'",
        ),
        ({"datasets": {}, "seed": 1}, "samplewright: unknown key 'seed'"),
        (
            {"datasets": {"hours": {"path": "nope.csv", "column": "hours", "methods": ["gamma"]}}},
            "samplewright.datasets.hours.path: file 'nope.csv' not found",
        ),
        (
            {"datasets": {"hours": {"path": "d.csv", "column": "hours", "methods": ["gama"]}}},
            "samplewright.datasets.hours.methods[0]: unknown method 'gama'",
        ),
        (
            {
                "datasets": {
                    "hours": {
                        "path": "d.csv",
                        "column": "hours",
                        "methods": [{"method": "gamma", "options": {"shape": 2}}],
                    }
                }
            },
            "samplewright.datasets.hours.methods[0].options: unknown option 'shape' for gamma",
        ),
        (
            {
                "datasets": {
                    "hours": {"path": "d.csv", "column": "hours", "methods": ["gamma", "gamma"]}
                }
            },
            "label 'gamma' appears twice",
        ),
        (
            {
                "datasets": {
                    "hours": {
                        "path": "d.csv",
                        "column": "hours",
                        "methods": ["gamma"],
                        "choose": "best",
                    }
                }
            },
            "samplewright.datasets.hours.choose: 'best' is neither",
        ),
        (
            {"datasets": {"hours": {"path": "d.csv", "methods": ["gamma"]}}},
            "samplewright.datasets.hours: missing key 'column'",
        ),
        (
            {
                "root_seed": -1,
                "datasets": {"h": {"path": "d.csv", "column": "hours", "methods": ["gamma"]}},
            },
            "samplewright.root_seed: -1 is less than the minimum of 0",
        ),
        ({"datasets": {}}, "samplewright.datasets: at least one dataset is needed"),
        (
            {
                "datasets": {
                    "hours": {
                        "path": "d.csv",
                        "column": "hours",
                        "methods": ["gamma"],
                        "missing": "skip",
                    }
                }
            },
            "samplewright.datasets.hours.missing",
        ),
    ],
)
def test_bad_config_names_the_key(data_dir: Path, cfg: dict, message: str) -> None:
    """Each invalid config raises ConfigError whose message names the offending key."""
    with pytest.raises(ConfigError) as err:
        wf.Plan(cfg)
    assert message in str(err.value)


def test_missing_column_is_reported_with_the_dataset(data_dir: Path) -> None:
    """A column absent from the file fails at planning time naming dataset and column."""
    with pytest.raises(ConfigError, match=r"datasets\.hours: .*no column 'hrs'"):
        wf.Plan(_cfg(column="hrs"))


def test_keys_follow_content_not_files(data_dir: Path) -> None:
    """Keys stay put when the file is rewritten as Parquet, and change with one value."""
    a = wf.Plan(_cfg())
    frame = pd.read_csv("d.csv", float_precision="round_trip")
    frame[["site", "hours"]].to_parquet("d.parquet")
    b = wf.Plan(_cfg(path="d.parquet"))
    assert a.select_key("hours") == b.select_key("hours")
    assert a.fit_path("hours", "gamma") == b.fit_path("hours", "gamma")
    frame.loc[3, "hours"] += 1e-9
    frame.to_csv("d.csv", index=False)
    c = wf.Plan(_cfg())
    assert c.fit_key("hours", "gamma") != a.fit_key("hours", "gamma")
    assert c.snapshot_path("hours") != a.snapshot_path("hours")


def test_option_and_choice_enter_only_their_keys(data_dir: Path) -> None:
    """An option changes one candidate's key; the selection rule changes only the select key."""
    a = wf.Plan(_cfg())
    b = wf.Plan(_cfg(methods=[{"method": "gamma", "options": {"loc": -1.0}}, "empirical"]))
    assert a.fit_key("hours", "empirical") == b.fit_key("hours", "empirical")
    assert a.fit_key("hours", "gamma") != b.fit_key("hours", "gamma")
    c = wf.Plan(_cfg(choose="empirical"))
    assert c.fit_key("hours", "gamma") == a.fit_key("hours", "gamma")
    assert c.select_key("hours") != a.select_key("hours")
    assert [s.label for s in c.candidates("hours")] == ["empirical", "gamma"]


def test_fingerprint_cache_written_once_beside_store(data_dir: Path) -> None:
    """Planning memoises fingerprints in <store>/fingerprints.json."""
    wf.Plan(_cfg())
    assert (data_dir / "st" / "fingerprints.json").is_file()


def test_helpers_need_registered_plan(data_dir: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """sampler()/keyed() give the planned paths once a plan is registered, and name bad datasets."""
    monkeypatch.setattr(wf, "_PLANS", [])
    with pytest.raises(ConfigError, match="not loaded yet"):
        wf.sampler("hours")
    plan = wf.register(wf.Plan(_cfg()))
    assert wf.sampler("hours") == plan.selected_path("hours")
    assert wf.sampler("hours").startswith("st/selected/hours/")
    assert (
        wf.keyed("out/{key}/a.json", "hours").split("/")[1]
        == wf.keyed("out/{key}/b.png", "hours").split("/")[1]
    )
    with pytest.raises(ConfigError, match="no dataset 'rain'"):
        wf.draws("rain")
    targets = wf.targets()
    assert plan.check_path("hours") in targets and plan.draws_path("hours") in targets


def test_snapshot_refuses_data_changed_after_planning(
    data_dir: Path, capsys: pytest.CaptureFixture
) -> None:
    """The snapshot job recomputes the fingerprint and fails clearly if it differs from the plan."""
    plan = wf.Plan(_cfg())
    planned = plan.fingerprint("hours")[:20]
    frame = pd.read_csv("d.csv")
    frame.loc[0, "hours"] = 99.0
    frame.to_csv("d.csv", index=False)
    out = data_dir / "snap.parquet"
    rc = main(
        [
            "snapshot",
            "d.csv",
            "--column",
            "hours",
            "--expect-fingerprint",
            planned,
            "--out",
            str(out),
        ]
    )
    assert rc == 2
    assert "changed after the workflow was planned" in capsys.readouterr().err
    assert not out.exists()


def test_rules_file_ships_in_package() -> None:
    """rules_path() points into the installed package and names every documented rule."""
    text = Path(wf.rules_path()).read_text()
    for rule in (
        "sw_fingerprint",
        "sw_snapshot",
        "sw_fit",
        "sw_knots",
        "sw_select",
        "sw_draw",
        "sw_check",
    ):
        assert f"rule {rule}:" in text or f"checkpoint {rule}:" in text
    assert "script:" not in text
