"""The data's own (optionally weighted) empirical distribution."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.core.checks import check_sample
from samplewright.distributions.base import Sampler, Size, check_probabilities
from samplewright.distributions.steps import draw_indices, step_cdf, step_index, step_mass

__all__ = ["EmpiricalSampler"]


class EmpiricalSampler(Sampler):
    """The (optionally weighted) empirical distribution of observed values.

    Weights are frequency weights (:func:`~samplewright.core.checks.check_sample`: rows of
    weight 0 are dropped). Draws pick rows: uniformly, or by the weighted step CDF.

    >>> s = EmpiricalSampler([3.0, 1.0, 2.0, 2.0])
    >>> s.cdf([1.0, 1.5, 2.0, 3.0]).tolist()
    [0.25, 0.25, 0.75, 1.0]
    >>> s.draw(5, rng=42).tolist()
    [1.0, 3.0, 2.0, 2.0, 2.0]
    """

    kind = "empirical"

    def __init__(
        self,
        values: Any,
        weights: Any = None,
        *,
        method: str = "empirical",
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        sample = check_sample(values, weights, what="empirical")
        x = sample.values
        order = np.argsort(x, kind="stable")
        self.values = x[order]
        self.weights: np.ndarray | None = None
        if sample.weights is None:
            self._cum = np.arange(1, x.size + 1, dtype=np.float64) / x.size
        else:  # normalised by the sum in the given order (the sum's rounding depends on it)
            self._set_weights(sample.weights[order] / sample.weights.sum())
        super().__init__(
            method=method,
            params={"n": int(x.size), "weighted": sample.weights is not None},
            diagnostics=diagnostics,
        )

    def _set_weights(self, normalised: np.ndarray) -> None:
        self.weights = normalised
        self._cum = np.cumsum(normalised)
        self._cum[-1] = 1.0

    def _probs(self) -> np.ndarray:
        return (
            self.weights
            if self.weights is not None
            else np.full(self.values.size, 1.0 / self.values.size)
        )

    def cdf(self, x: Any) -> np.ndarray:
        return step_cdf(self.values, self._cum, x)

    def pmf(self, x: Any) -> np.ndarray:
        return step_mass(self.values, self._cum, x)

    def quantile(self, u: Any) -> np.ndarray:
        return self.values[step_index(self._cum, check_probabilities(u))]

    def _draw_native(self, size: Size, gen: np.random.Generator) -> np.ndarray:
        cum = None if self.weights is None else self._cum
        return self.values.take(draw_indices(self.values.size, size, gen, cum))

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
            sampler._set_weights(np.asarray(payload["weight"], dtype=np.float64).ravel()[order])
        return sampler

    def payload(self) -> dict[str, np.ndarray]:
        cols = {"value": self.values}
        if self.weights is not None:
            cols["weight"] = self.weights
        return cols
