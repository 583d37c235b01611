"""Kernel-smoothed resampling: draw an observation, add Gaussian noise (method ``smoothed``).

The sampler is the Gaussian kernel density estimate of the data: a mixture of normal
distributions, one per observation with its (normalised) weight, all with standard deviation
``h`` (the bandwidth). Drawing from it is a smoothed bootstrap: pick an observation by weight,
add ``h`` times a standard normal draw.

Options
-------
``bandwidth``
    ``"silverman"`` (default), ``"scott"``, or a positive number (the kernel standard deviation
    on the smoothing scale, i.e. in log units when smoothing on the log scale). The rules, with
    ``n`` observations, ``s`` their standard deviation (divisor ``n - 1``) and ``IQR`` their
    interquartile range (numpy's default "linear" quantiles, Hyndman & Fan type 7):

    - ``silverman``: ``h = 0.9 * min(s, IQR / 1.34) * n ** (-1/5)``, Silverman's rule of thumb
      (Silverman 1986, *Density Estimation for Statistics and Data Analysis*, eq. 3.31). When
      ``IQR`` is 0 (many ties), ``s`` is used alone.
    - ``scott``: ``h = 1.06 * s * n ** (-1/5)``, the normal-reference rule (Scott 1992,
      *Multivariate Density Estimation*; Silverman 1986 eq. 3.28). The exact normal-reference
      constant is ``(4/3) ** (1/5) = 1.0592``; 1.06 is the published rounding. Note that scipy's
      ``gaussian_kde`` calls ``n ** (-1/5)`` (constant 1) "scott" and ``(3n/4) ** (-1/5)`` (the
      exact constant) "silverman".

    Weights are frequency weights here as everywhere in samplewright: ``n`` is the total weight,
    ``s`` and the quartiles are those of the data with each value repeated by its weight (type-7
    positions on the cumulative weights), so integer weights give the same bandwidth as repeated
    rows. A rule therefore needs a total weight of at least 2.
``positive``
    Where the kernel lives:

    - ``"auto"`` (default): ``"log"`` if every value is > 0, else ``"reflect"`` if every value
      is >= 0 (some are 0), else ``"none"``. Non-negative data thus never give negative draws.
    - ``"log"``: smooth ``log x`` and draw ``exp(log x_i + h Z)``: a mixture of lognormals, so
      draws are > 0 and the spread scales with the value. The bandwidth rules apply to ``log x``.
    - ``"reflect"``: draw ``|x_i + h Z|`` (the kernel mass below 0 reflected about 0); needs
      every value >= 0. Density ``sum w_i (phi((x - x_i)/h) + phi((x + x_i)/h)) / h`` on x >= 0.
    - ``"none"``: plain kernel on the data scale (draws can fall below the smallest value,
      negative ones included).

``cdf`` is the mixture of normal CDFs, ``quantile`` its numerical inverse (to about 1e-12 in
probability), ``mean`` and ``var`` are exact for the mixture. ``cdf`` and ``pdf`` skip kernels
more than 9 bandwidths from the point (their share is below 1.2e-19 each), so a density deep in
a gap between observations may read 0; each value costs at most O(n). ``draw`` does not
invert the CDF: it picks indices and adds noise, so it is fast but not the inverse transform of
the same uniforms. Censored data are refused.

>>> import numpy as np
>>> x = np.random.default_rng(1).gamma(2.0, 3.0, 400)
>>> s = fit_smoothed(x)
>>> s.params["positive"], s.params["bandwidth_rule"]
('log', 'silverman')
>>> bool(s.draw(10_000, rng=2).min() > 0)
True
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy import special

from samplewright.core.errors import MethodError
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.distributions.base import Sampler, Size, _check_u
from samplewright.fitting.registry import EXTENSION_METHODS, check_values

__all__ = ["BANDWIDTH_RULES", "POSITIVE_MODES", "SmoothedSampler", "bandwidth", "fit_smoothed"]

BANDWIDTH_RULES = ("silverman", "scott")
POSITIVE_MODES = ("auto", "log", "reflect", "none")
_OPTIONS = ("bandwidth", "positive")
_CHUNK = 1 << 21  # kernel evaluations held in memory at once
_REACH = 9.0  # kernels are evaluated within this many bandwidths; Phi(-9) < 1.2e-19
_SQRT2PI = float(np.sqrt(2.0 * np.pi))


def _weighted_type7(xs: np.ndarray, ws: np.ndarray, p: float) -> float:
    """Type-7 quantile of sorted ``xs`` repeated by frequency weights ``ws``."""
    cum = np.cumsum(ws)
    pos = (cum[-1] - 1.0) * p

    def at(t: float) -> float:
        return float(xs[min(int(np.searchsorted(cum, t, side="right")), xs.size - 1)])

    lo = np.floor(pos)
    return at(lo) + (pos - lo) * (at(lo + 1.0) - at(lo))


def bandwidth(values: Any, weights: Any = None, rule: str = "silverman") -> float:
    """Rule-of-thumb Gaussian kernel bandwidth of ``values`` (see the module docstring).

    >>> round(bandwidth([1.0, 2.0, 4.0, 7.0, 11.0]), 4)
    2.434
    """
    if rule not in BANDWIDTH_RULES:
        raise MethodError(
            f"option 'bandwidth' of smoothed: expected a positive number or one of "
            f"{', '.join(BANDWIDTH_RULES)}, found {rule!r}"
        )
    x = np.asarray(values, dtype=np.float64)
    w = np.ones_like(x) if weights is None else np.asarray(weights, dtype=np.float64)
    n = float(np.sum(w))
    if n < 2:
        raise MethodError(
            f"option 'bandwidth' of smoothed: rule {rule!r} needs a total weight of "
            f"at least 2, found {n:g}; pass bandwidth as a number"
        )
    m = float(np.sum(w * x) / n)
    sd = float(np.sqrt(np.sum(w * (x - m) ** 2) / (n - 1.0)))
    if not sd > 0:
        raise MethodError(
            f"option 'bandwidth' of smoothed: all values equal {float(x[0])!r}, so "
            f"rule {rule!r} gives 0; pass bandwidth as a number"
        )
    if rule == "scott":
        return float(1.06 * sd * n**-0.2)
    order = np.argsort(x, kind="stable")
    xs, ws = x[order], w[order]
    iqr = _weighted_type7(xs, ws, 0.75) - _weighted_type7(xs, ws, 0.25)
    spread = min(sd, iqr / 1.34) if iqr > 0 else sd
    return float(0.9 * spread * n**-0.2)


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
        positive: str = "none",
        bandwidth_rule: str = "fixed",
        method: str = "smoothed",
    ) -> None:
        x = np.asarray(values, dtype=np.float64).ravel()
        if x.size == 0 or not np.all(np.isfinite(x)):
            raise MethodError("smoothed: expected at least 1 value, all finite")
        if positive not in ("log", "reflect", "none"):
            raise MethodError(
                f"smoothed: positive must be 'log', 'reflect' or 'none', found {positive!r}"
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
        order = np.argsort(x, kind="stable")
        self.values = x[order]
        if weights is None:
            self.weights: np.ndarray | None = None
            self._w = np.full(x.size, 1.0 / x.size)
        else:
            w = np.asarray(weights, dtype=np.float64).ravel()
            if w.shape != x.shape or not np.all(np.isfinite(w) & (w > 0)):
                raise MethodError(f"weights: expected {x.size} finite weights > 0")
            self.weights = w[order] / np.sum(w)
            self._w = self.weights
        self._cum = np.cumsum(self._w)
        self._cum[-1] = 1.0
        self._prefix = np.concatenate([[0.0], self._cum])
        self.bandwidth, self.positive, self.method = h, positive, method
        self._c = np.log(self.values) if positive == "log" else self.values
        self._table: tuple[np.ndarray, np.ndarray] | None = None
        self.params = {
            "bandwidth": h,
            "bandwidth_rule": bandwidth_rule,
            "positive": positive,
            "n": int(x.size),
            "weighted": weights is not None,
        }

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
        p = _check_u(u)
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

    def draw(self, size: Size, rng: SeedLike = None) -> np.ndarray:
        """Smoothed bootstrap: an observation by weight plus ``bandwidth`` times N(0, 1) noise."""
        gen = make_rng(rng)
        if self.weights is None:
            idx = gen.integers(0, self._c.size, size)
        else:
            idx = np.minimum(
                np.searchsorted(self._cum, gen.random(size), side="right"), self._c.size - 1
            )
        s = self._c.take(idx) + self.bandwidth * gen.standard_normal(size)
        if self.positive == "log":
            return np.exp(s)
        if self.positive == "reflect":
            return np.abs(s)
        return s

    @property
    def mean(self) -> float:
        h, c, w = self.bandwidth, self._c, self._w
        if self.positive == "log":
            return float(np.exp(0.5 * h * h) * np.dot(w, self.values))
        if self.positive == "reflect":  # E|N(c, h^2)| = c (1 - 2 Phi(-c/h)) + 2 h phi(c/h)
            z = c / h
            fold = c * (1.0 - 2.0 * special.ndtr(-z)) + 2.0 * h * np.exp(-0.5 * z * z) / _SQRT2PI
            return float(np.dot(w, fold))
        return float(np.dot(w, c))

    @property
    def var(self) -> float:
        h, w = self.bandwidth, self._w
        if self.positive == "log":  # E[X^2] = exp(2 h^2) sum w x^2
            m = float(np.dot(w, self.values))
            m2 = float(np.dot(w, self.values**2))
            return float(np.exp(h * h) * (np.exp(h * h) * m2 - m * m))
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
            method=described["method"],
        )
        if weighted:  # stored weights are normalised already: keep them bit for bit
            order = np.argsort(np.asarray(payload["value"], dtype=np.float64), kind="stable")
            s.weights = np.asarray(payload["weight"], dtype=np.float64)[order]
            s._w = s.weights
            s._cum = np.cumsum(s._w)
            s._cum[-1] = 1.0
            s._prefix = np.concatenate([[0.0], s._cum])
        return s


def _resolve_positive(x: np.ndarray, positive: Any) -> str:
    if positive not in POSITIVE_MODES:
        raise MethodError(
            f"option 'positive' of smoothed: expected one of "
            f"{', '.join(POSITIVE_MODES)}, found {positive!r}"
        )
    if positive != "auto":
        return str(positive)
    if x.min() > 0:
        return "log"
    return "reflect" if x.min() == 0 else "none"


def fit_smoothed(
    values: Any, weights: Any = None, censored: Any = None, **options: Any
) -> SmoothedSampler:
    """Kernel-smoothed sampler of ``values`` (method ``smoothed``; options in module docstring).

    Raises
    ------
    MethodError
        Censored data, an unknown or bad option, or data the chosen rule cannot handle.
    """
    unknown = sorted(set(options) - set(_OPTIONS))
    if unknown:
        raise MethodError(
            f"unknown option {unknown[0]!r} for smoothed (allowed: {', '.join(_OPTIONS)})"
        )
    if censored is not None and np.any(censored):
        raise MethodError("method 'smoothed' does not handle censored data")
    x, w = check_values(values, weights)
    positive = _resolve_positive(x, options.get("positive", "auto"))
    if positive == "log" and x.min() <= 0:
        raise MethodError(
            f"option 'positive' of smoothed: 'log' needs every value > 0, smallest is "
            f"{float(x.min())!r}"
        )
    bw: Any = options.get("bandwidth", "silverman")
    total = x.size if w is None else float(np.sum(w))
    if isinstance(bw, str) and bw in BANDWIDTH_RULES and total >= 2 and np.ptp(x) == 0:
        raise MethodError(
            f"option 'bandwidth' of smoothed: all values equal {float(x[0])!r}, so rule {bw!r} "
            "gives 0; pass bandwidth as a number"
        )
    if isinstance(bw, str):
        h = bandwidth(np.log(x) if positive == "log" else x, w, bw)
        rule = bw
    elif (
        isinstance(bw, bool)
        or not isinstance(bw, int | float | np.number)
        or not bw > 0
        or not np.isfinite(bw)
    ):
        raise MethodError(
            f"option 'bandwidth' of smoothed: expected a positive number or one of "
            f"{', '.join(BANDWIDTH_RULES)}, found {bw!r}"
        )
    else:
        h, rule = float(bw), "fixed"
    return SmoothedSampler(x, w, bandwidth=h, positive=positive, bandwidth_rule=rule)


EXTENSION_METHODS["smoothed"] = fit_smoothed
