"""Automatic block length for the stationary and circular block bootstraps.

Politis & White (2004, Econometric Reviews 23:53-70) choose the block length that minimises the
mean squared error of the bootstrap variance of the sample mean; Patton, Politis & White (2009,
Econometric Reviews 28:372-375) corrected the constant of the circular (and moving) bootstrap.
With ``R(k)`` the sample autocovariance (divisor n) of the demeaned series and the flat-top
kernel ``lambda(t) = 1`` for ``|t| <= 1/2``, ``2 (1 - |t|)`` for ``1/2 < |t| <= 1``::

    G      = sum_{k=1..M} lambda(k/M) * 2 k R(k)
    sigma2 = R(0) + sum_{k=1..M} lambda(k/M) * 2 R(k)          (long-run variance)
    D_SB   = 2 sigma2**2,      D_CB = (4/3) sigma2**2
    b_opt  = (2 G**2 / D)**(1/3) * n**(1/3),   capped at ceil(min(3 sqrt(n), n / 3))

The bandwidth is ``M = 2 m``, where ``m`` is the first lag that starts a run of ``K_n``
autocorrelations all inside ``+-2 sqrt(log10(n) / n)``, with ``K_n = max(5, sqrt(log10 n))``
(the paper's choice) and lags searched up to ``m_max = ceil(sqrt(n)) + K_n``. ``M`` is at least 2
and at most ``m_max``; when no such run exists, ``M = m_max``. The run starts at ``m`` itself, as
in Patton's published code and in ``arch.bootstrap.optimal_block_length``, with which the results
agree to rounding for n from a few hundred to below 1e6. Two conventions differ from arch's:
``K_n`` (arch takes ``max(5, int(log10 n))``, which differs from n = 1e6 on), and the
autocorrelation, here the usual ``R(k) / R(0)`` while arch normalises each lag over windows
shifted by one row; for short series (tens of values) an autocorrelation near the bound can then
fall on different sides of it and the bandwidth differ.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.core.errors import InputDataError

__all__ = ["BlockLengthResult", "optimal_block_length"]

# the fewest values the autocorrelation search can work with (m_max must exceed K_n)
MIN_SERIES = 10


@dataclass(frozen=True)
class BlockLengthResult:
    """Estimated optimal block lengths of one series.

    Attributes
    ----------
    stationary : float
        Mean block length for the stationary bootstrap (Politis & Romano 1994).
    circular : float
        Block length for the circular (and moving) block bootstrap.
    bandwidth : int
        The flat-top kernel's bandwidth ``M`` used in both.
    """

    stationary: float
    circular: float
    bandwidth: int


def optimal_block_length(series: Any) -> BlockLengthResult:
    """Politis-White optimal block lengths (with the 2009 correction) of a time series.

    Parameters
    ----------
    series : array_like
        One-dimensional finite values in time order, at least 10, not all equal.

    Returns
    -------
    BlockLengthResult
        Real-valued block lengths; a scheme needs at least 1 (and whole rows for
        ``circular``/``moving``): round them as :func:`resolve_block_length` does.

    Examples
    --------
    >>> from scipy.signal import lfilter
    >>> e = np.random.default_rng(0).standard_normal(2000)
    >>> x = lfilter([1.0], [1.0, -0.6], e)  # AR(1) with coefficient 0.6
    >>> r = optimal_block_length(x)
    >>> round(r.stationary, 2), round(r.circular, 2), r.bandwidth
    (17.68, 20.24, 10)
    """
    x = _check_series(series)
    n = x.size
    e = x - x.mean()
    k_n = max(5, math.ceil(math.sqrt(math.log10(n))))
    m_max = math.ceil(math.sqrt(n)) + k_n
    m_max = min(m_max, n - 1)
    acov = np.array([e[k:] @ e[: n - k] for k in range(m_max + 1)]) / n
    if not acov[0] > 0:
        raise InputDataError("series: expected values that vary, found all equal")
    rho = np.abs(acov / acov[0])
    bound = 2.0 * math.sqrt(math.log10(n) / n)
    inside = rho < bound
    inside[0] = False
    # a run of k_n insignificant lags starting at lag m (lags m .. m + k_n - 1)
    runs = np.lib.stride_tricks.sliding_window_view(inside[1:], k_n).all(axis=1)
    first = np.flatnonzero(runs)
    bandwidth = m_max if first.size == 0 else min(2 * max(int(first[0]) + 1, 1), m_max)
    k = np.arange(1, bandwidth + 1)
    t = k / bandwidth
    lam = np.where(t <= 0.5, 1.0, 2.0 * (1.0 - t))
    g = float(np.sum(lam * 2.0 * k * acov[1 : bandwidth + 1]))
    sigma2 = float(acov[0] + np.sum(lam * 2.0 * acov[1 : bandwidth + 1]))
    b_max = math.ceil(min(3.0 * math.sqrt(n), n / 3.0))
    base = (2.0 * g * g) ** (1.0 / 3.0) * n ** (1.0 / 3.0)
    d_stationary = 2.0 * sigma2 * sigma2
    d_circular = 4.0 / 3.0 * sigma2 * sigma2
    return BlockLengthResult(
        stationary=float(min(base / d_stationary ** (1.0 / 3.0), b_max)),
        circular=float(min(base / d_circular ** (1.0 / 3.0), b_max)),
        bandwidth=int(bandwidth),
    )


def resolve_block_length(result: BlockLengthResult, scheme: str) -> float:
    """The block length a scheme uses: stationary's mean as is, circular's rounded; at least 1."""
    if scheme == "stationary":
        return max(1.0, result.stationary)
    return float(max(1, round(result.circular)))


def _check_series(series: Any) -> np.ndarray:
    try:
        x = np.asarray(series, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputDataError("series: expected numbers, found non-numeric entries") from None
    if x.ndim != 1:
        raise InputDataError(f"series: expected a 1-d array, found shape {x.shape}")
    if x.size < MIN_SERIES:
        raise InputDataError(f"series: expected at least {MIN_SERIES} values, found {x.size}")
    if not np.all(np.isfinite(x)):
        raise InputDataError(
            f"series: expected finite numbers, found {int(np.sum(~np.isfinite(x)))} non-finite"
        )
    return x
