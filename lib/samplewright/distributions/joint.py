"""Joint inputs: several columns drawn together, as one sampler stored as one artifact.

A :class:`JointSampler` draws an ``(n, d)`` array whose columns are named by ``columns``. Each
column keeps its own marginal distribution; a *coupling* decides how the columns move together:

``"rows"``
    Whole observed rows are resampled. The dependence is exactly the data's and nothing is ever
    drawn that was not observed together; each marginal is the column's empirical distribution.
``"rank_correlation"``
    Independent draws of each marginal are reordered by the Iman-Conover method (Iman & Conover
    1982, Communications in Statistics B 11(3), 311-334) to a target Spearman rank-correlation
    matrix. Only the order changes, so each column is exactly a sample of its marginal.
``"gaussian_copula"`` / ``"t_copula"``
    Uniforms with a Gaussian or Student-t copula (correlation matrix, and degrees of freedom for
    the t) go through each marginal's quantile function. The t copula gives joint extremes
    (tail dependence) that the Gaussian copula does not.

Quasi-random draws: ``draw(..., sequence=...)`` takes its uniforms from
:func:`samplewright.core.uniforms.draw_uniforms` with one coordinate per column (a t copula uses
one more, for its mixing variable; ``"rows"`` uses one, the row index). Plain ``"random"`` draws
of a rank-correlation coupling use each marginal's native generator.

Artifact: ``payload()`` holds the observed rows (``"rows"``: one payload column per input
column, named as it) or every marginal's own payload, its columns prefixed ``m<i>:`` and padded
with NaN to a common length; ``describe()`` nests each marginal's own ``describe()`` (with its
``kind`` and its payload length) and holds the coupling's parameters in ``params``.

The dependence transforms are the fitting stage's (:mod:`samplewright.fitting.coupling`,
:mod:`samplewright.fitting.copulas`, checked there against statsmodels); this module reaches them
by name on first use, as the method catalog reaches later stages, so it imports no later stage.
"""

from __future__ import annotations

import importlib
import math
from collections.abc import Callable, Mapping, Sequence
from typing import Any, ClassVar, Literal, cast, get_args

import numpy as np
from scipy.stats import rankdata

from samplewright.core.errors import ArtifactError, InputDataError, MethodError
from samplewright.core.randomness import SeedLike, make_rng
from samplewright.core.uniforms import SEQUENCES, UniformSequence, draw_uniforms
from samplewright.distributions.base import SAMPLER_KINDS, Sampler, json_float
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.steps import draw_indices

__all__ = ["COUPLINGS", "Coupling", "JointSampler", "spearman_matrix"]

Coupling = Literal["rows", "rank_correlation", "gaussian_copula", "t_copula"]
COUPLINGS: tuple[Coupling, ...] = get_args(Coupling)

# coupling -> "module:function" of its draw-time transform (see the module notes)
_TRANSFORMS: dict[str, str] = {
    "rank_correlation": "samplewright.fitting.coupling:iman_conover",
    "gaussian_copula": "samplewright.fitting.copulas:gaussian_copula_uniforms",
    "t_copula": "samplewright.fitting.copulas:t_copula_uniforms",
}
_ENTRY_TOL = 1e-10  # symmetry, unit diagonal and [-1, 1] allow this much rounding
_PSD_TOL = 1e-12  # an eigenvalue above -_PSD_TOL counts as non-negative


def spearman_matrix(x: Any) -> np.ndarray:
    """Spearman rank correlations between the columns of ``x`` (ties share their average rank).

    A constant column has no ranks: its entries are NaN (its diagonal stays 1).

    >>> spearman_matrix([[1.0, 3.0], [2.0, 1.0], [3.0, 2.0]]).round(3).tolist()
    [[1.0, -0.5], [-0.5, 1.0]]
    """
    a = np.asarray(x, dtype=np.float64)
    ranks = rankdata(a, axis=0)
    centred = ranks - ranks.mean(axis=0)
    norms = np.sqrt(np.sum(centred * centred, axis=0))
    with np.errstate(invalid="ignore", divide="ignore"):
        out = (centred.T @ centred) / np.outer(norms, norms)
    out = np.clip((out + out.T) / 2.0, -1.0, 1.0)
    np.fill_diagonal(out, 1.0)
    return cast(np.ndarray, out)


class _Given:
    """A uniform source handing out one prepared array (one column of joint uniforms)."""

    def __init__(self, u: np.ndarray) -> None:
        self._u = np.ascontiguousarray(u, dtype=np.float64)

    def uniforms(self, shape: tuple[int, ...]) -> np.ndarray:
        return self._u.reshape(shape)


