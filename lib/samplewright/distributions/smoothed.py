"""Kernel-smoothed resampling as a sampler: a Gaussian mixture, one kernel per observation.

The sampler is the Gaussian kernel density estimate of the data: a mixture of normal
distributions, one per observation with its (normalised) weight, all with standard deviation
``h`` (the bandwidth). Drawing from it is a smoothed bootstrap: pick an observation by weight
(:func:`~samplewright.distributions.steps.draw_indices`), add ``h`` times a standard normal draw.

Where the kernels live (``positive``):

- ``"log"``: smooth ``log x`` and draw ``exp(log x_i + log_shift + h Z)``: a mixture of
  lognormals, so draws are > 0 and the spread scales with the value. With ``log_shift = 0`` each
  kernel's *median* is its observation and its mean ``x_i exp(h^2 / 2)``, which raises the
  mixture's mean by the factor ``exp(h^2 / 2)``; with ``log_shift = -h^2 / 2`` (what ``fit``
  chooses by default, :mod:`samplewright.fitting.smoothed`) each kernel's *mean* is its
  observation, so the mixture's mean is exactly the (weighted) sample mean.
- ``"reflect"``: draw ``|x_i + h Z|`` (the kernel mass below 0 reflected about 0); needs
  every value >= 0. Density ``sum w_i (phi((x - x_i)/h) + phi((x + x_i)/h)) / h`` on x >= 0.
- ``"none"``: plain kernel on the data scale (draws can fall below the smallest value,
  negative ones included).

``cdf`` is the mixture of normal CDFs, ``quantile`` its numerical inverse (to about 1e-12 in
probability), ``mean`` and ``var`` are exact for the mixture: with shares ``w_i`` and ``m`` the
sample mean, on the log scale ``mean = exp(log_shift + h^2/2) sum w_i x_i`` and
``E[X^2] = exp(2 log_shift + 2 h^2) sum w_i x_i^2``; with ``log_shift = -h^2/2`` the variance is
the sample variance (divisor n) plus ``(exp(h^2) - 1) sum w_i x_i^2``. On the data scale
(``"none"``) the variance is the sample variance plus ``h^2``. ``cdf`` and ``pdf`` skip kernels
more than 9 bandwidths from the point (their share is below 1.2e-19 each), so a density deep in
a gap between observations may read 0; each value costs at most O(n). The native draw does not
invert the CDF: it picks indices and adds noise, so it is fast but not the inverse transform of
the same uniforms (a uniform source, by contrast, goes through ``quantile``). Choosing the
bandwidth is fitting: see :mod:`samplewright.fitting.smoothed`.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Literal

import numpy as np
from scipy import special

from samplewright.core.checks import check_sample
from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, Size, check_probabilities
from samplewright.distributions.choices import KERNEL_SCALES, BandwidthRule, KernelScale
from samplewright.distributions.steps import draw_indices

__all__ = ["SmoothedSampler"]

_CHUNK = 1 << 21  # kernel evaluations held in memory at once
_REACH = 9.0  # kernels are evaluated within this many bandwidths; Phi(-9) < 1.2e-19
_SQRT2PI = float(np.sqrt(2.0 * np.pi))


class SmoothedSampler(Sampler):
    """Gaussian kernel mixture on the data (``none``), its log (``log``) or reflected at 0.

    ``values`` are the observations on the data scale; ``bandwidth`` is the kernel standard
    deviation on the smoothing scale.

    >>> s = SmoothedSampler([0.0, 2.0], bandwidth=1.0, positive="none")
    >>> round(float(s.cdf(1.0)), 6), float(s.quantile(0.5)), s.mean, s.var
    (0.5, 1.0, 1.0, 2.0)
    """

    kind = "smoothed"

    def __init__(
        self,
        values: Any,
        weights: Any = None,
        *,
        bandwidth: float,
        positive: KernelScale = "none",
        bandwidth_rule: BandwidthRule | Literal["fixed"] = "fixed",
        log_shift: float = 0.0,
        method: str = "smoothed",
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        sample = check_sample(values, weights, what="smoothed")
        x = sample.values
        if positive not in KERNEL_SCALES:
            raise MethodError(
                f"positive: expected one of {', '.join(KERNEL_SCALES)}, found {positive!r}"
            )
        if positive == "log" and x.min() <= 0:
            raise MethodError(
                f"option 'positive' of smoothed: 'log' needs every value > 0, "
                f"smallest is {float(x.min())!r}"
            )
        if positive == "reflect" and x.min() < 0:
            raise MethodError(
                f"option 'positive' of smoothed: 'reflect' needs every value >= 0, "
                f"smallest is {float(x.min())!r}"
            )
        h = float(bandwidth)
        if not (np.isfinite(h) and h > 0):
            raise MethodError(
                f"option 'bandwidth' of smoothed: expected a positive number, found {bandwidth!r}"
            )
        shift = float(log_shift)
        if not np.isfinite(shift) or (shift != 0.0 and positive != "log"):
            raise MethodError(
                f"log_shift: expected 0 unless positive is 'log', or a finite number, found "
                f"{log_shift!r} with positive {positive!r}"
            )
        order = np.argsort(x, kind="stable")
        self.values = x[order]
        self.weights: np.ndarray | None = None
        if sample.weights is None:
            self._w = np.full(x.size, 1.0 / x.size)
            self._set_cum()
        else:
            w = sample.weights
            self._set_weights(w[order] / np.sum(w))
        self.bandwidth = h
        self.positive: KernelScale = positive
        self.log_shift = shift
        self._c = np.log(self.values) + shift if positive == "log" else self.values
        self._table: tuple[np.ndarray, np.ndarray] | None = None
        params = {
            "bandwidth": h,
            "bandwidth_rule": bandwidth_rule,
            "positive": positive,
            "log_shift": shift,
            "n": int(x.size),
            "weighted": sample.weights is not None,
        }
        super().__init__(method=method, params=params, diagnostics=diagnostics)

    def _set_weights(self, normalised: np.ndarray) -> None:
        self.weights = self._w = normalised
        self._set_cum()

    def _set_cum(self) -> None:
        self._cum = np.cumsum(self._w)
        self._cum[-1] = 1.0
        self._prefix = np.concatenate([[0.0], self._cum])

    # --- kernel sums on the smoothing scale ---

    def _kernel_sum(self, s: np.ndarray, fn: Any, below: bool) -> np.ndarray:
        """``sum_i w_i fn((s - c_i) / h)`` for each element of ``s``.

        Only centres within ``_REACH`` (9) bandwidths of a block of sorted queries are evaluated
        (or of the nearest end of the data, for queries beyond it); centres further below count
        fully when ``below`` (a CDF; the kernel mass neglected is below 1.2e-19 per centre), the
        rest as 0. Blocks are sized to bound memory.
        """
        flat = s.ravel()
        order = np.argsort(flat, kind="stable")
        qs = flat[order]
        res = np.empty(qs.size)
        c, w, h = self._c, self._w, self.bandwidth
        span = _REACH * h
        a, step = 0, 256
        while a < qs.size:
            b = min(qs.size, a + step)
            # beyond the data, reach from the nearest centre, so tails keep their relative accuracy
            lo = int(np.searchsorted(c, min(qs[a], c[-1]) - span, side="left"))
            hi = int(np.searchsorted(c, max(qs[b - 1], c[0]) + span, side="right"))
            if (b - a) * (hi - lo) > _CHUNK and b - a > 1:
                step = max(1, step // 2)
                continue
            part = fn((qs[a:b, None] - c[None, lo:hi]) / h) @ w[lo:hi]
            res[a:b] = part + self._prefix[lo] if below else part
            if 4 * (b - a) * (hi - lo) < _CHUNK:
                step *= 2
            a = b
        out = np.empty(flat.size)
        out[order] = res
        out[np.isnan(flat)] = np.nan
        return out.reshape(s.shape)

    def _scale_cdf(self, s: np.ndarray) -> np.ndarray:
        if self.positive == "reflect":
            s = np.maximum(s, 0.0)
            return np.maximum(
                self._kernel_sum(s, special.ndtr, True) - self._kernel_sum(-s, special.ndtr, True),
                0.0,
            )
        return self._kernel_sum(s, special.ndtr, True)

    def _scale_pdf(self, s: np.ndarray) -> np.ndarray:
        def phi(z: np.ndarray) -> np.ndarray:
            return np.exp(-0.5 * z * z) / _SQRT2PI

        dens = self._kernel_sum(s, phi, False) / self.bandwidth
        if self.positive == "reflect":
            dens = np.where(s >= 0, dens + self._kernel_sum(-s, phi, False) / self.bandwidth, 0.0)
        return dens

    # --- interface ---

    def cdf(self, x: Any) -> np.ndarray:
        x = np.asarray(x, dtype=np.float64)
        if self.positive == "log":
            with np.errstate(divide="ignore", invalid="ignore"):
                s = np.log(np.where(x > 0, x, 1.0))
            return np.where(x > 0, self._scale_cdf(s), 0.0)
        return self._scale_cdf(x)

    def pdf(self, x: Any) -> np.ndarray:
        x = np.asarray(x, dtype=np.float64)
        if self.positive == "log":
            pos = x > 0
            xs = np.where(pos, x, 1.0)
            return np.where(pos, self._scale_pdf(np.log(xs)) / xs, 0.0)
        return self._scale_pdf(x)

    def quantile(self, u: Any) -> np.ndarray:
        """Inverse CDF by safeguarded Newton steps inside a guaranteed bracket."""
        p = check_probabilities(u)
        flat = p.ravel()
        out = np.empty(flat.size)
        inner = (flat > 0) & (flat < 1)
        lo_end, hi_end = self._scale_support()
        out[flat <= 0] = lo_end
        out[flat >= 1] = hi_end
        if inner.any():
            out[inner] = self._invert(flat[inner])
        if self.positive == "log":
            out = np.exp(out)
        return out.reshape(p.shape)

    def _scale_support(self) -> tuple[float, float]:
        lo = 0.0 if self.positive == "reflect" else -np.inf
        return (lo, np.inf)

    def _invert(self, q: np.ndarray) -> np.ndarray:
        h, c0, c1 = self.bandwidth, float(self._c[0]), float(self._c[-1])
        # Every component CDF lies between those of the extreme centres, so the answer is inside.
        a = c0 + h * special.ndtri(q)
        if self.positive == "reflect":
            a = np.maximum(a, 0.0)
            b = c1 + h * special.ndtri(0.5 + 0.5 * q)
        else:
            b = c1 + h * special.ndtri(q)
        # A CDF table on a grid narrows the bracket and gives a close start (built once).
        if self._table is None:
            g = np.linspace(c0 - 8.5 * h, c1 + 8.5 * h, 1025)
            if self.positive == "reflect":
                g = np.unique(np.maximum(g, 0.0))
            self._table = (g, self._scale_cdf(g))
        g, gf = self._table
        j = np.searchsorted(gf, q, side="left")  # gf[j - 1] < q <= gf[j]
        inside = (j > 0) & (j < g.size)
        jj = np.clip(j, 1, g.size - 1)
        a = np.where(inside, np.maximum(a, g[jj - 1]), a)
        b = np.where(inside, np.minimum(b, g[jj]), b)
        with np.errstate(divide="ignore", invalid="ignore"):
            frac = (q - gf[jj - 1]) / (gf[jj] - gf[jj - 1])
        s = np.where(
            inside, g[jj - 1] + np.clip(frac, 0.0, 1.0) * (g[jj] - g[jj - 1]), 0.5 * (a + b)
        )
        s = np.clip(s, a, b)
        active = np.ones(q.size, dtype=bool)
        for _ in range(200):
            idx = np.flatnonzero(active)
            if idx.size == 0:
                break
            si = s[idx]
            f = self._scale_cdf(si) - q[idx]
            d = self._scale_pdf(si)
            a[idx] = np.where(f < 0, si, a[idx])
            b[idx] = np.where(f > 0, si, b[idx])
            with np.errstate(divide="ignore", invalid="ignore"):
                step = si - f / d
            ok = np.isfinite(step) & (step > a[idx]) & (step < b[idx])
            new = np.where(ok, step, 0.5 * (a[idx] + b[idx]))
            done = (np.abs(f) <= 1e-13) | (b[idx] - a[idx] <= 4e-16 * np.maximum(1.0, np.abs(si)))
            s[idx] = np.where(done, si, new)
            active[idx[done]] = False
        return s

    def _draw_native(self, size: Size, gen: np.random.Generator) -> np.ndarray:
        """Smoothed bootstrap: an observation by weight plus ``bandwidth`` times N(0, 1) noise."""
        cum = None if self.weights is None else self._cum
        s = self._c.take(draw_indices(self._c.size, size, gen, cum))
        s += self.bandwidth * gen.standard_normal(size)
        if self.positive == "log":
            return np.exp(s)
        if self.positive == "reflect":
            return np.abs(s)
        return s

    @property
    def mean(self) -> float:
        h, c, w = self.bandwidth, self._c, self._w
        if self.positive == "log":  # exp(log_shift + h^2/2) is exactly 1 for the mean-keeping shift
            return float(np.exp(self.log_shift + 0.5 * h * h) * np.dot(w, self.values))
        if self.positive == "reflect":  # E|N(c, h^2)| = c (1 - 2 Phi(-c/h)) + 2 h phi(c/h)
            z = c / h
            fold = c * (1.0 - 2.0 * special.ndtr(-z)) + 2.0 * h * np.exp(-0.5 * z * z) / _SQRT2PI
            return float(np.dot(w, fold))
        return float(np.dot(w, c))

    @property
    def var(self) -> float:
        h, w = self.bandwidth, self._w
        if self.positive == "log":  # E[X^2] = exp(2 log_shift + 2 h^2) sum w x^2
            m = float(np.dot(w, self.values))
            m2 = float(np.dot(w, self.values**2))
            g = np.exp(2.0 * self.log_shift + h * h)
            return float(g * (np.exp(h * h) * m2 - m * m))
        if self.positive == "reflect":
            return float(max(np.dot(w, self._c**2) + h * h - self.mean**2, 0.0))
        m = float(np.dot(w, self._c))
        return float(np.dot(w, (self._c - m) ** 2) + h * h)

    @property
    def support(self) -> tuple[float, float]:
        lo = {"log": 0.0, "reflect": 0.0, "none": -np.inf}[self.positive]
        return lo, float(np.inf)

    def payload(self) -> dict[str, np.ndarray]:
        cols = {"value": self.values}
        if self.weights is not None:
            cols["weight"] = self.weights
        return cols

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        p = described["params"]
        weighted = "weight" in payload
        s = cls(
            payload["value"],
            payload["weight"] if weighted else None,
            bandwidth=p["bandwidth"],
            positive=p["positive"],
            bandwidth_rule=p["bandwidth_rule"],
            log_shift=p.get("log_shift", 0.0),
            method=described["method"],
        )
        if weighted:  # stored weights are normalised already: keep them bit for bit
            order = np.argsort(np.asarray(payload["value"], dtype=np.float64), kind="stable")
            s._set_weights(np.asarray(payload["weight"], dtype=np.float64)[order])
        return s
