"""Choosing the sampler that downstream steps get, among fitted candidates.

Rules (``by=``):

* ``aic`` / ``bic``: the parametric candidate with the lowest criterion; ties go to the one with
  fewer parameters, then to the one listed first. Non-parametric candidates are not ranked
  (their "likelihood" is not comparable) and are chosen only if no parametric one exists.
* ``first``: the first candidate listed (a fixed choice).
* ``named``: the first candidate listed, which the analyst named (a workflow's ``choose`` that
  names a method label puts that candidate first); it ranks like ``first`` but is recorded as
  "named by the analyst". It is a rule of the ``select`` command, not a value of ``choose``.

This module ranks loaded samplers and describes the ranking (:func:`selection_record`, stored in
the chosen artifact's ``diagnostics.selection``); reading and writing artifacts is the
pipeline's job.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any, Literal

from samplewright.core.errors import MethodError

__all__ = [
    "RANKING_RULES",
    "RankingRule",
    "SELECTION_RULES",
    "SelectionRule",
    "rank_loaded",
    "selection_reason",
    "selection_record",
]

# the rules a workflow's `choose` may name
SelectionRule = Literal["aic", "bic", "first"]
SELECTION_RULES: tuple[SelectionRule, ...] = ("aic", "bic", "first")
# the rules the `select` command ranks by: those, and a candidate named by the analyst
RankingRule = Literal["aic", "bic", "first", "named"]
RANKING_RULES: tuple[RankingRule, ...] = (*SELECTION_RULES, "named")
_REASONS = {
    "aic": "the lowest AIC among the parametric candidates",
    "bic": "the lowest BIC among the parametric candidates",
    "first": "listed first (a fixed choice)",
    "named": "named by the analyst",
}


def selection_reason(rule: str) -> str:
    """Why rule ``rule`` chose its candidate, in words (as the check report says it).

    >>> selection_reason("named")
    'named by the analyst'
    """
    return _REASONS.get(rule, f"selection rule {rule!r}")


def rank_loaded(samplers: Sequence[Any], by: str) -> list[int]:
    """Indices of ``samplers`` from best to worst under rule ``by``."""
    if by not in RANKING_RULES:
        raise MethodError(
            f"selection rule {by!r} unknown; expected one of: {', '.join(RANKING_RULES)}"
        )
    order = list(range(len(samplers)))
    if by in ("first", "named"):
        return order

    def score(i: int) -> tuple[float, int, int]:
        value = getattr(samplers[i], by, None)
        if value is None or not math.isfinite(float(value)):
            return (math.inf, 0, i)
        return (float(value), len(samplers[i].params), i)

    return sorted(order, key=score)


def selection_record(
    metadata: Sequence[Mapping[str, Any]],
    ranking: Sequence[int],
    by: str,
    labels: Sequence[str] | None = None,
) -> dict[str, Any]:
    """The ``diagnostics.selection`` block: the rule, the chosen method and the ranking (the
    rule's reason in words is :func:`selection_reason`, not stored).

    ``metadata`` holds each candidate's artifact metadata in candidate order and ``ranking``
    their indices from best to worst (as :func:`rank_loaded` gives them); ``labels``, when
    given, names each candidate (two candidates of one method with different options).

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
                **({"label": labels[i]} if labels is not None else {}),
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
