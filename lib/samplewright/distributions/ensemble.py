"""Parameter uncertainty as one sampler: an ensemble of refitted replicates (kind ``ensemble``).

An ensemble holds ``n_replicates`` samplers of one method, each fitted to one replicate of the
data (:func:`samplewright.fitting.replicates.fit_replicates` makes them: ``nonparametric``
replicates refit bootstrap resamples of the data, ``parametric`` ones refit samples simulated
from the point fit), together with the point fit itself. Each replicate is one plausible world.

* ``draw(size, rng=...)`` draws from the equal-weight mixture of the replicates (the predictive
  distribution, parameter uncertainty folded in): in law, a replicate per draw, then that
  replicate's own native draw. ``cdf`` is the mean of the replicates' CDFs and ``quantile``
  its generalised inverse (:class:`~samplewright.distributions.averaged.ComponentMixture`).
* ``draw_nested(n_outer, n_inner, rng=...)`` keeps the two apart for two-level Monte Carlo: row
  ``i`` of the ``(n_outer, n_inner)`` result is ``n_inner`` draws from one replicate (the outer
  level: which world; the inner level: variability within it).
* ``replicate(i)`` is the ``i``-th replicate as a sampler, ``point`` the point fit.

Artifact layout (all replicates of one method in ONE artifact):

* ``parameters``: when every replicate is a parametric family of one family, one payload column
  per family parameter with one row per replicate; the point fit's description is in
  ``describe()["point"]``.
* ``stacked``: otherwise, every replicate's own payload one after the other, with a column
  ``replicate`` holding its index (``-1`` for the point fit's rows), columns a replicate lacks
  filled with NaN; ``describe()["replicates"]`` lists each replicate's own description (with its
  ``kind`` and number of rows), ``describe()["point"]`` the point fit's.

``params`` records the method, the kind of replication, ``n_replicates``, how many fits were
requested and how many failed; ``describe()["failures"]`` and ``["warnings"]`` say which
attempts failed or warned, and why, so no replicate is dropped without a record.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any, Literal, get_args

import numpy as np

from samplewright.core.errors import ArtifactError, MethodError
from samplewright.core.randomness import SeedLike, UniformSource, make_rng
from samplewright.distributions.averaged import ComponentMixture, rebuild_nested
from samplewright.distributions.base import Sampler, Size, check_probabilities
from samplewright.distributions.families import get_family
from samplewright.distributions.parametric import ParametricSampler

__all__ = [
    "EnsembleSampler",
    "OUTER_CHOICES",
    "OuterChoice",
    "REPLICATIONS",
    "Replication",
]

# how the replicates were made: refits of resampled data, or of data simulated from the point fit
Replication = Literal["nonparametric", "parametric"]
REPLICATIONS: tuple[Replication, ...] = get_args(Replication)
# how draw_nested picks the world of each outer row: iid uniformly, or replicates 0, 1, ... in turn
OuterChoice = Literal["random", "cycle"]
OUTER_CHOICES: tuple[OuterChoice, ...] = get_args(OuterChoice)
_REPLICATE_COLUMN = "replicate"


def _records(items: Sequence[Mapping[str, Any]], what: str) -> list[dict[str, Any]]:
    out = []
    for item in items:
        if not isinstance(item, Mapping) or set(item) != {"attempt", "message"}:
            raise MethodError(f"{what}: expected entries {{'attempt': int, 'message': str}}")
        out.append({"attempt": int(item["attempt"]), "message": str(item["message"])})
    return out


class EnsembleSampler(ComponentMixture):
    """Replicate fits of one method, drawn as their mixture or world by world.

    Build it from ``replicates`` (samplers), or from ``family`` and ``parameters`` (a mapping
    of each family parameter to one value per replicate), not both.

    Parameters
    ----------
    replicates : sequence of Sampler, optional
        The replicate samplers, all made by ``method``.
    method : str
        The method of every replicate (and of the point fit).
    replication : {"nonparametric", "parametric"}
        How the replicates were made.
    point : Sampler, optional
        The fit to the data themselves.
    family : str, optional
        With ``parameters``: the family of every replicate.
    parameters : mapping, optional
        With ``family``: parameter name -> array with one value per replicate.
    n_requested : int, optional
        Replicate fits attempted (default: as many as there are replicates).
    failures, warnings : sequence of mappings
        ``{"attempt": int, "message": str}`` for each attempt that failed (not stored) or that
        warned (stored).
    diagnostics : mapping, optional
        Plain-JSON sections the fit recorded.

    >>> reps = [ParametricSampler("normal", {"mu": m, "sigma": 1.0}) for m in (-1.0, 1.0)]
    >>> s = EnsembleSampler(reps, method="normal", replication="parametric")
    >>> s.n_replicates, s.mean, float(s.cdf(0.0)), s.draw_nested(3, 2, rng=1).shape
    (2, 0.0, 0.5, (3, 2))
    """

    kind = "ensemble"

    def __init__(
        self,
        replicates: Sequence[Sampler] | None = None,
        *,
        method: str,
        replication: Replication,
        point: Sampler | None = None,
        family: str | None = None,
        parameters: Mapping[str, Any] | None = None,
        n_requested: int | None = None,
        failures: Sequence[Mapping[str, Any]] = (),
        warnings: Sequence[Mapping[str, Any]] = (),
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        if replication not in REPLICATIONS:
            raise MethodError(
                f"replication: expected one of {', '.join(REPLICATIONS)}, found {replication!r}"
            )
        if (replicates is None) == (parameters is None):
            raise MethodError("replicates: give either replicate samplers or family parameters")
        self._replicates: list[Sampler] | None = None
        self._table: dict[str, np.ndarray] | None = None
        if replicates is not None:
            reps = list(replicates)
            if not reps or not all(isinstance(r, Sampler) for r in reps):
                raise MethodError("replicates: expected one or more samplers")
            bad = [r.method for r in reps if r.method != method]
            if bad:
                raise MethodError(f"replicates: expected samplers of {method!r}, found {bad[0]!r}")
            fams = {r.family.name for r in reps if isinstance(r, ParametricSampler)}
            flat = point is None or not point.payload()
            if flat and len(fams) == 1 and all(type(r) is ParametricSampler for r in reps):
                family = fams.pop()
                names = get_family(family).param_names
                parameters = {k: np.array([r.params[k] for r in reps]) for k in names}
            else:
                self._replicates = reps
        if self._replicates is None:
            self._set_table(family, parameters)
        n = len(self._replicates) if self._replicates is not None else self._n_table
        if n_requested is None:
            n_requested = n
        self._failures = _records(failures, "failures")
        self._warnings = _records(warnings, "warnings")
        if n_requested != n + len(self._failures):
            raise MethodError(
                f"n_requested: expected {n} replicates + {len(self._failures)} failures, "
                f"found {n_requested}"
            )
        self.point = point
        self.replication: Replication = replication
        self._set_weights(np.full(n, 1.0 / n))
        params: dict[str, Any] = {
            "replication": replication,
            "n_replicates": n,
            "n_requested": int(n_requested),
            "n_failed": len(self._failures),
            "layout": "stacked" if self._replicates is not None else "parameters",
        }
        if self._table is not None:
            params["family"] = self._family.name
        self._cache: dict[int, Sampler] = {}
        super().__init__(method=method, params=params, diagnostics=diagnostics)

    def _set_table(self, family: str | None, parameters: Mapping[str, Any] | None) -> None:
        if family is None or parameters is None:
            raise MethodError("family: parameters need the family they belong to")
        self._family = get_family(family)
        names = self._family.param_names
        if set(parameters) != set(names):
            raise MethodError(
                f"parameters: {family} takes {', '.join(names)}, found {', '.join(parameters)}"
            )
        table = {k: np.asarray(parameters[k], dtype=np.float64).ravel() for k in names}
        sizes = {v.size for v in table.values()}
        if len(sizes) != 1 or 0 in sizes:
            raise MethodError("parameters: expected one value per replicate for each parameter")
        self._n_table = sizes.pop()
        self._table = table
        arrays: Any = table  # scipy broadcasts arrays of parameters: every replicate at once
        self._bound = self._family.bound(arrays)

    # --- replicates ------------------------------------------------------------------------

    @property
    def n_replicates(self) -> int:
        """Number of replicates stored."""
        return self.n_components

    @property
    def failures(self) -> list[dict[str, Any]]:
        """``{"attempt", "message"}`` of each replicate fit that failed."""
        return [dict(f) for f in self._failures]

    @property
    def warnings(self) -> list[dict[str, Any]]:
        """``{"attempt", "message"}`` (the first warning) of each replicate fit that warned."""
        return [dict(w) for w in self._warnings]

    def replicate(self, i: int) -> Sampler:
        """The ``i``-th replicate (0-based) as a sampler."""
        ok = isinstance(i, int | np.integer) and not isinstance(i, bool)
        if not ok or not 0 <= i < self.n_replicates:
            raise MethodError(
                f"i: expected a replicate index in 0..{self.n_replicates - 1}, found {i!r}"
            )
        return self.component(int(i))

    def component(self, j: int) -> Sampler:
        if self._replicates is not None:
            return self._replicates[j]
        if j not in self._cache:
            assert self._table is not None
            row = {k: float(v[j]) for k, v in self._table.items()}
            self._cache[j] = ParametricSampler(self._family.name, row, method=self.method)
        return self._cache[j]

    def replicate_quantiles(self, u: Any) -> np.ndarray:
        """Every replicate's quantiles at ``u``: shape ``(n_replicates,) + shape(u)``."""
        p = check_probabilities(u)
        return np.moveaxis(self._each("quantile", p), -1, 0)

    def draw_nested(
        self,
        n_outer: int,
        n_inner: int,
        rng: SeedLike | UniformSource = None,
        *,
        outer: OuterChoice = "random",
    ) -> np.ndarray:
        """Two-level draws: row ``i`` holds ``n_inner`` draws from one replicate.

        Parameters
        ----------
        n_outer, n_inner : int
            Rows (worlds) and draws per row.
        rng : None, int, SeedSequence, Generator or UniformSource
            With a uniform source, column 0 of its ``(n_outer, n_inner + 1)`` uniforms picks the
            replicate (``floor(u * n_replicates)``) and the rest go through that replicate's
            quantile function.
        outer : {"random", "cycle"}
            ``random``: each row's replicate is drawn uniformly (independently);
            ``cycle``: row ``i`` takes replicate ``i mod n_replicates`` (each world equally often).

        Returns
        -------
        numpy.ndarray
            Shape ``(n_outer, n_inner)``.
        """
        for name, v in (("n_outer", n_outer), ("n_inner", n_inner)):
            if isinstance(v, bool) or not isinstance(v, int | np.integer) or v < 0:
                raise MethodError(f"{name}: expected an int >= 0, found {v!r}")
        if outer not in OUTER_CHOICES:
            raise MethodError(f"outer: expected one of {', '.join(OUTER_CHOICES)}, found {outer!r}")
        b = self.n_replicates
        out = np.empty((int(n_outer), int(n_inner)))
        if isinstance(rng, UniformSource):
            u = np.asarray(rng.uniforms((int(n_outer), int(n_inner) + 1)), dtype=np.float64)
            if u.shape != (n_outer, n_inner + 1):
                raise MethodError(f"rng: the uniform source gave shape {u.shape}")
            which = np.minimum((u[:, 0] * b).astype(np.int64), b - 1)
            if outer == "cycle":
                which = np.arange(n_outer) % b
            for j in np.unique(which):
                rows = np.flatnonzero(which == j)
                out[rows] = self.component(int(j)).quantile(u[rows, 1:])
            return out
        gen = make_rng(rng)
        which = gen.integers(0, b, int(n_outer)) if outer == "random" else np.arange(n_outer) % b
        for j in np.unique(which):
            rows = np.flatnonzero(which == j)
            out[rows] = self._draw_component(int(j), (rows.size, int(n_inner)), gen)
        return out

    # --- fast paths of the parameters layout -----------------------------------------------

    _SCIPY = {"cdf": "cdf", "pdf": "pdf", "pmf": "pmf", "quantile": "ppf"}

    def _each(self, name: str, x: np.ndarray) -> np.ndarray:
        if self._table is None:
            return super()._each(name, x)
        if (name == "pdf" and self._family.discrete) or (
            name == "pmf" and not self._family.discrete
        ):
            raise AttributeError(f"{self._family.name} has no {name}")
        xx = np.asarray(x, dtype=np.float64)[..., None]
        return np.asarray(getattr(self._bound, self._SCIPY[name])(xx), dtype=np.float64)

    def _draw_component(self, j: int, size: Size, gen: np.random.Generator) -> np.ndarray:
        if self._table is None:
            return super()._draw_component(j, size, gen)
        row = {k: float(v[j]) for k, v in self._table.items()}
        return np.asarray(self._family.draw(row, size, gen), dtype=np.float64)

    def _moments(self) -> tuple[np.ndarray, np.ndarray]:
        if self._table is None:
            return super()._moments()
        arrays: Any = self._table
        m, v = self._family.scipy_dist.stats(moments="mv", **self._family.scipy_kwargs(arrays))
        return np.asarray(m, dtype=np.float64), np.asarray(v, dtype=np.float64)

    def _continuous(self) -> bool:
        if self._table is None:
            return super()._continuous()
        return not self._family.discrete

    @property
    def support(self) -> tuple[float, float]:
        if self._table is None:
            return super().support
        lo, hi = self._bound.support()
        return float(np.min(lo)), float(np.max(hi))

    # --- artifact --------------------------------------------------------------------------

    def payload(self) -> dict[str, np.ndarray]:
        """One row per replicate (parameters), or every replicate's payload stacked."""
        if self._table is not None:
            return {k: v.copy() for k, v in self._table.items()}
        blocks = [(-1, self.point.payload())] if self.point is not None else []
        blocks += [(i, r.payload()) for i, r in enumerate(self._replicates or [])]
        names: list[str] = []
        for _, part in blocks:
            names += [c for c in part if c not in names]
        if _REPLICATE_COLUMN in names:
            raise MethodError(f"payload: a replicate has a column named {_REPLICATE_COLUMN!r}")
        rows = [_rows(part) for _, part in blocks]
        ids = [np.full(n, float(i)) for (i, _), n in zip(blocks, rows, strict=True)]
        out = {_REPLICATE_COLUMN: np.concatenate(ids) if ids else np.empty(0)}
        for c in names:
            cols = [
                np.asarray(part[c], dtype=np.float64) if c in part else np.full(n, np.nan)
                for (_, part), n in zip(blocks, rows, strict=True)
            ]
            out[c] = np.concatenate(cols)
        return out

    def describe(self) -> dict[str, Any]:
        out = super().describe()
        out["point"] = None if self.point is None else _nested(self.point)
        if self._replicates is not None:
            out["replicates"] = [_nested(r) for r in self._replicates]
        out["failures"] = self.failures
        out["warnings"] = self.warnings
        return out

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        params = described["params"]
        method = described["method"]
        common: dict[str, Any] = {
            "method": method,
            "replication": params["replication"],
            "n_requested": params["n_requested"],
            "failures": described.get("failures", []),
            "warnings": described.get("warnings", []),
        }
        if params["layout"] == "parameters":
            point_d = described.get("point")
            point = None if point_d is None else rebuild_nested(point_d["sampler"], {})
            names = get_family(params["family"]).param_names
            missing = [k for k in names if k not in payload]
            if missing:
                raise ArtifactError(f"payload: no column {missing[0]!r} of the replicates")
            return cls(
                family=params["family"],
                parameters={k: payload[k] for k in names},
                point=point,
                **common,
            )
        ids = np.asarray(payload[_REPLICATE_COLUMN], dtype=np.float64)
        entries = ([(-1, described["point"])] if described.get("point") else []) + list(
            enumerate(described["replicates"])
        )
        built: list[Sampler] = []
        start = 0
        for i, entry in entries:
            n, cols = int(entry["rows"]), entry["columns"]
            if n and not np.all(ids[start : start + n] == i):
                raise ArtifactError(f"payload: rows of replicate {i} are not where described")
            own = {c: np.asarray(payload[c], dtype=np.float64)[start : start + n] for c in cols}
            built.append(rebuild_nested(entry["sampler"], own))
            start += n
        point = built.pop(0) if described.get("point") else None
        return cls(built, point=point, **common)

    def __repr__(self) -> str:
        return (
            f"<EnsembleSampler method={self.method!r} replication={self.replication!r} "
            f"n_replicates={self.n_replicates}>"
        )


def _rows(part: Mapping[str, np.ndarray]) -> int:
    lengths = {len(col) for col in part.values()}
    if len(lengths) > 1:
        raise MethodError(f"payload: a replicate's columns differ in length ({sorted(lengths)})")
    return lengths.pop() if lengths else 0


def _nested(s: Sampler) -> dict[str, Any]:
    part = s.payload()
    return {
        "rows": _rows(part),
        "columns": list(part),
        "sampler": {"kind": s.kind, **s.describe()},
    }
