"""Weighted sums over the data, in chunks: the statistics behind the closed-form fits.

A fit of a 1e8-value column must not hold n-long temporaries: every function here walks the
values in chunks of :data:`CHUNK` (about half a megabyte) and keeps only running sums, so a fit
needs the column plus a few chunks (weibull also keeps one array of logarithms). Values are
``y = x - loc`` for a location ``loc``, formed chunk by chunk.

:class:`Obs` carries the values, the optional frequency weights (None: every row counts once, no
array of ones is made) and their extremes and total weight, computed once and shared by the
fitter and the checks after it.

Sums of logarithms of unweighted values use products: ``sum(log y)`` is the sum of the logs of
products of groups of up to 64 values, grouped so that no product can overflow or underflow
(the group size comes from the extremes). Each product carries a relative rounding error below
``64 * 2**-53``, so the sum is as accurate as summing 64 times as many logarithms, and about ten
times faster (a logarithm costs far more than a product).
"""

from __future__ import annotations

import math
from collections.abc import Iterator

import numpy as np

from samplewright.core.errors import MethodError

__all__ = [
    "CHUNK",
    "Obs",
    "array_moments",
    "dot",
    "log_moments",
    "log_ratios",
    "moments",
    "refuse_outside",
    "standardised",
    "sum_inv_dev",
    "sum_log",
    "sum_shifted",
    "sum_sq",
]

CHUNK = 1 << 16  # values per chunk
_LOG_RANGE = 600.0  # |log| of a product of a group stays below this (e**600 ~ 4e260)


class Obs:
    """Checked values and weights of one fit, with their extremes and total weight (cached).

    Parameters
    ----------
    x : numpy.ndarray
        1-d finite float64 values.
    w : numpy.ndarray or None
        Positive frequency weights aligned with ``x``, or None (each row counts once).
    n_dropped : int
        Rows of weight 0 dropped before (to name rows of the caller's input in messages).
    """

    __slots__ = ("_hi", "_lo", "_total", "n_dropped", "w", "x")

    def __init__(self, x: np.ndarray, w: np.ndarray | None = None, n_dropped: int = 0) -> None:
        self.x = x
        self.w = w
        self.n_dropped = n_dropped
        self._lo: float | None = None
        self._hi: float | None = None
        self._total: float | None = float(x.size) if w is None else None

    @property
    def n(self) -> int:
        """Number of rows."""
        return int(self.x.size)

    @property
    def lo(self) -> float:
        """The smallest value."""
        if self._lo is None:
            self._lo = float(self.x.min())
        return self._lo

    @property
    def hi(self) -> float:
        """The largest value."""
        if self._hi is None:
            self._hi = float(self.x.max())
        return self._hi

    @property
    def total(self) -> float:
        """Total weight (the number of rows when unweighted)."""
        if self._total is None:
            self._total = float(self.x.size if self.w is None else self.w.sum())
        return self._total

    def weights(self) -> np.ndarray:
        """The weights as an array (ones when unweighted; for the slower general paths)."""
        return np.ones(self.n) if self.w is None else self.w

    def subset(self, keep: np.ndarray) -> Obs:
        """The rows where ``keep`` is True."""
        return Obs(self.x[keep], None if self.w is None else self.w[keep])

    def blocks(self, loc: float = 0.0) -> Iterator[tuple[np.ndarray, np.ndarray | None]]:
        """``(y, w)`` chunk by chunk, ``y = x - loc`` (a fresh array when ``loc != 0``)."""
        x, w = self.x, self.w
        for s in range(0, x.size, CHUNK):
            xc = x[s : s + CHUNK]
            yield (xc - loc if loc != 0 else xc), (None if w is None else w[s : s + CHUNK])


def standardised(obs: Obs) -> tuple[Obs, float, float]:
    """``(z, c, h)`` with ``z = (x - c) / h`` in [-1, 1]: ``c`` the mid-range, ``h`` half the
    range (both computed so that nothing overflows). Location-scale fits made on ``z`` map
    back as ``mu = c + h mu_z``, ``sigma = h sigma_z``, ``loglik = loglik_z - W log h``."""
    c = 0.5 * obs.lo + 0.5 * obs.hi
    h = 0.5 * obs.hi - 0.5 * obs.lo
    z = obs.x - c
    z /= h
    return Obs(z, obs.w, obs.n_dropped), c, h


def refuse_outside(obs: Obs, bad: np.ndarray, what: str) -> None:
    """Raise a MethodError naming the first value where ``bad`` holds (its row and value).

    ``what`` completes "<what>; value <i> is <v>", e.g. ``"rayleigh needs every value > 0"``.
    Rows are counted from 1 among the rows of positive weight.
    """
    idx = np.flatnonzero(bad)
    if idx.size == 0:
        return
    i = int(idx[0])
    more = f" ({idx.size} values outside)" if idx.size > 1 else ""
    rows = ", counting rows of weight > 0" if obs.n_dropped else ""
    raise MethodError(f"{what}; value {i + 1} is {float(obs.x[i])!r}{more}{rows}")


