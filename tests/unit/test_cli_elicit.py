"""The elicit command: sampler artifacts from elicited quantiles and three-point estimates."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

from samplewright.pipeline.plan import Plan
from samplewright.store.artifacts import load_sampler, read_metadata

Cli = Callable[..., tuple[int, str, str]]


def test_pert_and_triangular_means(tmp_path: Path, run_cli: Cli) -> None:
    """--three-points gives the PERT mean (low + 4 mode + high) / 6 and the triangular mean
    (low + mode + high) / 3."""
    pert, tri = tmp_path / "p.parquet", tmp_path / "t.parquet"
    code, stdout, err = run_cli("elicit", "--three-points", "40,55,90", "--out", pert)
    assert (code, err) == (0, "") and stdout.startswith(f"{pert}: three_points (alpha=2.2")
    code, _, err = run_cli("elicit", "--three-points", "40,55,90", "--family", "triangular",
                           "--out", tri)  # fmt: skip
    assert code == 0, err
    # source: Malcolm, Roseboom, Clark & Fazar (1959), the PERT mean with weight 4 on the mode
    assert load_sampler(pert).mean == pytest.approx((40 + 4 * 55 + 90) / 6)
    # source: the triangular distribution's mean, (a + c + b) / 3 (common practice)
    assert load_sampler(tri).mean == pytest.approx((40 + 55 + 90) / 3)
    shaped = tmp_path / "s.parquet"
    assert run_cli("elicit", "--three-points", "40,55,90", "--shape", "8", "--out", shaped)[0] == 0
    # source: Malcolm et al. (1959) generalised: mean = (low + shape * mode + high) / (shape + 2)
    assert load_sampler(shaped).mean == pytest.approx((40 + 8 * 55 + 90) / 10)


def test_metalog_passes_through_the_elicited_quantiles(tmp_path: Path, run_cli: Cli) -> None:
    """--quantiles with the metalog family reproduces every elicited point; a named family
    reports how far it misses them."""
    out, gamma = tmp_path / "m.parquet", tmp_path / "g.parquet"
    code, stdout, err = run_cli("elicit", "--quantiles", "0.1:40,0.5:55,0.9:90", "--lower", "0",
                                "--out", out)  # fmt: skip
    assert code == 0, err
    s = load_sampler(out)
    # source: Keelin (2016), Decision Analysis 13(4): a k-term metalog through k points is exact
    np.testing.assert_allclose(s.quantile([0.1, 0.5, 0.9]), [40.0, 55.0, 90.0], rtol=1e-9)
    assert s.support[0] == 0.0
    code, stdout, err = run_cli("elicit", "--quantiles", "0.1:40,0.5:55,0.9:90", "--family",
                                "gamma", "--out", gamma)  # fmt: skip
    assert code == 0, err
    miss = float(stdout.splitlines()[-1].rsplit(" ", 1)[1])
    fitted = load_sampler(gamma).quantile([0.1, 0.5, 0.9])
    assert miss == pytest.approx(np.max(np.abs(fitted - [40.0, 55.0, 90.0])), rel=1e-5)


def test_the_artifact_carries_the_plans_fingerprint(
    tmp_path: Path, run_cli: Cli, monkeypatch: pytest.MonkeyPatch
) -> None:
    """What elicit records as the fingerprint is what the workflow plan keys the dataset by."""
    monkeypatch.chdir(tmp_path)
    plan = Plan(
        {
            "store": "st",
            "datasets": {
                "q": {"quantiles": {"probabilities": [0.1, 0.5, 0.9], "values": [40, 55, 90]}},
                "t": {"three_points": {"low": 40, "mode": 55, "high": 90}},
            },
        }
    )
    for name in ("q", "t"):
        out = tmp_path / f"{name}.parquet"
        code, _, err = run_cli("elicit", *plan.elicit_args(name).split(), "--out", out)
        assert code == 0, err
        assert read_metadata(out)["fingerprint"] == plan.fingerprint(name)


@pytest.mark.parametrize(
    ("args", "message"),
    [
        ([], "elicit: give exactly one of --quantiles or --three-points"),
        (["--quantiles", "0.1:4,0.9:9", "--three-points", "1,2,3"], "exactly one of"),
        (["--quantiles", "0.1=4,0.9:9"], "--quantiles: expected P:VALUE pairs"),
        (["--quantiles", "0.1:40,0.5:35,0.9:90"], "values: must increase with probability"),
        (["--three-points", "1,2"], "--three-points: expected LOW,MODE,HIGH (three numbers)"),
        (["--three-points", "5,2,3"], "low, high: expected low < high"),
        (["--three-points", "1,2,3", "--lower", "0"], "--lower: --three-points takes no --lower"),
        (["--quantiles", "0.1:4,0.9:9", "--shape", "4"], "--shape: only --three-points"),
        (["--three-points", "1,2,3", "--family", "triangular", "--shape", "6"],
         "shape: only family 'pert' takes a shape"),
        (["--three-points", "1,2,3", "--family", "beta"], "family: expected one of pert"),
    ],
)  # fmt: skip
def test_bad_judgement_is_one_line_exit_2(
    tmp_path: Path, run_cli: Cli, args: list[str], message: str
) -> None:
    """Each bad elicit command line exits 2 with one error line; nothing is written."""
    out = tmp_path / "e.parquet"
    code, _, err = run_cli("elicit", *args, "--out", out)
    assert code == 2
    assert err.count("\n") == 1 and message in err, err
    assert not out.exists()
