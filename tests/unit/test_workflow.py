"""Workflow config validation, content keys and path helpers (samplewright.workflow)."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import samplewright.pipeline.helpers as helpers
from samplewright.core.errors import ConfigError
from samplewright.pipeline.cli import main
from samplewright.pipeline.config import load_config
from samplewright.pipeline.plan import Plan


@pytest.fixture
def data_dir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A working folder with one small CSV (invented values; only shapes matter here)."""
    monkeypatch.chdir(tmp_path)
    rng = np.random.default_rng(3)
    pd.DataFrame({"hours": rng.gamma(2.0, 2.0, 200), "site": "a"}).to_csv("d.csv", index=False)
    return tmp_path


STAGES = ("intake", "elicit", "fit", "select", "draw", "resample", "joint", "check")


def _cfg(**dataset: object) -> dict:
    ds = {"path": "d.csv", "column": "hours", "methods": ["gamma", "empirical"], **dataset}
    return {"store": "st", "datasets": {"hours": ds}}


def test_defaults_are_filled(data_dir: Path) -> None:
    """Omitted keys get the schema's defaults (store aside), per dataset too."""
    cfg = load_config(_cfg())
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
                        "methods": [{"method": "gamma", "options": {"colour": 2}}],
                    }
                }
            },
            "samplewright.datasets.hours.methods[0].options: unknown option 'colour' for gamma",
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
        Plan(cfg)
    assert message in str(err.value)


def test_missing_column_is_reported_with_the_dataset(data_dir: Path) -> None:
    """A column absent from the file fails at planning time naming dataset and column."""
    with pytest.raises(ConfigError, match=r"datasets\.hours: .*no column 'hrs'"):
        Plan(_cfg(column="hrs"))


def test_keys_follow_content_not_files(data_dir: Path) -> None:
    """Keys stay put when the file is rewritten as Parquet, and change with one value."""
    a = Plan(_cfg())
    frame = pd.read_csv("d.csv", float_precision="round_trip")
    frame[["site", "hours"]].to_parquet("d.parquet")
    b = Plan(_cfg(path="d.parquet"))
    assert a.select_key("hours") == b.select_key("hours")
    assert a.fit_path("hours", "gamma") == b.fit_path("hours", "gamma")
    frame.loc[3, "hours"] += 1e-9
    frame.to_csv("d.csv", index=False)
    c = Plan(_cfg())
    assert c.fit_key("hours", "gamma") != a.fit_key("hours", "gamma")
    assert c.snapshot_path("hours") != a.snapshot_path("hours")


def test_option_and_choice_enter_only_their_keys(data_dir: Path) -> None:
    """An option changes one candidate's key; the selection rule changes only the select key."""
    a = Plan(_cfg())
    b = Plan(_cfg(methods=[{"method": "gamma", "options": {"loc": -1.0}}, "empirical"]))
    assert a.fit_key("hours", "empirical") == b.fit_key("hours", "empirical")
    assert a.fit_key("hours", "gamma") != b.fit_key("hours", "gamma")
    c = Plan(_cfg(choose="empirical"))
    assert c.fit_key("hours", "gamma") == a.fit_key("hours", "gamma")
    assert c.select_key("hours") != a.select_key("hours")
    assert [s.label for s in c.candidates("hours")] == ["empirical", "gamma"]


def test_fingerprint_cache_written_once_beside_store(data_dir: Path) -> None:
    """Planning memoises fingerprints in <store>/fingerprints.json."""
    Plan(_cfg())
    assert (data_dir / "st" / "fingerprints.json").is_file()


