"""Dependence between inputs by reordering: the nearest correlation matrix and Iman-Conover.

A Monte Carlo model often needs inputs that move together (a repair's hours and its parts cost)
while each keeps the distribution fitted to it. Two tools here:

:func:`nearest_correlation`
    Repairs a matrix that a person wrote down (or that pairwise estimates produced) and that is
    not a correlation matrix because it is not positive semi-definite: the nearest correlation
    matrix in the Frobenius norm, by Higham's alternating projections with Dykstra's correction
    (Higham 2002, IMA Journal of Numerical Analysis 22(3), 329-343).
:func:`iman_conover`
    Reorders independent samples of each input so that their rank correlation approaches a target
    (Iman & Conover 1982, Communications in Statistics B 11(3), 311-334). Only the order of the
    values changes: every column of the output is a permutation of the same column of the input,
    ties included, so each marginal is exactly the one that was drawn.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Literal, cast

import numpy as np
from scipy.linalg import solve_triangular
from scipy.special import ndtri

from samplewright.core.errors import FitError, InputDataError, MethodError
from samplewright.core.randomness import SeedLike, make_rng

__all__ = [
    "RANK_TARGETS",
    "NearestCorrelationResult",
    "RankTarget",
    "iman_conover",
    "nearest_correlation",
]

RankTarget = Literal["spearman", "scores"]
RANK_TARGETS: tuple[RankTarget, ...] = ("spearman", "scores")

_ENTRY_TOL = 1e-10  # symmetry, unit diagonal and [-1, 1] checks allow this much rounding
_PSD_TOL = 1e-12  # an eigenvalue above -_PSD_TOL counts as non-negative
_MAX_SCORE_DRAWS = 10


@dataclass(frozen=True)
class NearestCorrelationResult:
    """The nearest correlation matrix to a given symmetric matrix.

    Attributes
    ----------
    correlation : numpy.ndarray
        Symmetric, unit diagonal, positive semi-definite (smallest eigenvalue at least
        ``min_eigenvalue`` up to rounding). The input itself when it already was one.
    distance : float
        Frobenius norm of ``correlation - matrix``: how far the repair moved the input.
    n_iterations : int
        Alternating-projection sweeps used (0 when the input needed no repair).
    """

    correlation: np.ndarray
    distance: float
    n_iterations: int


def nearest_correlation(
    matrix: np.ndarray,
    *,
    min_eigenvalue: float = 0.0,
    tol: float = 1e-10,
    max_iterations: int = 10_000,
    name: str = "rank_correlation",
) -> NearestCorrelationResult:
    """Nearest correlation matrix in the Frobenius norm (Higham 2002, Algorithm 3.3, W = I).

    Parameters
    ----------
    matrix : array_like
        Square, symmetric, unit diagonal, entries in [-1, 1]; anything else is refused, since
        it is not a correlation matrix that merely lost positive semi-definiteness.
    min_eigenvalue : float
        Lower bound on the eigenvalues of the answer (0 gives Higham's nearest matrix, which is
        singular whenever a repair was needed; a small positive value keeps it invertible).
    tol : float
        Stop when successive iterates differ by less than ``tol`` relative to their size.
    max_iterations : int
        Sweeps allowed before :class:`~samplewright.core.errors.FitError` is raised.
    name : str
        The option or argument named in error messages.

    Examples
    --------
    >>> res = nearest_correlation([[1, 1, 0], [1, 1, 1], [0, 1, 1]])
    >>> res.correlation.round(4).tolist()[0], round(res.distance, 4)
    ([1.0, 0.7607, 0.1573], 0.5278)
    """
    a = _check_correlation(matrix, name)
    if not 0.0 <= min_eigenvalue < 1.0:
        raise MethodError(f"min_eigenvalue: expected a value in [0, 1), found {min_eigenvalue!r}")
    if max_iterations < 1 or not tol > 0.0:
        raise MethodError(
            f"max_iterations, tol: expected >= 1 and > 0, found {max_iterations!r}, {tol!r}"
        )
    if np.linalg.eigvalsh(a)[0] >= min_eigenvalue - _PSD_TOL:
        return NearestCorrelationResult(correlation=a, distance=0.0, n_iterations=0)
    y = a.copy()
    x = a.copy()
    correction = np.zeros_like(a)
    change = math.inf
    n_sweeps = 0
    while n_sweeps < max_iterations:
        n_sweeps += 1
        r = y - correction
        x_new = _clip_eigenvalues(r, min_eigenvalue)
        correction = x_new - r
        y_new = x_new.copy()
        np.fill_diagonal(y_new, 1.0)
        change = float(
            max(
                np.linalg.norm(x_new - x) / np.linalg.norm(x_new),
                np.linalg.norm(y_new - y) / np.linalg.norm(y_new),
                np.linalg.norm(y_new - x_new) / np.linalg.norm(y_new),
            )
        )
        x, y = x_new, y_new
        if change <= tol:
            break
    if change > tol:
        raise FitError(
            f"{name}: nearest correlation matrix did not converge in {max_iterations} sweeps"
        )
    repaired = _unit_diagonal(_clip_eigenvalues(y, min_eigenvalue))
    return NearestCorrelationResult(
        correlation=repaired,
        distance=float(np.linalg.norm(repaired - a)),
        n_iterations=n_sweeps,
    )


def iman_conover(
    samples: np.ndarray,
    rank_correlation: np.ndarray,
    *,
    rng: SeedLike = None,
    target: RankTarget = "spearman",
) -> np.ndarray:
    """Reorder each column of ``samples`` so the columns reach a target rank correlation.

    Method (Iman & Conover 1982): build a score matrix whose columns are independent random
    permutations of the van der Waerden scores ``Phi^-1(i / (n + 1))``; with ``E = Q Q'`` the
    Cholesky factors of its own correlation and ``C = P P'`` of the target, the scores times
    ``(P Q^-1)'`` have sample correlation exactly ``C``. Each column of ``samples`` is then sorted
    and laid out in the rank order of the matching column of those scores. Ranks are ordinal
    (position in a stable sort), so tied values are moved as units of one value and never
    averaged: every output column is a permutation of the input column.

    The rows of ``samples`` are not kept together: each column is taken as an independent sample
    of one input.

    Parameters
    ----------
    samples : array_like, shape (n, d)
        Independent draws of each of ``d`` inputs, ``n > d``.
    rank_correlation : array_like, shape (d, d)
        Target Spearman rank correlation. A target that cannot be reached is repaired with
        :func:`nearest_correlation` and a :class:`UserWarning` stating the Frobenius distance
        between the target and the rank correlation aimed at instead.
    rng : None, int, SeedSequence or Generator
        Source of the score permutations.
    target : {"spearman", "scores"}
        ``"spearman"`` (default) aims the output's Spearman correlation at the target by giving the
        normal scores the Pearson correlation ``2 sin(pi rho / 6)`` (Pearson 1907's relation
        for the bivariate normal); ``"scores"`` gives the scores the target itself, as in Iman &
        Conover 1982, whose Spearman correlation then falls short by up to about 0.018. With
        ``"spearman"`` the repair, when needed, is made to the scores' correlation (the matrix
        that must be positive semi-definite) and the distance is reported in rank correlation.

    Returns
    -------
    numpy.ndarray
        Shape (n, d), float64; column ``j`` a permutation of ``samples[:, j]``.

    Examples
    --------
    >>> x = np.column_stack([np.arange(6.0), np.arange(6.0) ** 2])
    >>> out = iman_conover(x, [[1, -1], [-1, 1]], rng=1)
    >>> out[np.argsort(out[:, 0]), 1].tolist()
    [25.0, 16.0, 9.0, 4.0, 1.0, 0.0]
    """
    x = _check_samples(samples)
    n, d = x.shape
    if target not in RANK_TARGETS:
        raise MethodError(f"target: expected one of {', '.join(RANK_TARGETS)}, found {target!r}")
    if target == "scores":
        c = _usable_correlation(rank_correlation, "rank_correlation", size=d)
    else:
        c = _spearman_to_scores(_check_correlation(rank_correlation, "rank_correlation", size=d))
    if d == 1:
        return x.copy()
    gen = make_rng(rng)
    p = _psd_factor(c)
    scores = ndtri(np.arange(1, n + 1) / (n + 1.0))
    for _ in range(_MAX_SCORE_DRAWS):
        m = np.column_stack([gen.permutation(scores) for _ in range(d)])
        try:
            q = np.linalg.cholesky(np.corrcoef(m, rowvar=False))
        except np.linalg.LinAlgError:  # columns happened to be collinear (small n only)
            continue
        break
    else:
        raise MethodError(
            f"samples: {n} rows are too few to decouple {d} columns of scores; give more rows"
        )
    # T = P Q^-1, scores M* = M T'; T' = Q'^-1 P' solves Q' T' = P'
    t_transposed = solve_triangular(q.T, p.T, lower=False)
    coupled = m @ t_transposed
    out = np.empty_like(x)
    for j in range(d):
        out[np.argsort(coupled[:, j], kind="stable"), j] = np.sort(x[:, j], kind="stable")
    return out


def _spearman_to_scores(spearman: np.ndarray) -> np.ndarray:
    """The normal-score correlation whose Spearman correlation is ``spearman``, repaired if needed.

    ``r = 2 sin(pi rho / 6)`` inverts ``rho = (6 / pi) asin(r / 2)``, Spearman's rho of a bivariate
    normal (Pearson 1907). A Spearman matrix that is not positive semi-definite always maps to a
    score matrix that is not either (a Gaussian copula's Spearman matrix is a correlation matrix),
    so checking the score matrix alone catches both.
    """
    r = 2.0 * np.sin(np.pi * spearman / 6.0)
    np.fill_diagonal(r, 1.0)
    lowest = np.linalg.eigvalsh(r)[0]
    if lowest >= -_PSD_TOL:
        return r
    repair = nearest_correlation(r, name="rank_correlation")
    reached = 6.0 / np.pi * np.arcsin(repair.correlation / 2.0)
    np.fill_diagonal(reached, 1.0)
    why = (
        "not positive semi-definite"
        if np.linalg.eigvalsh(spearman)[0] < -_PSD_TOL
        else "not reachable with normal scores (2*sin(pi*rho/6) is not positive semi-definite)"
    )
    warnings.warn(
        f"rank_correlation: {why}; using the nearest reachable rank correlation, Frobenius "
        f"distance {np.linalg.norm(reached - spearman):.4g}",
        UserWarning,
        stacklevel=3,
    )
    return repair.correlation


def _check_samples(samples: object) -> np.ndarray:
    """``samples`` as a finite float64 array of shape (n, d) with n > d."""
    try:
        x = np.array(samples, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputDataError(f"samples: expected a numeric 2-D array, found {exc}") from None
    if x.ndim != 2 or x.shape[1] < 1:
        raise InputDataError(f"samples: expected a 2-D array (n, d), found shape {x.shape}")
    n, d = x.shape
    if n <= d:
        raise InputDataError(f"samples: expected more rows than columns ({d}), found {n} rows")
    bad = ~np.isfinite(x)
    if bad.any():
        row, col = np.argwhere(bad)[0]
        raise InputDataError(
            f"samples: expected finite values, found {int(bad.sum())} non-finite "
            f"(first at row {row}, column {col}: {x[row, col]})"
        )
    return x


def _check_correlation(matrix: object, name: str, *, size: int | None = None) -> np.ndarray:
    """A symmetric, unit-diagonal matrix with entries in [-1, 1], exactly symmetrised."""
    try:
        a = np.array(matrix, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise MethodError(f"{name}: expected a numeric square matrix, found {exc}") from None
    if a.ndim != 2 or a.shape[0] != a.shape[1] or a.shape[0] == 0:
        raise MethodError(f"{name}: expected a square matrix, found shape {a.shape}")
    if size is not None and a.shape[0] != size:
        raise MethodError(
            f"{name}: expected a {size}x{size} matrix (one row per column of the data), "
            f"found {a.shape[0]}x{a.shape[1]}"
        )
    if not np.all(np.isfinite(a)):
        raise MethodError(f"{name}: expected finite entries, found {a[~np.isfinite(a)][0]}")
    asym = np.abs(a - a.T)
    if asym.max() > _ENTRY_TOL:
        i, j = np.unravel_index(int(np.argmax(asym)), a.shape)
        raise MethodError(
            f"{name}: expected a symmetric matrix, found entry [{i}, {j}] = {a[i, j]} but "
            f"[{j}, {i}] = {a[j, i]}"
        )
    diag = np.diag(a)
    off = np.abs(diag - 1.0) > _ENTRY_TOL
    if off.any():
        k = int(np.argmax(off))
        raise MethodError(f"{name}: expected 1 on the diagonal, found [{k}, {k}] = {diag[k]}")
    outside = np.abs(a) > 1.0 + _ENTRY_TOL
    if outside.any():
        i, j = np.argwhere(outside)[0]
        raise MethodError(f"{name}: expected entries in [-1, 1], found [{i}, {j}] = {a[i, j]}")
    a = np.clip((a + a.T) / 2.0, -1.0, 1.0)
    np.fill_diagonal(a, 1.0)
    return a


def _usable_correlation(
    matrix: object, name: str, *, size: int | None = None, min_eigenvalue: float = 0.0
) -> np.ndarray:
    """A checked correlation matrix, repaired (with a warning) when not positive semi-definite."""
    a = _check_correlation(matrix, name, size=size)
    lowest = np.linalg.eigvalsh(a)[0]
    if lowest >= min_eigenvalue - _PSD_TOL:
        return a
    repair = nearest_correlation(a, min_eigenvalue=min_eigenvalue, name=name)
    warnings.warn(
        f"{name}: not positive semi-definite (smallest eigenvalue {lowest:.3g}); using the "
        f"nearest correlation matrix, Frobenius distance {repair.distance:.4g}",
        UserWarning,
        stacklevel=3,
    )
    return cast(np.ndarray, repair.correlation)


def _psd_factor(c: np.ndarray) -> np.ndarray:
    """A square ``P`` with ``P P' = c``: Cholesky, or eigenvectors for a singular ``c``."""
    try:
        return np.linalg.cholesky(c)
    except np.linalg.LinAlgError:
        w, v = np.linalg.eigh(c)
        return cast(np.ndarray, v * np.sqrt(np.clip(w, 0.0, None)))


def _clip_eigenvalues(a: np.ndarray, floor: float) -> np.ndarray:
    """Projection onto the symmetric matrices whose eigenvalues are at least ``floor``."""
    w, v = np.linalg.eigh((a + a.T) / 2.0)
    out = (v * np.maximum(w, floor)) @ v.T
    return cast(np.ndarray, (out + out.T) / 2.0)


def _unit_diagonal(a: np.ndarray) -> np.ndarray:
    """Rescale a positive semi-definite matrix to unit diagonal (a congruence: stays PSD)."""
    s = 1.0 / np.sqrt(np.diag(a))
    out = np.clip(a * s[:, None] * s[None, :], -1.0, 1.0)
    np.fill_diagonal(out, 1.0)
    return cast(np.ndarray, out)
