"""The data's own (optionally weighted) empirical distribution.

Frequency weights behave exactly like repeated rows: the step CDF is the cumulative sum of the
weights (exact for integer weights) divided once by their total, so the integer weights
``[2, 1]`` give bit for bit the CDF, quantiles and moments' atoms of the rows ``[a, a, b]``, and
a level the CDF reaches exactly (``0.8`` for 8 of 10 rows) selects that row, never the next
(:mod:`~samplewright.distributions.steps`). The artifact payload stores the weights as given
(rows of weight 0 dropped), so a loaded sampler rebuilds the same numbers.
"""

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
    ``weights`` holds the normalised shares (summing to 1), in the order of ``values``.

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
        presorted: bool = False,
    ) -> None:
        sample = check_sample(values, weights, what="empirical")
        x = sample.values
        self.weights: np.ndarray | None = None
        self._frequencies: np.ndarray | None = None
        self._cum_levels: np.ndarray | None = None  # unweighted: made when first needed
        # presorted: the caller vouches for the order (a payload whose content hash verified)
        if presorted:
            self.values = x
            if sample.weights is not None:
                self._set_weights(sample.weights)
        elif sample.weights is None:
            # a stable sort gives what a stable argsort and take give, bit for bit (equal
            # values, 0.0 and -0.0 included, keep their order), without the index array
            self.values = np.sort(x, kind="stable")
        else:
            order = np.argsort(x, kind="stable")
            self.values = x[order]
            self._set_weights(sample.weights[order])
        super().__init__(
            method=method,
            params={"n": int(x.size), "weighted": sample.weights is not None},
            diagnostics=diagnostics,
        )

    def _set_weights(self, frequencies: np.ndarray) -> None:
        """Weights in the order of ``values``: the cumulative weights over their total (exact
        for integer weights, as for repeated rows), and the normalised shares."""
        self._frequencies = frequencies
        running = np.cumsum(frequencies)
        total = running[-1]
        self._cum_levels = running / total
        self.weights = frequencies / total

    @property
    def _cum(self) -> np.ndarray:
        """The step CDF at each value: the cumulative weights over their total, or ``i / n``
        without weights (made on first use: drawing needs none of it, and a sampler loaded to
        draw from holds no array of the column's size beyond its values)."""
        if self._cum_levels is None:
            n = self.values.size
            self._cum_levels = np.arange(1, n + 1, dtype=np.float64) / n
        return self._cum_levels

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
        with np.errstate(over="ignore", invalid="ignore"):  # overflow: an infinite variance
            return float(np.dot(self._probs(), (self.values - self.mean) ** 2))

    @property
    def support(self) -> tuple[float, float]:
        return float(self.values[0]), float(self.values[-1])

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        # the stored weights are the frequency weights: the same cumulative sums as at the fit;
        # the values were stored sorted and the verified content hash covers their order
        return cls(
            payload["value"], payload.get("weight"), method=described["method"], presorted=True
        )

    def payload(self) -> dict[str, np.ndarray]:
        cols = {"value": self.values}
        if self._frequencies is not None:
            cols["weight"] = self._frequencies
        return cols