def test_helpers_need_registered_plan(data_dir: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """sampler()/keyed() give the planned paths once a plan is registered, and name bad datasets."""
    monkeypatch.setattr(helpers, "_PLANS", [])
    with pytest.raises(ConfigError, match="not loaded yet"):
        helpers.sampler("hours")
    plan = helpers.register(Plan(_cfg()))
    assert helpers.sampler("hours") == plan.selected_path("hours")
    assert helpers.sampler("hours").startswith("st/selected/hours/")
    assert (
        helpers.keyed("out/{key}/a.json", "hours").split("/")[1]
        == helpers.keyed("out/{key}/b.png", "hours").split("/")[1]
    )
    with pytest.raises(ConfigError, match="no dataset 'rain'"):
        helpers.draws("rain")
    targets = helpers.targets()
    assert plan.check_path("hours") in targets and plan.draws_path("hours") in targets


def test_snapshot_refuses_data_changed_after_planning(
    data_dir: Path, capsys: pytest.CaptureFixture
) -> None:
    """The snapshot job recomputes the fingerprint and fails clearly if it differs from the plan."""
    plan = Plan(_cfg())
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


def _rule_files() -> dict[str, str]:
    """The entry rule file and every file it includes, by name relative to the entry's folder."""
    entry = Path(helpers.rules_path())
    files = {entry.name: entry.read_text()}
    for name in re.findall(r'^include: "([^"]+)"$', files[entry.name], flags=re.M):
        files[name] = (entry.parent / name).read_text()
    return files


def test_entry_rule_file_includes_one_file_per_stage() -> None:
    """rules_path() points at the entry file, which includes rules/<stage>.smk for each stage;
    together they define every documented rule, each once, and no script: rule."""
    files = _rule_files()
    assert sorted(files) == sorted(["samplewright.smk"] + [f"rules/{s}.smk" for s in STAGES])
    text = "\n".join(files.values())
    for rule in (
        "sw_fingerprint",
        "sw_snapshot",
        "sw_table_snapshot",
        "sw_elicit",
        "sw_fit",
        "sw_knots",
        "sw_select",
        "sw_draw",
        "sw_intervals",
        "sw_replicates",
        "sw_fit_joint",
        "sw_joint_draw",
        "sw_check",
    ):
        defined = re.findall(rf"^(?:rule|checkpoint) {rule}:$", text, flags=re.M)
        assert len(defined) == 1, rule
    assert "script:" not in text
    assert not _rules(files["samplewright.smk"])  # the entry file defines no rule itself


def _rules(text: str) -> list[str]:
    return re.split(r"^(?=(?:rule|checkpoint) \w+:$)", text, flags=re.M)[1:]


def test_every_rule_is_thin_logged_and_constrained() -> None:
    """Each rule runs the CLI in shell:, has a log and its own wildcard constraints."""
    for name, text in _rule_files().items():
        for rule in _rules(text):
            head = rule.splitlines()[0]
            assert "    shell:\n" in rule and "samplewright " in rule, (name, head)
            assert "    log:\n" in rule, (name, head)
            assert "    wildcard_constraints:\n" in rule, (name, head)
            assert "run:" not in rule, (name, head)


def test_rule_files_spell_no_store_path() -> None:
    """Store sub-paths come from the plan's layout: no rule file spells one."""
    for name, text in _rule_files().items():
        for sub in (
            "columns/",
            "samplers/",
            "selected/",
            "draws/",
            "checks/",
            "produced/",
            "tables/",
            "intervals/",
            "replicates/",
            "joint/",
            "joint_draws/",
            "reports/",
        ):
            assert sub not in text, (name, sub)
        assert "logs/" not in text and "benchmarks/" not in text, name
        assert "SW.path(" not in text, name


def _string_constants(path: Path) -> list[str]:
    """The string literals of a module that are not docstrings."""
    import ast

    tree = ast.parse(path.read_text())
    docs = {
        id(node.body[0].value)
        for node in ast.walk(tree)
        if isinstance(node, ast.Module | ast.ClassDef | ast.FunctionDef | ast.AsyncFunctionDef)
        and node.body
        and isinstance(node.body[0], ast.Expr)
        and isinstance(node.body[0].value, ast.Constant)
    }
    return [
        node.value
        for node in ast.walk(tree)
        if isinstance(node, ast.Constant) and isinstance(node.value, str) and id(node) not in docs
    ]


def test_only_the_layout_module_spells_store_paths() -> None:
    """No module spells a store sub-path in its code; the layout module names every folder."""
    pkg = Path(helpers.__file__).resolve().parents[1]
    folders = (
        "columns",
        "samplers",
        "selected",
        "draws",
        "checks",
        "produced",
        "logs",
        "tables",
        "intervals",
        "replicates",
        "joint",
        "joint_draws",
        "reports",
    )
    pattern = re.compile(rf"\b({'|'.join(folders)}|benchmarks)/")
    spelled = {
        str(path.relative_to(pkg))
        for path in pkg.rglob("*.py")
        if any(pattern.search(s) for s in _string_constants(path))
    }
    assert spelled == set()
    in_layout = set(_string_constants(pkg / "store" / "layout.py"))
    assert set(folders) <= in_layout


def test_plan_paths_are_the_layouts(data_dir: Path) -> None:
    """Every path the plan gives is the store layout's path for the plan's keys."""
    from samplewright.store.layout import StoreLayout

    plan = Plan(_cfg())
    layout = StoreLayout("st/")
    fp = plan.fingerprint("hours")
    assert plan.snapshot_path("hours") == layout.snapshot("hours", fp[:20])
    assert plan.fit_path("hours", "gamma") == layout.sampler(
        "hours", "gamma", plan.fit_key("hours", "gamma")
    )
    key = plan.select_key("hours")
    assert plan.selected_path("hours") == layout.selected("hours", key)
    assert plan.check_path("hours") == layout.check("hours", plan.check_key("hours"))
    assert plan.draws_path("hours") == layout.draws("hours", plan.draws_key("hours"))
    assert layout.check_markdown("hours", key) == layout.check("hours", key)[:-4] + "md"


def test_semicolon_files_with_decimal_commas_plan_like_plain_csv(
    data_dir: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """A dataset read with separator ';' and decimal ',' has the fingerprint of the same values
    in a plain CSV, and its snapshot job gets the same reading options."""
    frame = pd.read_csv("d.csv", float_precision="round_trip")
    # the same numbers written the continental way, by pandas (the reference writer)
    frame.to_csv("eu.csv", sep=";", decimal=",", index=False, float_format="%.17g")
    plain = Plan(_cfg())
    eu = Plan(_cfg(path="eu.csv", separator=";", decimal=","))
    assert eu.fingerprint("hours") == plain.fingerprint("hours")
    args = eu.snapshot_args("hours")
    assert "--separator ';' --decimal ," in args
    assert plain.snapshot_args("hours") == "--column hours --missing error --infinite error"
    snap = data_dir / "snap.parquet"
    code = main(["snapshot", "eu.csv", *args.replace("'", "").split(), "--out", str(snap)])
    assert code == 0, capsys.readouterr().err
    assert eu.fingerprint("hours").startswith(capsys.readouterr().out.split()[-1])


def test_missing_markers_reach_the_reader(data_dir: Path) -> None:
    """Declared missing markers are read as missing (then dropped by the policy)."""
    Path("m.csv").write_text("hours\n1.5\nn/a\n2.5\n-\n4\n")
    plan = Plan(_cfg(path="m.csv", missing="drop", missing_markers=["n/a", "-"]))
    Path("clean.csv").write_text("hours\n1.5\n2.5\n4\n")
    assert plan.fingerprint("hours") == Plan(_cfg(path="clean.csv")).fingerprint("hours")
    assert "--missing-marker=n/a --missing-marker=-" in plan.snapshot_args("hours")


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        ({"separator": "x"}, "samplewright.datasets.hours.separator: 'x' is not one of"),
        ({"decimal": ";"}, "samplewright.datasets.hours.decimal: ';' is not one of"),
        ({"missing_markers": "n/a"}, "samplewright.datasets.hours.missing_markers"),
    ],
)
def test_bad_reading_options_name_the_key(data_dir: Path, extra: dict, message: str) -> None:
    """An unknown separator or decimal mark, or markers not given as a list, name the key."""
    with pytest.raises(ConfigError) as err:
        Plan(_cfg(**extra))
    assert message in str(err.value)


