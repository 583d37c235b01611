"""Weighted mixtures of whole samplers: the shared core, and model averaging (kind ``averaged``).

With component samplers ``F_1 .. F_k`` of any kinds and weights ``w_j`` (> 0, summing to 1)::

    F(x) = sum_j w_j F_j(x),   f(x) = sum_j w_j f_j(x),   p(x) = sum_j w_j p_j(x)

:class:`ComponentMixture` implements this once for every mixture of samplers (this module's
:class:`AveragedSampler` and the parameter-uncertainty ensembles of
:mod:`samplewright.distributions.ensemble`):

* ``quantile`` is the generalised inverse ``Q(u) = inf{x : F(x) >= u}``. It lies between the
  smallest and the largest of the components' quantiles at ``u`` (left of its own quantile each
  ``F_j`` is below ``u``). When every component is an empirical (or empirical pmf) sampler, the
  mixture is itself a step CDF on the union of their atoms and ``Q`` is read from that table,
  cumulative masses compared with ``u`` up to a relative 1e-11 (as
  :mod:`samplewright.resample.statistics` does), so a level the masses reach exactly
  (``k / N``) selects the atom that reaches it despite rounding in their sum. Otherwise ``F`` is
  inverted numerically: when every component is continuous (a density and no atoms),
  safeguarded Newton steps solve ``F(x) = u`` inside the bracket, to the accuracy ``F`` itself
  has; else the bracket is bisected on the ordered bit patterns of the doubles (at most 64
  halvings) down to two neighbouring doubles, and the upper one is returned, which is exactly an
  atom where ``F`` jumps across ``u``. Requests of 256 levels or more first solve ``Q`` once at
  1,023 equally spaced levels and take the neighbouring solutions as a much tighter bracket.
  ``F`` sums the components in one fixed order, so it does not depend on the request's size or
  on the machine's BLAS.
* native draws take from each component a multinomial number of draws (by weight), made by its
  own native path, in shuffled order (the law of picking a component per draw, faster); a
  uniform source goes through ``quantile`` (the base class's final ``draw``).
* ``mean`` is ``sum w_j m_j`` and ``var`` the law of total variance.

:class:`AveragedSampler` is such a mixture of heterogeneous samplers with labels and recorded
weights, e.g. the candidate families of a dataset weighted by Akaike weights
(:mod:`samplewright.fitting.averaged`). Artifact layout: each component's payload columns,
prefixed ``c<j>:`` and padded with NaN to the longest; ``describe()`` nests each component's own
description (with its ``kind``, label, weight and payload length) under ``"components"``.
"""

from __future__ import annotations

import importlib
import math
import re
from collections.abc import Mapping, Sequence
from functools import cached_property
from typing import Any

import numpy as np

from samplewright.core.errors import ArtifactError, MethodError
from samplewright.distributions.base import (
    SAMPLER_KINDS,
    Sampler,
    Size,
    check_probabilities,
    json_float,
)
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.empirical_pmf import EmpiricalPmfSampler
from samplewright.distributions.steps import step_cdf, step_index

__all__ = [
    "AveragedSampler",
    "ComponentMixture",
    "check_mixture_weights",
    "is_continuous",
    "rebuild_nested",
]

_WEIGHT_TOL = 1e-9  # weights must sum to 1 within this
_SIGN = np.int64(-(2**63))
_KIND_NAME = re.compile(r"^[a-z][a-z0-9_]*$")
_EPS = float(np.finfo(np.float64).eps)
_CUM_TOL = 1e-11  # as the resample statistics compare cumulative weights with a level
_GRID = 1024  # the quantile table that brackets large quantile requests has _GRID - 1 levels
_GRID_MIN = 256  # requests of fewer levels solve directly until the table exists


def check_mixture_weights(weights: Any, k: int) -> np.ndarray:
    """``weights`` as float64, refused unless ``k`` of them, each > 0, summing to 1 (1e-9)."""
    w = np.asarray(weights, dtype=np.float64).ravel()
    if w.size != k:
        raise MethodError(f"weights: expected {k} weights (one per component), found {w.size}")
    if k == 0 or not np.all(np.isfinite(w) & (w > 0)):
        raise MethodError(f"weights: expected finite weights > 0, found {w.tolist()}")
    if abs(float(w.sum()) - 1.0) > _WEIGHT_TOL:
        raise MethodError(f"weights: expected weights summing to 1, found sum {float(w.sum())!r}")
    return w


