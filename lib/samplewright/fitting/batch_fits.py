"""Maximum-likelihood refits of one family to every row of a batch of samples at once.

A parametric bootstrap refits its model to each of many replicate samples. For the families
below, at a fixed location, the refits of a whole batch (the rows of a 2-d array) are array
operations: closed forms for normal, lognormal, exponential, inverse_gaussian and rayleigh, and
Newton's method on the shape's score equation for gamma and weibull (the scale then follows in
closed form). They solve the same equations as the one-sample fits of :mod:`.mle_fits` (the
estimates agree to about 1e-12 relative) but skip what makes a one-sample fit slow in a loop:
option and sample validation, the log-likelihood check, scipy's generic methods.

What the check would catch is caught another way: the batch path *declines* a row unless it is
plainly fine (every value inside the support, not all values equal, every estimate finite and
positive, the shape equation converged), and a declined row goes to the checked one-sample fit
:func:`~samplewright.fitting.mle.fit_family`, which fits it or raises just as it would have
without the batch path. :func:`fit_rows` does that fallback itself (and fits every row of a
family without a batch path one by one); :func:`refit_cdf_rows` leaves declined rows as NaN for
the caller's own checked path (the replicate engine's row loop).

The fitted CDF values of the sorted rows (:func:`refit_cdf_rows`, what a goodness-of-fit
bootstrap needs) use the special function at every value except for gamma and, on long rows,
inverse_gaussian, whose CDFs cost 60-500 ns a value: those are evaluated exactly at every 8th or
16th value and interpolated between, with an error check that falls back to exact values (within
about 1e-11 of the exact CDF relative to the nearer tail). :func:`sorted_replicate_rows` draws
replicates already sorted where that is cheaper than sorting them.

Options: only ``loc`` (a number; default 0) for the positive families, none for normal. Any other
option (a fixed shape or scale), or ``loc="free"``, has no batch path.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import special

from samplewright.core.errors import FitError, MethodError
from samplewright.fitting._batch_numeric import (
    LONG_ROW,
    Index,
    gamma_shape_rows,
    invgauss_cdf,
    smooth_cdf_sorted,
    weibull_shape_rows,
)
from samplewright.fitting.catalog import CATALOG
from samplewright.fitting.mle import fit_family
from samplewright.fitting.registry import check_options

__all__ = [
    "BATCH_FAMILIES",
    "BatchFitResult",
    "fit_rows",
    "refit_cdf_rows",
    "sorted_replicate_rows",
]

# families with a batch path, and whether their values must lie strictly above the location
_STRICT = {
    "normal": False,
    "lognormal": True,
    "exponential": False,
    "gamma": True,
    "weibull": True,
    "inverse_gaussian": True,
    "rayleigh": False,
}
BATCH_FAMILIES: tuple[str, ...] = tuple(_STRICT)
_HUGE_SHAPE = 1e6  # a weibull shape beyond this is left to the one-sample fit

Arrays = dict[str, np.ndarray]


@dataclass(frozen=True)
class BatchFitResult:
    """Maximum-likelihood fits of one family to each row of a batch.

    Attributes
    ----------
    family : str
        The family fitted.
    params : dict of numpy.ndarray
        Every parameter of the family (fixed ones included), one value per row; NaN in a row
        whose fit failed.
    failed : numpy.ndarray of bool
        True where the checked fit of the row raised a FitError or MethodError.
    n_batched : int
        Rows fitted by the batch path (the others by the checked one-sample fit).
    """

    family: str
    params: Arrays
    failed: np.ndarray
    n_batched: int

    @property
    def n_failed(self) -> int:
        """Rows whose fit failed."""
        return int(np.count_nonzero(self.failed))


# ---------------------------------------------------------------------------------------------
# one family at a time: (parameters, rows fitted, fitted CDF of the sorted rows or None)

Fast = Callable[[np.ndarray, bool], tuple[Arrays, np.ndarray, np.ndarray | None]]
# Each takes sorted rows ``y`` (location removed) that it may overwrite, and ``cdf``: whether to
# return the fitted CDF of ``y`` (computed in place where it can: fresh large arrays cost page
# faults, which showed in the profile).


def _standardised(v: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Row means, row sds (divisor n) and ``v`` standardised in place."""
    mu = v.mean(axis=1)
    v -= mu[:, None]
    sigma = np.sqrt(np.einsum("ij,ij->i", v, v) / v.shape[1])
    v /= sigma[:, None]
    return mu, sigma, v


