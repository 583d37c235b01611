"""Samplers: distributions the simulation can draw from, all through one interface.

Every sampler has ``cdf``, ``quantile`` (the generalised inverse CDF
``Q(u) = inf{x : F(x) >= u}``), ``pdf`` and/or ``pmf``, ``mean``, ``var``, ``support`` and
``draw(size, rng=...)``. A sampler holds no randomness: ``rng`` is passed to each draw.

* :class:`EmpiricalSampler` is the data's own distribution: each observation carries mass 1/n (or
  its normalised weight); its CDF is exactly the ECDF. It never draws a value that was not seen.
* :class:`PiecewiseSampler` is a CDF given by knots (x, p): sloped segments are uniform mixtures,
  flat segments carry no mass, a vertical step (two knots with the same x) is an atom. Used for
  user-drawn CDFs (method ``knots``) and for the ``interpolated`` method.
* :class:`ParametricSampler` is a fitted family (see :mod:`samplewright.families`).

Each sampler can give its payload (the table stored in the artifact) and be rebuilt from it.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from typing import Any, ClassVar

import numpy as np

from .errors import KnotsError, MethodError
from .families import get_family
from .randomness import SeedLike, make_rng

__all__ = ["EmpiricalSampler", "ParametricSampler", "PiecewiseSampler", "Sampler", "from_knots"]

Size = int | tuple[int, ...]
SAMPLER_KINDS: dict[str, type[Sampler]] = {}  # payload layout -> class, filled by subclasses
_BLOCK = 1 << 17  # draws transformed per block (about 1 MB of float64)


class Sampler(ABC):
    """Common interface of all samplers."""

    method: str
    params: dict[str, Any]
    kind: ClassVar[str]  # payload layout: "empirical", "piecewise", "parametric"

    @abstractmethod
    def cdf(self, x: Any) -> np.ndarray: ...

    @abstractmethod
    def quantile(self, u: Any) -> np.ndarray: ...

    @property
    @abstractmethod
    def mean(self) -> float: ...

    @property
    @abstractmethod
    def var(self) -> float: ...

    @property
    @abstractmethod
    def support(self) -> tuple[float, float]: ...

    @abstractmethod
    def payload(self) -> dict[str, np.ndarray]:
        """Columns stored in the artifact's table (float64)."""

    @classmethod
    @abstractmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        """Rebuild from an artifact's table and its ``sampler`` metadata section."""

    def __init_subclass__(cls, **kwargs: Any) -> None:
        super().__init_subclass__(**kwargs)
        if "kind" in cls.__dict__:
            SAMPLER_KINDS[cls.kind] = cls

    @property
    def sd(self) -> float:
        return float(np.sqrt(self.var))

    def draw(self, size: Size, rng: SeedLike = None) -> np.ndarray:
        """``size`` draws by inverse transform of uniforms from ``rng``.

        The uniforms are drawn in one call (so the stream does not depend on the block size) and
        transformed in blocks that stay in cache, which keeps large draws fast.
        """
        u = make_rng(rng).random(size)
        flat = u.reshape(-1)
        if flat.size <= _BLOCK:
            return np.asarray(self.quantile(u), dtype=np.float64)
        out = np.empty(flat.size, dtype=np.float64)
        for start in range(0, flat.size, _BLOCK):
            out[start : start + _BLOCK] = self.quantile(flat[start : start + _BLOCK])
        return out.reshape(u.shape)

    def describe(self) -> dict[str, Any]:
        """Plain-JSON summary used in artifact metadata."""
        lo, hi = self.support
        return {
            "method": self.method,
            "params": self.params,
            "support": [_json_float(lo), _json_float(hi)],
            "mean": _json_float(self.mean),
            "sd": _json_float(self.sd),
        }

    def __repr__(self) -> str:
        return f"<{type(self).__name__} method={self.method!r} params={self.params!r}>"


def _json_float(v: float) -> float | str:
    v = float(v)
    if np.isfinite(v):
        return v
    return "inf" if v > 0 else ("-inf" if v < 0 else "nan")


