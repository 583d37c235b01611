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