def _normal(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    mu, sigma, z = _standardised(y)
    return {"mu": mu, "sigma": sigma}, sigma > 0, special.ndtr(z, out=z) if cdf else None


def _lognormal(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    mu, sigma, z = _standardised(np.log(y, out=y))
    return {"mu": mu, "sigma": sigma}, sigma > 0, special.ndtr(z, out=z) if cdf else None


def _exponential(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    scale = y.mean(axis=1)
    u = None
    if cdf:
        y /= -scale[:, None]
        u = np.expm1(y, out=y)
        np.negative(u, out=u)
    return {"scale": scale}, scale > 0, u


def _rayleigh(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    s2 = np.einsum("ij,ij->i", y, y) / (2.0 * y.shape[1])
    u = None
    if cdf:
        y *= y
        y /= -2.0 * s2[:, None]
        u = np.expm1(y, out=y)
        np.negative(u, out=u)
    return {"sigma": np.sqrt(s2)}, s2 > 0, u


def _inverse_gaussian(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    mu = y.mean(axis=1)
    inv = (1.0 / y).mean(axis=1) - 1.0 / mu
    lam = 1.0 / inv
    ok = (inv > 0) & np.isfinite(lam)
    u = None
    if cdf:
        m, la = np.where(ok, mu, 1.0)[:, None], np.where(ok, lam, 1.0)[:, None]

        def cdf_at(rows: Index, x: np.ndarray) -> np.ndarray:
            return invgauss_cdf(x.copy(), m[rows], la[rows])

        def pdf_at(rows: Index, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            mr, lr = m[rows], la[rows]
            dens = np.sqrt(lr / (2.0 * np.pi * x**3)) * np.exp(
                -lr * (x - mr) ** 2 / (2 * mr**2 * x)
            )
            return dens, lr / (2.0 * x * x) - 1.5 / x - lr / (2.0 * mr * mr)

        u = smooth_cdf_sorted(y, cdf_at, pdf_at, LONG_ROW)
    return {"mu": mu, "lambda": lam}, ok, u


def _gamma(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    m = y.mean(axis=1)
    s = np.log(m) - np.log(y).mean(axis=1)
    ok = s > 0
    k = np.full(m.shape, np.nan)
    k[ok] = gamma_shape_rows(s[ok])
    scale = m / k
    u = None
    if cdf:
        y /= scale[:, None]
        ka = np.where(ok, k, 1.0)[:, None]

        def cdf_at(rows: Index, x: np.ndarray) -> np.ndarray:
            return special.gammainc(ka[rows], x)

        def pdf_at(rows: Index, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            kr = ka[rows]
            dens = np.exp(special.xlogy(kr - 1.0, x) - x - special.gammaln(kr))
            return dens, (kr - 1.0) / x - 1.0

        u = smooth_cdf_sorted(y, cdf_at, pdf_at)
    return {"shape": k, "scale": scale}, ok, u


def _weibull(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    top = y[:, -1].copy()
    y /= top[:, None]
    lz = np.log(y, out=y)
    k = weibull_shape_rows(lz)
    # scale^k = mean(y^k) and (y / scale)^k = e^{k lz} / mean(e^{k lz}) (as in the one-sample fit)
    lz *= np.where(np.isfinite(k), k, 1.0)[:, None]
    e = np.exp(lz, out=lz)
    mean_e = e.mean(axis=1)
    scale = top * mean_e ** (1.0 / k)
    u = None
    if cdf:
        e /= -mean_e[:, None]
        u = np.expm1(e, out=e)
        np.negative(u, out=u)
    # a huge shape means nearly equal values: the one-sample fit decides (it may refuse)
    return {"shape": k, "scale": scale}, np.isfinite(k) & (k < _HUGE_SHAPE), u


_FAST: dict[str, Fast] = {
    "normal": _normal,
    "lognormal": _lognormal,
    "exponential": _exponential,
    "gamma": _gamma,
    "weibull": _weibull,
    "inverse_gaussian": _inverse_gaussian,
    "rayleigh": _rayleigh,
}


def _location(family: str, options: Mapping[str, Any]) -> float | None:
    """The fixed location of a batch fit, or None where the family or options have no batch
    path (an unknown or bad option is then refused by the checked fit, naming it)."""
    if family not in _FAST or set(options) - ({"loc"} if family != "normal" else set()):
        return None
    loc = options.get("loc", 0.0)
    if isinstance(loc, bool) or not isinstance(loc, int | float | np.integer | np.floating):
        return None
    return float(loc) if np.isfinite(loc) else None


def _batch(
    family: str, rows: np.ndarray, options: Mapping[str, Any], cdf: bool
) -> tuple[Arrays, np.ndarray, np.ndarray | None] | None:
    """Parameters, rows fitted and (if ``cdf``) the sorted fitted CDF values; None if no path."""
    loc = _location(family, options)
    if loc is None or rows.ndim != 2 or rows.shape[1] < CATALOG[family].min_obs:
        return None
    y = np.array(rows, dtype=np.float64, copy=True)  # sorted, shifted, then overwritten
    if loc:
        y -= loc
    if not np.all(y[:, 1:] >= y[:, :-1]):  # rows drawn sorted need no sort (a cheap pass)
        y.sort(axis=1)
    lowest, highest = y[:, 0], y[:, -1]
    if family == "normal":
        inside = np.isfinite(lowest) & np.isfinite(highest)
    else:
        inside = (lowest > 0) if _STRICT[family] else (lowest >= 0)
    # all values equal: most one-sample fits refuse; values outside the support: all refuse
    good = inside & (highest > lowest)
    idx = np.flatnonzero(good)
    every = idx.size == y.shape[0]
    with np.errstate(all="ignore"):
        fitted, ok, u_sub = _FAST[family](y if every else y[idx], cdf)
        for name, v in fitted.items():
            real = name == "mu" and family in ("normal", "lognormal")
            ok &= np.isfinite(v) if real else (np.isfinite(v) & (v > 0))
        if u_sub is not None:  # a CDF of sorted rows: its ends bound it; NaN shows in the sum
            ok &= (u_sub[:, 0] >= 0.0) & (u_sub[:, -1] <= 1.0) & np.isfinite(u_sub.sum(axis=1))
    done = idx[ok]
    params: Arrays = {}
    for name, v in fitted.items():
        params[name] = np.full(y.shape[0], np.nan)
        params[name][done] = v[ok]
    if family != "normal":
        params["loc"] = np.full(y.shape[0], np.nan)
        params["loc"][done] = loc
    fit = np.zeros(y.shape[0], dtype=bool)
    fit[done] = True
    u = None
    if u_sub is not None:
        if every:
            u = u_sub
            u[~ok] = np.nan
        else:
            u = np.full(y.shape, np.nan)
            u[done] = u_sub[ok]
    return params, fit, u


def sorted_replicate_rows(
    family: str,
    params: Mapping[str, float],
    shape: tuple[int, int],
    *,
    options: Mapping[str, Any],
    rng: np.random.Generator,
) -> np.ndarray | None:
    """Replicate rows for a goodness-of-fit bootstrap of a fit, drawn already sorted.

    The order statistics of ``n`` standard exponentials are the cumulative sums of independent
    standard exponentials divided by ``n, n - 1, ..., 1`` (Renyi, 1953), which costs less than
    drawing and then sorting. Exponential and rayleigh rows are then exactly sorted draws from
    the fitted member (``scale E + loc``, ``sigma sqrt(2 E) + loc``). Weibull rows at location
    0 are ``scale E``, a member with shape 1: the maximum-likelihood refit is equivariant under
    ``y -> c y^a``, which maps members onto each other, so the refitted CDF values of a
    replicate, and any statistic of them, have the same law whichever member it came from (no
    power to compute); at another location they are the fitted member's ``scale E^(1/shape) +
    loc`` (keeping the replicates' distance from the location, hence their precision). Rows
    rounded to a recording resolution lose the invariance: the caller must not round these.

    Returns None for every other family or option (draw from the fitted member instead).
    """
    if family not in ("exponential", "weibull", "rayleigh"):
        return None
    loc = _location(family, options)
    if loc is None:
        return None
    b, n = shape
    rows = rng.standard_exponential((b, n))
    rows *= 1.0 / np.arange(n, 0, -1, dtype=np.float64)
    np.cumsum(rows, axis=1, out=rows)
    if family == "rayleigh":
        rows *= 2.0
        np.sqrt(rows, out=rows)
        rows *= params["sigma"]
    elif family == "weibull" and loc:
        rows **= 1.0 / params["shape"]
        rows *= params["scale"]
    else:
        rows *= params["scale"]
    if loc:
        rows += loc
    return rows


def refit_cdf_rows(
    family: str, rows: np.ndarray, *, options: Mapping[str, Any] | None = None
) -> np.ndarray | None:
    """Each row sorted and mapped through the CDF of the family refitted to that row.

    Parameters
    ----------
    family : str
        A family name.
    rows : numpy.ndarray
        Shape ``(b, n)``: ``b`` samples of ``n`` values.
    options : mapping, optional
        The fit options (see the module docstring).

    Returns
    -------
    numpy.ndarray or None
        Shape ``(b, n)``, ascending in each row; a row of NaN where the batch path declined the
        row (the caller fits it by the checked one-sample fit). None when the family or the
        options have no batch path.

    Examples
    --------
    >>> rows = np.array([[1.0, 3.0, 2.0], [0.5, 0.25, 1.0]])
    >>> u = refit_cdf_rows("exponential", rows)
    >>> bool(np.all(np.diff(u, axis=1) > 0)), u.shape
    (True, (2, 3))
    """
    got = _batch(family, rows, dict(options or {}), cdf=True)
    return None if got is None else got[2]


def fit_rows(
    family: str, rows: np.ndarray, *, options: Mapping[str, Any] | None = None
) -> BatchFitResult:
    """Maximum-likelihood fit of ``family`` to each row of ``rows``, batched where possible.

    Rows the batch path declines, and every row of a family without one, are fitted by
    :func:`~samplewright.fitting.mle.fit_family` with the same options; a row whose fit raises
    FitError or MethodError is marked failed (its parameters NaN). Option names are checked
    once, first (MethodError naming an unknown one).

    Parameters
    ----------
    family : str
        A family name.
    rows : numpy.ndarray
        Shape ``(b, n)``: ``b`` samples of ``n`` values.
    options : mapping, optional
        Fit options, as for ``fit_family``.

    Returns
    -------
    BatchFitResult

    Examples
    --------
    >>> rows = np.random.default_rng(0).gamma(2.0, 3.0, (4, 200))
    >>> out = fit_rows("gamma", rows)
    >>> out.params["shape"].shape, out.n_batched, out.n_failed
    ((4,), 4, 0)
    """
    opts = dict(options or {})
    check_options(family, opts)
    rows = np.asarray(rows, dtype=np.float64)
    if rows.ndim != 2:
        raise MethodError(f"rows: expected a 2-d array (samples by values), found {rows.ndim}-d")
    got = _batch(family, rows, opts, cdf=False)
    b = rows.shape[0]
    if got is None:
        params: Arrays = {}
        ok = np.zeros(b, dtype=bool)
    else:
        params, ok, _ = got
    failed = np.zeros(b, dtype=bool)
    for i in np.flatnonzero(~ok):
        try:
            one = fit_family(family, rows[i], **opts).params
        except (FitError, MethodError):
            failed[i] = True
            continue
        for name, v in one.items():
            params.setdefault(name, np.full(b, np.nan))[i] = v
    return BatchFitResult(family, params, failed, int(np.count_nonzero(ok)))