def is_continuous(sampler: Sampler) -> bool:
    """Whether ``sampler`` has a density and no atoms (no ``pmf``, or one that raises
    AttributeError, as a continuous parametric family's does)."""
    x = np.asarray([float(np.asarray(sampler.quantile(0.5)))])
    try:
        getattr(sampler, "pdf")(x)  # noqa: B009 - not every kind has one
    except AttributeError:
        return False
    try:
        getattr(sampler, "pmf")(x)  # noqa: B009
    except AttributeError:
        return True
    return False


def rebuild_nested(described: Mapping[str, Any], payload: Mapping[str, np.ndarray]) -> Sampler:
    """A nested sampler from its ``describe()`` (with ``kind``) and its own payload columns.

    The class is the one registered for the kind; a kind not yet imported is looked up in this
    package's module of the same name (every kind lives in ``distributions/<kind>.py``).
    """
    kind = str(described.get("kind"))
    cls = SAMPLER_KINDS.get(kind)
    if cls is None and _KIND_NAME.match(kind):
        try:
            importlib.import_module(f"samplewright.distributions.{kind}")
        except ImportError:
            pass
        cls = SAMPLER_KINDS.get(kind)
    if cls is None:
        raise ArtifactError(f"nested sampler: unknown sampler kind {kind!r}")
    return cls.from_payload(dict(payload), dict(described))


def _weighted(values: np.ndarray, w: np.ndarray) -> np.ndarray:
    """``sum_j w_j values[..., j]`` summed in one fixed order (a BLAS product may sum in an
    order that depends on the array's shape and the machine, and F must not)."""
    return np.sum(values * w, axis=-1)


def _float_key(x: np.ndarray) -> np.ndarray:
    """Integers ordered as the doubles ``x`` are (neighbouring doubles differ by 1)."""
    bits = np.ascontiguousarray(x, dtype=np.float64).view(np.int64)
    return np.where(bits < 0, _SIGN - bits, bits)


def _from_key(key: np.ndarray) -> np.ndarray:
    bits = np.where(key < 0, _SIGN - key, key)
    return np.ascontiguousarray(bits, dtype=np.int64).view(np.float64)


