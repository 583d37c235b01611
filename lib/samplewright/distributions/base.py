"""The sampler interface: distributions the simulation can draw from, all through one interface.

Every sampler has ``cdf``, ``quantile`` (the generalised inverse CDF
``Q(u) = inf{x : F(x) >= u}``), ``pdf`` and/or ``pmf``, ``mean``, ``var``, ``support`` and
``draw(size, rng=...)``. A sampler holds no randomness: ``rng`` is passed to each draw.

* :class:`EmpiricalSampler` is the data's own distribution: each observation carries mass 1/n (or
  its normalised weight); its CDF is exactly the ECDF. It never draws a value that was not seen.
* :class:`PiecewiseSampler` is a CDF given by knots (x, p): sloped segments are uniform mixtures,
  flat segments carry no mass, a vertical step (two knots with the same x) is an atom. Used for
  user-drawn CDFs (method ``knots``) and for the ``interpolated`` method.
* :class:`ParametricSampler` is a fitted family (see :mod:`samplewright.distributions.families`).

Each sampler can give its payload (the table stored in the artifact) and be rebuilt from it.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from typing import Any, ClassVar

import numpy as np

from samplewright.core.randomness import SeedLike, make_rng

__all__ = ["SAMPLER_KINDS", "Sampler", "Size"]

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
