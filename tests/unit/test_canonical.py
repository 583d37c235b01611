"""The one canonical JSON (samplewright.core.canonical) and the keys and hashes built on it."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import yaml

from samplewright.core.canonical import MAX_DEPTH, canonical_bytes, canonical_json, parse_json
from samplewright.distributions.piecewise import from_knots
from samplewright.pipeline.plan import Plan, content_key
from samplewright.store.artifacts import write_sampler
from samplewright.store.fingerprints import knots_fingerprint

CORPUS = [
    {"b": 1, "a": [1, 2.5, None, True, False], "c": {"z": "x", "y": -0.0}},
    [0.1, 1e-300, 5e-324, 1.7976931348623157e308, -2.5e-7, 123456789.125, 1e22],
    {"unicode": 'café ☃ \u2028 "quoted" \\ back\nslash\t', "emoji": "\U0001f600"},
    {"big": 2**70, "neg": -(2**63), "zero": 0},
    {"nested": {"k": [{"b": 2, "a": 1}, [], {}]}, "": "empty key"},
    "just a string",
    3.141592653589793,
]
# the same fit inputs the example pipeline's knots dataset uses (invented scenario)
SPARE_X = [2, 6, 12, 24, 48, 60, 60, 96, 168]
SPARE_P = [0, 0.25, 0.55, 0.8, 0.9, 0.9, 0.97, 0.99, 1.0]


@pytest.mark.parametrize("obj", CORPUS, ids=range(len(CORPUS)))
def test_matches_the_documented_json_construction(obj: object) -> None:
    """The text equals the standard library's JSON with sorted keys and ',' ':' separators."""
    # source: README "Artifact format" (sorted keys, separators , and :) built with Python's json
    expected = json.dumps(obj, sort_keys=True, separators=(",", ":"), allow_nan=False)
    assert canonical_json(obj) == expected
    assert canonical_bytes(obj) == expected.encode("ascii")


def test_floats_are_written_as_repr_and_read_back_exactly() -> None:
    """Every float is written as its shortest round-tripping repr and parses back bit for bit."""
    values = np.random.default_rng(5).standard_normal(200) * 10.0 ** np.arange(-100, 100)
    text = canonical_json([float(v) for v in values])
    # source: Python docs, repr(float) is the shortest string that round-trips (since 3.1)
    assert text == "[" + ",".join(repr(float(v)) for v in values) + "]"
    np.testing.assert_array_equal(np.array(parse_json(text)), values)


@pytest.mark.parametrize(
    ("obj", "where"),
    [
        ({"sampler": {"params": {"shape": float("nan")}}}, "sampler.params.shape"),
        ({"support": [0.0, float("inf")]}, "support[1]"),
        ([1.0, {"x": -float("inf")}], "[1].x"),
        ({"q": np.float32("nan")}, "q"),
    ],
)
def test_non_finite_numbers_are_refused_naming_where(obj: object, where: str) -> None:
    """NaN and infinities have no JSON form: the error names the place, nothing is guessed."""
    with pytest.raises(ValueError, match=rf"non-finite number .* at {where.replace('[', '.')}"):
        canonical_json(obj)


def test_numpy_scalars_are_the_numbers_they_equal() -> None:
    """numpy scalars are written like the Python numbers they equal."""
    obj = {"i": np.int64(7), "f": np.float64(0.1), "h": np.float32(0.5), "b": np.bool_(True)}
    assert canonical_json(obj) == canonical_json({"i": 7, "f": 0.1, "h": 0.5, "b": True})


def test_deep_nesting_is_refused_both_ways() -> None:
    """A document nested deeper than MAX_DEPTH is a ValueError, never a RecursionError."""
    deep: list = []
    for _ in range(MAX_DEPTH + 5):
        deep = [deep]
    with pytest.raises(ValueError, match="nested deeper"):
        canonical_json(deep)
    for depth in (MAX_DEPTH + 1, 100_000):
        with pytest.raises(ValueError, match="nested deeper"):
            parse_json("[" * depth + "]" * depth)
    assert parse_json("[" * MAX_DEPTH + "]" * MAX_DEPTH) is not None


@pytest.mark.parametrize(
    ("raw", "message"),
    [(b"{bad", "not valid JSON"), (b"\xff\xfe{}", "not valid JSON|not UTF-8"), ("", "not valid")],
)
def test_parse_json_refuses_invalid_text(raw: bytes | str, message: str) -> None:
    """Invalid or undecodable text is a one-line ValueError."""
    with pytest.raises(ValueError, match=message):
        parse_json(raw)


def test_content_key_is_unchanged_by_the_restructuring() -> None:
    """A fit key computed now equals the one the pre-restructuring code gave."""
    # source: samplewright.pipeline.plan._h at commit e2220ef, run on these parts
    parts = ("fit", "ab" * 32, '{"method":"gamma","options":{}}', 1)
    assert content_key(*parts) == "291bc14f528cdf82dfb2"


def test_example_knots_artifact_keeps_its_recorded_content_hash(tmp_path: Path) -> None:
    """The example pipeline's knots sampler gets the content hash recorded before the move."""
    s = from_knots(SPARE_X, SPARE_P)
    meta = write_sampler(
        s,
        tmp_path / "a.parquet",
        fingerprint=knots_fingerprint(s.x, s.p),
        key="b7a3ae28b2c4678c90d5",
        data={"n_obs": 0, "n_knots": 9},
    )
    # source: /work/helpers/hashes_before.json, store/samplers/spare_part_wait/knots/... was
    # "sha256:d65b9457..." (key b1bd52de...); changed on purpose by the BLAKE3 content hash and
    # fingerprint (issue 10, SNAPSHOT_FORMAT_VERSION 2): value recomputed by samplewright after
    # that change, pinned so that any other change is noticed.
    assert meta["content_hash"] == (
        "blake3:55b4d09a3d53b2b5461c2b5f97b74146d3ce13c13e3813adc014090277d1a8ba"
    )


def test_example_knots_dataset_keeps_its_recorded_paths(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Planning the example's knots dataset gives the fit, select and draws paths recorded
    before the move (keys are canonical JSON hashes of the same parts)."""
    monkeypatch.chdir(tmp_path)
    Path("wait.yaml").write_text(yaml.safe_dump({"x": SPARE_X, "p": SPARE_P}))
    plan = Plan(
        {
            "store": "store",
            "root_seed": 20261201,
            "draws": 20000,
            "datasets": {"spare_part_wait": {"knots": "wait.yaml"}},
        }
    )
    # source: /work/helpers/hashes_before.json (paths of the example run before the move:
    # b1bd52de..., 38d51786..., 915a439a...); changed on purpose by the BLAKE3 fingerprint (issue
    # 10, SNAPSHOT_FORMAT_VERSION 2 enters the keys) and by the data keys of point datasets
    # (pipeline/plan.py, same stage of work), then by RESULTS_VERSION 3: recomputed and pinned.
    assert plan.fit_path("spare_part_wait", "knots") == (
        "store/samplers/spare_part_wait/knots/806acd77c2be4df73ea7.parquet"
    )
    assert plan.selected_path("spare_part_wait") == (
        "store/selected/spare_part_wait/88de58374d2df6d46f0e.parquet"
    )
    assert plan.draws_path("spare_part_wait") == (
        "store/draws/spare_part_wait/6b2effd53607502a2d62.parquet"
    )