def _bisect(cdf: Any, u: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """``inf{x : cdf(x) >= u}`` given ``cdf(lo) < u <= cdf(hi)``, to neighbouring doubles."""
    a, b = _float_key(lo), _float_key(hi)
    active = np.flatnonzero(b - a > 1)
    for _ in range(64):
        if active.size == 0:
            break
        aa, bb = a[active], b[active]
        mid = (aa >> 1) + (bb >> 1) + (aa & bb & 1)  # floor average without overflow
        reached = np.asarray(cdf(_from_key(mid)), dtype=np.float64) >= u[active]
        b[active] = np.where(reached, mid, bb)
        a[active] = np.where(reached, aa, mid)
        active = active[b[active] - a[active] > 1]
    return _from_key(b)


def _newton(
    cdf: Any, pdf: Any, u: np.ndarray, lo: np.ndarray, hi: np.ndarray, x0: np.ndarray
) -> np.ndarray:
    """Solve ``cdf(x) = u`` for a continuous ``cdf`` in ``[lo, hi]`` from ``x0``: Newton steps
    that stay inside the shrinking bracket, else halvings. Stops where ``|F(x) - u|`` is within
    4 ulps of ``u`` (the accuracy ``F`` itself has), the step or the bracket within 4 ulps of x.
    """
    a, b, x = lo.copy(), hi.copy(), x0.copy()
    tol = 4.0 * _EPS * u
    active = np.arange(u.size)
    for _ in range(200):
        if active.size == 0:
            break
        xa = x[active]
        f = np.asarray(cdf(xa), dtype=np.float64) - u[active]
        below = f < 0
        a[active] = np.where(below, xa, a[active])
        b[active] = np.where(below, b[active], xa)
        aa, bb = a[active], b[active]
        with np.errstate(divide="ignore", invalid="ignore"):
            step = xa - f / np.asarray(pdf(xa), dtype=np.float64)
        inside = np.isfinite(step) & (step > aa) & (step < bb)
        new = np.where(inside, step, 0.5 * (aa + bb))
        ulps = 4.0 * _EPS * np.maximum(np.abs(xa), np.abs(new))
        done = (np.abs(f) <= tol[active]) | (np.abs(new - xa) <= ulps) | (bb - aa <= ulps)
        x[active] = np.where(done, xa, new)
        active = active[~done]
    return x


class ComponentMixture(Sampler):
    """The shared core of mixtures of samplers (see the module docstring); not a kind itself.

    A subclass calls :meth:`_set_weights` in its constructor and provides :meth:`component`;
    it may override :meth:`_each`, :meth:`_draw_component`, :meth:`_moments` and
    :meth:`_continuous` with faster paths for its layout.
    """

    _weights: np.ndarray

    def _set_weights(self, weights: np.ndarray) -> None:
        self._weights = weights

    @property
    def n_components(self) -> int:
        """Number of components."""
        return int(self._weights.size)

    def component(self, j: int) -> Sampler:  # pragma: no cover - every subclass overrides
        """The ``j``-th component sampler."""
        raise NotImplementedError

    # --- per-component evaluation (overridable) ---------------------------------------------

    def _each(self, name: str, x: np.ndarray) -> np.ndarray:
        """``component(j).<name>(x)`` for every component: shape ``x.shape + (k,)``."""
        cols = [
            np.asarray(getattr(self.component(j), name)(x), dtype=np.float64)
            for j in range(self.n_components)
        ]
        return np.stack(cols, axis=-1)

    def _mix(self, name: str, x: Any) -> np.ndarray:
        """``sum_j w_j component(j).<name>(x)``, in blocks that bound the memory."""
        xx = np.asarray(x, dtype=np.float64)
        flat = xx.reshape(-1)
        out = np.empty(flat.size)
        w = self._weights
        step = max(1, (1 << 21) // self.n_components)
        for start in range(0, flat.size, step):
            out[start : start + step] = _weighted(self._each(name, flat[start : start + step]), w)
        return out.reshape(xx.shape)

    def _draw_component(self, j: int, size: Size, gen: np.random.Generator) -> np.ndarray:
        """Native draws of component ``j``."""
        return np.asarray(self.component(j).draw(size, rng=gen), dtype=np.float64)

    def _moments(self) -> tuple[np.ndarray, np.ndarray]:
        """Each component's mean and variance."""
        comps = [self.component(j) for j in range(self.n_components)]
        return (
            np.array([c.mean for c in comps], dtype=np.float64),
            np.array([c.var for c in comps], dtype=np.float64),
        )

    def _continuous(self) -> bool:
        """Whether every component is continuous (then ``quantile`` may take Newton steps)."""
        return all(is_continuous(self.component(j)) for j in range(self.n_components))

    @cached_property
    def _atoms(self) -> tuple[np.ndarray, np.ndarray] | None:
        """The merged step table ``(atoms, cumulative mass)`` when every component is an
        empirical or empirical-pmf sampler, else None."""
        parts, masses = [], []
        for j in range(self.n_components):
            c = self.component(j)
            if not isinstance(c, EmpiricalSampler | EmpiricalPmfSampler):
                return None
            a = np.unique(c.values)
            parts.append(a)
            masses.append(np.asarray(c.pmf(a), dtype=np.float64) * self._weights[j])
        atoms = np.concatenate(parts)
        order = np.argsort(atoms, kind="stable")
        cum = np.cumsum(np.concatenate(masses)[order])
        cum[-1] = 1.0
        return atoms[order], cum

    @cached_property
    def _is_continuous(self) -> bool:
        return self._continuous()

    # --- the sampler interface --------------------------------------------------------------

    def cdf(self, x: Any) -> np.ndarray:
        table = self._atoms
        if table is not None:
            return step_cdf(table[0], table[1], x)
        return self._mix("cdf", x)

    def pdf(self, x: Any) -> np.ndarray:
        """``sum_j w_j f_j(x)``; AttributeError when a component has no density."""
        return self._mix("pdf", x)

    def pmf(self, x: Any) -> np.ndarray:
        """``sum_j w_j p_j(x)``; AttributeError when a component has no mass function."""
        return self._mix("pmf", x)

    def quantile(self, u: Any) -> np.ndarray:
        """The generalised inverse of ``cdf`` (method in the module docstring)."""
        p = check_probabilities(u)
        flat = p.reshape(-1)
        table = self._atoms
        if table is not None:  # cumulative masses reach u up to a relative _CUM_TOL
            return table[0][step_index(table[1], flat * (1.0 - _CUM_TOL))].reshape(p.shape)
        out = np.empty(flat.size)
        step = max(1, (1 << 21) // self.n_components)
        for start in range(0, flat.size, step):
            out[start : start + step] = self._quantile_block(flat[start : start + step])
        return out.reshape(p.shape)

    @cached_property
    def _grid(self) -> tuple[np.ndarray, np.ndarray]:
        """The quantile at ``_GRID - 1`` equally spaced levels, solved once: its neighbours
        bracket the quantile of any level between them tightly."""
        levels = np.arange(1, _GRID) / _GRID
        each = self._each("quantile", levels)
        return levels, self._solve(levels, each.min(axis=-1), each.max(axis=-1))

    def _quantile_block(self, q: np.ndarray) -> np.ndarray:
        if q.size < _GRID_MIN and "_grid" not in self.__dict__:
            each = self._each("quantile", q)
            return self._solve(q, each.min(axis=-1), each.max(axis=-1))
        levels, values = self._grid
        i = np.searchsorted(levels, q, side="left")  # levels[i - 1] < q <= levels[i]
        last = levels.size - 1
        lo = values[np.maximum(i - 1, 0)]
        hi = values[np.minimum(i, last)]
        # start Newton where the straight line between the neighbours reaches q
        start = lo + (hi - lo) * np.clip(q * _GRID - i, 0.0, 1.0)
        below, above = (i == 0) | (q <= 0), (i > last) | (q >= 1)
        outside = np.flatnonzero(below | above)
        if outside.size:
            each = self._each("quantile", q[outside])
            lo[outside] = np.where(below[outside], each.min(axis=-1), lo[outside])
            hi[outside] = np.where(above[outside], each.max(axis=-1), hi[outside])
            start[outside] = 0.5 * (lo[outside] + hi[outside])
        return self._solve(q, lo, hi, start)

    def _solve(
        self, q: np.ndarray, lo: np.ndarray, hi: np.ndarray, start: np.ndarray | None = None
    ) -> np.ndarray:
        """``Q(q)`` inside the bracket ``[lo, hi]`` (``lo`` for q <= 0, ``hi`` for q >= 1)."""
        out = hi.copy()
        out[q <= 0] = lo[q <= 0]
        open_ = np.flatnonzero((q > 0) & (q < 1) & (hi > lo))
        if open_.size == 0:
            return out
        qq, a = q[open_], lo[open_]
        at_lo = np.asarray(self.cdf(a), dtype=np.float64) >= qq  # F(lo) >= u: lo itself
        out[open_[at_lo]] = a[at_lo]
        rest = open_[~at_lo]
        if rest.size:
            qq, a, b = q[rest], lo[rest], hi[rest]
            if self._is_continuous:
                x0 = 0.5 * (a + b) if start is None else np.clip(start[rest], a, b)
                out[rest] = _newton(self.cdf, self.pdf, qq, a, b, x0)
            else:
                out[rest] = _bisect(self.cdf, qq, a, b)
        return out

    def _draw_native(self, size: Size, gen: np.random.Generator) -> np.ndarray:
        """How many draws each component gives is multinomial by weight; each gives them by
        its native path, and the lot is shuffled: the same law as a component per draw."""
        shape = (int(size),) if isinstance(size, int | np.integer) else tuple(size)
        n = math.prod(shape)
        counts = gen.multinomial(n, self._weights / self._weights.sum())
        out = np.empty(n)
        start = 0
        for j in np.flatnonzero(counts):
            c = int(counts[j])
            out[start : start + c] = self._draw_component(int(j), c, gen)
            start += c
        gen.shuffle(out)
        return out.reshape(shape)

    @property
    def mean(self) -> float:
        m, _ = self._moments()
        return float(_weighted(m, self._weights))

    @property
    def var(self) -> float:
        """``sum_j w_j (v_j + (m_j - mean)^2)`` (infinite when a component's is)."""
        m, v = self._moments()
        if not (np.all(np.isfinite(m)) and np.all(np.isfinite(v))):
            return math.inf
        mean = float(_weighted(m, self._weights))
        return float(_weighted(v + (m - mean) ** 2, self._weights))

    @property
    def support(self) -> tuple[float, float]:
        ends = np.array([self.component(j).support for j in range(self.n_components)])
        return float(ends[:, 0].min()), float(ends[:, 1].max())


def _payload_rows(part: Mapping[str, np.ndarray]) -> int:
    return max((len(col) for col in part.values()), default=0)


class AveragedSampler(ComponentMixture):
    """A weighted mixture of samplers of any kinds, each with a label (kind ``averaged``).

    Parameters
    ----------
    components : sequence of Sampler
        The component samplers (at least one).
    weights : array_like
        One weight per component, > 0, summing to 1 within 1e-9 (kept as given).
    labels : sequence of str
        One distinct non-empty label per component (e.g. the family name).
    method : str
        The method that made it (default ``"averaged"``).
    criterion : str, optional
        What the weights came from (``"aic"``, ``"bic"``), recorded in ``params``.
    diagnostics : mapping, optional
        Plain-JSON sections the fit recorded.

    >>> from samplewright.distributions.parametric import ParametricSampler
    >>> a = ParametricSampler("normal", {"mu": 0.0, "sigma": 1.0})
    >>> b = ParametricSampler("normal", {"mu": 10.0, "sigma": 1.0})
    >>> s = AveragedSampler([a, b], [0.5, 0.5], labels=["low", "high"])
    >>> float(s.cdf(5.0)), float(s.quantile(0.5)), s.mean
    (0.5, 5.0, 5.0)
    """

    kind = "averaged"

    def __init__(
        self,
        components: Sequence[Sampler],
        weights: Any,
        *,
        labels: Sequence[str],
        method: str = "averaged",
        criterion: str | None = None,
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        comps = list(components)
        if not comps or not all(isinstance(c, Sampler) for c in comps):
            raise MethodError("components: expected one or more samplers")
        names = list(labels)
        if len(names) != len(comps) or len(set(names)) != len(names):
            raise MethodError(
                f"labels: expected {len(comps)} distinct labels (one per component), found {names}"
            )
        if not all(isinstance(n, str) and n for n in names):
            raise MethodError(f"labels: expected non-empty strings, found {names}")
        w = check_mixture_weights(weights, len(comps))
        self._components = comps
        self.labels = tuple(names)
        self.criterion = criterion
        self._set_weights(w)
        params: dict[str, Any] = {
            "labels": list(names),
            "weights": [float(v) for v in w],
            "criterion": criterion,
        }
        super().__init__(method=method, params=params, diagnostics=diagnostics)

    @property
    def weights(self) -> np.ndarray:
        """The components' weights."""
        return self._weights.copy()

    def component(self, j: int) -> Sampler:
        """The ``j``-th component sampler."""
        return self._components[j]

    def payload(self) -> dict[str, np.ndarray]:
        """Each component's payload columns under ``c<j>:``, padded with NaN to the longest."""
        parts = [c.payload() for c in self._components]
        length = max((_payload_rows(p) for p in parts), default=0)
        out: dict[str, np.ndarray] = {}
        for j, part in enumerate(parts):
            for name, col in part.items():
                padded = np.full(length, np.nan)
                padded[: len(col)] = np.asarray(col, dtype=np.float64)
                out[f"c{j}:{name}"] = padded
        return out

    def describe(self) -> dict[str, Any]:
        out = super().describe()
        out["components"] = [
            {
                "label": label,
                "weight": json_float(w),
                "payload_rows": _payload_rows(c.payload()),
                "sampler": {"kind": c.kind, **c.describe()},
            }
            for label, w, c in zip(self.labels, self._weights, self._components, strict=True)
        ]
        return out

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        params = described["params"]
        entries = described["components"]
        comps = []
        for j, entry in enumerate(entries):
            prefix, length = f"c{j}:", int(entry["payload_rows"])
            own = {
                name[len(prefix) :]: np.asarray(col, dtype=np.float64)[:length]
                for name, col in payload.items()
                if name.startswith(prefix)
            }
            comps.append(rebuild_nested(entry["sampler"], own))
        return cls(
            comps,
            params["weights"],
            labels=params["labels"],
            method=described["method"],
            criterion=params.get("criterion"),
        )

    def __repr__(self) -> str:
        pairs = ", ".join(f"{n}={w:.3g}" for n, w in zip(self.labels, self._weights, strict=True))
        return f"<AveragedSampler method={self.method!r} weights: {pairs}>"
