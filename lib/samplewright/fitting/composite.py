"""Methods ``mixture``, ``hurdle`` and ``zero_inflated``, and when ``auto`` should consider them.

Catalog fitters (called as ``fitter(sample, method, **options)`` with a checked sample):

* ``mixture`` (:func:`fit_mixture_sample`): a finite mixture of one family fitted by EM, the
  number of components chosen by BIC (:func:`samplewright.fitting.mixtures.fit_mixture`).
  Options: ``family`` (lognormal, gamma, weibull or normal; default lognormal when every value
  is > 0, else normal), ``max_components`` (default 3), ``n_starts`` (default 5), ``seed`` of
  the random EM starts (default 0). Returns a
  :class:`~samplewright.distributions.mixture.MixtureSampler`.
* ``hurdle`` (:func:`fit_hurdle_sample`): the share ``p0`` of the data equal to ``at`` (default
  0) as a point mass, and a continuous ``body`` family (default lognormal) fitted by maximum
  likelihood to the other values. The log-likelihood is
  ``n_at log p0 + n_rest log(1 - p0) + body log-likelihood`` (with respect to counting measure at
  the atom plus Lebesgue measure elsewhere, so comparable only with other models that put the
  same atom there).
* ``zero_inflated`` (:func:`fit_zero_inflated_sample`): zero-inflated Poisson or negative
  binomial (``family``, default poisson; Lambert 1992) by maximum likelihood
  (:func:`samplewright.fitting.zero_modified.fit_zero_inflated`); its log-likelihood is of a
  pmf, comparable with the count families'.

Both point-mass methods return a :class:`~samplewright.distributions.point_mass.PointMassSampler`.
Frequency weights behave exactly like repeated rows everywhere.

When ``auto`` should consider them (:func:`composite_candidates`, reasons in
:func:`screen_composites`), in the order listed, with the constants below:

1. Counts (every value a non-negative integer; a caller that reads whole numbers its own way,
   as ``auto`` does, says so with ``counts``): ``zero_inflated``
   when there are zeros and positive counts and van den Broek's (1995, Biometrics 51(2)) score
   test of zero inflation against the fitted Poisson rejects one-sided at
   :data:`ZERO_INFLATION_LEVEL` (0.01). Over-dispersed counts also make it reject; the
   zero-inflated candidates then compete with the negative binomial by the criterion.
2. Otherwise, ``hurdle`` when at least :data:`ATOM_SHARE` (5 %) of the weight sits exactly at 0,
   at least :data:`MIN_BODY` (10) values are not 0 and all of them are > 0 (so the default
   lognormal body applies; name ``hurdle`` with ``body="normal"`` yourself for signed data).
3. Otherwise (no such atom), ``mixture`` when at least :data:`MIN_MIXTURE_VALUES` (20) distinct
   values exist and a two-component mixture of the family (``mixture_family``; default lognormal
   when every value is > 0, else normal) improves BIC over one component, less ``bic_offset``,
   by more than :data:`MIXTURE_BIC_GAIN` (10, "very strong" evidence on the scale of Kass &
   Raftery 1995). A caller that fitted other single families passes how much worse, in BIC, the
   mixture family's own fit is than the best of them as ``bic_offset``, so the gain is over the
   best single family (``auto`` does: a mixture joins only when no single family it fitted
   explains the data as well). The screen fits the table of
   distinct values and their weights; beyond :data:`SKETCH_SIZE` (2,000) distinct values it fits
   their weighted quantiles at 2,000 equally spaced levels, each carrying 1/2,000 of the weight,
   with a looser EM tolerance (1e-7, 300 steps, 2 starts, seed 0): a lower bound on the gain.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import stats

from samplewright.core.checks import CheckedSample, check_sample
from samplewright.core.errors import MethodError
from samplewright.distributions.base import json_float
from samplewright.distributions.families import FAMILIES, get_family
from samplewright.distributions.mixture import MixtureSampler
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.point_mass import PointMassSampler
from samplewright.fitting.mixtures import MIXTURE_FAMILIES, MixtureResult, fit_mixture
from samplewright.fitting.mle import fit_checked
from samplewright.fitting.registry import check_sample_for, method_spec
from samplewright.fitting.zero_modified import (
    COUNT_FAMILIES,
    fit_zero_inflated,
    split_point_mass,
)

__all__ = [
    "ATOM_SHARE",
    "COMPOSITE_METHODS",
    "MIN_BODY",
    "MIN_MIXTURE_VALUES",
    "MIXTURE_BIC_GAIN",
    "SKETCH_SIZE",
    "ZERO_INFLATION_LEVEL",
    "CompositeScreenResult",
    "composite_candidates",
    "fit_hurdle_sample",
    "fit_mixture_sample",
    "fit_zero_inflated_sample",
    "screen_composites",
    "screen_point_mass",
]

COMPOSITE_METHODS = ("mixture", "hurdle", "zero_inflated")
ATOM_SHARE = 0.05
MIN_BODY = 10
ZERO_INFLATION_LEVEL = 0.01
MIN_MIXTURE_VALUES = 20
MIXTURE_BIC_GAIN = 10.0
SKETCH_SIZE = 2000


# ---------------------------------------------------------------------------------------------
# options


def _int_option(options: dict[str, Any], method: str, name: str, default: int, least: int) -> int:
    value = options.get(name, default)
    if isinstance(value, bool) or not isinstance(value, int | np.integer) or value < least:
        raise MethodError(
            f"option {name!r} of {method}: expected an integer >= {least}, found {value!r}"
        )
    return int(value)


def _word_option(
    options: dict[str, Any], method: str, name: str, default: str, allowed: tuple[str, ...]
) -> str:
    value = options.get(name, default)
    if value not in allowed:
        raise MethodError(
            f"option {name!r} of {method}: expected one of {', '.join(allowed)}, found {value!r}"
        )
    return str(value)


def default_mixture_family(x: np.ndarray) -> str:
    """``lognormal`` when every value is > 0, else ``normal``."""
    return "lognormal" if bool(np.all(x > 0)) else "normal"


# ---------------------------------------------------------------------------------------------
# mixture


def mixture_sampler(result: MixtureResult, **kwargs: Any) -> MixtureSampler:
    """The :class:`MixtureSampler` of a fitted mixture (scipy parameters to trade names)."""
    a, b = result.params[:, 0], result.params[:, 1]
    zero = np.zeros_like(a)
    components = {
        "normal": {"mu": a, "sigma": b},
        "lognormal": {"mu": np.log(b), "sigma": a, "loc": zero},
        "gamma": {"shape": a, "scale": b, "loc": zero},
        "weibull": {"shape": a, "scale": b, "loc": zero},
    }[result.family]
    return MixtureSampler(
        result.family,
        result.weights,
        components,
        loglik=result.loglik,
        aic=result.aic,
        bic=result.bic,
        **kwargs,
    )


def fit_mixture_sample(
    sample: CheckedSample, method: str = "mixture", **options: Any
) -> MixtureSampler:
    """Catalog fitter of ``mixture`` (options in the module docstring)."""
    x = sample.values
    family = _word_option(options, method, "family", default_mixture_family(x), MIXTURE_FAMILIES)
    if family != "normal" and not np.all(x > 0):
        raise MethodError(
            f"option 'family' of {method}: {family} needs every value > 0, found "
            f"{int(np.count_nonzero(x <= 0))} values <= 0; use family='normal'"
        )
    max_components = _int_option(options, method, "max_components", 3, 1)
    n_starts = _int_option(options, method, "n_starts", 5, 1)
    seed = _int_option(options, method, "seed", 0, 0)
    result = fit_mixture(
        x,
        family=family,  # type: ignore[arg-type]
        weights=sample.weights,
        max_components=max_components,
        n_starts=n_starts,
        rng=seed,
    )
    rows = [
        {
            "n_components": r.n_components,
            "n_params": r.n_params,
            "loglik": json_float(r.loglik),
            "aic": json_float(r.aic),
            "bic": json_float(r.bic),
            "converged": r.converged,
            "n_iter": r.n_iter,
            "n_collapsed": r.n_collapsed,
        }
        for r in result.by_n_components
    ]
    diagnostics = {
        "mixture": {
            "family": family,
            "family_given": "family" in options,
            "n_components": result.n_components,
            "chosen_by": "bic",
            "max_components": max_components,
            "n_starts": n_starts,
            "seed": seed,
            "n_params": result.n_params,
            "n_iter": result.n_iter,
            "by_n_components": rows,
        }
    }
    return mixture_sampler(result, method=method, diagnostics=diagnostics)


# ---------------------------------------------------------------------------------------------
# hurdle


def _body_family(options: dict[str, Any], method: str) -> str:
    name = options.get("body", "lognormal")
    if not isinstance(name, str) or name not in FAMILIES:
        raise MethodError(
            f"option 'body' of {method}: expected a continuous family name, found {name!r}"
        )
    family = get_family(name)
    if family.discrete:
        raise MethodError(
            f"option 'body' of {method}: expected a continuous family, found the count "
            f"family {name!r}; use method 'zero_inflated' for counts"
        )
    return name


def fit_hurdle_sample(
    sample: CheckedSample, method: str = "hurdle", **options: Any
) -> PointMassSampler:
    """Catalog fitter of ``hurdle``: an atom at ``at`` plus a continuous ``body`` family."""
    at = options.get("at", 0.0)
    if isinstance(at, bool) or not isinstance(at, int | float) or not np.isfinite(at):
        raise MethodError(f"option 'at' of {method}: expected a finite number, found {at!r}")
    body = _body_family(options, method)
    split = split_point_mass(sample.values, at=float(at), weights=sample.weights)
    weighted = sample.weights is not None
    spec = method_spec(body)
    if split.values.size < spec.min_obs:
        raise MethodError(
            f"values: {method} with body {body!r} needs at least {spec.min_obs} values other "
            f"than at={at:g}, found {split.values.size}"
        )
    rest = check_sample_for(spec, split.values, split.weights if weighted else None)
    try:
        fitted = fit_checked(get_family(body), rest, {})
    except MethodError as exc:
        raise MethodError(f"{method} body {body!r}: {exc}") from None
    n_rest = split.n_total - split.n_at
    p0 = split.p0
    loglik = fitted.loglik + n_rest * np.log1p(-p0)
    if split.n_at > 0:
        loglik += split.n_at * np.log(p0)
    n_params = fitted.n_params + 1
    inner = ParametricSampler(
        body, fitted.params, loglik=fitted.loglik, aic=fitted.aic, bic=fitted.bic
    )
    diagnostics = {
        "hurdle": {
            "at": split.at,
            "p0": p0,
            "n_at": split.n_at,
            "n_total": split.n_total,
            "body": body,
            "body_loglik": fitted.loglik,
            "n_params": n_params,
        }
    }
    return PointMassSampler(
        inner,
        at=split.at,
        p0=p0,
        loglik=loglik,
        aic=2.0 * n_params - 2.0 * loglik,
        bic=n_params * float(np.log(split.n_total)) - 2.0 * loglik,
        method=method,
        diagnostics=diagnostics,
    )


# ---------------------------------------------------------------------------------------------
# zero-inflated counts


def fit_zero_inflated_sample(
    sample: CheckedSample, method: str = "zero_inflated", **options: Any
) -> PointMassSampler:
    """Catalog fitter of ``zero_inflated``: an atom at 0 plus a Poisson or negative binomial."""
    family = _word_option(options, method, "family", "poisson", COUNT_FAMILIES)
    r = fit_zero_inflated(sample.values, family=family, weights=sample.weights)  # type: ignore[arg-type]
    if family == "poisson":
        params = {"lambda": r.params["mu"]}
    else:
        params = {"r": r.params["n"], "p": r.params["p"]}
    inner = ParametricSampler(family, params)
    f0 = float(inner.pmf(0.0))
    diagnostics = {
        "zero_inflated": {
            "family": family,
            "pi": r.pi,
            "pi_at_bound": r.pi_at_bound,
            "n_zeros": r.n_zeros,
            "n_obs": r.n_obs,
            "expected_zeros": r.n_obs * (r.pi + (1.0 - r.pi) * f0),
            "n_params": r.n_params,
            "n_iter": r.n_iter,
        }
    }
    return PointMassSampler(
        inner,
        at=0.0,
        p0=r.pi,
        loglik=r.loglik,
        aic=r.aic,
        bic=r.bic,
        method=method,
        diagnostics=diagnostics,
    )


# ---------------------------------------------------------------------------------------------
# when auto should consider them


@dataclass(frozen=True)
class CompositeScreenResult:
    """Why :func:`composite_candidates` proposes what it does (see the module docstring).

    Attributes
    ----------
    candidates : tuple of str
        Methods proposed, in the order of :data:`COMPOSITE_METHODS`.
    counts : bool
        Whether every value is a non-negative integer.
    zero_share : float
        Weight share of the values equal to 0.
    n_nonzero : int
        Rows whose value is not 0.
    zero_inflation_z, zero_inflation_pvalue : float or None
        van den Broek's score statistic (standard normal under a Poisson) and its one-sided
        p-value for excess zeros; None unless the data are counts with zeros and positives.
    mixture_family : str or None
        Family of the mixture screen; None when it did not run.
    bic_gain : float or None
        BIC of one component minus BIC of two, less ``bic_offset`` (> 0 favours two); None
        when it did not run.
    """

    candidates: tuple[str, ...]
    counts: bool
    zero_share: float
    n_nonzero: int
    zero_inflation_z: float | None = None
    zero_inflation_pvalue: float | None = None
    mixture_family: str | None = None
    bic_gain: float | None = None


def zero_inflation_score(x: np.ndarray, w: np.ndarray) -> tuple[float, float]:
    """van den Broek's (1995) score test of zero inflation in a Poisson with constant mean.

    With ``n`` the total weight, ``n0`` that of the zeros, ``m`` the mean and ``p = exp(-m)``:
    ``z = (n0 / p - n) / sqrt(n (1 - p) / p - n m)``; returns ``z`` and ``P(Z >= z)``.
    """
    n = float(w.sum())
    m = float(w @ x) / n
    n0 = float(w[x == 0].sum())
    p = np.exp(-m)
    z = (n0 / p - n) / np.sqrt(n * (-np.expm1(-m)) / p - n * m)
    return float(z), float(stats.norm.sf(z))


def _table(x: np.ndarray, w: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct values with their summed weights, reduced to SKETCH_SIZE weighted quantiles."""
    values, inv = np.unique(x, return_inverse=True)
    tally = np.bincount(inv, weights=w, minlength=values.size)
    if values.size <= SKETCH_SIZE:
        return values, tally
    cum = np.cumsum(tally)
    total = float(cum[-1])
    levels = (np.arange(SKETCH_SIZE) + 0.5) / SKETCH_SIZE * total
    idx = np.minimum(np.searchsorted(cum, levels, side="left"), values.size - 1)
    return values[idx], np.full(SKETCH_SIZE, total / SKETCH_SIZE)


