"""Selection among candidates of one method with different options keeps their labels."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np

import samplewright as sw

Cli = Callable[..., tuple[int, str, str]]


def test_two_candidates_of_one_method_are_told_apart_by_label(tmp_path: Path, run_cli: Cli) -> None:
    """Candidates stored under their label folders (store layout) are ranked and shown by label,
    so two gamma fits with different fixed locations do not both read 'gamma'."""
    # invented repair hours; the ranking itself is scipy-checked elsewhere (test_model_choice)
    x = np.random.default_rng(4).gamma(2.0, 3.0, 200) + 1.0
    paths = []
    for label, loc in (("gamma_free", None), ("gamma_at_0", 0.0)):
        out = tmp_path / "store" / "samplers" / "hours" / label / "k.parquet"
        out.parent.mkdir(parents=True)
        sw.write_sampler(sw.fit(x, "gamma") if loc is None else sw.fit(x, "gamma", loc=loc), out)
        paths.append(str(out))
    selected = tmp_path / "selected.parquet"
    code, _, err = run_cli("select", *paths, "--out", str(selected))
    assert code == 0, err
    ranking = sw.load_sampler(selected).metadata["diagnostics"]["selection"]["ranking"]
    assert sorted(row["label"] for row in ranking) == ["gamma_at_0", "gamma_free"]
    code, out, _ = run_cli("show", str(selected))
    assert code == 0 and "gamma_free" in out and "gamma_at_0" in out


def test_hurdles_zero_inflated_and_mixtures_are_ranked_only_with_their_kind() -> None:
    """A hurdle (point mass + density) is never ranked by AIC against a density, a zero-inflated
    count model counts as a probability mass, a mixture as a density; hurdles among themselves
    are fine. Rule: the likelihood's scale (common practice, no source)."""
    import pytest

    from samplewright.check.comparable import check_comparable, check_comparable_fitted
    from samplewright.core.errors import MethodError

    rng = np.random.default_rng(8)  # invented amounts with exact zeros, and counts
    y = rng.gamma(2.0, 3.0, 300)
    y[:60] = 0.0
    counts = rng.poisson(2.0, 300)
    counts[:80] = 0
    hurdle, gamma = sw.fit(y, "hurdle"), sw.fit(y[60:], "gamma")
    zip_, nb = sw.fit(counts, "zero_inflated"), sw.fit(counts, "negative_binomial")
    with pytest.raises(MethodError, match="point mass plus a density"):
        check_comparable_fitted([("h", hurdle), ("g", gamma)], "aic")
    check_comparable_fitted([("z", zip_), ("nb", nb)], "aic")  # both count models
    with pytest.raises(MethodError, match="not comparable"):
        check_comparable_fitted([("z", zip_), ("g", gamma)], "bic")
    with pytest.raises(MethodError, match="not comparable"):
        check_comparable([("z", "zero_inflated", {}), ("g", "gamma", {})], "aic")
    with pytest.raises(MethodError, match="point mass plus a density"):
        check_comparable([("h", "hurdle", {}), ("m", "mixture", {})], "aic")
    check_comparable([("h", "hurdle", {}), ("h2", "hurdle", {"body": "gamma"})], "aic")