def _check_u(u: Any) -> np.ndarray:
    u = np.asarray(u, dtype=np.float64)
    if np.any((u < 0) | (u > 1) | np.isnan(u)):
        raise ValueError("u: probabilities must lie in [0, 1]")
    return u


# ---------------------------------------------------------------------------------------------


class EmpiricalSampler(Sampler):
    """The (optionally weighted) empirical distribution of observed values.

    >>> s = EmpiricalSampler([3.0, 1.0, 2.0, 2.0])
    >>> s.cdf([1.0, 1.5, 2.0, 3.0]).tolist()
    [0.25, 0.25, 0.75, 1.0]
    >>> s.draw(5, rng=42).tolist()
    [1.0, 3.0, 2.0, 2.0, 2.0]
    """

    kind = "empirical"

    def __init__(self, values: Any, weights: Any = None, *, method: str = "empirical") -> None:
        x = np.asarray(values, dtype=np.float64).ravel()
        if x.size == 0:
            raise MethodError("empirical: at least 1 value is needed, found 0")
        if not np.all(np.isfinite(x)):
            raise MethodError("empirical: every value must be finite")
        order = np.argsort(x, kind="stable")
        self.values = x[order]
        if weights is None:
            self.weights: np.ndarray | None = None
            self._cum = np.arange(1, x.size + 1, dtype=np.float64) / x.size
        else:
            w = np.asarray(weights, dtype=np.float64).ravel()
            if w.shape != x.shape:
                raise MethodError(f"weights: expected {x.size} weights, found {w.size}")
            if not np.all(np.isfinite(w) & (w > 0)):
                raise MethodError("weights: every weight must be finite and > 0")
            w = w[order] / w.sum()
            self.weights = w
            self._cum = np.cumsum(w)
            self._cum[-1] = 1.0
        self.method = method
        self.params = {"n": int(x.size), "weighted": weights is not None}

    def _probs(self) -> np.ndarray:
        return (
            self.weights
            if self.weights is not None
            else np.full(self.values.size, 1.0 / self.values.size)
        )

    def cdf(self, x: Any) -> np.ndarray:
        idx = np.searchsorted(self.values, np.asarray(x, dtype=np.float64), side="right")
        return np.where(idx > 0, self._cum[np.maximum(idx - 1, 0)], 0.0)

    def pmf(self, x: Any) -> np.ndarray:
        x = np.asarray(x, dtype=np.float64)
        lo = np.searchsorted(self.values, x, side="left")
        hi = np.searchsorted(self.values, x, side="right")
        cum0 = np.concatenate([[0.0], self._cum])
        return cum0[hi] - cum0[lo]

    def quantile(self, u: Any) -> np.ndarray:
        u = _check_u(u)
        idx = np.searchsorted(self._cum, u, side="left")
        return self.values[np.minimum(idx, self.values.size - 1)]

    def draw(self, size: Size, rng: SeedLike = None) -> np.ndarray:
        gen = make_rng(rng)
        if self.weights is None:
            return self.values.take(gen.integers(0, self.values.size, size))
        return self.quantile(gen.random(size))

    @property
    def mean(self) -> float:
        return float(np.dot(self._probs(), self.values))

    @property
    def var(self) -> float:
        return float(np.dot(self._probs(), (self.values - self.mean) ** 2))

    @property
    def support(self) -> tuple[float, float]:
        return float(self.values[0]), float(self.values[-1])

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        sampler = cls(payload["value"], payload.get("weight"), method=described["method"])
        if sampler.weights is not None:
            # The stored weights are already normalised; dividing by their sum again can move
            # them by an ulp, which would change the CDF and the content hash on a rewrite.
            order = np.argsort(np.asarray(payload["value"], dtype=np.float64), kind="stable")
            w = np.asarray(payload["weight"], dtype=np.float64).ravel()[order]
            sampler.weights = w
            sampler._cum = np.cumsum(w)
            sampler._cum[-1] = 1.0
        return sampler

    def payload(self) -> dict[str, np.ndarray]:
        cols = {"value": self.values}
        if self.weights is not None:
            cols["weight"] = self.weights
        return cols