class JointSampler:
    """Several named inputs drawn together: marginals joined by a coupling.

    Not a :class:`~samplewright.distributions.base.Sampler` (whose draws are one-dimensional)
    but stored, loaded and verified like one: ``kind``, ``method``, ``params``,
    ``diagnostics``, ``metadata``, ``payload()``, ``describe()``, ``from_payload()``. Built by
    :func:`samplewright.fitting.joint.fit_joint`; holds no randomness.

    Parameters
    ----------
    columns : sequence of str
        Names of the inputs, at least two, each once.
    coupling : {"rows", "rank_correlation", "gaussian_copula", "t_copula"}
    rows : array_like, shape (n, d), only for ``"rows"``
        The observed rows, finite.
    marginals : sequence of Sampler, not for ``"rows"``
        One sampler per column, in the order of ``columns``.
    rank_correlation : array_like, shape (d, d), only for ``"rank_correlation"``
        Target Spearman matrix, reachable by Iman-Conover's normal scores
        (``2 sin(pi rho / 6)`` positive semi-definite; ``fit_joint`` repairs one that is not).
    correlation : array_like, shape (d, d), only for the copulas
        The copula's correlation matrix, positive semi-definite.
    df : float, only for ``"t_copula"``
        Degrees of freedom.

    Examples
    --------
    >>> from samplewright.distributions.piecewise import from_knots
    >>> m = [from_knots([0.0, 1.0], [0.0, 1.0]), from_knots([0.0, 10.0], [0.0, 1.0])]
    >>> s = JointSampler(["a", "b"], coupling="gaussian_copula", marginals=m,
    ...                  correlation=[[1.0, 0.9], [0.9, 1.0]])
    >>> x = s.draw(1000, rng=1)
    >>> x.shape, round(float(spearman_matrix(x)[0, 1]), 2)
    ((1000, 2), 0.87)
    """

    kind: ClassVar[str] = "joint"
    method: str
    params: dict[str, Any]
    metadata: dict[str, Any]
    columns: tuple[str, ...]
    coupling: Coupling
    rows: np.ndarray | None
    correlation: np.ndarray | None
    df: float | None
    _target: np.ndarray | None

    def __init__(
        self,
        columns: Sequence[str],
        *,
        coupling: Coupling,
        rows: Any = None,
        marginals: Sequence[Sampler] | None = None,
        rank_correlation: Any = None,
        correlation: Any = None,
        df: float | None = None,
        method: str = "joint",
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        self.columns = _check_columns(columns)
        d = len(self.columns)
        if coupling not in COUPLINGS:
            raise MethodError(
                f"coupling: expected one of {', '.join(COUPLINGS)}, found {coupling!r}"
            )
        self.coupling = coupling
        given = {"rows": rows, "marginals": marginals, "rank_correlation": rank_correlation}
        given |= {"correlation": correlation, "df": df}
        wanted = {
            "rows": {"rows"},
            "rank_correlation": {"marginals", "rank_correlation"},
            "gaussian_copula": {"marginals", "correlation"},
            "t_copula": {"marginals", "correlation", "df"},
        }[coupling]
        for name, value in given.items():
            if (value is None) == (name in wanted):
                need = "needs" if value is None else "takes no"
                raise MethodError(f"{name}: coupling {coupling!r} {need} {name!r}")
        self.rows = self.correlation = self._target = None
        self.df = None
        self._marginals: tuple[Sampler, ...] = ()
        params: dict[str, Any] = {"columns": list(self.columns), "coupling": coupling}
        if coupling == "rows":
            self.rows = _check_rows(rows, d)
            self._marginals = tuple(EmpiricalSampler(c) for c in self.rows.T)
            params["n_rows"] = int(self.rows.shape[0])
        else:
            self._marginals = _check_marginals(marginals, self.columns)
        if coupling == "rank_correlation":
            self._target = _check_matrix(rank_correlation, "rank_correlation", d)
            # Iman-Conover aims the normal scores at 2 sin(pi rho / 6) (Pearson 1907)
            _check_psd(2.0 * np.sin(np.pi * self._target / 6.0), "rank_correlation", reach=True)
            params["rank_correlation"] = self._target.tolist()
        if correlation is not None:
            self.correlation = _check_matrix(correlation, "correlation", d)
            _check_psd(self.correlation, "correlation", reach=False)
            params["correlation"] = self.correlation.tolist()
        if df is not None:
            if isinstance(df, bool) or not isinstance(df, int | float | np.integer | np.floating):
                raise MethodError(f"df: expected a positive number, found {df!r}")
            if not (math.isfinite(float(df)) and float(df) > 0.0):
                raise MethodError(f"df: expected a positive finite number, found {df}")
            self.df = float(df)
            params["df"] = self.df
        self.method = method
        self.params = params
        self._diagnostics = dict(diagnostics or {})
        self.metadata = {}

    # --- what it is -------------------------------------------------------------------------

    @property
    def diagnostics(self) -> dict[str, Any]:
        """Plain-JSON sections the fit recorded (rows used and dropped, coupling estimate, ...);
        the artifact's recorded ones for a sampler loaded without them."""
        if not self._diagnostics and self.metadata.get("diagnostics"):
            return dict(self.metadata["diagnostics"])
        return self._diagnostics

    @property
    def marginals(self) -> tuple[Sampler, ...]:
        """The one-dimensional sampler of each column, in the order of ``columns``."""
        return self._marginals

    def marginal(self, name: str) -> Sampler:
        """The one-dimensional sampler of column ``name`` (its empirical one for ``"rows"``)."""
        if name not in self.columns:
            raise MethodError(f"column: expected one of {list(self.columns)}, found {name!r}")
        return self._marginals[self.columns.index(name)]

    @property
    def rank_correlation(self) -> np.ndarray | None:
        """Spearman matrix the draws aim at: the rows' own (``"rows"``), the target
        (``"rank_correlation"``), ``(6 / pi) asin(r / 2)`` of the Gaussian copula's correlation
        (Pearson 1907); None for the t copula, whose Spearman matrix has no closed form."""
        if self.coupling == "rows":
            return spearman_matrix(self.rows)
        if self.coupling == "rank_correlation":
            return cast(np.ndarray, self._target).copy()
        if self.coupling == "gaussian_copula":
            out = 6.0 / np.pi * np.arcsin(cast(np.ndarray, self.correlation) / 2.0)
            np.fill_diagonal(out, 1.0)
            return cast(np.ndarray, out)
        return None

    @property
    def uniform_dimension(self) -> int:
        """Coordinates of each uniform point a draw uses (``"rows"``: 1; t copula: d + 1)."""
        d = len(self.columns)
        return {"rows": 1, "t_copula": d + 1}.get(self.coupling, d)

    # --- drawing ----------------------------------------------------------------------------

    def draw(
        self, size: int, rng: SeedLike = None, *, sequence: UniformSequence = "random"
    ) -> np.ndarray:
        """``size`` joint draws, shape ``(size, d)``, column ``j`` for ``columns[j]``.

        Parameters
        ----------
        size : int
            Number of draws (rows); a rank-correlation coupling needs more rows than columns.
        rng : None, int, SeedSequence or Generator
            Source of randomness (of the scrambling, for a quasi-random ``sequence``; of the
            Iman-Conover score permutations).
        sequence : {"random", "sobol", "halton", "latin_hypercube"}
            Where the uniforms come from (:func:`samplewright.core.uniforms.draw_uniforms`, with
            dimension :attr:`uniform_dimension`; a Sobol' size that is not a power of two warns).
        """
        if isinstance(size, bool) or not isinstance(size, int | np.integer) or size < 0:
            raise MethodError(f"size: expected a non-negative int, found {size!r}")
        n = int(size)
        if sequence not in SEQUENCES:
            raise MethodError(
                f"sequence: expected one of {', '.join(SEQUENCES)}, found {sequence!r}"
            )
        gen = make_rng(rng)
        d = len(self.columns)
        if n == 0:
            return np.empty((0, d), dtype=np.float64)
        if self.coupling == "rows":
            return self._draw_rows(n, gen, sequence)
        if self.coupling == "rank_correlation":
            if n <= d:
                raise MethodError(
                    f"size: coupling 'rank_correlation' needs more draws than columns ({d}), "
                    f"found {n}"
                )
            if sequence == "random":
                x = np.column_stack([m.draw(n, rng=gen) for m in self._marginals])
            else:
                u = draw_uniforms(n, rng=gen, sequence=sequence, dimension=d)
                x = self._through_marginals(u)
            # Iman & Conover 1982: reorder each column to the target rank correlation
            return cast(np.ndarray, _transform("rank_correlation")(x, self._target, rng=gen))
        u = draw_uniforms(n, rng=gen, sequence=sequence, dimension=self.uniform_dimension)
        u[u <= 0.0] = 0.5 / n  # numpy's [0, 1) can give 0, which has no normal score
        if self.coupling == "gaussian_copula":
            v = _transform("gaussian_copula")(self.correlation, u)
        else:
            v = _transform("t_copula")(self.correlation, self.df, u)
        return self._through_marginals(v)

    def _draw_rows(self, n: int, gen: np.random.Generator, sequence: UniformSequence) -> np.ndarray:
        rows = cast(np.ndarray, self.rows)
        m = rows.shape[0]
        if sequence == "random":
            idx = draw_indices(m, n, gen)
        else:
            u = draw_uniforms(n, rng=gen, sequence=sequence)
            idx = np.minimum((u * m).astype(np.int64), m - 1)
        return rows[idx]

    def _through_marginals(self, u: np.ndarray) -> np.ndarray:
        """Column ``j`` of ``u`` through marginal ``j``'s quantile function (its final draw)."""
        n = u.shape[0]
        out = np.empty((n, len(self._marginals)), dtype=np.float64)
        for j, m in enumerate(self._marginals):
            out[:, j] = m.draw(n, rng=_Given(u[:, j]))
        return out

    # --- artifact ---------------------------------------------------------------------------

    def payload(self) -> dict[str, np.ndarray]:
        """The rows (``"rows"``), or each marginal's payload under ``m<i>:`` padded with NaN."""
        if self.rows is not None:
            return {c: self.rows[:, j].copy() for j, c in enumerate(self.columns)}
        parts = [m.payload() for m in self._marginals]
        length = max((_payload_rows(p) for p in parts), default=0)
        out: dict[str, np.ndarray] = {}
        for i, part in enumerate(parts):
            for name, col in part.items():
                padded = np.full(length, np.nan)
                padded[: len(col)] = np.asarray(col, dtype=np.float64)
                out[f"m{i}:{name}"] = padded
        return out

    def describe(self) -> dict[str, Any]:
        """Plain-JSON summary for the artifact's metadata (what ``from_payload`` needs)."""
        out: dict[str, Any] = {"method": self.method, "params": self.params}
        if self.rows is None:
            out["marginals"] = [
                {
                    "column": c,
                    "payload_rows": _payload_rows(m.payload()),
                    "sampler": {"kind": m.kind, **m.describe()},
                }
                for c, m in zip(self.columns, self._marginals, strict=True)
            ]
        out["support"] = [[json_float(v) for v in m.support] for m in self._marginals]
        out["mean"] = [json_float(m.mean) for m in self._marginals]
        out["sd"] = [json_float(m.sd) for m in self._marginals]
        return out

    @classmethod
    def from_payload(
        cls, payload: dict[str, np.ndarray], described: dict[str, Any]
    ) -> JointSampler:
        """Rebuild from an artifact's table and its ``sampler`` metadata section.

        Each marginal is rebuilt by the class registered for its kind (the store imports every
        kind before it rebuilds an artifact).
        """
        params = described["params"]
        columns = list(params["columns"])
        coupling = params["coupling"]
        if coupling == "rows":
            missing = [c for c in columns if c not in payload]
            if missing:
                raise ArtifactError(f"payload: no column {missing[0]!r} of the observed rows")
            rows = np.column_stack([np.asarray(payload[c], dtype=np.float64) for c in columns])
            return cls(columns, coupling="rows", rows=rows, method=described["method"])
        entries = described["marginals"]
        if [e["column"] for e in entries] != columns:
            raise ArtifactError("marginals: their columns do not match params.columns")
        marginals = [_rebuild_marginal(i, e, payload) for i, e in enumerate(entries)]
        return cls(
            columns,
            coupling=coupling,
            marginals=marginals,
            rank_correlation=params.get("rank_correlation"),
            correlation=params.get("correlation"),
            df=params.get("df"),
            method=described["method"],
        )

    def __repr__(self) -> str:
        return f"<JointSampler coupling={self.coupling!r} columns={list(self.columns)!r}>"


# registered beside the one-dimensional kinds, so load_sampler rebuilds it by its kind
SAMPLER_KINDS[JointSampler.kind] = JointSampler  # type: ignore[assignment]


def _transform(coupling: str) -> Callable[..., np.ndarray]:
    """The draw-time dependence transform of ``coupling`` (imported on first use)."""
    module, _, name = _TRANSFORMS[coupling].partition(":")
    return cast(Callable[..., np.ndarray], getattr(importlib.import_module(module), name))


def _payload_rows(part: Mapping[str, np.ndarray]) -> int:
    """Length of a one-dimensional sampler's payload (all its columns share it)."""
    return max((len(col) for col in part.values()), default=0)


def _rebuild_marginal(i: int, entry: Mapping[str, Any], payload: Mapping[str, Any]) -> Sampler:
    described = dict(entry["sampler"])
    kind = described.get("kind")
    cls = SAMPLER_KINDS.get(str(kind))
    if cls is None or cls is cast(Any, JointSampler):
        raise ArtifactError(f"marginal {i} ({entry['column']!r}): unknown sampler kind {kind!r}")
    prefix = f"m{i}:"
    length = int(entry["payload_rows"])
    own = {
        name[len(prefix) :]: np.asarray(col, dtype=np.float64)[:length]
        for name, col in payload.items()
        if name.startswith(prefix)
    }
    return cls.from_payload(own, described)


def _check_columns(columns: object) -> tuple[str, ...]:
    if isinstance(columns, str) or not isinstance(columns, Sequence):
        raise MethodError(f"columns: expected a list of column names, found {columns!r}")
    names = tuple(columns)
    bad = [c for c in names if not isinstance(c, str) or not c]
    if bad:
        raise MethodError(f"columns: expected non-empty strings, found {bad[0]!r}")
    if len(names) < 2:
        raise MethodError(f"columns: a joint sampler needs at least 2 columns, found {len(names)}")
    twice = sorted({c for c in names if names.count(c) > 1})
    if twice:
        raise MethodError(f"columns: {twice[0]!r} is listed more than once")
    return names


def _check_rows(rows: object, d: int) -> np.ndarray:
    try:
        a = np.array(rows, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputDataError(f"rows: expected a numeric 2-D array, found {exc}") from None
    if a.ndim != 2 or a.shape[1] != d or a.shape[0] < 1:
        raise InputDataError(f"rows: expected shape (n >= 1, {d}), found {a.shape}")
    bad = ~np.isfinite(a)
    if bad.any():
        row, col = np.argwhere(bad)[0]
        raise InputDataError(f"rows: expected finite values, found {a[row, col]} at row {row}")
    a.flags.writeable = False
    return a


def _check_marginals(marginals: object, columns: tuple[str, ...]) -> tuple[Sampler, ...]:
    items = tuple(cast(Sequence[Any], marginals))
    if len(items) != len(columns):
        raise MethodError(
            f"marginals: expected one sampler per column ({len(columns)}), found {len(items)}"
        )
    for c, m in zip(columns, items, strict=True):
        if not isinstance(m, Sampler):
            raise MethodError(
                f"marginals: expected a one-dimensional sampler for column {c!r}, "
                f"found {type(m).__name__}"
            )
    return items


def _check_matrix(matrix: object, name: str, d: int) -> np.ndarray:
    """A d x d symmetric matrix with unit diagonal and entries in [-1, 1], exactly symmetrised."""
    try:
        a = np.array(matrix, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise MethodError(f"{name}: expected a numeric square matrix, found {exc}") from None
    if a.shape != (d, d):
        raise MethodError(
            f"{name}: expected a {d}x{d} matrix (one row per column), found {a.shape}"
        )
    if not np.all(np.isfinite(a)):
        raise MethodError(f"{name}: expected finite entries, found {a[~np.isfinite(a)][0]}")
    if np.abs(a - a.T).max() > _ENTRY_TOL:
        raise MethodError(f"{name}: expected a symmetric matrix")
    if np.abs(np.diag(a) - 1.0).max() > _ENTRY_TOL:
        raise MethodError(f"{name}: expected 1 on the diagonal, found {np.diag(a).tolist()}")
    if np.abs(a).max() > 1.0 + _ENTRY_TOL:
        raise MethodError(f"{name}: expected entries in [-1, 1], found {a[np.abs(a) > 1][0]}")
    a = np.clip((a + a.T) / 2.0, -1.0, 1.0)
    np.fill_diagonal(a, 1.0)
    return a


def _check_psd(a: np.ndarray, name: str, *, reach: bool) -> None:
    lowest = float(np.linalg.eigvalsh(a)[0])
    if lowest < -_PSD_TOL:
        what = "reachable by Iman-Conover's normal scores" if reach else "positive semi-definite"
        raise MethodError(
            f"{name}: expected a matrix {what} (smallest eigenvalue {lowest:.3g}); "
            "fit_joint repairs such a matrix to the nearest valid one"
        )
