"""The sampler interface: distributions the simulation can draw from, all through one interface.

Every sampler has ``cdf``, ``quantile`` (the generalised inverse CDF
``Q(u) = inf{x : F(x) >= u}``), ``pdf`` and/or ``pmf``, ``mean``, ``var``, ``support`` and
``draw(size, rng=...)``. A sampler holds no randomness: ``rng`` is passed to each draw.

``draw`` is defined here once and no kind overrides it (template method): with a
:class:`~samplewright.core.randomness.UniformSource` it returns ``quantile`` of the source's
uniforms; with anything seed-like it turns it into a numpy Generator and calls the kind's
``_draw_native(size, gen)``. The default native path is the inverse transform of
``gen.random(size)``; a kind overrides it only where its own generator is faster (an index draw
for empirical samplers, numpy's generators for parametric families).

``draw(size, rng=..., sequence=...)`` with ``sequence`` ``"sobol"``, ``"halton"`` or
``"latin_hypercube"`` takes its uniforms from
:func:`~samplewright.core.uniforms.draw_uniforms` (scrambled from the Generator, so the same
stream gives the same points; a Sobol' size that is not a power of two warns) and returns their
``quantile``, for every kind, discrete ones and mixtures included: the native path, which
consumes the stream in its own way, is bypassed. ``sequence="random"`` (the default) is the
native path, so its draws are what they always were. A kind whose ``quantile`` raises
NotImplementedError is refused with a MethodError naming it. ``scipy.stats.qmc`` is imported only
when a quasi-random sequence is asked for, so loading and plain draws stay light.

Every sampler also declares what a fit recorded about it (``diagnostics``) and, once loaded from
an artifact, the artifact's metadata (``metadata``).

The kinds live in the modules of this package, one per payload layout: ``empirical``,
``piecewise``, ``parametric``, ``spliced``, ``smoothed``, ``kaplan_meier``, ``empirical_pmf``.
Each can give its payload (the table stored in the artifact) and be rebuilt from it.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any, ClassVar, final

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.core.randomness import SeedLike, UniformSource, make_rng

if TYPE_CHECKING:  # pragma: no cover - core.uniforms imports scipy.stats.qmc
    from samplewright.core.uniforms import UniformSequence

__all__ = ["SAMPLER_KINDS", "Sampler", "Size", "check_probabilities", "json_float"]

Size = int | tuple[int, ...]
# payload layout -> class, filled as the kind modules are imported (the catalog in
# samplewright.fitting.catalog names the module of each kind, so a loader imports only that one)
SAMPLER_KINDS: dict[str, type[Sampler]] = {}
_BLOCK = 1 << 17  # draws transformed per block (about 1 MB of float64)


class Sampler(ABC):
    """Common interface of all samplers.

    Attributes
    ----------
    method : str
        The method that made it (``"gamma"``, ``"empirical"``, ``"auto"``, ...).
    params : dict
        Plain-JSON parameters, stored in the artifact.
    kind : str
        Payload layout (class attribute).
    metadata : dict
        The artifact's metadata when the sampler was loaded from one, else empty.
    """

    method: str
    params: dict[str, Any]
    metadata: dict[str, Any]
    kind: ClassVar[str]
    _diagnostics: dict[str, Any]

    def __init__(
        self,
        *,
        method: str,
        params: dict[str, Any],
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        self.method = method
        self.params = params
        self._diagnostics = dict(diagnostics or {})
        self.metadata = {}

    @property
    def diagnostics(self) -> dict[str, Any]:
        """Plain-JSON sections the fit recorded (threshold scans, rankings, dispersion, ...).

        A sampler loaded from an artifact that it did not rebuild them for returns the
        artifact's recorded diagnostics.
        """
        if not self._diagnostics and self.metadata.get("diagnostics"):
            return dict(self.metadata["diagnostics"])
        return self._diagnostics

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

    @final
    def draw(
        self,
        size: Size,
        rng: SeedLike | UniformSource = None,
        *,
        sequence: UniformSequence = "random",
    ) -> np.ndarray:
        """``size`` draws: from ``rng`` (None, an int, a SeedSequence or a Generator) by the
        kind's native path, or ``quantile`` of the uniforms of a :class:`UniformSource`.

        Parameters
        ----------
        size : int or tuple of int
            Number of draws, or their shape.
        rng : None, int, SeedSequence, Generator or UniformSource
            Source of randomness (of the scrambling, for a quasi-random ``sequence``), or a
            source of ready uniforms (then ``sequence`` must be ``"random"``).
        sequence : {"random", "sobol", "halton", "latin_hypercube"}
            ``"random"``: the kind's native path (the draws it always gave). Otherwise
            ``quantile`` of that scrambled quasi-random sequence's points, from
            :func:`samplewright.core.uniforms.draw_uniforms`.

        >>> from samplewright.distributions.piecewise import from_knots
        >>> class Mid:
        ...     def uniforms(self, shape):
        ...         return np.full(shape, 0.5)
        >>> from_knots([0.0, 4.0], [0.0, 1.0]).draw(2, rng=Mid()).tolist()
        [2.0, 2.0]
        >>> from_knots([0.0, 4.0], [0.0, 1.0]).draw(4, rng=7, sequence="sobol").round(2).tolist()
        [1.66, 2.58, 3.48, 0.28]
        """
        if sequence != "random":
            return self._draw_sequence(size, rng, sequence)
        if isinstance(rng, UniformSource):
            shape = (size,) if isinstance(size, int | np.integer) else tuple(size)
            u = np.asarray(rng.uniforms(shape), dtype=np.float64)
            if u.shape != shape:
                raise ValueError(f"rng: the uniform source gave shape {u.shape}, expected {shape}")
            return self._inverse_transform(u)
        return self._draw_native(size, make_rng(rng))

    @final
    def _draw_sequence(
        self, size: Size, rng: SeedLike | UniformSource, sequence: UniformSequence
    ) -> np.ndarray:
        """``quantile`` of quasi-random uniforms (``draw`` with a sequence other than random)."""
        from samplewright.core.uniforms import SEQUENCES, draw_uniforms

        if sequence not in SEQUENCES:
            raise MethodError(
                f"sequence: expected one of {', '.join(SEQUENCES)}, found {sequence!r}"
            )
        if isinstance(rng, UniformSource):
            raise MethodError(
                f"sequence: {sequence!r} needs a seed-like rng to scramble it, found a uniform "
                f"source ({type(rng).__name__}), which brings its own uniforms"
            )
        gen = make_rng(rng)
        # draw_uniforms checks size; a Sobol' size that is not a power of two warns there
        u = draw_uniforms(size, rng=gen, sequence=sequence)
        try:
            return self._inverse_transform(u)
        except NotImplementedError:
            kind = getattr(self, "kind", type(self).__name__)
            raise MethodError(
                f"sequence: sampler kind {kind!r} has no quantile function, so it cannot "
                f"draw from {sequence!r}; use sequence='random'"
            ) from None

    def _draw_native(self, size: Size, gen: np.random.Generator) -> np.ndarray:
        """Draws from a Generator; the default is the inverse transform of ``gen.random``.

        The uniforms are drawn in one call (so the stream does not depend on the block size).
        """
        return self._inverse_transform(gen.random(size))

    def _inverse_transform(self, u: np.ndarray) -> np.ndarray:
        """``quantile(u)`` in blocks that stay in cache, which keeps large draws fast."""
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
            "support": [json_float(lo), json_float(hi)],
            "mean": json_float(self.mean),
            "sd": json_float(self.sd),
        }

    def __repr__(self) -> str:
        return f"<{type(self).__name__} method={self.method!r} params={self.params!r}>"


def json_float(v: float) -> float | str:
    """``v`` as a float, or ``"inf"``, ``"-inf"``, ``"nan"`` (JSON has no such numbers)."""
    v = float(v)
    if np.isfinite(v):
        return v
    return "inf" if v > 0 else ("-inf" if v < 0 else "nan")


def check_probabilities(u: Any) -> np.ndarray:
    """``u`` as a float64 array, refused unless every element lies in [0, 1].

    Two reductions instead of element masks: NaN fails both comparisons.
    """
    p = np.asarray(u, dtype=np.float64)
    if p.size and not (p.min() >= 0.0 and p.max() <= 1.0):
        raise ValueError("u: probabilities must lie in [0, 1]")
    return p