def _whole(v: np.ndarray) -> bool:
    return bool(np.all(v >= 0) and np.all(v == np.round(v)))


def _point_mass_step(
    v: np.ndarray, w: np.ndarray, counts: bool | None
) -> tuple[CompositeScreenResult, bool]:
    """Steps 1 and 2 of the rule: their result, and whether step 3 (mixtures) is still open."""
    total = float(w.sum())
    zero = v == 0
    share = float(w[zero].sum()) / total
    n_nonzero = int(np.count_nonzero(~zero))
    whole = _whole(v)
    as_counts = whole if counts is None else bool(counts) and whole
    if as_counts:
        if share == 0.0 or n_nonzero == 0:
            return CompositeScreenResult((), True, share, n_nonzero), False
        z, pvalue = zero_inflation_score(v, w)
        found = ("zero_inflated",) if pvalue < ZERO_INFLATION_LEVEL else ()
        return CompositeScreenResult(found, True, share, n_nonzero, z, pvalue), False
    if share >= ATOM_SHARE:
        ok = n_nonzero >= MIN_BODY and bool(np.all(v[~zero] > 0))
        return CompositeScreenResult(("hurdle",) if ok else (), False, share, n_nonzero), False
    return CompositeScreenResult((), False, share, n_nonzero), True


