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

Options: only ``loc`` (a number; default 0) for the positive families, none for normal. Any other
option, or ``loc="free"``, has no batch path.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import special

from samplewright.core.errors import FitError, MethodError
from samplewright.fitting.catalog import CATALOG
from samplewright.fitting.mle import fit_family

__all__ = ["BATCH_FAMILIES", "BatchFitResult", "fit_rows", "refit_cdf_rows"]

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
_WARM = 2048  # longer rows: Newton for the weibull shape first runs on this many order statistics

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
# the shape equations, one root per row


def _gamma_shape_rows(s: np.ndarray) -> np.ndarray:
    """Solve ``log k - digamma(k) = s`` for each element by the Newton iteration of
    :func:`samplewright.fitting.optimise.gamma_shape` (Minka's start, the same steps and stop);
    NaN where it does not stop within its 100 steps (the one-sample fit then decides)."""
    k = (3.0 - s + np.sqrt((s - 3.0) ** 2 + 24.0 * s)) / (12.0 * s)
    out = np.full(s.shape, np.nan)
    todo = np.arange(s.size)
    for _ in range(100):
        f = np.log(k) - special.digamma(k) - s[todo]
        k_new = k - f / (1.0 / k - special.zeta(2.0, k))
        k_new = np.where(k_new <= 0, k / 2.0, k_new)
        stop = np.abs(k_new - k) <= 1e-14 * k
        out[todo[stop]] = k_new[stop]
        todo, k = todo[~stop], k_new[~stop]
        if not todo.size:
            break
    return out


def _weibull_newton(lz: np.ndarray, k: np.ndarray, tol: float, max_iter: int) -> np.ndarray:
    """Roots ``k`` of ``1/k + mean(lz) - sum(lz e^{k lz}) / sum(e^{k lz}) = 0`` per row (the
    weibull score with ``lz = log(y / max y) <= 0``), by Newton's method kept inside a bracket.

    The score decreases in ``k`` (its derivative is ``-1/k^2`` minus a weighted variance), so the
    sign of each evaluation narrows the bracket; a step that leaves it bisects instead. NaN where
    ``max_iter`` steps do not bring the change below ``tol * k``.
    """
    mean_lz = lz.mean(axis=1)
    lo = np.zeros_like(k)
    hi = np.full_like(k, np.inf)
    out = np.full_like(k, np.nan)
    rows = np.arange(k.size)
    for _ in range(max_iter):
        e = np.exp(k[:, None] * lz)
        s0 = e.sum(axis=1)
        e *= lz
        s1 = e.sum(axis=1) / s0
        s2 = np.einsum("ij,ij->i", e, lz) / s0
        score = 1.0 / k + mean_lz - s1
        slope = -1.0 / (k * k) - np.maximum(s2 - s1 * s1, 0.0)
        lo = np.where(score > 0, np.maximum(lo, k), lo)
        hi = np.where(score > 0, hi, np.minimum(hi, k))
        k_new = k - score / slope
        outside = ~((k_new > lo) & (k_new < hi))
        k_new = np.where(outside, np.where(np.isfinite(hi), 0.5 * (lo + hi), 2.0 * k), k_new)
        stop = np.abs(k_new - k) <= tol * k
        out[rows[stop]] = k_new[stop]
        keep = ~stop
        if not keep.any():
            break
        rows, k, lo, hi = rows[keep], k_new[keep], lo[keep], hi[keep]
        lz, mean_lz = lz[keep], mean_lz[keep]
    return out


