"""A point mass plus any other sampler, stored as one artifact (kind ``point_mass``).

With an atom of probability ``p0`` at ``at`` and an inner sampler ``G`` for the rest::

    F(x) = p0 [x >= at] + (1 - p0) G(x)

Two methods make it:

* ``hurdle``: an atom (at 0 by default) plus a continuous severity, e.g. claims of which a share
  are exactly 0 and the rest lognormal;
* ``zero_inflated``: the zero-inflated Poisson or negative binomial (Lambert 1992), an atom at 0
  plus the count family itself (which has its own mass at 0), so
  ``P(0) = p0 + (1 - p0) f(0)`` and ``P(k) = (1 - p0) f(k)`` for k > 0.

The inner sampler may be of any kind (parametric, empirical, smoothed, spliced, ...; continuous
or discrete). The quantile is the generalised inverse ``Q(u) = inf{x : F(x) >= u}``: with
``g = (1 - p0) G(at)``, levels up to ``g`` map to ``G``'s quantile of ``u / (1 - p0)`` (never
above ``at``), levels in ``(g, g + p0]`` to ``at``, and higher ones to ``G``'s quantile of
``(u - p0) / (1 - p0)`` (never below ``at``). Native draws put ``at`` where a uniform falls below
``p0`` and draw the rest from the inner sampler's own native path.

Artifact layout: the inner sampler's payload columns, each prefixed ``inner_``; ``describe()``
nests the inner sampler's own description (with its ``kind``) under ``"inner"``, from which
:meth:`PointMassSampler.from_payload` rebuilds it.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.base import (
    SAMPLER_KINDS,
    Sampler,
    Size,
    check_probabilities,
    json_float,
)

__all__ = ["INNER_PREFIX", "PointMassSampler"]

INNER_PREFIX = "inner_"


class PointMassSampler(Sampler):
    """An atom of probability ``p0`` at ``at`` plus ``inner`` for the remaining ``1 - p0``.

    Parameters
    ----------
    inner : Sampler
        The distribution of the values away from the atom (it may put mass at ``at`` too, as a
        count family does at 0).
    at : float
        Where the atom sits (finite).
    p0 : float
        Its probability, in [0, 1).
    loglik, aic, bic : float, optional
        The fit's, when it came from one.
    method : str
        ``"hurdle"`` (default) or ``"zero_inflated"``, or another name that made it.

    >>> from samplewright.distributions.parametric import ParametricSampler
    >>> s = PointMassSampler(ParametricSampler("exponential", {"scale": 1.0, "loc": 0.0}), p0=0.5)
    >>> s.cdf([-1.0, 0.0]).tolist(), s.quantile([0.25, 0.5]).tolist(), s.mean
    ([0.0, 0.5], [0.0, 0.0], 0.5)
    """

    kind = "point_mass"

    def __init__(
        self,
        inner: Sampler,
        *,
        at: float = 0.0,
        p0: float,
        loglik: float | None = None,
        aic: float | None = None,
        bic: float | None = None,
        method: str = "hurdle",
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        if not isinstance(inner, Sampler):
            raise MethodError(f"inner: expected a sampler, found {type(inner).__name__}")
        for name, value in (("at", at), ("p0", p0)):
            if isinstance(value, bool) or not isinstance(value, int | float | np.number):
                raise MethodError(f"{name}: expected a number, found {type(value).__name__}")
        if not np.isfinite(at):
            raise MethodError(f"at: expected a finite number, found {at!r}")
        if not 0.0 <= p0 < 1.0:
            raise MethodError(f"p0: expected a probability in [0, 1), found {p0!r}")
        self.inner = inner
        self.at, self.p0 = float(at), float(p0)
        self.loglik, self.aic, self.bic = loglik, aic, bic
        params = {"at": self.at, "p0": self.p0, "inner": inner.method}
        super().__init__(method=method, params=params, diagnostics=diagnostics)

    def cdf(self, x: Any) -> np.ndarray:
        xx = np.asarray(x, dtype=np.float64)
        inner = np.asarray(self.inner.cdf(xx), dtype=np.float64)
        return self.p0 * (xx >= self.at) + (1.0 - self.p0) * inner

    def quantile(self, u: Any) -> np.ndarray:
        """Generalised inverse of ``cdf`` (see the module docstring)."""
        p = check_probabilities(u)
        flat = p.ravel()
        at, p0 = self.at, self.p0
        below = (1.0 - p0) * float(np.asarray(self.inner.cdf(np.array([at])))[0])
        out = np.full(flat.shape, at)
        low = flat <= below
        high = flat > below + p0
        if np.any(low):
            q = np.asarray(self.inner.quantile(flat[low] / (1.0 - p0)), dtype=np.float64)
            out[low] = np.minimum(q, at)
        if np.any(high):
            v = np.minimum((flat[high] - p0) / (1.0 - p0), 1.0)
            q = np.asarray(self.inner.quantile(v), dtype=np.float64)
            out[high] = np.maximum(q, at)
        return out.reshape(p.shape)

    def pmf(self, x: Any) -> np.ndarray:
        """Atoms: ``p0`` at ``at`` plus ``(1 - p0)`` times the inner sampler's own atoms."""
        xx = np.asarray(x, dtype=np.float64)
        try:
            inner = np.asarray(self.inner.pmf(xx), dtype=np.float64)  # type: ignore[attr-defined]
        except AttributeError:  # a continuous inner sampler has no atoms
            inner = np.zeros(xx.shape)
        return self.p0 * (xx == self.at) + (1.0 - self.p0) * inner

    def pdf(self, x: Any) -> np.ndarray:
        """Density of the continuous part, ``(1 - p0) g(x)``; AttributeError when the inner
        sampler has no density (a count family: use pmf)."""
        inner_pdf = self.inner.pdf  # type: ignore[attr-defined]
        return (1.0 - self.p0) * np.asarray(inner_pdf(x), dtype=np.float64)

    def _draw_native(self, size: Size, gen: np.random.Generator) -> np.ndarray:
        """``at`` where a uniform falls below ``p0``, the inner sampler's native draws elsewhere."""
        hit = gen.random(size) < self.p0
        out = np.full(hit.shape, self.at)
        rest = ~hit
        n = int(np.count_nonzero(rest))
        if n:
            out[rest] = self.inner.draw(n, rng=gen)
        return out

    @property
    def mean(self) -> float:
        m = float(self.inner.mean)
        if self.p0 == 0.0:
            return m
        return self.p0 * self.at + (1.0 - self.p0) * m

    @property
    def var(self) -> float:
        """``(1 - p0) v + p0 (1 - p0) (at - m)^2`` with the inner mean m and variance v."""
        m, v = float(self.inner.mean), float(self.inner.var)
        if self.p0 == 0.0:
            return v
        if not (np.isfinite(m) and np.isfinite(v)):
            return float("inf")
        return (1.0 - self.p0) * v + self.p0 * (1.0 - self.p0) * (self.at - m) ** 2

    @property
    def support(self) -> tuple[float, float]:
        lo, hi = self.inner.support
        if self.p0 == 0.0:
            return float(lo), float(hi)
        return min(float(lo), self.at), max(float(hi), self.at)

    def payload(self) -> dict[str, np.ndarray]:
        return {INNER_PREFIX + k: v for k, v in self.inner.payload().items()}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        inner_described = dict(described["inner"])
        kind = inner_described.get("kind")
        inner_cls = SAMPLER_KINDS.get(str(kind))
        if inner_cls is None:
            raise MethodError(f"inner: sampler kind {kind!r} is not known (module not loaded?)")
        n = len(INNER_PREFIX)
        inner_payload = {k[n:]: v for k, v in payload.items() if k.startswith(INNER_PREFIX)}
        p = described["params"]
        return cls(
            inner_cls.from_payload(inner_payload, inner_described),
            at=p["at"],
            p0=p["p0"],
            loglik=described.get("loglik"),
            aic=described.get("aic"),
            bic=described.get("bic"),
            method=described["method"],
        )

    def describe(self) -> dict[str, Any]:
        out = super().describe()
        out["inner"] = {"kind": self.inner.kind, **self.inner.describe()}
        for k in ("loglik", "aic", "bic"):
            v = getattr(self, k)
            if v is not None:
                out[k] = json_float(v)
        return out
