"""Elliptical copulas: fit the dependence of several inputs, and turn uniforms into dependent ones.

A copula keeps the dependence and leaves the marginals to the samplers: fit on the ranks of the
data (pseudo-observations), draw dependent uniforms, and feed each column to one sampler's
quantile function. Two families:

Gaussian copula
    Correlation from Kendall's tau, ``rho = sin(pi tau / 2)`` (exact for every elliptical copula;
    Lindskog, McNeil & Schmock 2003), or from normal scores (the Pearson correlation of
    ``Phi^-1(rank / (n + 1))``, van der Waerden scores).
Student-t copula
    Correlation from Kendall's tau as above; degrees of freedom by maximum pseudo-likelihood with
    the correlation held fixed (the two-step estimator of Demarta & McNeil 2005), searched over
    ``df_bounds``. A maximum at either bound is refused with
    :class:`~samplewright.core.errors.MethodError`: at the upper bound the data show no tail
    dependence beyond the Gaussian copula's (use that one), at the lower bound the likelihood
    wants heavier tails than the range allows.

Both samplers of dependent uniforms take independent uniforms in and are otherwise
deterministic, so quasi-random points (:mod:`samplewright.core.uniforms`) can drive them. The
t copula's chi-square mixing variable is drawn by inverse transform from one extra column.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Literal, cast

import numpy as np
from scipy import optimize, stats
from scipy.special import gammaincinv, gammaln, ndtr, ndtri, stdtr, stdtrit

from samplewright.core.errors import InputDataError, MethodError
from samplewright.fitting.coupling import (
    _check_correlation,
    _psd_factor,
    _usable_correlation,
    nearest_correlation,
)

__all__ = [
    "COPULA_KINDS",
    "CORRELATION_METHODS",
    "CopulaFitResult",
    "CopulaKind",
    "CorrelationMethod",
    "copula_correlation",
    "copula_log_likelihood",
    "fit_gaussian_copula",
    "fit_t_copula",
    "gaussian_copula_uniforms",
    "pseudo_observations",
    "t_copula_uniforms",
]

CopulaKind = Literal["gaussian", "student_t"]
COPULA_KINDS: tuple[CopulaKind, ...] = ("gaussian", "student_t")
CorrelationMethod = Literal["kendall", "normal_scores"]
CORRELATION_METHODS: tuple[CorrelationMethod, ...] = ("kendall", "normal_scores")

_MIN_EIGENVALUE = 1e-8  # fitted matrices stay invertible (common practice, no source)
_DF_GRID_POINTS = 25
_TINY = float(np.finfo(np.float64).tiny)
_BELOW_ONE = float(np.nextafter(1.0, 0.0))


@dataclass(frozen=True)
class CopulaFitResult:
    """An elliptical copula fitted to the ranks of several columns.

    Attributes
    ----------
    kind : {"gaussian", "student_t"}
        The copula family.
    correlation : numpy.ndarray
        Correlation (shape) matrix, (d, d), positive definite.
    df : float or None
        Degrees of freedom of the t copula; None for the Gaussian copula.
    method : {"kendall", "normal_scores"}
        How the correlation was estimated.
    n_obs : int
        Rows used.
    log_likelihood : float
        Pseudo-log-likelihood of the pseudo-observations at the fitted parameters.
    repair_distance : float
        Frobenius distance the estimated correlation moved to become positive definite (0 when
        it already was).
    """

    kind: CopulaKind
    correlation: np.ndarray
    df: float | None
    method: CorrelationMethod
    n_obs: int
    log_likelihood: float
    repair_distance: float


def pseudo_observations(data: np.ndarray) -> np.ndarray:
    """Column ranks over ``n + 1``: the copula's view of the data, strictly inside (0, 1).

    Tied values share their average rank (Genest, Ghoudi & Rivest 1995 use ranks / (n + 1)).

    >>> pseudo_observations([[3.0, 10.0], [1.0, 30.0], [2.0, 20.0]]).tolist()
    [[0.75, 0.25], [0.25, 0.75], [0.5, 0.5]]
    """
    x = _check_data(data)
    return cast(np.ndarray, stats.rankdata(x, axis=0) / (x.shape[0] + 1.0))


def copula_correlation(data: np.ndarray, *, method: CorrelationMethod = "kendall") -> np.ndarray:
    """Pairwise copula correlation estimates, as estimated (not repaired).

    ``"kendall"``: ``sin(pi tau / 2)`` with Kendall's tau-b per pair. ``"normal_scores"``: the
    Pearson correlation of the van der Waerden scores of each column. For three or more columns
    the Kendall matrix need not be positive semi-definite; the fitting functions repair it.
    """
    x = _check_data(data)
    if method not in CORRELATION_METHODS:
        raise MethodError(
            f"method: expected one of {', '.join(CORRELATION_METHODS)}, found {method!r}"
        )
    d = x.shape[1]
    if method == "normal_scores":
        z = ndtri(stats.rankdata(x, axis=0) / (x.shape[0] + 1.0))
        out = np.corrcoef(z, rowvar=False)
    else:
        out = np.eye(d)
        for i in range(d):
            for j in range(i + 1, d):
                tau = stats.kendalltau(x[:, i], x[:, j]).statistic
                out[i, j] = out[j, i] = math.sin(math.pi * tau / 2.0)
    out = np.clip((out + out.T) / 2.0, -1.0, 1.0)
    np.fill_diagonal(out, 1.0)
    return out


def copula_log_likelihood(
    u: np.ndarray, correlation: np.ndarray, *, df: float | None = None
) -> float:
    """Sum of the log copula density over the rows of ``u`` (Gaussian, or t when ``df`` is given).

    Parameters
    ----------
    u : array_like, shape (n, d)
        Points strictly inside the unit cube, usually :func:`pseudo_observations`.
    correlation : array_like, shape (d, d)
        Positive definite correlation matrix.
    df : float, optional
        Degrees of freedom of the t copula.
    """
    uu = _check_uniforms(u, "u")
    c = _check_correlation(correlation, "correlation", size=uu.shape[1])
    try:
        chol = np.linalg.cholesky(c)
    except np.linalg.LinAlgError:
        raise MethodError("correlation: expected a positive definite matrix") from None
    if df is None:
        return _gaussian_loglik(ndtri(uu), chol)
    return _t_loglik(uu, chol, _check_df(df))


def fit_gaussian_copula(
    data: np.ndarray, *, method: CorrelationMethod = "kendall"
) -> CopulaFitResult:
    """Fit a Gaussian copula to the ranks of the columns of ``data``.

    Parameters
    ----------
    data : array_like, shape (n, d)
        One column per input, rows observed together; only ranks are used.
    method : {"kendall", "normal_scores"}
        How the correlation is estimated (see :func:`copula_correlation`). An estimate that is
        not positive definite is repaired with a :class:`UserWarning` stating the distance.

    Examples
    --------
    >>> rng = np.random.default_rng(5)
    >>> z = rng.multivariate_normal([0, 0], [[1, 0.6], [0.6, 1]], size=2000)
    >>> res = fit_gaussian_copula(np.exp(z))
    >>> round(float(res.correlation[0, 1]), 2)
    0.61
    """
    x = _check_data(data)
    c, distance = _fitted_correlation(x, method)
    u = stats.rankdata(x, axis=0) / (x.shape[0] + 1.0)
    return CopulaFitResult(
        kind="gaussian",
        correlation=c,
        df=None,
        method=method,
        n_obs=x.shape[0],
        log_likelihood=_gaussian_loglik(ndtri(u), np.linalg.cholesky(c)),
        repair_distance=distance,
    )


def fit_t_copula(
    data: np.ndarray, *, df_bounds: tuple[float, float] = (1.0, 200.0)
) -> CopulaFitResult:
    """Fit a Student-t copula: Kendall correlation, then df by maximum pseudo-likelihood.

    Parameters
    ----------
    data : array_like, shape (n, d)
        One column per input, rows observed together; only ranks are used.
    df_bounds : (float, float)
        Range searched for the degrees of freedom.

    Notes
    -----
    The pseudo-log-likelihood is evaluated on 25 log-spaced values of ``df`` over ``df_bounds``
    and refined by a bounded Brent search between the neighbours of the best one; each
    evaluation inverts the t cdf at all ``n * d`` points (about 0.1 s in total at n = 3000,
    d = 2). A best grid point at a bound raises :class:`~samplewright.core.errors.MethodError`
    (see the module notes): a maximum there is not a maximum of the likelihood.
    """
    x = _check_data(data)
    lo, hi = _check_df_bounds(df_bounds)
    c, distance = _fitted_correlation(x, "kendall")
    u = stats.rankdata(x, axis=0) / (x.shape[0] + 1.0)
    chol = np.linalg.cholesky(c)

    def negative(log_df: float) -> float:
        return -_t_loglik(u, chol, math.exp(log_df))

    grid = np.linspace(math.log(lo), math.log(hi), _DF_GRID_POINTS)
    values = np.array([negative(g) for g in grid])
    best = int(np.argmin(values))
    if best == grid.size - 1:
        raise MethodError(
            f"df: the t copula's pseudo-likelihood is highest at the upper bound {hi:g} of "
            "df_bounds; the data show no tail dependence beyond a Gaussian copula's (fit that)"
        )
    if best == 0:
        raise MethodError(
            f"df: the t copula's pseudo-likelihood is highest at the lower bound {lo:g} of "
            "df_bounds; the data want heavier joint tails than that range allows"
        )
    found = optimize.minimize_scalar(
        negative,
        bounds=(grid[best - 1], grid[best + 1]),
        method="bounded",
        options={"xatol": 1e-7},
    )
    log_df = float(found.x) if found.fun <= values[best] else float(grid[best])
    df = math.exp(log_df)
    return CopulaFitResult(
        kind="student_t",
        correlation=c,
        df=df,
        method="kendall",
        n_obs=x.shape[0],
        log_likelihood=-negative(log_df),
        repair_distance=distance,
    )


def gaussian_copula_uniforms(correlation: np.ndarray, u_independent: np.ndarray) -> np.ndarray:
    """Map independent uniforms (n, d) to uniforms with a Gaussian copula of ``correlation``.

    ``Phi(Phi^-1(u) L')`` with ``L L' = correlation``; a correlation that is not positive
    semi-definite is repaired with a :class:`UserWarning`. Results are kept strictly inside
    (0, 1) (a normal score beyond about 8.3 would otherwise round to 1).

    >>> gaussian_copula_uniforms([[1, 0.5], [0.5, 1]], [[0.5, 0.5], [0.9, 0.5]]).round(3).tolist()
    [[0.5, 0.5], [0.9, 0.739]]
    """
    u = _check_uniforms(u_independent, "u_independent")
    d = u.shape[1]
    c = _usable_correlation(correlation, "correlation", size=d)
    z = ndtri(u) @ _psd_factor(c).T
    return _inside_unit(ndtr(z))


def t_copula_uniforms(correlation: np.ndarray, df: float, u_independent: np.ndarray) -> np.ndarray:
    """Map independent uniforms (n, d + 1) to d uniforms with a t copula.

    Columns ``0..d-1`` become correlated normal scores ``Z = Phi^-1(u) L'``; column ``d`` becomes
    the mixing variable ``W = chi2_df^-1(u_d)``; the result is ``t_df(Z / sqrt(W / df))`` per
    column, kept strictly inside (0, 1).

    >>> t_copula_uniforms([[1, 0.5], [0.5, 1]], 4, [[0.5, 0.5, 0.3]]).round(3).tolist()
    [[0.5, 0.5]]
    """
    u = _check_uniforms(u_independent, "u_independent")
    if u.shape[1] < 2:
        raise MethodError(
            "u_independent: expected d + 1 columns (d scores and one mixing column), "
            f"found {u.shape[1]}"
        )
    nu = _check_df(df)
    d = u.shape[1] - 1
    c = _usable_correlation(correlation, "correlation", size=d)
    z = ndtri(u[:, :d]) @ _psd_factor(c).T
    # chi-square quantile, accurate for small u: a small W makes the joint tails
    w = 2.0 * gammaincinv(nu / 2.0, u[:, d])
    return _inside_unit(stdtr(nu, z / np.sqrt(w / nu)[:, None]))


def _fitted_correlation(x: np.ndarray, method: CorrelationMethod) -> tuple[np.ndarray, float]:
    """Estimated correlation made positive definite, and the distance that moved it."""
    raw = copula_correlation(x, method=method)
    repair = nearest_correlation(raw, min_eigenvalue=_MIN_EIGENVALUE, name="correlation")
    if repair.distance > 0.0:
        warnings.warn(
            f"correlation: the {method} estimate is not positive definite; using the nearest "
            f"correlation matrix, Frobenius distance {repair.distance:.4g}",
            UserWarning,
            stacklevel=3,
        )
    return repair.correlation, repair.distance


def _gaussian_loglik(z: np.ndarray, chol: np.ndarray) -> float:
    """Gaussian copula log density summed: -n/2 log det R - 1/2 sum z'(R^-1 - I) z."""
    n = z.shape[0]
    y = np.linalg.solve(chol, z.T)
    quad = float(np.sum(y * y) - np.sum(z * z))
    return float(-n * np.sum(np.log(np.diag(chol))) - 0.5 * quad)


def _t_loglik(u: np.ndarray, chol: np.ndarray, df: float) -> float:
    """t copula log density summed: the multivariate t over the product of its marginals."""
    n, d = u.shape
    x = stdtrit(df, u)
    y = np.linalg.solve(chol, x.T)
    quad = np.sum(y * y, axis=0)
    half_log_det = float(np.sum(np.log(np.diag(chol))))
    joint = (
        n * (gammaln((df + d) / 2.0) - gammaln(df / 2.0) - d / 2.0 * math.log(df * math.pi))
        - n * half_log_det
        - (df + d) / 2.0 * np.sum(np.log1p(quad / df))
    )
    marginal = n * d * (
        gammaln((df + 1.0) / 2.0) - gammaln(df / 2.0) - 0.5 * math.log(df * math.pi)
    ) - (df + 1.0) / 2.0 * np.sum(np.log1p(x * x / df))
    return float(joint - marginal)


def _inside_unit(p: np.ndarray) -> np.ndarray:
    return cast(np.ndarray, np.clip(p, _TINY, _BELOW_ONE))


def _check_data(data: object) -> np.ndarray:
    """``data`` as a finite float64 (n, d) array, d >= 2, n >= 3, no constant column."""
    try:
        x = np.array(data, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputDataError(f"data: expected a numeric 2-D array, found {exc}") from None
    if x.ndim != 2 or x.shape[1] < 2 or x.shape[0] < 3:
        raise InputDataError(
            f"data: expected a 2-D array with at least 3 rows and 2 columns, found shape {x.shape}"
        )
    bad = ~np.isfinite(x)
    if bad.any():
        row, col = np.argwhere(bad)[0]
        raise InputDataError(
            f"data: expected finite values, found {int(bad.sum())} non-finite "
            f"(first at row {row}, column {col}: {x[row, col]})"
        )
    constant = np.all(x == x[0], axis=0)
    if constant.any():
        col = int(np.argmax(constant))
        raise InputDataError(f"data: column {col} is constant ({x[0, col]}); it has no ranks")
    return x


def _check_uniforms(u: object, name: str) -> np.ndarray:
    """``u`` as a float64 (n, k) array with every value strictly inside (0, 1)."""
    try:
        a = np.array(u, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputDataError(f"{name}: expected a numeric 2-D array, found {exc}") from None
    if a.ndim != 2:
        raise InputDataError(f"{name}: expected a 2-D array (n, columns), found shape {a.shape}")
    bad = ~((a > 0.0) & (a < 1.0))
    if bad.any():
        row, col = np.argwhere(bad)[0]
        raise InputDataError(
            f"{name}: expected values strictly inside (0, 1), found {int(bad.sum())} outside "
            f"(first at row {row}, column {col}: {a[row, col]})"
        )
    return a


def _check_df(df: object) -> float:
    if isinstance(df, bool) or not isinstance(df, int | float | np.integer | np.floating):
        raise MethodError(f"df: expected a positive number, found {df!r}")
    value = float(df)
    if not (math.isfinite(value) and value > 0.0):
        raise MethodError(f"df: expected a positive finite number, found {value}")
    return value


def _check_df_bounds(bounds: object) -> tuple[float, float]:
    try:
        lo, hi = (float(b) for b in cast(tuple[float, float], bounds))
    except (TypeError, ValueError):
        raise MethodError(
            f"df_bounds: expected two numbers (low, high), found {bounds!r}"
        ) from None
    if not (0.0 < lo < hi and math.isfinite(hi)):
        raise MethodError(f"df_bounds: expected 0 < low < high < inf, found ({lo}, {hi})")
    return lo, hi
