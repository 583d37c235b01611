"""The data's own (optionally weighted) empirical distribution."""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.distributions.base import Sampler, Size, _check_u

__all__ = ["EmpiricalSampler"]


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
