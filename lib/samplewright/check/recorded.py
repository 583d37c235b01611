"""Warnings, read from where they were recorded: an artifact's metadata and the data themselves.

One reading serves every place that shows warnings: ``samplewright fit`` prints them on stderr,
``samplewright show`` lists them, and the check summary and report carry them. Each warning is a
:class:`~samplewright.check.report_model.ReportWarning` with its kind.

From an artifact's metadata (:func:`artifact_warnings`):

* the fit's own records (``diagnostics.warnings``: support below 0 for non-negative data, an
  infinite mean, values recorded to a coarse resolution, ...);
* a poisson fitted to over-dispersed counts (``diagnostics.dispersion``);
* a tail threshold that fell back to the default quantile because no stable one was found
  (``diagnostics.threshold_choice``), with the number of points the tail rests on;
* ``auto``'s chosen family failing a goodness-of-fit test (``diagnostics.auto.poor_fit``);
* probability mass placed beyond the largest observation of incomplete data
  (``diagnostics.incomplete.mass_beyond``);
* failed refits of replicates (``diagnostics.replicates.n_failed``);
* a sampler whose mean is not finite.

From the data and a selected sampler (:func:`data_warnings`): few observations (fewer than
:data:`SMALL_N`), ties from a coarse recording resolution, and where draws stand against the
largest observation (never beyond it, or beyond it with what probability).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np

from samplewright.check.report_model import ReportWarning, SamplerLike, WarningKind

__all__ = ["SMALL_N", "SMALL_TAIL", "artifact_warnings", "data_warnings", "merge_warnings"]

# common practice, no source: below 30 observations the shape of a distribution is hard to judge
SMALL_N = 30
# a generalized Pareto tail fitted to fewer exceedances than this rests on few points
SMALL_TAIL = 30
_KINDS: dict[str, WarningKind] = {
    "support_below_zero": "support_beyond_data",
    "support_beyond_data": "support_beyond_data",
    "recording_resolution": "ties",
    "infinite_mean": "other",
}


def _fmt(v: Any) -> str:
    try:
        return format(float(v), ".4g")
    except (TypeError, ValueError):
        return str(v)


def _family_of(meta: Mapping[str, Any]) -> str:
    s = meta.get("sampler") or {}
    return str(s.get("family") or s.get("method") or "")


def artifact_warnings(meta: Mapping[str, Any]) -> list[ReportWarning]:
    """The warnings an artifact's metadata records (see the module docstring), in that order.

    >>> meta = {"sampler": {"method": "spliced", "mean": 3.0},
    ...         "diagnostics": {"threshold_choice": {"rule": "fallback", "threshold": 6.5,
    ...                         "n_exceedances": 12, "fallback_probability": 0.9}}}
    >>> [(w.kind, w.message) for w in artifact_warnings(meta)]  # doctest: +NORMALIZE_WHITESPACE
    [('small_n', 'no stable tail threshold was found: the tail starts at the default 90%
    quantile, 6.5, and rests on 12 points')]
    """
    diag = meta.get("diagnostics") or {}
    out: list[ReportWarning] = []
    for w in diag.get("warnings") or []:
        if isinstance(w, Mapping) and w.get("message"):
            out.append(ReportWarning(_KINDS.get(str(w.get("kind")), "other"), str(w["message"])))
    disp = diag.get("dispersion")
    if isinstance(disp, Mapping) and disp.get("overdispersed") and _family_of(meta) == "poisson":
        out.append(
            ReportWarning(
                "poor_fit",
                f"the counts are over-dispersed for a poisson: {disp.get('message')}",
            )
        )
    tc = diag.get("threshold_choice")
    if isinstance(tc, Mapping) and tc.get("rule") == "fallback":
        n = tc.get("n_exceedances")
        p = tc.get("fallback_probability")
        where = f"the default {100 * float(p):g}% quantile" if p is not None else "a default"
        small = isinstance(n, int) and n < SMALL_TAIL
        out.append(
            ReportWarning(
                "small_n" if small else "other",
                f"no stable tail threshold was found: the tail starts at {where}, "
                f"{_fmt(tc.get('threshold'))}, and rests on {n} points",
            )
        )
    auto = diag.get("auto")
    if isinstance(auto, Mapping) and auto.get("poor_fit"):
        ranking = auto.get("ranking") or []
        row: Mapping[str, Any] = next(
            (r for r in ranking if r.get("family") == auto.get("chosen")), {}
        )
        pv = row.get("pvalues") or {}
        tests = ", ".join(f"{k} p = {_fmt(v)}" for k, v in pv.items() if v is not None)
        out.append(
            ReportWarning(
                "poor_fit",
                f"auto's chosen family {auto.get('chosen')} fails a goodness-of-fit test at "
                f"p <= 0.01 ({tests})",
            )
        )
    inc = diag.get("incomplete")
    if isinstance(inc, Mapping) and (inc.get("mass_beyond") or 0) > 0:
        out.append(
            ReportWarning(
                "support_beyond_data",
                f"{float(inc['mass_beyond']):.1%} of the probability lies beyond the largest "
                f"observed value (tail rule: {inc.get('tail')})",
            )
        )
    rep = diag.get("replicates")
    if isinstance(rep, Mapping) and (rep.get("n_failed") or 0) > 0:
        out.append(
            ReportWarning(
                "failed_refits",
                f"{rep['n_failed']} of {rep.get('n_requested')} replicate fits failed",
            )
        )
    mean = (meta.get("sampler") or {}).get("mean", 0.0)  # "inf" / "nan" when not finite
    if mean is None or isinstance(mean, str) or not math.isfinite(float(mean)):
        if not any("mean" in w.message for w in out):
            out.append(ReportWarning("other", "the sampler has no finite mean"))
    return out


def data_warnings(
    values: Any,
    *,
    weights: Any = None,
    sampler: SamplerLike | None = None,
    label: str = "",
) -> list[ReportWarning]:
    """Warnings about the data themselves and, with ``sampler``, its draws against the record.

    >>> [w.kind for w in data_warnings([1.0, 2.0, 4.0])]
    ['small_n']
    """
    from samplewright.check.resolution import recording_resolution

    x = np.asarray(values, dtype=np.float64).ravel()
    out: list[ReportWarning] = []
    total = x.size if weights is None else float(np.sum(weights))
    if total < SMALL_N:
        out.append(
            ReportWarning(
                "small_n",
                f"only {total:g} observations: the shape, and above all the tail, rests on few "
                "points",
            )
        )
    grid = recording_resolution(x, weights)
    if grid.coarse:
        out.append(ReportWarning("ties", grid.message))
    if sampler is not None and x.size:
        top = float(np.max(x))
        above = 1.0 - float(np.asarray(sampler.cdf(top)))
        name = label or sampler.method
        if sampler.support[1] <= top or above <= 0.0:
            out.append(
                ReportWarning(
                    "draws_beyond_record",
                    f"draws from {name} never exceed the largest observation ({_fmt(top)}): "
                    "anything worse than the record is left out",
                )
            )
        else:
            out.append(
                ReportWarning(
                    "draws_beyond_record",
                    f"draws from {name} exceed the largest observation ({_fmt(top)}) with "
                    f"probability {above:.3g} (about 1 in {_fmt(1.0 / above)} draws)",
                )
            )
    return out


def merge_warnings(*groups: Iterable[ReportWarning]) -> list[ReportWarning]:
    """The warnings of every group in order, each (kind, message) once."""
    seen: set[tuple[str, str]] = set()
    out: list[ReportWarning] = []
    for group in groups:
        for w in group:
            if (w.kind, w.message) not in seen:
                seen.add((w.kind, w.message))
                out.append(w)
    return out