def dot(a: np.ndarray, b: np.ndarray) -> float:
    """``sum(a * b)`` for 1-d arrays without a temporary, and without BLAS: numpy's ``dot``
    hands vectors this long to OpenBLAS threads, whose wake-up cost 15-20 ms per call on a
    busy two-core machine (measured), where this loop takes microseconds."""
    return float(np.einsum("i,i->", a, b))


def _wsum(v: np.ndarray, w: np.ndarray | None) -> float:
    return float(v.sum() if w is None else dot(w, v))


def sum_shifted(obs: Obs, loc: float = 0.0) -> float:
    """``sum(w * (x - loc))``."""
    if loc == 0:
        return _wsum(obs.x, obs.w)
    return float(sum(_wsum(y, w) for y, w in obs.blocks(loc)))


def sum_sq(obs: Obs, loc: float = 0.0, scale: float = 1.0) -> float:
    """``sum(w * ((x - loc) / scale)**2)`` (``scale`` a power of two keeps it exact)."""
    if loc == 0 and scale == 1 and obs.w is None:
        return float(dot(obs.x, obs.x))
    out = 0.0
    for y, w in obs.blocks(loc):
        if scale != 1:
            y = y / scale
        out += float(dot(y, y) if w is None else dot(w * y, y))
    return out


def _group(lo: float, hi: float) -> int:
    """Largest group size (a power of two up to 64) whose products stay within e**±600."""
    m = max(abs(math.log(lo)), abs(math.log(hi)), 1e-300) if lo > 0 and hi < math.inf else 1e300
    k = 64
    while k > 1 and k * m > _LOG_RANGE:
        k //= 2
    return k


def _sum_log_block(y: np.ndarray, k: int) -> float:
    q = y.size // k
    if k < 4 or q == 0:
        return float(np.log(y).sum())
    prods = np.multiply.reduce(y[: q * k].reshape(k, q), axis=0)
    return float(np.log(prods).sum() + np.log(y[q * k :]).sum())


def sum_log(obs: Obs, loc: float = 0.0, top: float | None = None) -> float:
    """``sum(w * log(x - loc))`` for values above ``loc`` (grouped products when unweighted).

    ``top``: a bound at or above ``max(x) - loc`` when one is known (e.g. a sum of the positive
    values), which saves finding the largest value.
    """
    if obs.w is None:
        k = _group(obs.lo - loc, obs.hi - loc if top is None else top)
        if obs.n <= CHUNK:
            return _sum_log_block(obs.x - loc if loc != 0 else obs.x, k)
        return float(sum(_sum_log_block(y, k) for y, _ in obs.blocks(loc)))
    return float(sum(_wsum(np.log(y), w) for y, w in obs.blocks(loc)))


def _combine(
    acc: tuple[float, float, float], part: tuple[float, float, float]
) -> tuple[float, float, float]:
    """Chan et al.'s (1979) pairwise update of (total weight, mean, sum of squared deviations)."""
    wa, ma, qa = acc
    wb, mb, qb = part
    tot = wa + wb
    d = mb - ma
    return tot, ma + d * (wb / tot), qa + qb + d * d * (wa * wb / tot)


def _block_moments(v: np.ndarray, w: np.ndarray | None) -> tuple[float, float, float]:
    """(total weight, mean, sum of squared deviations) of one chunk (``v`` is overwritten)."""
    if w is None:
        tw = float(v.size)
        m = float(v.sum()) / tw
        v -= m
        return tw, m, float(dot(v, v))
    tw = float(w.sum())
    m = float(dot(w, v)) / tw
    v -= m
    return tw, m, float(dot(w * v, v))


def log_moments(obs: Obs, loc: float = 0.0) -> tuple[float, float]:
    """Weighted mean and sum of squared deviations of ``log(x - loc)`` (values above loc)."""
    acc = (0.0, 0.0, 0.0)
    for y, w in obs.blocks(loc):
        ly = np.log(y, out=y) if loc != 0 else np.log(y)
        acc = _combine(acc, _block_moments(ly, w))
    return acc[1], acc[2]


def moments(obs: Obs, scale: float = 1.0) -> tuple[float, float]:
    """Weighted mean and sum of squared deviations of ``x / scale``."""
    acc = (0.0, 0.0, 0.0)
    for y, w in obs.blocks():
        acc = _combine(acc, _block_moments(y / scale if scale != 1 else y.copy(), w))
    return acc[1], acc[2]


def array_moments(v: np.ndarray, w: np.ndarray | None) -> tuple[float, float]:
    """Weighted mean and sum of squared deviations of an array (chunked copies only)."""
    return moments(Obs(v, w))


def sum_inv_dev(obs: Obs, loc: float, mu: float) -> float:
    """``sum(w * (y - mu)**2 / y)`` with ``y = x - loc > 0`` (inverse gaussian's statistic)."""
    out = 0.0
    for y, w in obs.blocks(loc):
        d = y - mu
        d *= d
        d /= y
        out += _wsum(d, w)
    return out


def log_ratios(obs: Obs, loc: float, top: float) -> np.ndarray:
    """The n-long array ``log((x - loc) / top)`` (weibull's working values), made in chunks."""
    out = np.empty(obs.n)
    s = 0
    for y, _ in obs.blocks(loc):
        e = s + y.size
        np.divide(y, top, out=out[s:e])
        np.log(out[s:e], out=out[s:e])
        s = e
    return out
