"""Piecewise-linear CDFs given by knots: user-drawn curves and the interpolated method."""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.core.errors import KnotsError
from samplewright.distributions.base import Sampler, Size, check_probabilities

__all__ = ["PiecewiseSampler", "from_knots"]

_BLOCK = 1 << 16  # draws transformed per block (stays in cache with its gathered rows)
_BUCKETS_PER_KNOT = 2  # guide-table buckets per segment of unequally spaced knots


class PiecewiseSampler(Sampler):
    """A CDF given by knots ``(x[i], p[i])``, linear between knots.

    ``x`` and ``p`` must be non-decreasing, ``p`` must start at 0 and end at 1. Between two knots
    with ``x[i] < x[i+1]`` the mass ``p[i+1] - p[i]`` is spread uniformly (none if the segment is
    flat); two knots with the same ``x`` and rising ``p`` make an atom at that x.

    >>> s = PiecewiseSampler([0, 1, 1, 3], [0, 0.5, 0.75, 1])
    >>> s.cdf([0.5, 1, 2]).tolist()
    [0.25, 0.75, 0.875]
    >>> s.quantile([0.25, 0.6, 0.875]).tolist()
    [0.5, 1.0, 2.0]
    """

    kind = "piecewise"

    def __init__(self, x: Any, p: Any, *, method: str = "knots") -> None:
        self.x, self.p = _validate_knots(x, p)
        m = self.x.size - 1
        # p equally spaced (the interpolated method): the segment index is arithmetic
        self._equal = bool(np.array_equal(self.p, np.arange(m + 1, dtype=np.float64) / m))
        dp = np.diff(self.p)
        params = {
            "n_knots": int(self.x.size),
            "n_atoms": int(np.sum((np.diff(self.x) == 0) & (dp > 0))),
        }
        super().__init__(method=method, params=params)
        self._tables: tuple[np.ndarray, ...] | None = None  # built at the first quantile

    def cdf(self, q: Any) -> np.ndarray:
        q = np.asarray(q, dtype=np.float64)
        x, p = self.x, self.p
        i = np.searchsorted(x, q, side="right") - 1  # last knot with x <= q
        inside = (i >= 0) & (i < x.size - 1)
        j = np.clip(i, 0, x.size - 2)
        x0, x1, p0, p1 = x[j], x[j + 1], p[j], p[j + 1]
        with np.errstate(invalid="ignore", divide="ignore"):
            frac = np.where(x1 > x0, (q - x0) / (x1 - x0), 0.0)
        mid = p0 + (p1 - p0) * frac
        return np.where(inside, mid, np.where(i < 0, 0.0, 1.0))

    def quantile(self, u: Any) -> np.ndarray:
        u = check_probabilities(u)
        return self._blocks(np.array(u, dtype=np.float64, copy=True))

    def _draw_native(self, size: Size, gen: np.random.Generator) -> np.ndarray:
        """``quantile(gen.random(size))`` without the check (the Generator's uniforms lie in
        [0, 1)), transformed in place; the uniforms come from one call, as in the base class."""
        return self._blocks(gen.random(size))

    def _blocks(self, u: np.ndarray) -> np.ndarray:
        """``Q(u)`` block by block (each block's gathered rows stay in cache); ``u`` is reused."""
        flat = u.reshape(-1)
        out = np.empty(flat.size, dtype=np.float64)
        for start in range(0, flat.size, _BLOCK):
            self._quantile_into(flat[start : start + _BLOCK], out[start : start + _BLOCK])
        return out.reshape(u.shape)

    def _lookup_tables(self) -> tuple[np.ndarray, ...]:
        """Per-segment rows gathered in one cache line, and the guide table of unequal knots.

        Equal spacing: rows ``(x[j], x[j+1] - x[j])`` and a last row ``(x[m], 0)``. Otherwise rows
        ``(p[k-1], p[k] - p[k-1], x[k-1], x[k] - x[k-1])`` for segments ``k = 1 .. m`` and a guide
        table (Chen & Asau, 1974) over ``K = 2 m`` buckets. With ``c_i = trunc(p[i] K)``, bucket
        ``b`` starts at knot ``g = #{i : c_i < b}`` and holds ``#{i : c_i = b}`` knots; its row is
        ``(p[g], p[g+1], g, that count)``. For ``trunc(u K) = b`` the first knot with ``p >= u``
        is ``g`` plus the number of the bucket's own knots below ``u``: the product is monotone
        in ``u``, so knots of earlier buckets lie below ``u`` and those of later ones above. With
        two buckets a segment, few buckets hold more than two knots (those use a binary search).
        """
        if self._tables is None:
            x, p = self.x, self.p
            dx = np.diff(x)
            if self._equal:
                # a last row (x[m], 0) answers u = 1 (t = m) without clipping the index
                self._tables = (np.stack([x, np.append(dx, 0.0)], axis=1),)
            else:
                m = x.size - 1
                dp = np.diff(p)
                # a flat segment is only reached by u = 0, which is answered separately
                dp_safe = np.where(dp > 0, dp, 1.0)
                rows = np.stack([p[:-1], dp_safe, x[:-1], dx], axis=1)
                n_buckets = _BUCKETS_PER_KNOT * m
                cells = (p * float(n_buckets)).astype(np.intp)
                first = np.searchsorted(cells, np.arange(n_buckets + 2), side="left")
                lead = first[:-1]
                # bucket rows: p of the bucket's first two knots, the first knot, their count
                guide = np.stack(
                    [
                        p[np.minimum(lead, m)],
                        p[np.minimum(lead + 1, m)],
                        lead.astype(np.float64),
                        np.diff(first).astype(np.float64),
                    ],
                    axis=1,
                )
                self._tables = (rows, guide)
        return self._tables

    def _quantile_into(self, u: np.ndarray, out: np.ndarray) -> None:
        """Write ``Q(u)`` of checked 1-d probabilities ``u`` into ``out``; ``u`` is overwritten.

        Equal to the textbook form ``x0 + (x1 - x0) * (u - p0) / (p1 - p0)`` on the segment of
        the first knot with ``p >= u`` (bit for bit: the same operations in the same order; with
        equal spacing ``u = 1`` gives the last knot itself).
        """
        tables = self._lookup_tables()
        m = self.x.size - 1
        if self._equal:
            # segment j = floor(u m) (truncation: u >= 0), blend t - j; j = m only where u m = m
            u *= float(m)
            j = u.astype(np.intp)
            u -= j
            row = np.take(tables[0], j, axis=0)
            np.multiply(row[:, 1], u, out=out)
            out += row[:, 0]
            return
        rows, guide = tables
        p = self.p
        b = (u * float(_BUCKETS_PER_KNOT * m)).astype(np.intp)
        bucket = np.take(guide, b, axis=0)
        k = bucket[:, 2].astype(np.intp)
        # the bucket's own knots, at most two of them; fuller buckets: search the whole table
        k += bucket[:, 0] < u
        k += bucket[:, 1] < u
        full = np.flatnonzero(bucket[:, 3] > 2.0)
        if full.size:
            k[full] = np.searchsorted(p, u[full], side="left")
        at_zero = np.flatnonzero(k == 0)  # u = 0: the lower end of the support
        np.maximum(k, 1, out=k)
        k -= 1
        row = np.take(rows, k, axis=0)
        u -= row[:, 0]
        u /= row[:, 1]
        np.multiply(row[:, 3], u, out=out)
        out += row[:, 2]
        if at_zero.size:
            out[at_zero] = self.support[0]

    def pdf(self, q: Any) -> np.ndarray:
        """Density of the continuous part (atoms excluded; see :meth:`pmf`)."""
        q = np.asarray(q, dtype=np.float64)
        x, p = self.x, self.p
        i = np.searchsorted(x, q, side="right") - 1
        inside = (i >= 0) & (i < x.size - 1)
        j = np.clip(i, 0, x.size - 2)
        dx = x[j + 1] - x[j]
        with np.errstate(invalid="ignore", divide="ignore"):
            dens = np.where(dx > 0, (p[j + 1] - p[j]) / dx, 0.0)
        return np.where(inside, dens, 0.0)

    def pmf(self, q: Any) -> np.ndarray:
        """Mass of the atoms at ``q`` (0 where there is none)."""
        q = np.asarray(q, dtype=np.float64)
        lo = np.searchsorted(self.x, q, side="left")
        hi = np.searchsorted(self.x, q, side="right")
        # Knots lo..hi-1 sit at q; the jump there is p[hi-1] - p[lo] (F is continuous elsewhere).
        top = self.p[np.clip(hi - 1, 0, self.x.size - 1)]
        bottom = self.p[np.clip(lo, 0, self.x.size - 1)]
        return np.where(hi > lo, top - bottom, 0.0)

    def _moment(self, power: int) -> float:
        x0, x1 = self.x[:-1], self.x[1:]
        dp = np.diff(self.p)
        if power == 1:
            seg = (x0 + x1) / 2.0
        else:
            seg = (x0 * x0 + x0 * x1 + x1 * x1) / 3.0
        return float(np.sum(dp * seg))

    @property
    def mean(self) -> float:
        return self._moment(1)

    @property
    def var(self) -> float:
        return max(self._moment(2) - self.mean**2, 0.0)

    @property
    def support(self) -> tuple[float, float]:
        lo = self.x[np.flatnonzero(self.p <= 0)[-1]]
        hi = self.x[np.flatnonzero(self.p >= 1)[0]]
        return float(lo), float(hi)

    def payload(self) -> dict[str, np.ndarray]:
        return {"x": self.x, "p": self.p}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        return cls(payload["x"], payload["p"], method=described["method"])


