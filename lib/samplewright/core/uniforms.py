"""Where uniforms come from: plain pseudo-random numbers or a quasi-random sequence.

Every sampler draws by inverse transform, ``quantile(u)``; this module decides what ``u`` is. The
default, ``sequence="random"``, is exactly ``make_rng(rng).random(shape)``, so draws made before
quasi-random sources existed keep their values. The other sources come from :mod:`scipy.stats.qmc`:

``"sobol"``
    Sobol' points (Joe & Kuo direction numbers, as in scipy), scrambled by default with a linear
    matrix scramble and digital shift, 53 bits so every value is a float64 multiple of 2**-53.
    Their balance properties hold only for a power-of-two number of points: another size gets a
    :class:`UserWarning` naming the two nearest powers.
``"halton"``
    Halton points, scrambled by default (random digit permutations).
``"latin_hypercube"``
    One point in each of ``n`` equal strata of every coordinate, placed uniformly inside its
    stratum; always randomised.

Scrambling draws its randomness from the Generator given as ``rng`` (the same stream, in the same
state, gives the same points, and the stream advances). ``scramble=False`` gives the deterministic
textbook sequence, which ignores ``rng``; it is refused for ``"random"`` and
``"latin_hypercube"``.

Quasi-random values are strictly inside (0, 1), so a quantile function never meets an infinite
endpoint: an exact 0 (the first point of an unscrambled Sobol' or Halton sequence; otherwise an
event of probability about 2**-53) is replaced by ``0.5 / n``, the middle of the first of ``n``
equal strata that this point stands for, and a value that rounds to 1 is replaced by the largest
float64 below 1. ``"random"`` is returned as numpy gives it, on [0, 1), bit for bit.

Randomised quasi-Monte Carlo error bars come from independent scramblings:
:func:`replicate_uniforms` gives ``n_replicates`` of them from spawned streams and
:func:`estimate_mean` turns a function of the uniforms into a mean with a standard error.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal, cast

import numpy as np
from scipy.stats import qmc

from samplewright.core.errors import MethodError
from samplewright.core.randomness import SeedLike, make_rng

__all__ = [
    "SEQUENCES",
    "ReplicatedMeanResult",
    "UniformSequence",
    "draw_uniforms",
    "estimate_mean",
    "replicate_uniforms",
]

UniformSequence = Literal["random", "sobol", "halton", "latin_hypercube"]
SEQUENCES: tuple[UniformSequence, ...] = ("random", "sobol", "halton", "latin_hypercube")

_SOBOL_BITS = 53  # every value a float64 multiple of 2**-53: no quantile resolution lost
_SOBOL_MAX_DIMENSION = 21201  # scipy's table of direction numbers
_BELOW_ONE = float(np.nextafter(1.0, 0.0))


@dataclass(frozen=True)
class ReplicatedMeanResult:
    """A mean estimated from independent replicates of a uniform source.

    Attributes
    ----------
    estimate : float
        Mean of the replicate means.
    standard_error : float
        Sample standard deviation of the replicate means over ``sqrt(n_replicates)``; for a
        scrambled sequence this is the randomised quasi-Monte Carlo error bar.
    replicate_means : numpy.ndarray
        The mean from each replicate, in the order of the spawned streams.
    sequence : str
        The uniform source used.
    n_points : int
        Points per replicate.
    """

    estimate: float
    standard_error: float
    replicate_means: np.ndarray
    sequence: UniformSequence
    n_points: int


def draw_uniforms(
    size: int | tuple[int, ...],
    *,
    rng: SeedLike = None,
    sequence: UniformSequence = "random",
    dimension: int = 1,
    scramble: bool = True,
) -> np.ndarray:
    """Uniforms for inverse-transform draws, pseudo-random or quasi-random.

    Parameters
    ----------
    size : int or tuple of int
        Number of points, or the shape of the points for ``dimension=1``.
    rng : None, int, SeedSequence or Generator
        Source of randomness (of the scrambling, for a quasi-random sequence).
    sequence : {"random", "sobol", "halton", "latin_hypercube"}
        Where the uniforms come from (see the module notes).
    dimension : int
        Number of coordinates of each point.
    scramble : bool
        Randomise the Sobol' or Halton sequence; ``False`` only for those two.

    Returns
    -------
    numpy.ndarray
        Shape ``size`` when ``dimension`` is 1, else ``size + (dimension,)``; for
        ``sequence="random"`` exactly ``make_rng(rng).random(shape)``.

    Examples
    --------
    >>> draw_uniforms(4, rng=7, sequence="sobol").round(3).tolist()
    [0.416, 0.646, 0.87, 0.069]
    >>> draw_uniforms(4, sequence="sobol", scramble=False).tolist()
    [0.125, 0.5, 0.75, 0.25]
    """
    shape = _check_size(size)
    seq = _check_sequence(sequence)
    d = _check_dimension(dimension, seq)
    if not isinstance(scramble, bool | np.bool_):
        raise MethodError(f"scramble: expected True or False, found {scramble!r}")
    if not scramble and seq not in ("sobol", "halton"):
        raise MethodError(
            f"scramble: False is allowed only for sequence 'sobol' or 'halton', found {seq!r}"
        )
    out_shape = shape if d == 1 else (*shape, d)
    gen = make_rng(rng)
    if seq == "random":
        return gen.random(out_shape)
    n = math.prod(shape)
    if n == 0:
        return np.empty(out_shape, dtype=np.float64)
    # stacklevel 4: the warning points at our caller
    points = _qmc_points(seq, n, d, gen if scramble else None, stacklevel=4)
    return points.reshape(out_shape)


def replicate_uniforms(
    size: int | tuple[int, ...],
    n_replicates: int,
    *,
    sequence: UniformSequence = "sobol",
    dimension: int = 1,
    rng: SeedLike = None,
) -> np.ndarray:
    """Independent scramblings of one uniform source, each from its own spawned stream.

    Replicate ``k`` is ``draw_uniforms(size, rng=streams[k], ...)`` with
    ``streams = make_rng(rng).spawn(n_replicates)``; the spread between replicates is the
    randomised quasi-Monte Carlo error (Owen 1997). Unscrambled sequences are not offered: their
    replicates would all be equal.

    Returns
    -------
    numpy.ndarray
        Shape ``(n_replicates,) + draw_uniforms(size, ...).shape``.

    Examples
    --------
    >>> replicate_uniforms(2, 3, sequence="sobol", rng=1).shape
    (3, 2)
    """
    n_rep = _check_count(n_replicates, "n_replicates", minimum=1)
    shape = _check_size(size)
    seq = _check_sequence(sequence)
    d = _check_dimension(dimension, seq)
    out_shape = shape if d == 1 else (*shape, d)
    n = math.prod(shape)
    if seq == "sobol" and n > 0:
        _warn_sobol_size(n, stacklevel=3)  # once, not once per replicate
    out = np.empty((n_rep, *out_shape), dtype=np.float64)
    for k, stream in enumerate(make_rng(rng).spawn(n_rep)):
        if seq == "random" or n == 0:
            out[k] = stream.random(out_shape)
        else:
            out[k] = _qmc_points(seq, n, d, stream, stacklevel=None).reshape(out_shape)
    return out


def estimate_mean(
    func: Callable[[np.ndarray], np.ndarray | float],
    size: int,
    n_replicates: int,
    *,
    sequence: UniformSequence = "sobol",
    dimension: int = 1,
    rng: SeedLike = None,
) -> ReplicatedMeanResult:
    """Mean of ``func`` over uniform points, with an error bar from independent replicates.

    Parameters
    ----------
    func : callable
        Takes the points of one replicate, shape ``(size,)`` or ``(size, dimension)``, and returns
        one value per point (or their mean).
    size : int
        Points per replicate (a power of two for Sobol').
    n_replicates : int
        Independent scramblings (at least 2, for a standard error).
    sequence, dimension, rng
        As in :func:`draw_uniforms`.

    Examples
    --------
    >>> res = estimate_mean(lambda u: u**2, 1024, 8, rng=3)
    >>> round(res.estimate, 4), res.standard_error < 1e-4
    (0.3333, True)
    """
    n = _check_count(size, "size", minimum=1)
    n_rep = _check_count(n_replicates, "n_replicates", minimum=2)
    seq = _check_sequence(sequence)
    d = _check_dimension(dimension, seq)
    if seq == "sobol":
        _warn_sobol_size(n, stacklevel=3)
    means = np.empty(n_rep, dtype=np.float64)
    for k, stream in enumerate(make_rng(rng).spawn(n_rep)):
        if seq == "random":
            u = stream.random(n if d == 1 else (n, d))
        else:
            pts = _qmc_points(seq, n, d, stream, stacklevel=None)
            u = pts[:, 0] if d == 1 else pts
        values = np.asarray(func(u), dtype=np.float64)
        if values.ndim > 1 or (values.ndim == 1 and values.shape[0] != n):
            raise MethodError(
                f"func: expected one value per point (shape ({n},)) or a scalar, "
                f"found shape {values.shape}"
            )
        if not np.all(np.isfinite(values)):
            raise MethodError(f"func: returned non-finite values in replicate {k}")
        means[k] = values.mean()
    return ReplicatedMeanResult(
        estimate=float(means.mean()),
        standard_error=float(means.std(ddof=1) / math.sqrt(n_rep)),
        replicate_means=means,
        sequence=seq,
        n_points=n,
    )


def _qmc_points(
    seq: UniformSequence,
    n: int,
    d: int,
    gen: np.random.Generator | None,
    *,
    stacklevel: int | None,
) -> np.ndarray:
    """``n`` points of a quasi-random sequence, shape (n, d), strictly inside (0, 1)."""
    scramble = gen is not None
    engine: qmc.QMCEngine
    if seq == "sobol":
        if stacklevel is not None:
            _warn_sobol_size(n, stacklevel=stacklevel)
        engine = qmc.Sobol(d, scramble=scramble, bits=_SOBOL_BITS, rng=gen)
        with warnings.catch_warnings():
            # our own warning (above) names the size and the nearest powers of two
            warnings.filterwarnings("ignore", message="The balance properties of Sobol")
            points = engine.random(n)
    elif seq == "halton":
        engine = qmc.Halton(d, scramble=scramble, rng=gen)
        points = engine.random(n)
    else:
        engine = qmc.LatinHypercube(d, rng=gen)
        points = engine.random(n)
    points = np.asarray(points, dtype=np.float64)
    points[points <= 0.0] = 0.5 / n
    np.minimum(points, _BELOW_ONE, out=points)
    return points


def _warn_sobol_size(n: int, *, stacklevel: int) -> None:
    """Warn when ``n`` Sobol' points lose the balance that powers of two keep.

    ``stacklevel`` is passed to :func:`warnings.warn` unchanged.
    """
    if n & (n - 1) == 0:
        return
    lower = 1 << (n.bit_length() - 1)
    warnings.warn(
        f"sequence='sobol': size {n} is not a power of two; Sobol' points keep their balance "
        f"properties only at powers of two (nearest: {lower} and {2 * lower})",
        UserWarning,
        stacklevel=stacklevel,
    )


def _check_size(size: object) -> tuple[int, ...]:
    """``size`` as a shape tuple of non-negative ints."""
    parts = size if isinstance(size, tuple) else (size,)
    if not parts or any(
        isinstance(p, bool) or not isinstance(p, int | np.integer) or p < 0 for p in parts
    ):
        raise MethodError(f"size: expected a non-negative int or a tuple of them, found {size!r}")
    return tuple(int(cast(int, p)) for p in parts)


def _check_sequence(sequence: object) -> UniformSequence:
    if sequence not in SEQUENCES:
        raise MethodError(f"sequence: expected one of {', '.join(SEQUENCES)}, found {sequence!r}")
    return cast(UniformSequence, sequence)


def _check_dimension(dimension: object, seq: UniformSequence) -> int:
    d = _check_count(dimension, "dimension", minimum=1)
    if seq == "sobol" and d > _SOBOL_MAX_DIMENSION:
        raise MethodError(
            f"dimension: sequence 'sobol' supports at most {_SOBOL_MAX_DIMENSION}, found {d}"
        )
    return d


def _check_count(value: object, name: str, *, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int | np.integer) or value < minimum:
        raise MethodError(f"{name}: expected an int >= {minimum}, found {value!r}")
    return int(value)
