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

from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.base import Sampler, _check_u
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.families import FAMILIES, fit_family, get_family, loglik
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.piecewise import PiecewiseSampler
from samplewright.fitting import optimise as _mle
from samplewright.fitting.registry import EXTENSION_METHODS, check_values

__all__ = [
    "BODY_FAMILIES",
    "MEAN_EXCESS_PROBABILITIES",
    "MIN_EXCEEDANCES",
    "MIN_EXCEEDANCES_AUTO",
    "STABILITY_PROBABILITIES",
    "SplicedSampler",
    "ThresholdScanResult",
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
_OPTIONS = ("body", "threshold", "threshold_quantile")


def _free_params(name: str) -> list[str]:
    fam = FAMILIES[name]
    return [k for k in fam.param_names if k not in fam._fixed({})]


# Continuous families whose free parameters the truncated likelihood can be maximised over.
BODY_FAMILIES = tuple(
    sorted(
        n
        for n, f in FAMILIES.items()
        if not f.discrete and all(k in f._kinds for k in _free_params(n))
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
    rule: str

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
# the sampler


class SplicedSampler(Sampler):
    """A body below ``threshold`` spliced to a generalized Pareto tail above it.

    ``body`` is an :class:`EmpiricalSampler` or :class:`PiecewiseSampler` of the values at or
    below the threshold, or a :class:`ParametricSampler` that is truncated at the threshold.

    >>> body = EmpiricalSampler([1.0, 2.0, 3.0])
    >>> s = SplicedSampler(body, threshold=3.0, zeta=0.25, xi=0.0, sigma=2.0)
    >>> s.cdf([2.0, 3.0]).tolist(), float(s.quantile(0.75)), round(float(s.mean), 6)
    ([0.5, 0.75], 3.0, 2.75)
    """

    kind = "spliced"

    def __init__(
        self,
        body: Sampler,
        *,
        threshold: float,
        zeta: float,
        xi: float,
        sigma: float,
        n_exceedances: int | None = None,
        method: str = "spliced",
    ) -> None:
        if not (0.0 < zeta < 1.0 and sigma > 0 and xi >= -1.0 and np.isfinite(threshold)):
            raise MethodError(
                f"spliced: expected 0 < zeta < 1, sigma > 0, xi >= -1 and a finite threshold, "
                f"found zeta={zeta!r}, sigma={sigma!r}, xi={xi!r}, threshold={threshold!r}"
            )
        self.body = body
        self.threshold, self.zeta = float(threshold), float(zeta)
        self.xi, self.sigma = float(xi), float(sigma)
        self.method = method
        if isinstance(body, ParametricSampler):
            self.body_name = body.family.name
            self._fu = float(body.cdf(self.threshold))
            if not self._fu > 0:
                raise MethodError(
                    f"spliced: the {self.body_name} body has no mass below "
                    f"the threshold {self.threshold!r}"
                )
        else:
            self.body_name = "empirical" if isinstance(body, EmpiricalSampler) else "interpolated"
            self._fu = 1.0
        self.params: dict[str, Any] = {
            "threshold": self.threshold,
            "zeta": self.zeta,
            "xi": self.xi,
            "sigma": self.sigma,
            "body": self.body_name,
        }
        if n_exceedances is not None:
            self.params["n_exceedances"] = int(n_exceedances)
        if isinstance(body, ParametricSampler):
            self.params.update({f"body_{k}": v for k, v in body.params.items()})
        self.diagnostics: dict[str, Any] = {}
        self._moments: tuple[float, float] | None = None
        self._equal_cache: (
            tuple[tuple[Any, ...], tuple[np.ndarray, np.ndarray, np.ndarray]] | None
        ) = None

    # --- body conditional on x <= u, and GPD tail ---

    def _body_cdf(self, x: np.ndarray) -> np.ndarray:
        c = np.asarray(self.body.cdf(np.minimum(x, self.threshold)), dtype=np.float64)
        return np.minimum(c / self._fu, 1.0)

    def _body_quantile(self, v: np.ndarray) -> np.ndarray:
        v = np.clip(v, 0.0, 1.0)
        if isinstance(self.body, ParametricSampler):
            return np.minimum(self.body.quantile(v * self._fu), self.threshold)
        return np.asarray(self.body.quantile(v))

    def _tail_sf(self, y: np.ndarray) -> np.ndarray:
        y = np.maximum(y, 0.0)
        if self.xi == 0.0:
            return np.exp(-y / self.sigma)
        t = np.maximum(1.0 + self.xi * y / self.sigma, 0.0)
        with np.errstate(divide="ignore"):
            return np.where(t > 0, np.exp(-np.log(t) / self.xi), 0.0)

    def _tail_quantile(self, s: np.ndarray) -> np.ndarray:
        with np.errstate(divide="ignore"):
            lg = -np.log1p(-s)  # standard exponential quantile
        if self.xi == 0.0:
            return self.sigma * lg
        return self.sigma * np.expm1(self.xi * lg) / self.xi

    # --- interface ---

    def cdf(self, x: Any) -> np.ndarray:
        x = np.asarray(x, dtype=np.float64)
        u, z = self.threshold, self.zeta
        return np.where(x <= u, (1.0 - z) * self._body_cdf(x), 1.0 - z * self._tail_sf(x - u))

    def quantile(self, u: Any) -> np.ndarray:
        if isinstance(self.body, EmpiricalSampler) and self.body.weights is None:
            return self._quantile_equal(_check_probs(u))
        p = _check_u(u)
        split = 1.0 - self.zeta
        out = np.empty(p.shape)
        low = p <= split
        pl, ph = p[low], p[~low]
        if isinstance(self.body, EmpiricalSampler):
            out[low] = self.body.values[self._empirical_index(pl)]
        else:
            out[low] = self._body_quantile(pl / split)
        tail = self.threshold + self._tail_quantile(np.clip((ph - split) / self.zeta, 0.0, 1.0))
        out[~low] = np.where(ph >= 1.0, self.support[1], tail)
        return out

    def _equal_tables(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Shifted lookup tables of an unweighted empirical body (built once per body and zeta).

        With ``cum = (1 - zeta) * body._cum`` and ``n`` values: ``lo1[j] = cum[j - 1]`` and
        ``lo2[j] = cum[j - 2]`` (``-inf`` where the index is negative), ``vals[j] =
        values[max(j - 1, 0)]``, for ``j = 0 .. n``.
        """
        body = self.body
        cum0, values = body._cum, body.values  # type: ignore[attr-defined]
        key = (self.zeta, body, cum0, values)
        cached = self._equal_cache
        if (
            cached is not None
            and cached[0][0] == key[0]
            and all(a is b for a, b in zip(cached[0][1:], key[1:], strict=True))
        ):
            return cached[1]
        n = values.size
        lo1 = np.empty(n + 1)
        lo1[0] = -np.inf
        np.multiply(1.0 - self.zeta, cum0, out=lo1[1:])
        lo2 = np.empty(n + 1)
        lo2[0] = -np.inf
        lo2[1:] = lo1[:n]
        vals = np.empty(n + 1)
        vals[0] = values[0]
        vals[1:] = values
        self._equal_cache = (key, (lo1, lo2, vals))
        return lo1, lo2, vals

    def _quantile_equal(self, p: np.ndarray) -> np.ndarray:
        """quantile for an unweighted empirical body, without masks or compaction.

        The index ``i`` of the body value is the first with ``cum[i] >= p`` (the generalised
        inverse; ``cum`` as in :meth:`_empirical_index`, same products). Its arithmetic first
        guess ``g = ceil(p n / (1 - zeta)) - 1`` is off by at most one (both sides carry a few
        ulps of relative error, far below ``1 / n``), so one step each way settles it:
        ``i = g + [cum[g] < p] - [cum[g - 1] >= p]`` (the two cannot both hold). The tables of
        :meth:`_equal_tables` are shifted by one so that ``j = g + 1`` indexes them directly;
        ``take(mode="clip")`` stands for the bounds checks (``j`` above ``n`` only happens for
        probabilities above ``1 - zeta`` or, at ``p = 1 - zeta``, when ``cum[n - 1] = p``: the
        last value either way). Every probability goes through the body search; the few above
        ``1 - zeta`` are then overwritten by the tail.
        """
        lo1, lo2, vals = self._equal_tables()
        n = vals.size - 1
        split = 1.0 - self.zeta
        flat = p.reshape(-1)
        t = flat * (n / split)
        np.ceil(t, out=t)
        j = t.astype(np.int64)
        del t
        up = lo1.take(j, mode="clip") < flat
        down = lo2.take(j, mode="clip") >= flat
        j += up
        j -= down
        del up, down
        out = vals.take(j, mode="clip")
        high = np.flatnonzero(flat > split)
        if high.size:
            ph = flat[high]
            s = np.clip((ph - split) / self.zeta, 0.0, 1.0)
            tail = self.threshold + self._tail_quantile(s)
            out[high] = np.where(ph >= 1.0, self.support[1], tail)
        return out.reshape(p.shape)

    def _empirical_index(self, p: np.ndarray) -> np.ndarray:
        """First i with (1 - zeta) * cum[i] >= p: the same products as cdf, so an exact inverse."""
        cum = (1.0 - self.zeta) * self.body._cum  # type: ignore[attr-defined]
        last = cum.size - 1
        if self.body.weights is not None:  # type: ignore[attr-defined]
            return np.minimum(np.searchsorted(cum, p, side="left"), last)
        # equal masses: an arithmetic first guess (off by at most one), then exact corrections
        i = np.clip(np.ceil(p * (cum.size / (1.0 - self.zeta))).astype(np.int64) - 1, 0, last)
        for _ in range(2):
            i = np.where((cum[i] < p) & (i < last), i + 1, i)
            i = np.where((i > 0) & (cum[np.maximum(i - 1, 0)] >= p), i - 1, i)
        return i

    def pdf(self, x: Any) -> np.ndarray:
        """Density of the continuous part (atoms of an empirical body excluded; see pmf)."""
        x = np.asarray(x, dtype=np.float64)
        u, z = self.threshold, self.zeta
        if isinstance(self.body, EmpiricalSampler):
            below = np.zeros_like(x)
        else:
            below = np.asarray(self.body.pdf(x)) / self._fu  # type: ignore[attr-defined]
        t = np.maximum(1.0 + self.xi * (x - u) / self.sigma, 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            tail = np.where(
                x > u, z / self.sigma * self._tail_sf(x - u) / np.where(t > 0, t, 1), 0.0
            )
        return np.where(x <= u, (1.0 - z) * below, tail)

    def pmf(self, x: Any) -> np.ndarray:
        """Atoms of the body (empirical values, ties of an interpolated body); 0 elsewhere."""
        x = np.asarray(x, dtype=np.float64)
        if isinstance(self.body, ParametricSampler):
            return np.zeros_like(x)
        atoms = np.asarray(self.body.pmf(x))  # type: ignore[attr-defined]
        return np.where(x <= self.threshold, (1.0 - self.zeta) * atoms, 0.0)

    def _body_moments(self) -> tuple[float, float]:
        """E[X] and E[X^2] of the body given X <= u (numerical integrals for a family body)."""
        if self._moments is None:
            if isinstance(self.body, ParametricSampler):
                dist, u = self.body._dist, self.threshold
                lo = float(dist.support()[0])
                m1 = float(dist.expect(lambda t: t, lb=lo, ub=u, conditional=True))
                m2 = float(dist.expect(lambda t: t * t, lb=lo, ub=u, conditional=True))
            else:
                m1 = float(self.body.mean)
                m2 = float(self.body.var) + m1 * m1
            self._moments = (m1, m2)
        return self._moments

    @property
    def mean(self) -> float:
        if self.xi >= 1.0:
            return float("inf")
        b1, _ = self._body_moments()
        tail = self.threshold + self.sigma / (1.0 - self.xi)
        return float((1.0 - self.zeta) * b1 + self.zeta * tail)

    @property
    def var(self) -> float:
        if self.xi >= 0.5:
            return float("inf")
        _, b2 = self._body_moments()
        u, s, a = self.threshold, self.sigma, self.xi
        ey, ey2 = s / (1.0 - a), 2.0 * s * s / ((1.0 - a) * (1.0 - 2.0 * a))
        t2 = u * u + 2.0 * u * ey + ey2
        m2 = (1.0 - self.zeta) * b2 + self.zeta * t2
        return float(max(m2 - self.mean**2, 0.0))

    @property
    def support(self) -> tuple[float, float]:
        lo = float(self.body.support[0])
        hi = np.inf if self.xi >= 0 else self.threshold + self.sigma / -self.xi
        return lo, float(hi)

    def payload(self) -> dict[str, np.ndarray]:
        return self.body.payload()

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        p = described["params"]
        name = p["body"]
        body: Sampler
        if name == "empirical":
            body = EmpiricalSampler.from_payload(payload, {"method": "empirical"})
        elif name == "interpolated":
            body = PiecewiseSampler.from_payload(payload, {"method": "interpolated"})
        else:
            fam = get_family(name)
            body = ParametricSampler(name, {k: p[f"body_{k}"] for k in fam.param_names})
        return cls(
            body,
            threshold=p["threshold"],
            zeta=p["zeta"],
            xi=p["xi"],
            sigma=p["sigma"],
            n_exceedances=p.get("n_exceedances"),
            method=described["method"],
        )


def _check_probs(u: Any) -> np.ndarray:
    """``u`` as float64, raising like ``samplers._check_u`` (two reductions instead of masks)."""
    p = np.asarray(u, dtype=np.float64)
    if p.size and not (p.min() >= 0.0 and p.max() <= 1.0):  # NaN fails both comparisons
        raise ValueError("u: probabilities must lie in [0, 1]")
    return p


# ---------------------------------------------------------------------------------------------
# fitting


def _interpolated_body(xb: np.ndarray, u: float) -> PiecewiseSampler:
    xs = np.sort(xb)
    nb = xs.size
    if xs[-1] < u:
        x = np.append(xs, u)
        p = np.append(np.arange(nb, dtype=np.float64) / nb, 1.0)
    else:
        if nb < 2:
            raise MethodError(
                "option 'body' of spliced: 'interpolated' needs at least 2 values "
                f"at or below the threshold {u!r}, found {nb}"
            )
        x, p = xs, np.arange(nb, dtype=np.float64) / (nb - 1)
    return PiecewiseSampler(x, p, method="interpolated")


def _parametric_body(
    name: str, x: np.ndarray, w: np.ndarray, below: np.ndarray, u: float
) -> ParametricSampler:
    fam = FAMILIES[name]
    xb, wb = x[below], w[below]
    if xb.size < fam.min_obs:
        raise MethodError(
            f"option 'body' of spliced: {name} needs at least {fam.min_obs} values "
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
        if not fam._valid(p):
            return -np.inf
        fu = float(fam.bound(p).cdf(u))
        if not fu > 0:
            return -np.inf
        return loglik(fam, p, xb, wb) / total - float(np.log(fu))

    free = _free_params(name)
    label = f"spliced body {name} (truncated at {u!r})"
    params = _mle.maximise_params(mean_loglik, dict(start), free, fam._kinds, label=label)
    lo, _ = fam.bound(params).support()
    if not np.isfinite(mean_loglik(params)) or xb.min() < lo:
        raise FitError(f"{label}: reached an impossible answer {params}")
    for k in free:  # a positive parameter running off to 0 or infinity: a boundary, not a fit
        if fam._kinds[k][0] == "log" and not 1e-8 < params[k] / start[k] < 1e8:
            raise FitError(
                f"{label}: {k} ran to {params[k]:.3g} (from {start[k]:.3g}), the edge of the "
                "family; it does not describe the body: choose another body"
            )
    return ParametricSampler(name, params)


def _check_options(options: Mapping[str, Any]) -> tuple[str, float | None, float | None]:
    unknown = sorted(set(options) - set(_OPTIONS))
    if unknown:
        raise MethodError(
            f"unknown option {unknown[0]!r} for spliced (allowed: {', '.join(_OPTIONS)})"
        )
    body = options.get("body", "empirical")
    if body not in ("empirical", "interpolated") and body not in BODY_FAMILIES:
        raise MethodError(
            f"option 'body' of spliced: expected 'empirical', 'interpolated' or one "
            f"of {', '.join(BODY_FAMILIES)}, found {body!r}"
        )
    thr, q = options.get("threshold"), options.get("threshold_quantile")
    if thr is not None and q is not None:
        raise MethodError(
            "options 'threshold' and 'threshold_quantile' of spliced: pass at most "
            f"one, found both ({thr!r} and {q!r})"
        )
    for key, v in (("threshold", thr), ("threshold_quantile", q)):
        if v is not None and (
            isinstance(v, bool) or not isinstance(v, int | float | np.number) or not np.isfinite(v)
        ):
            raise MethodError(f"option {key!r} of spliced: expected a finite number, found {v!r}")
    if q is not None and not 0.0 < q < 1.0:
        raise MethodError(
            f"option 'threshold_quantile' of spliced: expected a probability in (0, 1), found {q!r}"
        )
    return str(body), None if thr is None else float(thr), None if q is None else float(q)


def fit_spliced(
    values: Any, weights: Any = None, censored: Any = None, **options: Any
) -> SplicedSampler:
    """Fit a body plus generalized Pareto tail (method ``spliced``; options in module docstring).

    Raises
    ------
    MethodError
        Censored data, a bad option, weights with an interpolated body, or fewer than 10
        exceedances above the threshold.
    """
    body_name, thr, q = _check_options(options)
    if censored is not None and np.any(censored):
        raise MethodError("method 'spliced' does not handle censored data")
    x, w = check_values(values, weights)
    if w is not None:
        if body_name == "interpolated":
            raise MethodError(
                "option 'body' of spliced: 'interpolated' does not take weights; "
                "use body='empirical' or a family"
            )
    ww = np.ones_like(x) if w is None else w
    scan = scan_thresholds(x, w)
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
    sampler = SplicedSampler(body, threshold=u, zeta=zeta, xi=xi, sigma=sigma, n_exceedances=n_exc)
    se = [None, None] if cov is None else [float(np.sqrt(cov[0, 0])), float(np.sqrt(cov[1, 1]))]
    sampler.diagnostics = {
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
    return sampler


EXTENSION_METHODS["spliced"] = fit_spliced
