"""Which candidates a likelihood criterion may compare: densities with densities, masses alike.

Selection by ``aic`` or ``bic`` compares log-likelihoods. A count family's log-likelihood is a
sum of log *probabilities* (each at most 0); a continuous family's is a sum of log *densities*,
which change with the unit of measurement (the same data in minutes instead of hours shift every
log-density by ``log 60``). The two are on different scales, so comparing a poisson with a
normal by AIC says nothing about which model is better: that is refused, before anything is
fitted where possible.

What each method is, as far as a criterion goes (:func:`method_outcome`):

* ``"mass"``: the count families (``poisson``, ``negative_binomial``, ``geometric``,
  ``binomial``; the catalog's :attr:`~samplewright.fitting.catalog.MethodSpec.counts`);
* ``"density"``: every other parametric family, and ``mixture`` (a mixture of densities);
* ``zero_inflated``: ``"mass"`` (a count model with extra zeros);
* ``hurdle``: ``"point_mass"``: a probability at one value plus a density elsewhere. Its
  likelihood mixes the two scales, so it is compared only with other hurdles (same data, same
  share at the point: their likelihoods differ by the continuous part alone);
* ``auto`` and ``averaged``: what their ``candidates`` are (a list mixing the two is refused
  as such); without ``candidates`` the data decide (``"data"``: whole-number data may be read
  as counts, :mod:`samplewright.check.auto`), which is checked once fitted;
* ``None``: methods a criterion does not rank (``empirical``, ``interpolated``, ``spliced``,
  ``smoothed``, ``kaplan_meier``, ``empirical_pmf``: no comparable likelihood).

:func:`check_comparable` is the planning check (method names and options only; this module
imports neither numpy nor scipy), :func:`check_comparable_fitted` the same rule on fitted
samplers, for a set whose kind only the data decided.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any, Literal

from samplewright.core.errors import MethodError
from samplewright.fitting.catalog import CATALOG

__all__ = [
    "Outcome",
    "RANKED_RULES",
    "check_comparable",
    "check_comparable_fitted",
    "method_outcome",
]

# What a method's likelihood is a likelihood of ("data": decided by the data, at fit time).
Outcome = Literal["density", "mass", "point_mass", "data"]
# The selection rules that compare likelihoods.
RANKED_RULES = ("aic", "bic")


def _family_outcome(name: str, where: str) -> Outcome:
    spec = CATALOG.get(name) if isinstance(name, str) else None
    if spec is None or spec.group != "family":
        raise MethodError(f"{where}: unknown family {name!r}")
    return "mass" if spec.counts else "density"


def method_outcome(method: str, options: Mapping[str, Any] | None = None) -> Outcome | None:
    """What ``method`` with ``options`` models, for a likelihood criterion (module docstring).

    >>> method_outcome("poisson"), method_outcome("gamma"), method_outcome("empirical")
    ('mass', 'density', None)
    >>> method_outcome("auto"), method_outcome("auto", {"candidates": ["poisson", "geometric"]})
    ('data', 'mass')
    """
    spec = CATALOG.get(method) if isinstance(method, str) else None
    if spec is None:
        raise MethodError(f"method: unknown method {method!r}")
    if spec.group == "family":
        return "mass" if spec.counts else "density"
    fixed: dict[str, Outcome] = {
        "mixture": "density",
        "zero_inflated": "mass",
        "hurdle": "point_mass",
    }
    if method in fixed:
        return fixed[method]
    if method not in ("auto", "averaged"):
        return None
    candidates = (options or {}).get("candidates")
    if not candidates:
        return "data"
    where = f"option 'candidates' of {method}"
    if not isinstance(candidates, list | tuple):
        raise MethodError(f"{where}: expected a list of family names, found {candidates!r}")
    kinds = {c: _family_outcome(c, where) for c in candidates}
    if len(set(kinds.values())) > 1:
        mass = [c for c, k in kinds.items() if k == "mass"]
        dens = [c for c, k in kinds.items() if k == "density"]
        raise MethodError(
            f"{where}: {_who(mass)} counts (a probability mass) but {_who(dens)} a density; "
            "their likelihoods are not comparable, so list only one kind"
        )
    return next(iter(kinds.values()))


def _who(labels: list[str]) -> str:
    """``'a' models`` / ``'a', 'b' model``."""
    return ", ".join(repr(x) for x in labels) + (" models" if len(labels) == 1 else " model")


def _refuse_mix(rule: str, kinds: Mapping[str, Outcome | None]) -> None:
    mass = [label for label, k in kinds.items() if k == "mass"]
    dens = [label for label, k in kinds.items() if k == "density"]
    point = [label for label, k in kinds.items() if k == "point_mass"]
    if point and (mass or dens):
        raise MethodError(
            f"choose {rule!r}: {_who(point)} a point mass plus a density (a hurdle) but "
            f"{_who(mass + dens)} {'counts' if mass else 'a density'} alone; their "
            f"{rule.upper()} are not comparable (one likelihood mixes a probability with "
            "densities). Compare hurdles with hurdles, or choose a method label"
        )
    if mass and dens:
        raise MethodError(
            f"choose {rule!r}: {_who(mass)} counts (a probability mass) but {_who(dens)} a "
            f"density; their {rule.upper()} are not comparable (a density's likelihood "
            "depends on the unit of measurement). Compare one kind only, or choose a method "
            "label"
        )


def check_comparable(methods: Sequence[tuple[str, str, Mapping[str, Any]]], rule: str) -> None:
    """Refuse, at planning, a candidate set a likelihood criterion cannot rank.

    Parameters
    ----------
    methods : sequence of (label, method, options)
        The candidates of one dataset.
    rule : str
        The selection rule; only ``"aic"`` and ``"bic"`` compare likelihoods (any other rule
        passes).

    Raises
    ------
    MethodError
        Naming the candidates that model counts and those that model a density, or the
        ``auto`` whose own candidates mix the two.

    Examples
    --------
    >>> check_comparable([("p", "poisson", {}), ("nb", "negative_binomial", {})], "aic")
    >>> check_comparable([("p", "poisson", {}), ("n", "normal", {})], "first")
    >>> check_comparable([("p", "poisson", {}), ("n", "normal", {})], "bic")
    Traceback (most recent call last):
    ...
    samplewright.core.errors.MethodError: choose 'bic': 'p' models counts (a probability ...
    """
    if rule not in RANKED_RULES:
        return
    kinds: dict[str, Outcome | None] = {}
    for label, method, options in methods:
        try:
            kinds[label] = method_outcome(method, options)
        except MethodError as exc:
            raise MethodError(f"candidate {label!r}: {exc}") from None
    _refuse_mix(rule, kinds)


def _model_outcome(sampler: Any) -> Outcome | None:
    """What a fitted sampler's likelihood is a likelihood of (module docstring)."""
    inner = getattr(sampler, "inner", None)
    if inner is not None and getattr(sampler, "kind", None) == "point_mass":
        # zero-inflated counts: a mass; a point mass beside a density: a hurdle
        return "mass" if _model_outcome(inner) == "mass" else "point_mass"
    family = getattr(sampler, "family", None)
    if family is None:
        return None
    if isinstance(family, str):  # a mixture names its continuous family
        return "density"
    return "mass" if bool(getattr(family, "discrete", False)) else "density"


def _fitted_outcome(sampler: Any, rule: str) -> Outcome | None:
    return None if getattr(sampler, rule, None) is None else _model_outcome(sampler)


def check_comparable_fitted(samplers: Sequence[tuple[str, Any]], rule: str) -> None:
    """The rule of :func:`check_comparable` on fitted samplers ``(label, sampler)``.

    A sampler takes part when it has the criterion (``sampler.aic`` / ``sampler.bic`` not None)
    and a parametric ``family``; it models counts when ``family.discrete``. Needed when the data
    decided what a candidate is (``auto`` without ``candidates``).
    """
    if rule not in RANKED_RULES:
        return
    _refuse_mix(rule, {label: _fitted_outcome(s, rule) for label, s in samplers})
