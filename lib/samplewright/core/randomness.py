"""Where randomness comes from: one helper turns seed-like input into a numpy Generator.

Samplers never hold randomness; every ``draw`` takes an ``rng``. Pipelines derive one stream per
purpose from a root seed and a stable name (:func:`stream_rng`), so draws are the same on a laptop
and on a cluster whatever order the jobs run in. No global numpy random state is used anywhere.

A sampler's ``draw`` also accepts a :class:`UniformSource` instead of an ``rng``: anything with a
method ``uniforms(shape)`` returning floats in [0, 1) (quasi-random points, uniforms coupled by a
copula). The sampler then transforms those uniforms by its quantile function.

Reproducibility: the same artifact, the same seed and the same stream name give identical draws
with the same numpy version. numpy's policy allows the output of ``Generator`` methods to change
between numpy feature releases (NEP 19); the bit streams of ``SeedSequence`` and ``PCG64`` are
stable.
"""

from __future__ import annotations

import hashlib
from typing import Protocol, runtime_checkable

import numpy as np

__all__ = ["SeedLike", "UniformSource", "make_rng", "stable_int", "stream_rng"]

SeedLike = int | np.random.SeedSequence | np.random.Generator | None


@runtime_checkable
class UniformSource(Protocol):
    """A source of uniforms on [0, 1) that a sampler transforms by its quantile function.

    ``uniforms(shape)`` returns a float64 array of exactly that shape. Quasi-random sequences and
    copulas (uniforms that carry a dependence between inputs) are such sources.
    """

    def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
        """``shape`` uniforms in [0, 1)."""
        ...


def make_rng(rng: SeedLike = None) -> np.random.Generator:
    """Return a Generator from ``None`` (fresh OS entropy), an int, a SeedSequence or a Generator.

    >>> make_rng(7).integers(100)
    np.int64(94)
    """
    if isinstance(rng, np.random.Generator):
        return rng
    if isinstance(rng, bool):
        raise TypeError("rng: expected None, an int, a SeedSequence or a Generator, found bool")
    if rng is None or isinstance(rng, int | np.integer | np.random.SeedSequence):
        return np.random.default_rng(rng)
    raise TypeError(
        f"rng: expected None, an int, a SeedSequence or a Generator, found {type(rng).__name__}"
    )


def stable_int(*parts: str | int) -> int:
    """A 64-bit integer from text parts, identical across processes, machines and Python runs.

    Python's ``hash`` of a string changes per process; this does not.

    >>> stable_int("repair_hours", "draws")
    8475149721514126860
    """
    h = hashlib.sha256(b"samplewright-stream-v1")
    for part in parts:
        if isinstance(part, bool) or not isinstance(part, str | int | np.integer):
            raise TypeError(f"stream name parts: expected str or int, found {type(part).__name__}")
        kind = b"s" if isinstance(part, str) else b"i"
        raw = str(part).encode()
        # type tag and length prefix: ("ab", "c") and ("a", "bc"), 1 and "1" never collide
        h.update(kind + len(raw).to_bytes(8, "little") + raw)
    return int.from_bytes(h.digest()[:8], "little")


def stream_rng(root_seed: int, *name: str | int) -> np.random.Generator:
    """A Generator for one named stream under a root seed (independent of job order)."""
    if isinstance(root_seed, bool) or not isinstance(root_seed, int | np.integer):
        raise TypeError(f"root_seed: expected an int, found {type(root_seed).__name__}")
    if root_seed < 0:
        raise ValueError(f"root_seed: expected a non-negative int, found {root_seed}")
    return np.random.default_rng(np.random.SeedSequence([stable_int(*name), int(root_seed)]))