def test_snapshot_memory_scales_with_the_file() -> None:
    """Declared snapshot memory: 1 GB floor, then 300 MB + 6 MB per CSV MB (10 for Parquet)."""
    from samplewright.pipeline.plan import snapshot_mem_mb

    # common practice, no source: the constants are the documented rule in pipeline/plan.py
    assert snapshot_mem_mb("a.csv", 0) == snapshot_mem_mb("a.csv", 100) == 1000
    assert snapshot_mem_mb("a.csv", 277) == 300 + 6 * 277
    assert snapshot_mem_mb("a.tsv", 1000.5) == 6303
    assert snapshot_mem_mb("a.parquet", 87) == 1170
    assert snapshot_mem_mb("A.PQ", 87) == 1170


@pytest.mark.slow
def test_declared_snapshot_memory_covers_the_measured_peak(tmp_path: Path) -> None:
    """A snapshot of a 1-million-row, 5-column CSV stays below the memory the rule declares."""
    import subprocess
    import sys

    from samplewright.pipeline.plan import snapshot_mem_mb

    rng = np.random.default_rng(9)
    n = 1_000_000
    frame = pd.DataFrame(
        {
            "id": np.arange(n),
            "site": rng.choice(["D01", "D02", "D17"], n),
            "crew": rng.integers(1, 5, n),
            "hours": np.round(rng.gamma(2.0, 2.0, n), 3),
            "cost": np.round(rng.normal(80.0, 10.0, n), 2),
        }
    )
    data = tmp_path / "big.csv"
    frame.to_csv(data, index=False)
    out = tmp_path / "snap.parquet"
    code = (
        "import resource, sys\n"
        "from samplewright.pipeline.cli.main import main\n"
        f"assert main(['snapshot', {str(data)!r}, '-c', 'hours', '--out', {str(out)!r}]) == 0\n"
        "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, file=sys.stderr)\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    # source: the kernel's peak resident set of that process (getrusage, kilobytes on Linux)
    peak_mb = int(proc.stderr.strip().splitlines()[-1]) / 1024
    declared = snapshot_mem_mb(str(data), data.stat().st_size / 2**20)
    assert peak_mb < declared


def test_the_check_reruns_when_its_seed_or_drift_threshold_changes(data_dir: Path) -> None:
    """The check's bootstrap draws from the root seed and its drift flag uses the threshold, so
    both enter its key (and the report's); the selection itself does not move."""
    from samplewright.pipeline.plan import Plan

    base = Plan(_cfg())
    reseeded = Plan({**_cfg(), "root_seed": 7})
    threshold = Plan({**_cfg(), "report": {"drift_threshold": 0.2}})
    assert base.select_key("hours") == reseeded.select_key("hours")
    paths = {p.check_path("hours") for p in (base, reseeded, threshold)}
    reports = {p.report_path("hours") for p in (base, reseeded, threshold)}
    assert len(paths) == 3 and len(reports) == 3