def screen_point_mass(
    x: Any, weights: Any = None, *, counts: bool | None = None
) -> CompositeScreenResult:
    """Steps 1 and 2 of the rule only (zero inflation of counts, an atom at 0): no mixture is
    fitted, so it is cheap. ``counts`` as for :func:`screen_composites`.

    >>> import numpy as np
    >>> screen_point_mass(np.r_[np.zeros(30), np.arange(1.0, 171.0)]).candidates
    ('zero_inflated',)
    >>> screen_point_mass(np.r_[np.zeros(30), np.arange(1.0, 171.0)], counts=False).candidates
    ('hurdle',)
    """
    sample = check_sample(x, weights, what="composite_candidates")
    return _point_mass_step(sample.values, sample.weights_or_ones(), counts)[0]


def screen_composites(
    x: Any,
    weights: Any = None,
    *,
    counts: bool | None = None,
    mixture_family: str | None = None,
    bic_offset: float = 0.0,
) -> CompositeScreenResult:
    """Apply the documented rule (module docstring) to values ``x`` with frequency weights.

    ``counts``: whether whole numbers >= 0 are counts (None: every such sample is; False reads
    them as measurements). ``mixture_family`` and ``bic_offset`` (>= 0): the mixture screen's
    family and what its one-component BIC lags the best single family a caller fitted.

    >>> import numpy as np
    >>> g = np.random.default_rng(1)
    >>> x = np.concatenate([np.zeros(30), g.lognormal(0.0, 1.0, 170)])
    >>> screen_composites(x).candidates
    ('hurdle',)
    """
    sample = check_sample(x, weights, what="composite_candidates")
    v, w = sample.values, sample.weights_or_ones()
    if (
        isinstance(bic_offset, bool)
        or not isinstance(bic_offset, int | float)
        or not (bic_offset >= 0 and np.isfinite(bic_offset))
    ):
        raise MethodError(f"bic_offset: expected a finite number >= 0, found {bic_offset!r}")
    first, open_ = _point_mass_step(v, w, counts)
    if not open_ or np.unique(v).size < MIN_MIXTURE_VALUES:
        return first
    family = default_mixture_family(v) if mixture_family is None else mixture_family
    if family not in MIXTURE_FAMILIES or (family != "normal" and not np.all(v > 0)):
        raise MethodError(
            f"mixture_family: expected one of {', '.join(MIXTURE_FAMILIES)} (normal when some "
            f"value is <= 0), found {family!r}"
        )
    values, tally = _table(v, w)
    r = fit_mixture(
        values,
        family=family,  # type: ignore[arg-type]
        weights=tally,
        n_components=None,
        max_components=2,
        n_starts=2,
        tol=1e-7,
        max_iter=300,
        rng=0,
    )
    bic = {row.n_components: row.bic for row in r.by_n_components}
    gain = None
    if 2 in bic and np.isfinite(bic[2]):
        gain = float(bic[1] - bic[2]) - float(bic_offset)
    found = ("mixture",) if gain is not None and gain > MIXTURE_BIC_GAIN else ()
    return CompositeScreenResult(
        found, False, first.zero_share, first.n_nonzero, None, None, family, gain
    )


def composite_candidates(x: Any, weights: Any = None) -> tuple[str, ...]:
    """The composite methods ``auto`` should add to its candidates for these data (see the
    module docstring for the rule; :func:`screen_composites` gives the numbers behind it).

    >>> import numpy as np
    >>> composite_candidates(np.random.default_rng(2).normal(5.0, 1.0, 300))
    ()
    """
    return screen_composites(x, weights).candidates
