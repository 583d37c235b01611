"""Composite candidates of ``auto``: finite mixtures, zero-inflated counts and a point mass at 0.

``auto`` (:mod:`samplewright.check.auto`) calls two hooks: :func:`point_mass_answer` before it
ranks anything and :func:`add_composites` on its answer. Both do nothing when option
``candidates`` is given (the list is then the whole candidate set) and neither runs on censored,
truncated or interval rows (:mod:`samplewright.check.auto_incomplete`). The screen is that of
:mod:`samplewright.fitting.composite`, on the data as ``auto`` reads them:

* **Counts** (whole numbers read as counts): when van den Broek's score test finds more zeros
  than a Poisson allows (one-sided, at 1%), ``zero_inflated_poisson`` and
  ``zero_inflated_negative_binomial`` (Lambert 1992) join the count families. Theirs is a
  likelihood of a probability mass on the same counts, so they are ranked with the families by
  the same rule: support warnings last, then the lowest AIC (or BIC), criteria equal to 8
  decimals tie, ties to fewer estimated parameters, then to the order listed (composites after
  the families).
* **Measurements with an atom at 0** (at least 5% of the weight exactly 0, at least 10 other
  values, all of them > 0): no density puts mass on a point, and a point mass plus a density
  (a hurdle) has a likelihood of counting measure at the atom and densities elsewhere, which is
  never compared by AIC with a density's (:mod:`samplewright.check.comparable`). So ``auto``
  ranks no densities on these data: it answers with the **hurdle** whose point mass is the share
  of zeros and whose continuous part is ``auto``'s own answer on the values other than 0 (read
  as measurements, with its ranking, test and composites; the record's ``ranking`` is that one).
* **Other measurements**: a ``mixture_<family>`` (``mixture`` method: components chosen by BIC
  up to 3) joins when a two-component mixture improves BIC by more than 10 over the **best single
  family ``auto`` fitted** (screen option ``bic_offset``), with the family of that best fit when
  it is one of lognormal, gamma, weibull, normal, else the best fitted of those. A mixture's
  likelihood is a density on the same values, so it is ranked with the families by the rule
  above. Ordinary data (one family explains them) get no mixture, and ``auto``'s answer is
  unchanged.

The bootstrap p-values stay with the single families: refitting a mixture or a zero-inflated
model on every replicate costs far more, and p-values do not rank. A composite's row therefore
has none, and a composite chosen is not flagged ``poor_fit`` (the check's distances to the data
still describe it). A composite that wins is returned as its own sampler (``MixtureSampler`` or
``PointMassSampler``) with method ``auto``: an artifact of its kind, which ``select`` ranks by
its criterion like any candidate. The record ``diagnostics["auto"]["composites"]`` keeps the
screen's numbers, what joined (``added``: the composites' labels, ranked with the families of
``candidates``) and, for a hurdle, why; ``diagnostics["auto"]["refit"]`` names
the method and options that refit the answer with the choice held (``{"method": "gamma",
"options": {}}``, ``{"method": "mixture", "options": {"family": ..., "seed": ...}}``, ``{"method":
"hurdle", "options": {"body": ...}}``; None for a hurdle whose part is a mixture), for checks
that bootstrap the answer. The mixture's random EM starts use a seed
drawn from a stream spawned from ``auto``'s own (recorded with the row's options, so
``fit(x, "mixture", **options)`` refits it).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import asdict
from typing import Any

import numpy as np

from samplewright.check.auto import SUPPORT_KINDS, read_integers
from samplewright.core.checks import CheckedSample, check_sample
from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.base import Sampler
from samplewright.distributions.mixture import MixtureSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.point_mass import PointMassSampler
from samplewright.fitting.catalog import MIXTURE_FAMILIES
from samplewright.fitting.composite import (
    fit_mixture_sample,
    fit_zero_inflated_sample,
    screen_composites,
    screen_point_mass,
)
from samplewright.fitting.zero_modified import COUNT_FAMILIES, split_point_mass

__all__ = ["HURDLE_WHY", "add_composites", "point_mass_answer"]

HURDLE_WHY = (
    "an atom at 0 the data call for: a density puts no mass on a point, and a hurdle's "
    "likelihood is not comparable by AIC/BIC with a density's, so auto answers with the "
    "hurdle whose continuous part is its answer on the values other than 0"
)
_Refit = Callable[..., Sampler]


def _finite(v: Any) -> float | None:
    return float(v) if v is not None and np.isfinite(v) else None


def _screen_record(screen: Any) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for k, v in asdict(screen).items():
        out[k] = list(v) if isinstance(v, tuple) else _finite(v) if isinstance(v, float) else v
    return out


def _n_params(sampler: Sampler) -> int:
    """Estimated parameters of an answer of ``auto`` (its chosen row's)."""
    auto = sampler.diagnostics.get("auto") or {}
    row = next(r for r in auto["ranking"] if r["family"] == auto["chosen"])
    return int(row["n_params"])


def _plain(sampler: Sampler) -> Sampler:
    """The sampler as its own method would make it (no ``auto`` record), for a hurdle's part."""
    if isinstance(sampler, MixtureSampler):
        return MixtureSampler(
            sampler.family.name,
            sampler.weights,
            sampler.components,
            loglik=sampler.loglik,
            aic=sampler.aic,
            bic=sampler.bic,
        )
    if isinstance(sampler, ParametricSampler):
        return ParametricSampler(
            sampler.family.name,
            dict(sampler.params),
            loglik=sampler.loglik,
            aic=sampler.aic,
            bic=sampler.bic,
        )
    raise MethodError(f"auto: a hurdle's part cannot be a {sampler.kind} sampler")


def _hurdle_refit(body: Sampler) -> dict[str, Any] | None:
    if isinstance(body, ParametricSampler):
        return {"method": "hurdle", "options": {"body": body.family.name}}
    return None  # a mixture part: no one method refits it


def point_mass_answer(
    sample: CheckedSample,
    options: Mapping[str, Any],
    *,
    reading: str,
    rng: np.random.Generator,
    seed: int | None,
    seed_source: str,
    refit: _Refit,
) -> PointMassSampler | None:
    """The hurdle ``auto`` answers with when measurements hold an atom at 0 (module
    docstring), else None. ``refit`` is ``auto``'s catalog fitter, run on the other values with
    a stream spawned from ``rng``; ``seed`` and ``seed_source`` are recorded."""
    if options.get("candidates") is not None or reading == "counts":
        return None
    x, w = sample.values, sample.weights
    screen = screen_point_mass(x, w, counts=False)
    if "hurdle" not in screen.candidates:
        return None
    split = split_point_mass(x, at=0.0, weights=w)
    rest = check_sample(split.values, None if w is None else split.weights, what="auto")
    body_options = {k: v for k, v in options.items() if k != "seed"}
    body_options["integers"] = "measurements"
    body = refit(rest, "auto", rng=rng.spawn(1)[0], **body_options)
    n_params = _n_params(body) + 1
    n_rest = split.n_total - split.n_at
    loglik = float(body.loglik) + n_rest * float(np.log1p(-split.p0))  # type: ignore[attr-defined]
    loglik += split.n_at * float(np.log(split.p0))
    inner_auto = dict(body.diagnostics["auto"])
    integers = options.get("integers", "detect")
    auto = {
        **inner_auto,
        "reading": {"as": reading, "integers": integers, "dense_share": read_integers(x, w)[1]},
        "seed": seed,
        "seed_source": seed_source,
        "chosen": "hurdle",
        "refit": _hurdle_refit(body),
        "ranked_on": "the values other than 0 (the hurdle's continuous part)",
        "composites": {
            "screen": _screen_record(screen),
            "added": ["hurdle"],
            "answer": "hurdle",
            "why": HURDLE_WHY,
            "part": inner_auto.get("composites"),
        },
    }
    diagnostics = {
        "auto": auto,
        "hurdle": {
            "at": split.at,
            "p0": split.p0,
            "n_at": split.n_at,
            "n_total": split.n_total,
            "body": inner_auto["chosen"],
            "body_loglik": body.loglik,  # type: ignore[attr-defined]
            "n_params": n_params,
        },
        "warnings": list(body.diagnostics.get("warnings") or []),
    }
    return PointMassSampler(
        _plain(body),
        at=split.at,
        p0=split.p0,
        loglik=loglik,
        aic=2.0 * n_params - 2.0 * loglik,
        bic=n_params * float(np.log(split.n_total)) - 2.0 * loglik,
        method="auto",
        diagnostics=diagnostics,
    )


# ---------------------------------------------------------------------------------------------
# composites ranked with the families


def _mixture_screen(sample: CheckedSample, ranking: list[dict[str, Any]]) -> tuple[Any, str | None]:
    """The screen with the mixture family and BIC offset from ``auto``'s fitted families."""
    fitted = [r for r in ranking if r.get("error") is None and r.get("bic") is not None]
    positive = bool(np.all(sample.values > 0))
    usable = [
        r
        for r in fitted
        if r["family"] in MIXTURE_FAMILIES and (positive or r["family"] == "normal")
    ]
    if not usable:
        return None, "no fitted family of a mixture (lognormal, gamma, weibull, normal)"
    best = min(float(r["bic"]) for r in fitted)
    base = min(usable, key=lambda r: float(r["bic"]))
    offset = max(0.0, float(base["bic"]) - best)
    screen = screen_composites(
        sample.values,
        sample.weights,
        counts=False,
        mixture_family=str(base["family"]),
        bic_offset=offset,
    )
    return screen, None


def _flat(sampler: Sampler) -> dict[str, float]:
    if isinstance(sampler, MixtureSampler):
        out = {}
        for j, comp in enumerate(sampler.component_params(), start=1):
            out[f"weight_{j}"] = float(sampler.weights[j - 1])
            out.update({f"{k}_{j}": v for k, v in comp.items() if k != "loc"})
        return out
    if isinstance(sampler, PointMassSampler):
        inner = {k: float(v) for k, v in sampler.inner.params.items() if isinstance(v, float)}
        return {"p0": sampler.p0, **inner}
    return {}


_Fit = tuple[str, str, dict[str, Any], Sampler | None, int, str | None]


def _composite_fits(sample: CheckedSample, screen: Any, rng: np.random.Generator) -> list[_Fit]:
    """(label, method, options, sampler or None, n_params, error) of each composite proposed."""
    todo: list[tuple[str, str, dict[str, Any]]] = []
    if "zero_inflated" in screen.candidates:
        todo += [(f"zero_inflated_{f}", "zero_inflated", {"family": f}) for f in COUNT_FAMILIES]
    if "mixture" in screen.candidates:
        seed = int(rng.spawn(1)[0].integers(2**53))
        todo.append(
            (f"mixture_{screen.mixture_family}", "mixture", {"family": screen.mixture_family,
                                                              "seed": seed})
        )  # fmt: skip
    out: list[_Fit] = []
    for label, method, opts in todo:
        try:
            with np.errstate(all="ignore"):
                if method == "mixture":
                    s: Sampler = fit_mixture_sample(sample, method, **opts)
                    k = int(s.diagnostics["mixture"]["n_params"])
                else:
                    s = fit_zero_inflated_sample(sample, method, **opts)
                    k = int(s.diagnostics["zero_inflated"]["n_params"])
        except (FitError, MethodError, ArithmeticError) as err:
            out.append((label, method, opts, None, 0, str(err)))
            continue
        out.append((label, method, opts, s, k, None))
    return out


def _row(
    label: str, method: str, opts: dict[str, Any], s: Sampler | None, k: int, err: str | None
) -> dict[str, Any]:
    return {
        "rank": 0,
        "family": label,
        "method": method,
        "options": dict(opts),
        "params": {} if s is None else _flat(s),
        "n_params": k,
        "loglik": None if s is None else _finite(s.loglik),  # type: ignore[attr-defined]
        "aic": None if s is None else _finite(s.aic),  # type: ignore[attr-defined]
        "bic": None if s is None else _finite(s.bic),  # type: ignore[attr-defined]
        "statistics": {},
        "pvalues": {},
        "n_failed": 0,
        "pvalues_reliable": True,
        "warnings": [],
        "error": err,
    }


def _order_key(row: dict[str, Any], index: int, criterion: str) -> tuple[int, float, int, int]:
    if row.get("error") is not None:
        return (2, 0.0, 0, index)
    warned = any(w.get("kind") in SUPPORT_KINDS for w in row.get("warnings") or [])
    value = row.get(criterion)
    crit = round(float(value), 8) if value is not None else float("inf")
    return (1 if warned else 0, crit, int(row["n_params"]), index)


def add_composites(
    sample: CheckedSample,
    sampler: ParametricSampler,
    options: Mapping[str, Any],
    *,
    rng: np.random.Generator,
) -> Sampler:
    """``auto``'s answer with the composites the data call for ranked in (module docstring):
    ``sampler`` itself (its record extended) or the composite that ranks first."""
    auto = sampler.diagnostics["auto"]
    auto["refit"] = {"method": sampler.family.name, "options": {}}
    if options.get("candidates") is not None:
        return sampler
    reading = auto["reading"]["as"]
    ranking: list[dict[str, Any]] = auto["ranking"]
    record: dict[str, Any] = {"added": []}
    try:
        with np.errstate(all="ignore"):
            if reading == "counts":
                screen, why = screen_point_mass(sample.values, sample.weights, counts=True), None
            else:
                screen, why = _mixture_screen(sample, ranking)
    except (FitError, MethodError, ArithmeticError) as err:
        screen, why = None, f"the screen failed: {err}"
    if screen is None:
        record["why_none"] = why
        auto["composites"] = record
        return sampler
    record["screen"] = _screen_record(screen)
    fits = _composite_fits(sample, screen, rng)
    if not fits:
        auto["composites"] = record
        return sampler
    record["added"] = [f[0] for f in fits]
    criterion = auto["criterion"]
    listed = {name: i for i, name in enumerate(auto["candidates"])}
    rows = [(r, listed.get(r["family"], len(listed))) for r in ranking]
    rows += [(_row(*f), len(listed) + j) for j, f in enumerate(fits)]
    rows.sort(key=lambda item: _order_key(item[0], item[1], criterion))
    table = [dict(r, rank=i) for i, (r, _) in enumerate(rows, start=1)]
    auto["ranking"] = table
    auto["composites"] = record
    winner = table[0]["family"]
    chosen = next((f for f in fits if f[0] == winner), None)
    if chosen is None or chosen[3] is None:
        return sampler
    return _composite_answer(sampler, chosen[3], winner, record)


def _composite_answer(
    sampler: ParametricSampler, won: Sampler, label: str, record: dict[str, Any]
) -> Sampler:
    """The winning composite as ``auto``'s answer: method ``auto``, the ranking recorded."""
    row = next(r for r in sampler.diagnostics["auto"]["ranking"] if r["family"] == label)
    refit = {"method": row["method"], "options": dict(row["options"])}
    auto = dict(sampler.diagnostics["auto"], chosen=label, poor_fit=False, refit=refit)
    record["answer"] = label
    kept = [
        w for w in sampler.diagnostics.get("warnings") or [] if w["kind"] == "recording_resolution"
    ]
    diagnostics = {
        **{k: v for k, v in sampler.diagnostics.items() if k not in ("auto", "warnings")},
        **won.diagnostics,
        "auto": auto,
        "warnings": kept,
    }
    if isinstance(won, MixtureSampler):
        return MixtureSampler(
            won.family.name,
            won.weights,
            won.components,
            loglik=won.loglik,
            aic=won.aic,
            bic=won.bic,
            method="auto",
            diagnostics=diagnostics,
        )
    assert isinstance(won, PointMassSampler)
    return PointMassSampler(
        won.inner,
        at=won.at,
        p0=won.p0,
        loglik=won.loglik,
        aic=won.aic,
        bic=won.bic,
        method="auto",
        diagnostics=diagnostics,
    )
