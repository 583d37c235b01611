"""The observed counts' own pmf: distinct values and their shares (method ``empirical_pmf``).

It never draws a count that was not observed. Draws, like those of
:class:`~samplewright.distributions.empirical.EmpiricalSampler`, are float64 holding whole
numbers. Tabulating counts is in :mod:`samplewright.fitting.counts`.

``quantile(u)`` is ``inf{k : F(k) >= u}``; a level within
:data:`~samplewright.distributions.steps.LEVEL_TOLERANCE` (1e-12) above a cumulative share
selects that count (``0.8`` is the 4th of 5 equally likely counts, even though the running sum
of the shares stores it as ``0.7999999999999999``). Integer frequency weights give exactly the
shares of repeated counts (:func:`~samplewright.fitting.counts.tabulate`).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, check_probabilities
from samplewright.distributions.steps import step_cdf, step_index, step_mass

__all__ = ["EmpiricalPmfSampler"]

_NAME = "empirical_pmf"


class EmpiricalPmfSampler(Sampler):
    """Distinct values (increasing) with their shares ``probs`` (> 0, summing to 1).

    ``n_obs`` is the total frequency weight they came from (kept for the dispersion check).

    >>> s = EmpiricalPmfSampler([0.0, 2.0, 5.0], [0.25, 0.5, 0.25], n_obs=4)
    >>> s.pmf([0, 1, 2]).tolist(), s.cdf(4.5).item(), s.quantile(0.5).item()
    ([0.25, 0.0, 0.5], 0.75, 2.0)
    """

    kind = "empirical_pmf"

    def __init__(
        self,
        values: Any,
        probs: Any,
        n_obs: float,
        *,
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        self.values = np.asarray(values, dtype=np.float64).ravel()
        self.probs = np.asarray(probs, dtype=np.float64).ravel()
        if self.values.size == 0 or self.values.shape != self.probs.shape:
            raise MethodError(
                f"{_NAME}: values and probabilities must be equally long and non-empty, found "
                f"{self.values.size} and {self.probs.size}"
            )
        if np.any(np.diff(self.values) <= 0) or not np.all(self.probs > 0):
            raise MethodError(f"{_NAME}: values must increase and probabilities must be > 0")
        self._cum = np.cumsum(self.probs)
        self._cum[-1] = 1.0
        self.n_obs = float(n_obs)
        params = {"n_values": int(self.values.size), "n_obs": self.n_obs}
        super().__init__(method=_NAME, params=params, diagnostics=diagnostics)

    def pmf(self, x: Any) -> np.ndarray:
        return step_mass(self.values, self._cum, x)

    def cdf(self, x: Any) -> np.ndarray:
        return step_cdf(self.values, self._cum, x)

    def quantile(self, u: Any) -> np.ndarray:
        return self.values[step_index(self._cum, check_probabilities(u))]

    @property
    def mean(self) -> float:
        return float(np.dot(self.probs, self.values))

    @property
    def var(self) -> float:
        return float(np.dot(self.probs, (self.values - self.mean) ** 2))

    @property
    def support(self) -> tuple[float, float]:
        return float(self.values[0]), float(self.values[-1])

    def payload(self) -> dict[str, np.ndarray]:
        return {"value": self.values, "prob": self.probs}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        return cls(payload["value"], payload["prob"], described["params"]["n_obs"])
