"""Array kernels of the batched refits (:mod:`.batch_fits`): shape equations solved for every
row at once, and fitted CDFs of sorted rows with few special-function evaluations."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy import special

__all__ = [
    "Index",
    "LONG_ROW",
    "gamma_shape_rows",
    "invgauss_cdf",
    "smooth_cdf_sorted",
    "weibull_shape_rows",
]

Index = np.ndarray | slice
RowFn = Callable[[Index, np.ndarray], np.ndarray]
RowPdf = Callable[[Index, np.ndarray], tuple[np.ndarray, np.ndarray]]

# fitted CDFs: exact at every _STEP-th value (half as many on rows shorter than LONG_ROW),
# Hermite between (smooth_cdf_sorted), within about _TOL of the exact CDF
_STEP = 16
LONG_ROW = 4096
_TOL = 1e-11
_WARM = 2048  # longer rows: Newton for the weibull shape first runs on this many order statistics


def gamma_shape_rows(s: np.ndarray) -> np.ndarray:
    """Solve ``log k - digamma(k) = s`` for each element by the Newton iteration of
    :func:`samplewright.fitting.optimise.gamma_shape`: Minka's start, the same steps, the same
    stop, and after 100 steps the best iterate if its residual is within ``1e-9 s`` (for large
    ``k`` rounding keeps the last digits from settling); NaN otherwise (the one-sample fit then
    decides)."""
    k = (3.0 - s + np.sqrt((s - 3.0) ** 2 + 24.0 * s)) / (12.0 * s)
    out = np.full(s.shape, np.nan)
    best_k, best_f = k.copy(), np.full(s.shape, np.inf)
    todo = np.arange(s.size)
    for _ in range(100):
        f = np.log(k) - special.digamma(k) - s[todo]
        better = np.abs(f) < best_f[todo]
        best_k[todo[better]] = k[better]
        best_f[todo[better]] = np.abs(f[better])
        k_new = k - f / (1.0 / k - special.zeta(2.0, k))
        k_new = np.where(k_new <= 0, k / 2.0, k_new)
        stop = np.abs(k_new - k) <= 1e-14 * k
        out[todo[stop]] = k_new[stop]
        todo, k = todo[~stop], k_new[~stop]
        if not todo.size:
            break
    settled = best_f[todo] <= 1e-9 * s[todo]
    out[todo[settled]] = best_k[todo[settled]]
    return out


def _weibull_newton(lz: np.ndarray, k: np.ndarray, settle: float, max_iter: int) -> np.ndarray:
    """Roots ``k`` of ``1/k + mean(lz) - sum(lz e^{k lz}) / sum(e^{k lz}) = 0`` per row (the
    weibull score with ``lz = log(y / max y) <= 0``), by Newton's method kept inside a bracket.

    The score decreases in ``k`` (its slope is ``-1/k^2`` minus a weighted variance), so the sign
    of each evaluation narrows the bracket; a step that leaves it bisects instead. Near the root
    Newton's error squares at each step (relative to ``k``, with a factor near 1: the score's
    curvature over its slope is about ``-1/k``), so once a Newton step is below ``settle * k``
    the next iterate is within about ``settle**2`` of the root and is returned without another
    pass over the data. NaN where ``max_iter`` steps do not get there.
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
        newton = (k_new > lo) & (k_new < hi)
        k_new = np.where(newton, k_new, np.where(np.isfinite(hi), 0.5 * (lo + hi), 2.0 * k))
        step = np.abs(k_new - k)
        stop = (newton & (step <= settle * k)) | (step <= 1e-15 * k) | (score == 0)
        out[rows[stop]] = k_new[stop]
        keep = ~stop
        if not keep.any():
            break
        rows, k, lo, hi = rows[keep], k_new[keep], lo[keep], hi[keep]
        lz, mean_lz = lz[keep], mean_lz[keep]
    return out


