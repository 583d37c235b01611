"""Spliced samplers: a body joined to a generalized Pareto tail above a threshold.

Method ``spliced`` (peaks over threshold). Below the threshold ``u`` the sampler follows a *body*
fitted to the values at or below ``u``; above it, a generalized Pareto distribution (GPD) fitted
by maximum likelihood to the excesses ``x - u`` of the values strictly above ``u``. With ``zeta``
the (weighted) share of values above ``u`` and ``G`` the fitted GPD::

    F(x) = (1 - zeta) * F_body(x)              for x <= u
    F(x) = 1 - zeta * (1 - G(x - u))           for x > u

so F is continuous at ``u`` and draws can exceed the largest observation.

Options
-------
``body``
    ``"empirical"`` (default; the data at or below ``u``, weights allowed), ``"interpolated"``
    (a piecewise-linear CDF through the sorted body values: when the largest body value is below
    ``u`` the i-th of ``n_b`` values gets ``(i - 1) / n_b`` and a last knot ``(u, 1)`` closes the
    body; when it equals ``u`` they get ``(i - 1) / (n_b - 1)``; no weights), or a continuous
    family name from :data:`BODY_FAMILIES`, fitted by maximum likelihood *truncated at u*
    (``sum log f(x_i) - n_b log F(u)`` over the body values) and renormalised to ``[.., u]``.
    Positive families keep their location at 0. A fit whose positive parameter runs off towards
    0 or infinity (the family's edge, e.g. an exponential body on data whose density rises up to
    ``u``) is refused with a FitError: choose another body.
``threshold``
    The threshold as a value in data units.
``threshold_quantile``
    The threshold as a probability ``q`` in (0, 1): ``u = inf{x : F_n(x) >= q}``, the lower
    (weighted) sample quantile, which is always an observed value.

At most one of ``threshold`` and ``threshold_quantile`` may be given. Either way at least
:data:`MIN_EXCEEDANCES` (10) values must lie above ``u``.

Default threshold (``rule = "stability"``)
------------------------------------------
Candidates are the lower sample quantiles at probabilities 0.80, 0.81, ..., 0.98
(:data:`STABILITY_PROBABILITIES`). The GPD is fitted at every candidate with at least 10
exceedances, with the standard error ``se(xi)`` from the observed information. A candidate ``k``
is *stable* when it has at least :data:`MIN_EXCEEDANCES_AUTO` (50) exceedances, there are at least
3 higher fitted candidates, and for every higher fitted candidate ``j`` (``u_j > u_k``) the
shape estimates agree within the higher one's standard error: ``|xi_k - xi_j| <= se(xi_j)``. The
threshold is the smallest stable candidate; if none is stable, the 0.90 quantile
(``rule = "fallback"``). Above a threshold where the GPD holds, the shape estimate should not
change beyond sampling error as the threshold rises; this rule reads the parameter-stability
plot in that spirit. It is a heuristic: look at the diagnostics.

Diagnostics (``sampler.diagnostics``, JSON with finite floats or null)
-----------------------------------------------------------------------
* ``threshold_choice``: the rule used (``"threshold"`` or ``"threshold_quantile"`` when given,
  else ``"stability"`` or ``"fallback"``), the threshold, its probability ``F_n(u)``, the number of
  exceedances, the tail log-likelihood and standard errors of ``xi`` and ``sigma``.
* ``mean_excess``: ``threshold``, ``mean_excess`` (mean of ``x - u`` over ``x > u``) and
  ``n_exceedances`` at the lower sample quantiles 0.50, 0.52, ..., 0.98.
* ``parameter_stability``: at each candidate, ``xi`` and the modified scale
  ``sigma* = sigma - xi * u`` (constant in ``u`` above a valid threshold) with standard errors
  from the inverse observed information (delta method for ``sigma*``), and the ``stable`` flag.
  Standard errors are null when ``xi <= -0.5`` (the maximum-likelihood estimate is not regular
  there) or the information matrix is not positive definite.

Censored data are refused. Weights are frequency weights (body, tail and ``zeta``).

>>> import numpy as np
>>> x = np.random.default_rng(3).pareto(3.0, 2000)
>>> s = fit_spliced(x, threshold_quantile=0.9)
>>> s.params["body"], s.params["n_exceedances"], round(s.params["zeta"], 3)
('empirical', 200, 0.1)
>>> bool(float(s.quantile(0.9999)) > x.max())
True
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.core.checks import CheckedSample
from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.base import Sampler
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.families import FAMILIES
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.piecewise import PiecewiseSampler
from samplewright.distributions.spliced import SplicedSampler
from samplewright.fitting import optimise as _mle
from samplewright.fitting.api import fit
from samplewright.fitting.catalog import CATALOG, SPLICED_BODIES, ThresholdRule
from samplewright.fitting.mle import FAMILY_FITS, fit_family, free_params, loglik
from samplewright.fitting.mle_fits import number_option
from samplewright.fitting.nonparametric import interpolated

__all__ = [
    "BODY_FAMILIES",
    "MEAN_EXCESS_PROBABILITIES",
    "MIN_EXCEEDANCES",
    "MIN_EXCEEDANCES_AUTO",
    "STABILITY_PROBABILITIES",
    "ThresholdScanResult",
    "fit_sample",
    "fit_spliced",
    "gpd_fit_excesses",
    "scan_thresholds",
]

MIN_EXCEEDANCES = 10
MIN_EXCEEDANCES_AUTO = 50
FALLBACK_PROBABILITY = 0.90
MIN_HIGHER = 3  # higher fitted candidates a stable one is compared with, at least
STABILITY_PROBABILITIES = tuple(round(0.80 + 0.01 * i, 2) for i in range(19))
MEAN_EXCESS_PROBABILITIES = tuple(round(0.50 + 0.02 * i, 2) for i in range(25))

# Continuous families whose free parameters the truncated likelihood can be maximised over.
BODY_FAMILIES = tuple(
    sorted(
        n
        for n, f in FAMILIES.items()
        if not f.discrete and all(k in FAMILY_FITS[n].kinds for k in free_params(n, {}))
    )
)


# ---------------------------------------------------------------------------------------------
# generalized Pareto on excesses


def _gpd_total_loglik(y: np.ndarray, w: np.ndarray, xi: float, sigma: float) -> float:
    if not sigma > 0:
        return -np.inf
    if abs(xi) < 1e-12:
        return float(np.sum(w * (-np.log(sigma) - y / sigma)))
    t = xi * y / sigma
    if np.any(t <= -1.0):
        return -np.inf
    return float(np.sum(w * (-np.log(sigma) - (1.0 + 1.0 / xi) * np.log1p(t))))


def _gpd_covariance(y: np.ndarray, w: np.ndarray, xi: float, sigma: float) -> np.ndarray | None:
    """Inverse observed information of (xi, sigma) by central differences; None if irregular."""
    if xi <= -0.5:
        return None
    h = np.array([1e-4, 1e-4 * sigma])
    p0 = np.array([xi, sigma])

    def ll(d: np.ndarray) -> float:
        p = p0 + d * h
        return _gpd_total_loglik(y, w, float(p[0]), float(p[1]))

    f0 = ll(np.zeros(2))
    hess = np.empty((2, 2))
    for i in range(2):
        e = np.eye(2)[i]
        hess[i, i] = (ll(e) - 2.0 * f0 + ll(-e)) / h[i] ** 2
    e0, e1 = np.eye(2)
    hess[0, 1] = hess[1, 0] = (ll(e0 + e1) - ll(e0 - e1) - ll(e1 - e0) + ll(-e0 - e1)) / (
        4.0 * h[0] * h[1]
    )
    info = -hess
    if not np.all(np.isfinite(info)) or info[0, 0] <= 0 or np.linalg.det(info) <= 0:
        return None
    return np.linalg.inv(info)


def gpd_fit_excesses(
    excesses: Any, weights: Any = None
) -> tuple[float, float, float, np.ndarray | None]:
    """Fit a generalized Pareto distribution (location 0) to excesses by maximum likelihood.

    Returns ``(xi, sigma, loglik, cov)``, ``cov`` the inverse observed information of
    ``(xi, sigma)`` (None where it is not regular, see the module docstring).

    >>> xi, sigma, ll, cov = gpd_fit_excesses(np.random.default_rng(0).exponential(2.0, 500))
    >>> round(xi, 2), round(sigma, 2), cov.shape
    (-0.04, 2.27, (2, 2))
    """
    y = np.asarray(excesses, dtype=np.float64)
    w = np.ones_like(y) if weights is None else np.asarray(weights, dtype=np.float64)
    out = fit_family("generalized_pareto", y, w, loc=0.0)
    xi, sigma = out.params["xi"], out.params["sigma"]
    return xi, sigma, out.loglik, _gpd_covariance(y, w, xi, sigma)


# ---------------------------------------------------------------------------------------------
# threshold scan


@dataclass(frozen=True)
class ThresholdScanResult:
    """GPD fits over candidate thresholds and the automatic threshold choice.

    Attributes
    ----------
    probabilities, thresholds, n_exceedances : arrays
        Candidate probabilities, lower sample quantiles there, and values strictly above.
    xi, xi_se, modified_scale, modified_scale_se : arrays
        Shape and ``sigma - xi * u`` with standard errors (NaN where not fitted or irregular).
    stable : bool array
        The stability criterion of the module docstring.
    threshold : float
        The automatic choice; ``rule`` is ``"stability"`` or ``"fallback"``.
    """

    probabilities: np.ndarray
    thresholds: np.ndarray
    n_exceedances: np.ndarray
    xi: np.ndarray
    xi_se: np.ndarray
    modified_scale: np.ndarray
    modified_scale_se: np.ndarray
    stable: np.ndarray
    threshold: float
    rule: ThresholdRule

    def to_dict(self) -> dict[str, list[Any]]:
        """Column-wise plain-JSON table (NaN as null)."""
        return {
            "probability": [float(p) for p in self.probabilities],
            "threshold": _json_list(self.thresholds),
            "n_exceedances": [int(k) for k in self.n_exceedances],
            "xi": _json_list(self.xi),
            "xi_se": _json_list(self.xi_se),
            "modified_scale": _json_list(self.modified_scale),
            "modified_scale_se": _json_list(self.modified_scale_se),
            "stable": [bool(s) for s in self.stable],
        }


def _json_list(a: np.ndarray) -> list[float | None]:
    return [float(v) if np.isfinite(v) else None for v in np.asarray(a, dtype=np.float64)]


def _lower_quantile(x: np.ndarray, w: np.ndarray | None, probs: Any) -> np.ndarray:
    return np.asarray(EmpiricalSampler(x, w).quantile(np.asarray(probs, dtype=np.float64)))


def scan_thresholds(
    values: Any, weights: Any = None, *, probabilities: Any = STABILITY_PROBABILITIES
) -> ThresholdScanResult:
    """Fit the GPD above each candidate threshold and apply the stability rule.

    >>> x = np.random.default_rng(5).pareto(4.0, 3000)
    >>> scan = scan_thresholds(x)
    >>> scan.rule, int(scan.n_exceedances[0])
    ('stability', 600)
    """
    x = np.asarray(values, dtype=np.float64)
    w = np.ones_like(x) if weights is None else np.asarray(weights, dtype=np.float64)
    probs = np.asarray(probabilities, dtype=np.float64)
    us = _lower_quantile(x, None if weights is None else w, probs)
    m = probs.size
    n_exc = np.array([int(np.sum(x > u)) for u in us])
    xi, xi_se, ms, ms_se = (np.full(m, np.nan) for _ in range(4))
    for k, u in enumerate(us):
        if n_exc[k] < MIN_EXCEEDANCES:
            continue
        above = x > u
        try:
            a, s, _, cov = gpd_fit_excesses(x[above] - u, w[above])
        except (FitError, MethodError):
            continue
        xi[k], ms[k] = a, s - a * u
        if cov is not None:
            xi_se[k] = np.sqrt(cov[0, 0])
            var_ms = cov[1, 1] + u * u * cov[0, 0] - 2.0 * u * cov[0, 1]
            ms_se[k] = np.sqrt(var_ms) if var_ms > 0 else np.nan
    fitted = np.isfinite(xi) & np.isfinite(xi_se)
    stable = np.zeros(m, dtype=bool)
    for k in range(m):
        higher = fitted & (us > us[k])
        if fitted[k] and n_exc[k] >= MIN_EXCEEDANCES_AUTO and higher.sum() >= MIN_HIGHER:
            stable[k] = bool(np.all(np.abs(xi[k] - xi[higher]) <= xi_se[higher]))
    rule: ThresholdRule
    if stable.any():
        threshold, rule = float(us[int(np.argmax(stable))]), "stability"
    else:
        threshold, rule = (
            float(_lower_quantile(x, None if weights is None else w, FALLBACK_PROBABILITY)),
            "fallback",
        )
    return ThresholdScanResult(probs, us, n_exc, xi, xi_se, ms, ms_se, stable, threshold, rule)


def _mean_excess(x: np.ndarray, w: np.ndarray | None) -> dict[str, list[Any]]:
    ww = np.ones_like(x) if w is None else w
    us = _lower_quantile(x, w, MEAN_EXCESS_PROBABILITIES)
    table: dict[str, list[Any]] = {
        "probability": list(MEAN_EXCESS_PROBABILITIES),
        "threshold": _json_list(us),
        "mean_excess": [],
        "n_exceedances": [],
    }
    for u in us:
        above = x > u
        n = int(above.sum())
        e = float(np.sum(ww[above] * (x[above] - u)) / np.sum(ww[above])) if n else None
        table["mean_excess"].append(e)
        table["n_exceedances"].append(n)
    return table


# ---------------------------------------------------------------------------------------------
# fitting


def _interpolated_body(xb: np.ndarray, u: float) -> PiecewiseSampler:
    if xb.max() == u:
        if xb.size < 2:
            raise MethodError(
                "option 'body' of spliced: 'interpolated' needs at least 2 values "
                f"at or below the threshold {u!r}, found {xb.size}"
            )
        return interpolated(xb)
    nb = xb.size
    x = np.append(np.sort(xb), u)
    p = np.append(np.arange(nb, dtype=np.float64) / nb, 1.0)
    return PiecewiseSampler(x, p, method="interpolated")


def _parametric_body(
    name: str, x: np.ndarray, w: np.ndarray, below: np.ndarray, u: float
) -> ParametricSampler:
    fam, how = FAMILIES[name], FAMILY_FITS[name]
    xb, wb = x[below], w[below]
    min_obs = CATALOG[name].min_obs
    if xb.size < min_obs:
        raise MethodError(
            f"option 'body' of spliced: {name} needs at least {min_obs} values "
            f"at or below the threshold {u!r}, found {xb.size}"
        )
    try:
        try:
            start = fit_family(name, x, w).params
        except (FitError, MethodError):
            start = fit_family(name, xb, wb).params
    except MethodError as exc:
        raise MethodError(f"option 'body' of spliced: {exc}") from None
    total = float(np.sum(wb))

    def mean_loglik(p: dict[str, float]) -> float:
        if not how.valid(p):
            return -np.inf
        fu = float(fam.bound(p).cdf(u))
        if not fu > 0:
            return -np.inf
        return loglik(fam, p, xb, wb) / total - float(np.log(fu))

    free = free_params(name, {})
    label = f"spliced body {name} (truncated at {u!r})"
    params = _mle.maximise_params(mean_loglik, dict(start), free, how.kinds, label=label)
    lo, _ = fam.bound(params).support()
    if not np.isfinite(mean_loglik(params)) or xb.min() < lo:
        raise FitError(f"{label}: reached an impossible answer {params}")
    for k in free:  # a positive parameter running off to 0 or infinity: a boundary, not a fit
        if how.kinds[k][0] == "log" and not 1e-8 < params[k] / start[k] < 1e8:
            raise FitError(
                f"{label}: {k} ran to {params[k]:.3g} (from {start[k]:.3g}), the edge of the "
                "family; it does not describe the body: choose another body"
            )
    return ParametricSampler(name, params)


def _check_options(options: Mapping[str, Any]) -> tuple[str, float | None, float | None]:
    body = options.get("body", "empirical")
    if body not in SPLICED_BODIES and body not in BODY_FAMILIES:
        raise MethodError(
            f"option 'body' of spliced: expected 'empirical', 'interpolated' or one "
            f"of {', '.join(BODY_FAMILIES)}, found {body!r}"
        )
    thr = number_option(options, "threshold", "spliced", None)
    q = number_option(options, "threshold_quantile", "spliced", None)
    if thr is not None and q is not None:
        raise MethodError(
            "options 'threshold' and 'threshold_quantile' of spliced: pass at most "
            f"one, found both ({thr!r} and {q!r})"
        )
    if q is not None and not 0.0 < q < 1.0:
        raise MethodError(
            f"option 'threshold_quantile' of spliced: expected a probability in (0, 1), found {q!r}"
        )
    return str(body), thr, q


def fit_sample(sample: CheckedSample, method: str = "spliced", **options: Any) -> SplicedSampler:
    """Catalog fitter of ``spliced`` (options in the module docstring)."""
    body_name, thr, q = _check_options(options)
    x, w = sample.values, sample.weights
    if w is not None and body_name == "interpolated":
        raise MethodError(
            "option 'body' of spliced: 'interpolated' does not take weights; "
            "use body='empirical' or a family"
        )
    ww = sample.weights_or_ones()
    scan = scan_thresholds(x, w)
    rule: ThresholdRule
    if thr is not None:
        u, rule, key = thr, "threshold", "threshold"
    elif q is not None:
        u, rule, key = float(_lower_quantile(x, w, q)), "threshold_quantile", "threshold_quantile"
    else:
        u, rule, key = scan.threshold, scan.rule, "threshold"
    above = x > u
    n_exc = int(above.sum())
    if n_exc < MIN_EXCEEDANCES:
        raise MethodError(
            f"option {key!r} of spliced: {n_exc} exceedances above {u!r}, at least "
            f"{MIN_EXCEEDANCES} needed"
        )
    below = ~above
    if not below.any():
        raise MethodError(f"option {key!r} of spliced: no value at or below the threshold {u!r}")
    xi, sigma, tail_ll, cov = gpd_fit_excesses(x[above] - u, ww[above])
    zeta = float(np.sum(ww[above]) / np.sum(ww))
    body: Sampler
    if body_name == "empirical":
        body = EmpiricalSampler(x[below], None if w is None else w[below])
    elif body_name == "interpolated":
        body = _interpolated_body(x[below], u)
    else:
        body = _parametric_body(body_name, x, ww, below, u)
    se = [None, None] if cov is None else [float(np.sqrt(cov[0, 0])), float(np.sqrt(cov[1, 1]))]
    diagnostics = {
        "threshold_choice": {
            "rule": rule,
            "threshold": u,
            "probability": float(np.sum(ww[below]) / np.sum(ww)),
            "n_exceedances": n_exc,
            "tail_loglik": float(tail_ll),
            "xi_se": se[0],
            "sigma_se": se[1],
            "min_exceedances_auto": MIN_EXCEEDANCES_AUTO,
            "fallback_probability": FALLBACK_PROBABILITY,
        },
        "mean_excess": _mean_excess(x, w),
        "parameter_stability": scan.to_dict(),
    }
    return SplicedSampler(
        body,
        threshold=u,
        zeta=zeta,
        xi=xi,
        sigma=sigma,
        n_exceedances=n_exc,
        diagnostics=diagnostics,
    )


def fit_spliced(
    values: Any, weights: Any = None, censored: Any = None, **options: Any
) -> SplicedSampler:
    """Fit a body plus generalized Pareto tail: ``fit(values, "spliced", ...)`` (options in the
    module docstring).

    Raises
    ------
    MethodError
        Censored data, a bad option, weights with an interpolated body, or fewer than 10
        exceedances above the threshold.
    """
    out = fit(values, "spliced", weights=weights, censored=censored, **options)
    assert isinstance(out, SplicedSampler)
    return out
