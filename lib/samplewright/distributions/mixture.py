"""A finite mixture of one continuous family as a sampler (kind ``mixture``).

With weights ``w_j`` (positive, summing to 1) and components ``F_j`` of one family of
:mod:`samplewright.distributions.families`::

    F(x) = sum_j w_j F_j(x),    f(x) = sum_j w_j f_j(x)

The quantile function has no closed form: ``Q(u)`` lies between the smallest and the largest of
the components' quantiles at ``u`` (each ``F_j`` is below ``u`` left of its own quantile), and
safeguarded Newton steps on ``F`` inside that bracket reach it to about 1e-14 relative. Native
draws pick a component by weight (:func:`~samplewright.distributions.steps.draw_indices`) and
then draw from it with the family's own generator; a uniform source goes through ``quantile``.

The payload holds one row per component: ``weight`` and one column per family parameter (its
trade name, as in the families table). Fitting mixtures by EM is in
:mod:`samplewright.fitting.mixtures` (the ``mixture`` method in
:mod:`samplewright.fitting.composite`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, Size, check_probabilities, json_float
from samplewright.distributions.families import get_family
from samplewright.distributions.steps import draw_indices

__all__ = ["MixtureSampler", "invert_increasing"]

ArrayFn = Callable[[np.ndarray], np.ndarray]
_WEIGHT_TOL = 1e-9  # weights must sum to 1 within this


def invert_increasing(
    func: ArrayFn,
    deriv: ArrayFn,
    target: np.ndarray,
    lo: np.ndarray,
    hi: np.ndarray,
    *,
    xtol: float = 1e-14,
    max_iter: int = 200,
) -> np.ndarray:
    """Solve ``func(x) = target`` elementwise for an increasing ``func`` with a root in [lo, hi].

    Newton steps are kept while they stay strictly inside the bracket; otherwise the bracket is
    halved, so every element converges (each bisection halves a finite bracket). ``func`` and
    ``deriv`` take and return 1-d arrays.

    >>> invert_increasing(np.exp, np.exp, np.array([2.0]), np.array([0.0]), np.array([1.0]))
    array([0.69314718])
    """
    t = np.asarray(target, dtype=np.float64).ravel()
    a = np.broadcast_to(np.asarray(lo, dtype=np.float64), t.shape).ravel().copy()
    b = np.broadcast_to(np.asarray(hi, dtype=np.float64), t.shape).ravel().copy()
    x = 0.5 * (a + b)
    active = np.flatnonzero(b > a)
    x[b <= a] = a[b <= a]
    for _ in range(max_iter):
        if active.size == 0:
            break
        xa = x[active]
        f = func(xa) - t[active]
        d = deriv(xa)
        below = f < 0
        a[active] = np.where(below, xa, a[active])
        b[active] = np.where(below, b[active], xa)
        aa, bb = a[active], b[active]
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = xa - f / d
        ok = np.isfinite(newton) & (newton > aa) & (newton < bb)
        new = np.where(f == 0, xa, np.where(ok, newton, 0.5 * (aa + bb)))
        scale = np.maximum(np.abs(new), 1.0)
        done = (f == 0) | (np.abs(new - xa) <= xtol * scale) | (bb - aa <= xtol * scale)
        x[active] = new
        active = active[~done]
    return x.reshape(np.shape(target))


class MixtureSampler(Sampler):
    """A finite mixture of one continuous family.

    Parameters
    ----------
    family : str
        A continuous family name (normal, lognormal, gamma, weibull, ...).
    weights : array_like
        Component weights, > 0, summing to 1 within 1e-9 (kept as given, so a payload
        round trip is exact).
    components : mapping
        Each parameter name of the family -> an array with one value per component.
    loglik, aic, bic : float, optional
        The fit's, when it came from one.
    method : str
        The method that made it (default ``"mixture"``).

    >>> s = MixtureSampler("normal", [0.5, 0.5], {"mu": [0.0, 10.0], "sigma": [1.0, 1.0]})
    >>> float(s.cdf(5.0)), float(s.quantile(0.5)), s.mean, round(s.var, 12)
    (0.5, 5.0, 5.0, 26.0)
    """

    kind = "mixture"

    def __init__(
        self,
        family: str,
        weights: Any,
        components: Mapping[str, Any],
        *,
        loglik: float | None = None,
        aic: float | None = None,
        bic: float | None = None,
        method: str = "mixture",
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        self.family = get_family(family)
        if self.family.discrete:
            raise MethodError(f"family: a mixture needs a continuous family, found {family!r}")
        w = np.asarray(weights, dtype=np.float64).ravel()
        if w.size == 0 or not np.all(np.isfinite(w) & (w > 0)):
            raise MethodError(f"weights: expected at least one weight, every one > 0, found {w}")
        if abs(float(w.sum()) - 1.0) > _WEIGHT_TOL:
            raise MethodError(f"weights: expected weights summing to 1, found sum {w.sum()!r}")
        names = self.family.param_names
        missing = sorted(set(names) - set(components))
        extra = sorted(set(components) - set(names))
        if missing or extra:
            raise MethodError(
                f"components: {family} takes {', '.join(names)}; missing: "
                f"{', '.join(missing) or 'none'}; unknown: {', '.join(extra) or 'none'}"
            )
        comp = {k: np.asarray(components[k], dtype=np.float64).ravel() for k in names}
        for k, v in comp.items():
            if v.shape != w.shape or not np.all(np.isfinite(v)):
                raise MethodError(
                    f"components: {k!r} needs {w.size} finite values (one per weight), found {v}"
                )
        self.weights = w
        self.components = comp
        arrays: Any = comp  # scipy broadcasts arrays of parameters: every component at once
        self._dist = self.family.bound(arrays)
        bad = ~np.isfinite(np.asarray(self._dist.ppf(0.5), dtype=np.float64))
        if np.any(bad):
            j = int(np.flatnonzero(np.atleast_1d(bad))[0])
            raise MethodError(
                f"components: component {j + 1} has invalid {family} parameters "
                f"{ {k: float(v[j]) for k, v in comp.items()} }"
            )
        self._cum = np.cumsum(self.weights)
        self._cum[-1] = 1.0
        self.loglik, self.aic, self.bic = loglik, aic, bic
        params = {"family": self.family.name, "n_components": int(w.size)}
        super().__init__(method=method, params=params, diagnostics=diagnostics)

    @property
    def n_components(self) -> int:
        return int(self.weights.size)

    def component_params(self) -> list[dict[str, float]]:
        """The family's parameters of each component (trade names)."""
        return [
            {k: float(v[j]) for k, v in self.components.items()} for j in range(self.n_components)
        ]

    def _each(self, method: str, x: Any) -> np.ndarray:
        """``method`` of every component at every x: shape x.shape + (k,)."""
        xx = np.asarray(x, dtype=np.float64)[..., None]
        return np.asarray(getattr(self._dist, method)(xx), dtype=np.float64)

    def cdf(self, x: Any) -> np.ndarray:
        return self._each("cdf", x) @ self.weights

    def pdf(self, x: Any) -> np.ndarray:
        return self._each("pdf", x) @ self.weights

    def quantile(self, u: Any) -> np.ndarray:
        """Inverse of ``cdf``: Newton steps inside the bracket of the components' quantiles."""
        p = check_probabilities(u)
        flat = p.ravel()
        lo, hi = self.support
        out = np.where(flat <= 0, lo, hi).astype(np.float64)
        inside = np.flatnonzero((flat > 0) & (flat < 1))
        if inside.size:
            q = flat[inside]
            each = self._each("ppf", q)
            if self.n_components == 1:
                out[inside] = each[:, 0]
            else:
                out[inside] = invert_increasing(
                    self.cdf, self.pdf, q, each.min(axis=-1), each.max(axis=-1)
                )
        return out.reshape(p.shape)

    def _draw_native(self, size: Size, gen: np.random.Generator) -> np.ndarray:
        """A component by weight for every draw, then that component's native draws."""
        idx = np.asarray(draw_indices(self.n_components, size, gen, self._cum))
        out = np.empty(idx.shape, dtype=np.float64)
        for j, params in enumerate(self.component_params()):
            hit = idx == j
            n = int(np.count_nonzero(hit))
            if n:
                out[hit] = self.family.draw(params, n, gen)
        return out

    def _moments(self) -> tuple[np.ndarray, np.ndarray]:
        arrays: Any = self.components
        kw = self.family.scipy_kwargs(arrays)
        m, v = self.family.scipy_dist.stats(moments="mv", **kw)
        return np.asarray(m, dtype=np.float64), np.asarray(v, dtype=np.float64)

    @property
    def mean(self) -> float:
        m, _ = self._moments()
        return float(m @ self.weights)

    @property
    def var(self) -> float:
        """``sum w_j (v_j + (m_j - mean)^2)`` (the law of total variance)."""
        m, v = self._moments()
        mean = float(m @ self.weights)
        return float((v + (m - mean) ** 2) @ self.weights)

    @property
    def support(self) -> tuple[float, float]:
        lo, hi = self._dist.support()
        return float(np.min(lo)), float(np.max(hi))

    def payload(self) -> dict[str, np.ndarray]:
        return {"weight": self.weights, **self.components}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        family = described["params"]["family"]
        names = get_family(family).param_names
        return cls(
            family,
            payload["weight"],
            {k: payload[k] for k in names},
            loglik=described.get("loglik"),
            aic=described.get("aic"),
            bic=described.get("bic"),
            method=described["method"],
        )

    def describe(self) -> dict[str, Any]:
        out = super().describe()
        out["family"] = self.family.name
        for k in ("loglik", "aic", "bic"):
            v = getattr(self, k)
            if v is not None:
                out[k] = json_float(v)
        return out
