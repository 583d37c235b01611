"""Choosing the sampler that downstream steps get, among fitted candidates.

Rules (``by=``):

* ``aic`` / ``bic``: the parametric candidate with the lowest criterion; ties go to the one with
  fewer parameters, then to the one listed first. Non-parametric candidates are not ranked
  (their "likelihood" is not comparable) and are chosen only if no parametric one exists.
* ``first``: the first candidate listed (a fixed choice).

The chosen artifact is written again under the selection's own key, with the ranking recorded in
``diagnostics.selection``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from samplewright.core.errors import MethodError
from samplewright.store.artifacts import load_sampler, write_sampler

__all__ = ["SELECTION_RULES", "rank_loaded", "select_artifacts"]

SELECTION_RULES = ("aic", "bic", "first")


def rank_loaded(samplers: Sequence[Any], by: str) -> list[int]:
    """Indices of ``samplers`` from best to worst under rule ``by``."""
    if by not in SELECTION_RULES:
        raise MethodError(
            f"selection rule {by!r} unknown; expected one of: {', '.join(SELECTION_RULES)}"
        )
    order = list(range(len(samplers)))
    if by == "first":
        return order

    def score(i: int) -> tuple[float, int, int]:
        value = getattr(samplers[i], by, None)
        if value is None or not math.isfinite(float(value)):
            return (math.inf, 0, i)
        return (float(value), len(samplers[i].params), i)

    return sorted(order, key=score)


def select_artifacts(
    candidates: Sequence[str | Path], *, by: str, key: str | None, out: str | Path
) -> str:
    """Select among candidate artifacts and write the winner to ``out``; return its method."""
    if not candidates:
        raise MethodError("select: at least one candidate artifact is needed")
    loaded = [load_sampler(c) for c in candidates]
    ranking = rank_loaded(loaded, by)
    best = loaded[ranking[0]]
    meta = best.metadata  # type: ignore[attr-defined]
    table = []
    for rank, i in enumerate(ranking, start=1):
        m = loaded[i].metadata  # type: ignore[attr-defined]
        table.append(
            {
                "rank": rank,
                "method": m["sampler"]["method"],
                "key": m.get("key"),
                "content_hash": m["content_hash"],
                "aic": m["sampler"].get("aic"),
                "bic": m["sampler"].get("bic"),
                "loglik": m["sampler"].get("loglik"),
            }
        )
    diagnostics = dict(meta.get("diagnostics") or {})
    diagnostics["selection"] = {
        "rule": by,
        "chosen": meta["sampler"]["method"],
        "chosen_key": meta.get("key"),
        "ranking": table,
    }
    provenance = {
        k: v
        for k, v in (meta.get("provenance") or {}).items()
        if k not in ("created_at", "versions")
    }
    provenance["selected_from"] = str(candidates[ranking[0]])
    write_sampler(
        best,
        out,
        fingerprint=meta.get("fingerprint"),
        key=key,
        data=meta.get("data"),
        diagnostics=diagnostics,
        provenance=provenance,
    )
    return str(meta["sampler"]["method"])