def weibull_shape_rows(lz: np.ndarray) -> np.ndarray:
    """Weibull shape of each row of sorted ``lz = log(y / max y)``.

    Start: the log of a weibull value is a (minimum) Gumbel value with sd ``pi / (k sqrt 6)``.
    Long rows first solve, roughly, the equation of an evenly spaced subset of their order
    statistics (cheap, and close to the whole row's root), then finish on the whole row.
    """
    sd = lz.std(axis=1)
    with np.errstate(divide="ignore"):
        k = np.pi / (np.sqrt(6.0) * sd)
    k = np.where(np.isfinite(k) & (k > 0), k, 1.0)
    n = lz.shape[1]
    if n > 2 * _WARM:
        step = n // _WARM
        sub = lz[:, step // 2 :: step]  # one value a stratum: its root within ~1e-3 of the row's
        warm = _weibull_newton(sub - sub[:, -1:], k, 1e-4, 100)
        k = np.where(np.isfinite(warm), warm, k)
    return _weibull_newton(lz, k, 1e-7, 100)


def invgauss_cdf(y: np.ndarray, mu: np.ndarray, lam: np.ndarray) -> np.ndarray:
    """Inverse Gaussian CDF at ``y`` (overwritten) for ``mu``, ``lam`` broadcasting against it.

    ``F = Phi(b) + exp(2 lam / mu) Phi(-a)`` with ``a, b = sqrt(lam / y) (y / mu +- 1)``; with
    ``Phi(-a) = erfcx(a / sqrt 2) exp(-a^2 / 2) / 2`` and ``2 lam / mu - a^2 / 2 = -b^2 / 2`` the
    second term is ``erfcx(a / sqrt 2) exp(-b^2 / 2) / 2``: no overflow, no cancellation.
    """
    r = np.sqrt(lam / y)
    y /= mu
    b = y - 1.0
    b *= r
    y += 1.0
    y *= r
    y *= 1.0 / np.sqrt(2.0)
    u = special.ndtr(b)
    np.square(b, out=b)
    b *= -0.5
    np.exp(b, out=b)
    b *= special.erfcx(y, out=y)
    b *= 0.5
    u += b
    return u


def smooth_cdf_sorted(t: np.ndarray, cdf: RowFn, pdf: RowPdf, min_n: int = 0) -> np.ndarray:
    """The CDF of each row of sorted ``t`` (overwritten), with few exact evaluations.

    ``cdf(rows, x)`` evaluates the fitted CDF of the rows ``rows`` (an index array, or
    ``slice(None)`` for all) at ``x`` (one row of ``x`` per row); ``pdf(rows, x)`` gives the
    density and the derivative of its logarithm there. Special functions cost 30-500 ns a value
    (scipy's ``gammainc`` the most). On a sorted row the CDF is smooth on the scale of the gaps
    between neighbouring values, so it is evaluated exactly only at every ``_STEP``-th value
    (every ``_STEP / 2``-th on rows shorter than ``LONG_ROW``, whose gaps are wider), the anchors,
    and at the value halfway between two anchors (a check); between anchors the quintic Hermite
    interpolant of the exact value, density and density slope at the two
    anchors is used. Its error is proportional to ``(t - a)^3 (t - b)^3``, largest near the
    middle of a block, so a block is kept only where the check lies well inside it and the
    interpolant's error there, scaled up to the block's largest, is at most ``_TOL`` times the
    smaller of ``F`` below the block and ``1 - F`` above it (both tails keep their relative
    accuracy, which the Anderson-Darling statistic needs); every other block (the far tails,
    ties, a NaN) is evaluated exactly. The values passed on are within about ``_TOL`` of the
    exact CDF relative to the nearer tail: statistics move by far less than the Monte Carlo
    error of any bootstrap p-value.
    """
    b, n = t.shape
    every = slice(None)
    s = _STEP if n >= LONG_ROW else _STEP // 2
    if n < max(4 * s, min_n):  # short rows, or a CDF too cheap to gain on them
        return cdf(every, t)
    j = (n - 1) // s  # full blocks [i s, (i + 1) s]; columns from j s on are evaluated exactly
    at = t[:, : j * s + 1 : s].copy()
    f_at = cdf(every, at.copy())
    f_mid = cdf(every, t[:, s // 2 : j * s : s].copy())
    dens, slope = pdf(every, at)
    # blocks laid out (row, offset in block, block): the inner loops then run over the blocks
    h = np.diff(at, axis=1)[:, None, :]
    lo, hi = f_at[:, None, :-1], f_at[:, None, 1:]
    d0, d1 = h * dens[:, None, :-1], h * dens[:, None, 1:]  # first derivatives in tau
    curv = dens * slope
    e0, e1 = h * h * curv[:, None, :-1], h * h * curv[:, None, 1:]  # second derivatives
    rise = hi - lo
    # p(tau) = lo + d0 tau + e0/2 tau^2 + c3 tau^3 + c4 tau^4 + c5 tau^5 (quintic Hermite)
    c3 = 10.0 * rise - 6.0 * d0 - 4.0 * d1 - 1.5 * e0 + 0.5 * e1
    c4 = -15.0 * rise + 8.0 * d0 + 7.0 * d1 + 1.5 * e0 - e1
    c5 = 6.0 * rise - 3.0 * (d0 + d1) - 0.5 * (e0 - e1)
    blocks = t[:, : j * s].reshape(b, j, s)  # a view of t
    tau = np.empty((b, s, j))
    np.subtract(blocks.transpose(0, 2, 1), at[:, None, :-1], out=tau)
    tau /= h
    poly = tau * c5
    for c in (c4, c3, 0.5 * e0, d0):
        poly += c
        poly *= tau
    poly += lo
    # the error at the check, scaled to the block's largest (tau^3 (1 - tau)^3 peaks at 1/64);
    # a check near an anchor (ties) says nothing about the rest of the block: evaluate it exactly
    mid = tau[:, s // 2, :]
    shape = 64.0 * (mid * (1.0 - mid)) ** 3
    err = np.abs(poly[:, s // 2, :] - f_mid)
    scale = np.minimum(lo[:, 0, :], 1.0 - hi[:, 0, :])
    keep = (shape >= 0.125) & (err <= _TOL * scale * shape)  # False where NaN
    # failed blocks: the far tails, as runs at both ends (exact on whole column ranges, cheap),
    # and the odd one in between (exact one by one)
    none = ~keep.any(axis=1)
    lead = int(np.max(np.where(none, j, np.argmax(keep, axis=1))))
    trail = int(np.max(np.where(none, j, np.argmax(keep[:, ::-1], axis=1))))
    if lead + trail >= j:
        return cdf(every, t)
    first = cdf(every, t[:, : lead * s].copy())
    last = cdf(every, t[:, (j - trail) * s :].copy())
    rows, cols = np.nonzero(~keep[:, lead : j - trail])
    if rows.size:
        cols += lead
        poly[rows, :, cols] = cdf(rows, t[rows[:, None], cols[:, None] * s + np.arange(s)])
    blocks[...] = poly.transpose(0, 2, 1)
    t[:, : j * s : s] = f_at[:, :-1]
    t[:, s // 2 : j * s : s] = f_mid
    t[:, : lead * s] = first
    t[:, (j - trail) * s :] = last
    return t