def _weibull_shape_rows(lz: np.ndarray) -> np.ndarray:
    """Weibull shape of each row of sorted ``lz = log(y / max y)``.

    Start: the log of a weibull value is a (minimum) Gumbel value with sd ``pi / (k sqrt 6)``.
    Long rows first solve the equation of an evenly spaced subset of their order statistics
    (cheap, and close), then polish on the whole row.
    """
    sd = lz.std(axis=1)
    with np.errstate(divide="ignore"):
        k = np.pi / (np.sqrt(6.0) * sd)
    k = np.where(np.isfinite(k) & (k > 0), k, 1.0)
    n = lz.shape[1]
    if n > 2 * _WARM:
        sub = lz[:, :: n // _WARM]
        warm = _weibull_newton(sub - sub[:, -1:], k, 1e-8, 100)
        k = np.where(np.isfinite(warm), warm, k)
    return _weibull_newton(lz, k, 1e-14, 100)


# ---------------------------------------------------------------------------------------------
# one family at a time: (parameters, rows fitted, fitted CDF of the sorted rows or None)

Fast = Callable[[np.ndarray, bool], tuple[Arrays, np.ndarray, np.ndarray | None]]


def _standardised(v: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Row means, row sds (divisor n) and the standardised rows."""
    mu = v.mean(axis=1)
    d = v - mu[:, None]
    sigma = np.sqrt(np.einsum("ij,ij->i", d, d) / v.shape[1])
    with np.errstate(divide="ignore", invalid="ignore"):
        d /= sigma[:, None]
    return mu, sigma, d


def _normal(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    mu, sigma, z = _standardised(y)
    return {"mu": mu, "sigma": sigma}, sigma > 0, special.ndtr(z, out=z) if cdf else None


def _lognormal(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    mu, sigma, z = _standardised(np.log(y))
    return {"mu": mu, "sigma": sigma}, sigma > 0, special.ndtr(z, out=z) if cdf else None


def _exponential(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    scale = y.mean(axis=1)
    u = None
    if cdf:
        u = y / -scale[:, None]
        np.expm1(u, out=u)
        np.negative(u, out=u)
    return {"scale": scale}, scale > 0, u


def _rayleigh(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    s2 = np.einsum("ij,ij->i", y, y) / (2.0 * y.shape[1])
    u = None
    if cdf:
        u = y * y
        u /= -2.0 * s2[:, None]
        np.expm1(u, out=u)
        np.negative(u, out=u)
    return {"sigma": np.sqrt(s2)}, s2 > 0, u


def _inverse_gaussian(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    mu = y.mean(axis=1)
    inv = (1.0 / y).mean(axis=1) - 1.0 / mu
    with np.errstate(divide="ignore"):
        lam = 1.0 / inv
    ok = (inv > 0) & np.isfinite(lam)
    u = None
    if cdf:
        # F = Phi(b) + exp(2 lam / mu) Phi(-a), a, b = sqrt(lam / y) (y / mu +- 1); with
        # Phi(-a) = erfcx(a / sqrt 2) exp(-a^2 / 2) / 2 and 2 lam / mu - a^2 / 2 = -b^2 / 2 the
        # second term is erfcx(a / sqrt 2) exp(-b^2 / 2) / 2: no overflow, no cancellation.
        with np.errstate(invalid="ignore", divide="ignore"):
            r = np.sqrt(lam[:, None] / y)
            ym = y / mu[:, None]
            b = r * (ym - 1.0)
            a = r * (ym + 1.0)
            a *= 1.0 / np.sqrt(2.0)
            u = special.ndtr(b)
            np.square(b, out=b)
            b *= -0.5
            np.exp(b, out=b)
            b *= special.erfcx(a, out=a)
            b *= 0.5
            u += b
    return {"mu": mu, "lambda": lam}, ok, u


def _gamma(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    m = y.mean(axis=1)
    s = np.log(m) - np.log(y).mean(axis=1)
    ok = s > 0
    k = np.full(m.shape, np.nan)
    k[ok] = _gamma_shape_rows(s[ok])
    scale = m / k
    u = special.gammainc(k[:, None], y / scale[:, None]) if cdf else None
    return {"shape": k, "scale": scale}, ok, u


def _weibull(y: np.ndarray, cdf: bool) -> tuple[Arrays, np.ndarray, np.ndarray | None]:
    top = y[:, -1]
    lz = np.log(y / top[:, None])
    k = _weibull_shape_rows(lz)
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
    return {"shape": k, "scale": scale}, np.isfinite(k), u


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
    y = np.array(rows, dtype=np.float64, copy=True)
    if loc:
        y -= loc
    y.sort(axis=1)
    lowest, highest = y[:, 0], y[:, -1]
    if family == "normal":
        inside = np.isfinite(lowest) & np.isfinite(highest)
    else:
        inside = (lowest > 0) if _STRICT[family] else (lowest >= 0)
    # all values equal: most one-sample fits refuse; values outside the support: all refuse
    good = inside & (highest > lowest)
    every = bool(good.all())
    with np.errstate(all="ignore"):
        fitted, ok, u_good = _FAST[family](y if every else y[good], cdf)
        for name, v in fitted.items():
            real = name == "mu" and family in ("normal", "lognormal")
            ok &= np.isfinite(v) if real else (np.isfinite(v) & (v > 0))
        if u_good is not None:
            ok &= np.all((u_good >= 0.0) & (u_good <= 1.0), axis=1)
    if not every:
        where = np.flatnonzero(good)
        good[where[~ok]] = False
        ok = good
    params: Arrays = {}
    for name, v in fitted.items():
        params[name] = np.full(y.shape[0], np.nan)
        params[name][ok] = v if every else v[ok[where]] if False else v[ok[good]] if False else v
    return params, ok, None


def refit_cdf_rows(
    family: str, rows: np.ndarray, options: Mapping[str, Any] | None = None
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
    family: str, rows: np.ndarray, options: Mapping[str, Any] | None = None
) -> BatchFitResult:
    """Maximum-likelihood fit of ``family`` to each row of ``rows``, batched where possible.

    Rows the batch path declines, and every row of a family without one, are fitted by
    :func:`~samplewright.fitting.mle.fit_family` with the same options; a row whose fit raises
    FitError or MethodError is marked failed (its parameters NaN).

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