def _validate_knots(x: Any, p: Any) -> tuple[np.ndarray, np.ndarray]:
    try:
        xa = np.asarray(x, dtype=np.float64).ravel()
        pa = np.asarray(p, dtype=np.float64).ravel()
    except (TypeError, ValueError) as exc:
        raise KnotsError(f"knots: x and p must be numbers ({exc})") from None
    if xa.size != pa.size:
        raise KnotsError(f"knots: x has {xa.size} points but p has {pa.size}")
    if xa.size < 2:
        raise KnotsError(f"knots: at least 2 points are needed, found {xa.size}")
    for name, arr in (("x", xa), ("p", pa)):
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            raise KnotsError(f"knots: point {bad[0] + 1} has a non-finite {name} ({arr[bad[0]]})")
    bad = np.flatnonzero(np.diff(xa) < 0)
    if bad.size:
        i = bad[0] + 1
        raise KnotsError(
            f"knots: x must be non-decreasing, but point {i + 1} (x={xa[i]:g}) is below "
            f"point {i} (x={xa[i - 1]:g})"
        )
    bad = np.flatnonzero(np.diff(pa) < 0)
    if bad.size:
        i = bad[0] + 1
        raise KnotsError(
            f"knots: p must be non-decreasing, but point {i + 1} (p={pa[i]:g}) is below "
            f"point {i} (p={pa[i - 1]:g})"
        )
    bad = np.flatnonzero((pa < 0) | (pa > 1))
    if bad.size:
        raise KnotsError(f"knots: point {bad[0] + 1} has p={pa[bad[0]]:g}, outside [0, 1]")
    if pa[0] != 0.0:
        raise KnotsError(f"knots: the first point must have p=0, found p={pa[0]:g}")
    if pa[-1] != 1.0:
        raise KnotsError(f"knots: the last point must have p=1, found p={pa[-1]:g}")
    return xa, pa


def from_knots(x: Any, p: Any) -> PiecewiseSampler:
    """A sampler from a user-drawn CDF: knots ``x`` (values) and ``p`` (cumulative probability).

    >>> s = from_knots([2, 4, 4, 10], [0, 0.5, 0.5, 1])  # a flat part is allowed
    >>> float(s.mean)
    5.0
    """
    return PiecewiseSampler(x, p, method="knots")