# ---------------------------------------------------------------------------------------------


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
        self.method = method
        dp = np.diff(self.p)
        self.params = {
            "n_knots": int(self.x.size),
            "n_atoms": int(np.sum((np.diff(self.x) == 0) & (dp > 0))),
        }

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
        u = _check_u(u)
        x, p = self.x, self.p
        if self._equal:
            m = x.size - 1
            t = u * m
            j = np.minimum(np.floor(t), m - 1).astype(np.intp)
            x0 = x[j]
            return x0 + (x[j + 1] - x0) * (t - j)
        k = np.searchsorted(p, u, side="left")  # first knot with p >= u
        k = np.clip(k, 1, x.size - 1)
        x0, x1, p0, p1 = x[k - 1], x[k], p[k - 1], p[k]
        with np.errstate(invalid="ignore", divide="ignore"):
            frac = np.where(p1 > p0, (u - p0) / (p1 - p0), 1.0)
        out = x0 + (x1 - x0) * frac
        # u == 0 maps to the lower end of the support (the last knot with p == 0).
        return np.where(u <= 0, self.support[0], out)

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


# ---------------------------------------------------------------------------------------------


class ParametricSampler(Sampler):
    """A fitted parametric family.

    >>> s = ParametricSampler("exponential", {"scale": 2.0, "loc": 0.0})
    >>> float(s.cdf(2.0)), float(s.mean)
    (0.6321205588285577, 2.0)
    """

    kind = "parametric"

    def __init__(
        self,
        family: str,
        params: dict[str, float],
        *,
        loglik: float | None = None,
        aic: float | None = None,
        bic: float | None = None,
        method: str | None = None,
    ) -> None:
        self.family = get_family(family)
        missing = set(self.family.param_names) - set(params)
        if missing:
            raise MethodError(f"{family}: parameters missing: {', '.join(sorted(missing))}")
        self.params = {k: float(params[k]) for k in self.family.param_names}
        self.extra_params = {k: v for k, v in params.items() if k not in self.params}
        self.method = method or family
        self.loglik = loglik
        self.aic = aic
        self.bic = bic
        self._dist = self.family.frozen({**self.params, **self.extra_params})

    def cdf(self, x: Any) -> np.ndarray:
        return np.asarray(self._dist.cdf(x))

    def quantile(self, u: Any) -> np.ndarray:
        return np.asarray(self._dist.ppf(_check_u(u)))

    def pdf(self, x: Any) -> np.ndarray:
        if self.family.discrete:
            raise AttributeError(f"{self.family.name} is discrete: use pmf")
        return np.asarray(self._dist.pdf(x))

    def pmf(self, x: Any) -> np.ndarray:
        if not self.family.discrete:
            raise AttributeError(f"{self.family.name} is continuous: use pdf")
        return np.asarray(self._dist.pmf(x))

    def draw(self, size: Size, rng: SeedLike = None) -> np.ndarray:
        return self.family.draw({**self.params, **self.extra_params}, size, make_rng(rng))

    @property
    def mean(self) -> float:
        return float(self._dist.mean())

    @property
    def var(self) -> float:
        return float(self._dist.var())

    @property
    def support(self) -> tuple[float, float]:
        lo, hi = self._dist.support()
        return float(lo), float(hi)

    def payload(self) -> dict[str, np.ndarray]:
        return {}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        return cls(
            described["family"],
            described["params"],
            loglik=described.get("loglik"),
            aic=described.get("aic"),
            bic=described.get("bic"),
            method=described["method"],
        )

    def describe(self) -> dict[str, Any]:
        out = super().describe()
        out["family"] = self.family.name
        out["params"] = {**self.params, **self.extra_params}
        for k in ("loglik", "aic", "bic"):
            v = getattr(self, k)
            if v is not None:
                out[k] = _json_float(v)
        return out
