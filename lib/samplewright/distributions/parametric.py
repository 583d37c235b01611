"""A fitted parametric family as a sampler."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, Size, check_probabilities, json_float
from samplewright.distributions.families import get_family

__all__ = ["ParametricSampler"]


class ParametricSampler(Sampler):
    """A fitted parametric family.

    ``params`` must name exactly the family's parameters. ``loglik``, ``aic`` and ``bic`` are
    the fit's, when it came from one. Draws use the family's native numpy generator.

    >>> s = ParametricSampler("exponential", {"scale": 2.0, "loc": 0.0})
    >>> float(s.cdf(2.0)), float(s.mean)
    (0.6321205588285577, 2.0)
    """

    kind = "parametric"

    def __init__(
        self,
        family: str,
        params: Mapping[str, float],
        *,
        loglik: float | None = None,
        aic: float | None = None,
        bic: float | None = None,
        method: str | None = None,
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        self.family = get_family(family)
        missing = set(self.family.param_names) - set(params)
        if missing:
            raise MethodError(f"{family}: parameters missing: {', '.join(sorted(missing))}")
        extra = set(params) - set(self.family.param_names)
        if extra:
            raise MethodError(f"{family}: unknown parameters: {', '.join(sorted(extra))}")
        super().__init__(
            method=method or family,
            params={k: float(params[k]) for k in self.family.param_names},
            diagnostics=diagnostics,
        )
        self.loglik = loglik
        self.aic = aic
        self.bic = bic
        self._dist = self.family.frozen(self.params)

    def cdf(self, x: Any) -> np.ndarray:
        return np.asarray(self._dist.cdf(x))

    def quantile(self, u: Any) -> np.ndarray:
        return np.asarray(self._dist.ppf(check_probabilities(u)))

    def pdf(self, x: Any) -> np.ndarray:
        if self.family.discrete:
            raise AttributeError(f"{self.family.name} is discrete: use pmf")
        return np.asarray(self._dist.pdf(x))

    def pmf(self, x: Any) -> np.ndarray:
        if not self.family.discrete:
            raise AttributeError(f"{self.family.name} is continuous: use pdf")
        return np.asarray(self._dist.pmf(x))

    def _draw_native(self, size: Size, gen: np.random.Generator) -> np.ndarray:
        return self.family.draw(self.params, size, gen)

    @property
    def mean(self) -> float:
        with np.errstate(over="ignore", invalid="ignore"):  # an overflow is an infinite mean
            return float(self._dist.mean())

    @property
    def var(self) -> float:
        with np.errstate(over="ignore", invalid="ignore"):  # an overflow is an infinite variance
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
        for k in ("loglik", "aic", "bic"):
            v = getattr(self, k)
            if v is not None:
                out[k] = json_float(v)
        return out
