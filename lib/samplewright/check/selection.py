"""Choosing the sampler that downstream steps get, among fitted candidates.

Rules (``by=``):

* ``aic`` / ``bic``: the parametric candidate with the lowest criterion; ties go to the one with
  fewer parameters, then to the one listed first. Non-parametric candidates are not ranked
  (their "likelihood" is not comparable) and are chosen only if no parametric one exists.
* ``first``: the first candidate listed (a fixed choice).

This module ranks loaded samplers and describes the ranking (:func:`selection_record`, stored in
the chosen artifact's ``diagnostics.selection``); reading and writing artifacts is the
pipeline's job.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any, Literal

from samplewright.core.errors import MethodError

__all__ = ["SELECTION_RULES", "SelectionRule", "rank_loaded", "selection_record"]

SelectionRule = Literal["aic", "bic", "first"]
SELECTION_RULES: tuple[SelectionRule, ...] = ("aic", "bic", "first")


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


def selection_record(
    metadata: Sequence[Mapping[str, Any]], ranking: Sequence[int], by: str
) -> dict[str, Any]:
    """The ``diagnostics.selection`` block: the rule, the chosen method and the ranking.

    ``metadata`` holds each candidate's artifact metadata in candidate order and ``ranking``
    their indices from best to worst (as :func:`rank_loaded` gives them).

    >>> metas = [{"sampler": {"method": m, "aic": a}, "key": k, "content_hash": "sha256:" + k}
    ...          for m, a, k in [("gamma", 10.5, "k1"), ("normal", 9.0, "k2")]]
    >>> rec = selection_record(metas, [1, 0], "aic")
    >>> rec["chosen"], [row["method"] for row in rec["ranking"]]
    ('normal', ['normal', 'gamma'])
    """
    table = []
    for rank, i in enumerate(ranking, start=1):
        m = metadata[i]
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
    best = metadata[ranking[0]]
    return {
        "rule": by,
        "chosen": best["sampler"]["method"],
        "chosen_key": best.get("key"),
        "ranking": table,
    }
