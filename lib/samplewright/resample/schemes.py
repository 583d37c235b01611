"""Index schemes for the bootstrap: which rows of the data each resample takes.

A scheme turns a sample of ``n`` rows into batches of index arrays of shape ``(batch, n)``; a
resample is ``values.take(indices)``. The base :class:`IIDScheme` does all the data handling
(checking the values and the optional weights, batching, gathering values); each block scheme
overrides only :meth:`IIDScheme._indices`, the way one batch of indices is drawn:

* ``iid`` -- every row is drawn independently and uniformly; with frequency weights a resample is
  ``m = round(sum(weights))`` units, each unit row ``i`` with probability ``w_i / sum(w)``
  (a multinomial count per row, :meth:`IIDScheme.count_batches`), so whole-number weights
  behave exactly like the rows repeated;
* ``moving`` -- blocks of ``block_length`` consecutive rows starting anywhere a whole block fits
  (Kuensch 1989), glued together and cut to ``n`` rows;
* ``circular`` -- the same, but the rows are put on a circle so a block may wrap from the last row
  to the first (Politis & Romano 1992): every row is equally likely to be drawn;
* ``stationary`` -- blocks of random length, geometric with mean ``block_length``, that start
  anywhere and wrap around (Politis & Romano 1994, JASA 89:1303-1313).

Block schemes keep the order of a time series; they take no weights (a row of weight 3 would be
three observations at the same time, which a time series does not have).

Memory is bounded: without an explicit ``batch`` a batch holds about 2**23 indices (64 MiB), so
``n = 1e6`` rows are drawn 8 resamples at a time whatever ``n_resamples`` is.

Reproducibility: the same ``rng`` seed gives the same indices. For ``iid``, ``moving`` and
``circular`` the indices do not depend on ``batch`` either (unweighted ``iid`` draws exactly what
``rng.integers(0, n, (n_resamples, n))`` draws, as ``scipy.stats.bootstrap`` does, and weighted
``iid`` what ``rng.multinomial(m, w / sum(w), n_resamples)`` draws); ``stationary`` indices
depend on the batch size.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any, ClassVar, Literal, cast

import numpy as np

from samplewright.core.errors import InputDataError, MethodError
from samplewright.core.randomness import SeedLike, make_rng

__all__ = [
    "SCHEMES",
    "CircularBlockScheme",
    "IIDScheme",
    "MovingBlockScheme",
    "SchemeName",
    "StationaryScheme",
    "alias_table",
    "check_count",
    "check_values",
    "default_batch",
    "draw_indices",
    "make_scheme",
]

SchemeName = Literal["iid", "moving", "circular", "stationary"]
SCHEMES: tuple[SchemeName, ...] = ("iid", "moving", "circular", "stationary")

# indices per batch when the caller gives none: 2**23 int64 = 64 MiB per (batch, n) array
BATCH_ELEMENTS = 1 << 23


def default_batch(n: int, n_resamples: int) -> int:
    """Resamples per batch so that one ``(batch, n)`` array holds about 2**23 elements.

    >>> default_batch(1_000_000, 9999), default_batch(100, 9999)
    (8, 9999)
    """
    return max(1, min(n_resamples, BATCH_ELEMENTS // max(n, 1)))


def alias_table(weights: Any) -> tuple[np.ndarray, np.ndarray]:
    """Walker's alias table for drawing row ``i`` with probability ``weights[i] / sum(weights)``.

    Returns ``(keep, alias)``: a draw picks a cell ``k`` uniformly, keeps ``k`` with probability
    ``keep[k]`` and otherwise takes ``alias[k]``. Built without a Python loop: the light cells
    (scaled weight below 1) are laid end to end by their deficits, the heavy ones by their
    excesses; a light cell takes as alias the first heavy cell whose cumulative excess reaches the
    start of its deficit, and a heavy cell that gives away more than its excess (its cumulative
    excess ends inside a light cell's deficit) keeps the rest and takes the next heavy cell as
    alias. This is what Vose's one-pass sweep produces.

    >>> keep, alias = alias_table([1.0, 3.0])
    >>> keep.tolist(), alias.tolist()
    ([0.5, 1.0], [1, 1])
    """
    w = np.asarray(weights, dtype=np.float64).ravel()
    n = w.size
    q = w * (n / w.sum())
    light = np.flatnonzero(q < 1.0)
    heavy = np.flatnonzero(q >= 1.0)
    keep = np.ones(n)
    alias = np.arange(n)
    if light.size == 0 or heavy.size == 0:  # equal weights (no heavy cell: only by rounding)
        return keep, alias
    deficit_end = np.cumsum(1.0 - q[light])
    # the same rounded numbers on both sides of every comparison keep the sweep consistent
    deficit_start = np.concatenate([[0.0], deficit_end[:-1]])
    excess_end = np.cumsum(q[heavy] - 1.0)
    # light cell: alias = the first heavy cell not yet run dry when its deficit starts
    donor = np.searchsorted(excess_end, deficit_start, side="left")
    keep[light] = q[light]
    alias[light] = heavy[np.minimum(donor, heavy.size - 1)]
    # heavy cell j runs dry inside the light cell whose deficit interval holds excess_end[j]
    dry = np.searchsorted(deficit_end, excess_end, side="right")
    spent = dry < light.size
    spent[-1] = False  # the last heavy cell keeps the rest (up to rounding, exactly 1)
    rows = heavy[spent]
    keep[rows] = np.clip(1.0 + excess_end[spent] - deficit_end[dry[spent]], 0.0, 1.0)
    alias[rows] = heavy[np.flatnonzero(spent) + 1]
    return keep, alias


class IIDScheme:
    """Independent resampling of rows: uniform, or of units of frequency weight.

    Parameters
    ----------
    values : array_like
        One-dimensional finite values (at least 2).
    weights : array_like, optional
        Frequency weights, finite and positive, one per value (drop rows of weight 0
        beforehand): a row of weight 3 is three observations. A resample is
        ``m = round(sum(weights))`` units (at least 2), the unit of row ``i`` drawn with
        probability ``w_i / sum(w)``; whole-number weights thus resample exactly like the rows
        repeated (``np.repeat(values, weights)``). Fractional weights keep the same rule: the
        resample has the rounded total size and the weighted empirical distribution. Weights
        that are all 1 are dropped (identical to no weights).

    Attributes
    ----------
    values : numpy.ndarray
        The checked values, float64.
    weights : numpy.ndarray or None
        The frequency weights as given (float64), or ``None``.
    n : int
        Number of rows.
    n_units : int
        Size of a resample: ``n``, or ``round(sum(weights))`` with weights.
    block_length : float or None
        ``None`` here; the block length for block schemes.
    """

    name: ClassVar[SchemeName] = "iid"

    def __init__(self, values: Any, *, weights: Any = None) -> None:
        self.values = check_values(values)
        self.n = int(self.values.size)
        self.n_units = self.n
        self.block_length: float | None = None
        self.weights: np.ndarray | None = None
        self._p: np.ndarray | None = None
        if weights is not None:
            w = _check_weights(weights, self.n)
            if not np.all(w == 1.0):
                total = float(w.sum())
                if round(total) < 2:
                    raise InputDataError(
                        "weights: frequency weights (a row of weight 3 is three observations)"
                        f" must add up to at least 2 units, found a sum of {total:.6g}; scale"
                        " shares or probabilities to counts"
                    )
                self.weights = w
                self.n_units = round(total)
                self._p = w / total

    def draw_indices(self, size: int, rng: SeedLike = None) -> np.ndarray:
        """Row indices of ``size`` resamples, an int64 array of shape ``(size, n_units)``."""
        if isinstance(size, bool) or not isinstance(size, int | np.integer) or size < 0:
            raise MethodError(f"size: expected a non-negative int, found {size!r}")
        return self._indices(int(size), make_rng(rng))

    def default_batch(self, n_resamples: int) -> int:
        """Resamples per batch when the caller gives none (about 2**23 indices, or 2**21 count
        cells with weights: a weighted batch holds several count-sized arrays at once)."""
        if self._p is None:
            return default_batch(self.n_units, n_resamples)
        return default_batch(4 * max(self.n, self.n_units), n_resamples)

    def index_batches(
        self, n_resamples: int, rng: SeedLike = None, *, batch: int | None = None
    ) -> Iterator[np.ndarray]:
        """Yield index arrays of shape ``(batch, n_units)`` (the last may be shorter), in order.

        With weights, the indices of a resample are its units, sorted by row: the rows of
        :meth:`count_batches` repeated by their counts (the same draws, another view).
        """
        n_resamples = check_count(n_resamples, "n_resamples")
        step = self.default_batch(n_resamples) if batch is None else check_count(batch, "batch")
        gen = make_rng(rng)
        for start in range(0, n_resamples, step):
            yield self._indices(min(step, n_resamples - start), gen)

    def count_batches(
        self, n_resamples: int, rng: SeedLike = None, *, batch: int | None = None
    ) -> Iterator[np.ndarray]:
        """Yield how often each row is drawn, int64 arrays of shape ``(batch, n)``.

        With weights: ``rng.multinomial(n_units, w / sum(w), batch)``, in O(n) per resample
        whatever the weights add up to. Without: the row counts of :meth:`index_batches`.
        """
        n_resamples = check_count(n_resamples, "n_resamples")
        step = self.default_batch(n_resamples) if batch is None else check_count(batch, "batch")
        gen = make_rng(rng)
        for start in range(0, n_resamples, step):
            yield self._counts(min(step, n_resamples - start), gen)

    def resample_batches(
        self, n_resamples: int, rng: SeedLike = None, *, batch: int | None = None
    ) -> Iterator[np.ndarray]:
        """Yield resampled values, arrays of shape ``(batch, n_units)``."""
        for idx in self.index_batches(n_resamples, rng, batch=batch):
            yield self.values.take(idx)

    def _counts(self, size: int, gen: np.random.Generator) -> np.ndarray:
        if self._p is not None:
            return gen.multinomial(self.n_units, self._p, size=size)
        idx = self._indices(size, gen)
        idx += np.arange(size)[:, None] * self.n
        return np.bincount(idx.ravel(), minlength=size * self.n).reshape(size, self.n)

    def _indices(self, size: int, gen: np.random.Generator) -> np.ndarray:
        """One batch of indices; block schemes override this and nothing else."""
        if self._p is None:
            return gen.integers(0, self.n, (size, self.n))
        counts = self._counts(size, gen)
        rows = np.broadcast_to(np.arange(self.n), counts.shape)
        return np.repeat(rows.ravel(), counts.ravel()).reshape(size, self.n_units)


class _BlockScheme(IIDScheme):
    """Shared checks of the block schemes: no weights, a block length between 1 and n."""

    integer_blocks: ClassVar[bool] = True

    def __init__(self, values: Any, *, block_length: float) -> None:
        super().__init__(values)
        self.block_length = _check_block_length(
            block_length, self.n, self.name, self.integer_blocks
        )


class MovingBlockScheme(_BlockScheme):
    """Moving blocks: contiguous runs of ``block_length`` rows that never wrap (Kuensch 1989)."""

    name: ClassVar[SchemeName] = "moving"

    def _indices(self, size: int, gen: np.random.Generator) -> np.ndarray:
        length = int(cast(float, self.block_length))
        n_blocks = -(-self.n // length)
        starts = gen.integers(0, self.n - length + 1, (size, n_blocks))
        idx = starts[:, :, None] + np.arange(length)
        return idx.reshape(size, n_blocks * length)[:, : self.n]


class CircularBlockScheme(_BlockScheme):
    """Circular blocks: runs of ``block_length`` rows that wrap around (Politis & Romano 1992)."""

    name: ClassVar[SchemeName] = "circular"

    def _indices(self, size: int, gen: np.random.Generator) -> np.ndarray:
        length = int(cast(float, self.block_length))
        n_blocks = -(-self.n // length)
        starts = gen.integers(0, self.n, (size, n_blocks))
        idx = starts[:, :, None] + np.arange(length)
        idx = idx.reshape(size, n_blocks * length)[:, : self.n]
        return np.remainder(idx, self.n, out=idx)


class StationaryScheme(_BlockScheme):
    """Stationary bootstrap: wrapping blocks of geometric length, mean ``block_length``.

    Each row after the first starts a new block with probability ``1 / block_length`` (at a
    uniformly drawn row) and otherwise continues with the next row, wrapping after the last
    (Politis & Romano 1994). ``block_length`` may be any real number >= 1.
    """

    name: ClassVar[SchemeName] = "stationary"
    integer_blocks: ClassVar[bool] = False

    def _indices(self, size: int, gen: np.random.Generator) -> np.ndarray:
        n = self.n
        new = gen.random((size, n)) < 1.0 / cast(float, self.block_length)
        new[:, 0] = True
        pos = np.arange(n)
        # position of the latest block start at or before each position
        block_pos = np.where(new, pos, 0)
        np.maximum.accumulate(block_pos, axis=1, out=block_pos)
        start_row = np.zeros((size, n), dtype=np.int64)
        start_row[new] = gen.integers(0, n, int(np.count_nonzero(new)))
        idx = np.take_along_axis(start_row, block_pos, axis=1)
        idx += pos
        idx -= block_pos
        return np.remainder(idx, n, out=idx)


_CLASSES: dict[str, type[IIDScheme]] = {
    "iid": IIDScheme,
    "moving": MovingBlockScheme,
    "circular": CircularBlockScheme,
    "stationary": StationaryScheme,
}


def make_scheme(
    values: Any,
    *,
    scheme: SchemeName = "iid",
    block_length: float | None = None,
    weights: Any = None,
) -> IIDScheme:
    """The scheme object for ``values``; block schemes need ``block_length`` and take no weights
    (``weights`` are frequency weights, see :class:`IIDScheme`).

    >>> make_scheme([1.0, 2.0, 3.0, 4.0], scheme="circular", block_length=2).draw_indices(
    ...     2, rng=0).tolist()
    [[3, 0, 2, 3], [2, 3, 1, 2]]
    """
    cls = _CLASSES.get(scheme) if isinstance(scheme, str) else None
    if cls is None:
        raise MethodError(f"scheme: expected one of {', '.join(SCHEMES)}, found {scheme!r}")
    if cls is IIDScheme:
        if block_length is not None:
            raise MethodError(f"block_length: scheme 'iid' takes none, found {block_length!r}")
        return IIDScheme(values, weights=weights)
    if weights is not None:
        raise MethodError(
            f"weights: scheme {scheme!r} resamples blocks of a time series and takes no weights;"
            " use scheme='iid'"
        )
    if block_length is None:
        raise MethodError(f"block_length: scheme {scheme!r} needs a block length, found None")
    return cast(type[_BlockScheme], cls)(values, block_length=block_length)


def draw_indices(
    n: int,
    n_resamples: int,
    *,
    scheme: SchemeName = "iid",
    block_length: float | None = None,
    weights: Any = None,
    rng: SeedLike = None,
    batch: int | None = None,
) -> Iterator[np.ndarray]:
    """Yield row indices of ``n_resamples`` resamples of ``n`` rows, in batches ``(batch, n)``
    (``(batch, round(sum(weights)))`` with frequency weights).

    Only one batch is in memory at a time; ``batch=None`` picks about 2**23 indices per batch.

    >>> [b.shape for b in draw_indices(5, 7, scheme="moving", block_length=2, rng=1, batch=3)]
    [(3, 5), (3, 5), (1, 5)]
    """
    n = check_count(n, "n")
    return make_scheme(
        np.zeros(n), scheme=scheme, block_length=block_length, weights=weights
    ).index_batches(n_resamples, rng, batch=batch)


# ---------------------------------------------------------------------------------------------
# checks


def check_count(value: Any, name: str) -> int:
    """``value`` as a positive int, or a MethodError naming ``name``."""
    if isinstance(value, bool) or not isinstance(value, int | np.integer) or value < 1:
        raise MethodError(f"{name}: expected a positive int, found {value!r}")
    return int(value)


def check_values(values: Any, name: str = "values") -> np.ndarray:
    """``values`` as a 1-d float64 array of at least 2 finite numbers, or an InputDataError."""
    try:
        x = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputDataError(f"{name}: expected numbers, found non-numeric entries") from None
    if x.ndim != 1:
        raise InputDataError(f"{name}: expected a 1-d array, found shape {x.shape}")
    if x.size < 2:
        raise InputDataError(f"{name}: expected at least 2 values, found {x.size}")
    bad = np.flatnonzero(~np.isfinite(x))
    if bad.size:
        raise InputDataError(
            f"{name}: expected finite numbers, found {bad.size} non-finite"
            f" (first at position {bad[0]}: {x[bad[0]]})"
        )
    return x


def _check_weights(weights: Any, n: int) -> np.ndarray:
    try:
        w = np.asarray(weights, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputDataError("weights: expected numbers, found non-numeric entries") from None
    if w.shape != (n,):
        raise InputDataError(
            f"weights: expected {n} weights (one per value), found shape {w.shape}"
        )
    bad = np.flatnonzero(~(np.isfinite(w) & (w > 0)))
    if bad.size:
        raise InputDataError(
            f"weights: expected finite positive numbers, found {bad.size} others"
            f" (first at position {bad[0]}: {w[bad[0]]})"
        )
    return w


def _check_block_length(value: Any, n: int, scheme: str, integer: bool) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
        raise MethodError(f"block_length: expected a number >= 1, found {value!r}")
    b = float(value)
    if not (np.isfinite(b) and 1.0 <= b <= n):
        raise MethodError(f"block_length: expected a number between 1 and n = {n}, found {value!r}")
    if integer and b != int(b):
        raise MethodError(
            f"block_length: scheme {scheme!r} needs a whole number of rows, found {value!r}"
        )
    return b
