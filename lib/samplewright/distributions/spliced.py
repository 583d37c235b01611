"""A body spliced to a generalized Pareto tail above a threshold (method ``spliced``).

With threshold ``u``, tail share ``zeta`` and a generalized Pareto distribution ``G`` (shape
``xi``, scale ``sigma``) for the excesses above ``u``::

    F(x) = (1 - zeta) * F_body(x)              for x <= u
    F(x) = 1 - zeta * (1 - G(x - u))           for x > u

so F is continuous at ``u`` and draws can exceed the largest observation. The body is an
empirical sampler or an interpolated (piecewise-linear) one of the values at or below ``u``, or a
parametric family renormalised to ``[.., u]``. How a spliced sampler is fitted (threshold choice,
diagnostics) is in :mod:`samplewright.fitting.spliced`.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, check_probabilities
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.families import get_family
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.piecewise import PiecewiseSampler
from samplewright.distributions.steps import step_index

__all__ = ["SplicedSampler"]


class SplicedSampler(Sampler):
    """A body below ``threshold`` spliced to a generalized Pareto tail above it.

    ``body`` is an :class:`EmpiricalSampler` or :class:`PiecewiseSampler` of the values at or
    below the threshold, or a :class:`ParametricSampler` that is truncated at the threshold.

    >>> body = EmpiricalSampler([1.0, 2.0, 3.0])
    >>> s = SplicedSampler(body, threshold=3.0, zeta=0.25, xi=0.0, sigma=2.0)
    >>> s.cdf([2.0, 3.0]).tolist(), float(s.quantile(0.75)), round(float(s.mean), 6)
    ([0.5, 0.75], 3.0, 2.75)
    """

    kind = "spliced"

    def __init__(
        self,
        body: Sampler,
        *,
        threshold: float,
        zeta: float,
        xi: float,
        sigma: float,
        n_exceedances: int | None = None,
        method: str = "spliced",
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        if not (0.0 < zeta < 1.0 and sigma > 0 and xi >= -1.0 and np.isfinite(threshold)):
            raise MethodError(
                f"spliced: expected 0 < zeta < 1, sigma > 0, xi >= -1 and a finite threshold, "
                f"found zeta={zeta!r}, sigma={sigma!r}, xi={xi!r}, threshold={threshold!r}"
            )
        self.body = body
        self.threshold, self.zeta = float(threshold), float(zeta)
        self.xi, self.sigma = float(xi), float(sigma)
        if isinstance(body, ParametricSampler):
            self.body_name = body.family.name
            self._fu = float(body.cdf(self.threshold))
            if not self._fu > 0:
                raise MethodError(
                    f"spliced: the {self.body_name} body has no mass below "
                    f"the threshold {self.threshold!r}"
                )
        else:
            self.body_name = "empirical" if isinstance(body, EmpiricalSampler) else "interpolated"
            self._fu = 1.0
        params: dict[str, Any] = {
            "threshold": self.threshold,
            "zeta": self.zeta,
            "xi": self.xi,
            "sigma": self.sigma,
            "body": self.body_name,
        }
        if n_exceedances is not None:
            params["n_exceedances"] = int(n_exceedances)
        if isinstance(body, ParametricSampler):
            params.update({f"body_{k}": v for k, v in body.params.items()})
        super().__init__(method=method, params=params, diagnostics=diagnostics)
        self._moments: tuple[float, float] | None = None
        self._equal_cache: (
            tuple[tuple[Any, ...], tuple[np.ndarray, np.ndarray, np.ndarray]] | None
        ) = None

    # --- body conditional on x <= u, and GPD tail ---

    def _body_cdf(self, x: np.ndarray) -> np.ndarray:
        c = np.asarray(self.body.cdf(np.minimum(x, self.threshold)), dtype=np.float64)
        return np.minimum(c / self._fu, 1.0)

    def _body_quantile(self, v: np.ndarray) -> np.ndarray:
        v = np.clip(v, 0.0, 1.0)
        if isinstance(self.body, ParametricSampler):
            return np.minimum(self.body.quantile(v * self._fu), self.threshold)
        return np.asarray(self.body.quantile(v))

    def _tail_sf(self, y: np.ndarray) -> np.ndarray:
        y = np.maximum(y, 0.0)
        if self.xi == 0.0:
            return np.exp(-y / self.sigma)
        t = np.maximum(1.0 + self.xi * y / self.sigma, 0.0)
        with np.errstate(divide="ignore"):
            return np.where(t > 0, np.exp(-np.log(t) / self.xi), 0.0)

    def _tail_quantile(self, s: np.ndarray) -> np.ndarray:
        with np.errstate(divide="ignore"):
            lg = -np.log1p(-s)  # standard exponential quantile
        if self.xi == 0.0:
            return self.sigma * lg
        return self.sigma * np.expm1(self.xi * lg) / self.xi

    # --- interface ---

    def cdf(self, x: Any) -> np.ndarray:
        x = np.asarray(x, dtype=np.float64)
        u, z = self.threshold, self.zeta
        return np.where(x <= u, (1.0 - z) * self._body_cdf(x), 1.0 - z * self._tail_sf(x - u))

    def quantile(self, u: Any) -> np.ndarray:
        if isinstance(self.body, EmpiricalSampler) and self.body.weights is None:
            return self._quantile_equal(check_probabilities(u))
        p = check_probabilities(u)
        split = 1.0 - self.zeta
        out = np.empty(p.shape)
        low = p <= split
        pl, ph = p[low], p[~low]
        if isinstance(self.body, EmpiricalSampler):
            out[low] = self.body.values[self._empirical_index(pl)]
        else:
            out[low] = self._body_quantile(pl / split)
        tail = self.threshold + self._tail_quantile(np.clip((ph - split) / self.zeta, 0.0, 1.0))
        out[~low] = np.where(ph >= 1.0, self.support[1], tail)
        return out

    def _equal_tables(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Shifted lookup tables of an unweighted empirical body (built once per body and zeta).

        With ``cum = (1 - zeta) * body._cum`` and ``n`` values: ``lo1[j] = cum[j - 1]`` and
        ``lo2[j] = cum[j - 2]`` (``-inf`` where the index is negative), ``vals[j] =
        values[max(j - 1, 0)]``, for ``j = 0 .. n``.
        """
        body = self.body
        cum0, values = body._cum, body.values  # type: ignore[attr-defined]
        key = (self.zeta, body, cum0, values)
        cached = self._equal_cache
        if (
            cached is not None
            and cached[0][0] == key[0]
            and all(a is b for a, b in zip(cached[0][1:], key[1:], strict=True))
        ):
            return cached[1]
        n = values.size
        lo1 = np.empty(n + 1)
        lo1[0] = -np.inf
        np.multiply(1.0 - self.zeta, cum0, out=lo1[1:])
        lo2 = np.empty(n + 1)
        lo2[0] = -np.inf
        lo2[1:] = lo1[:n]
        vals = np.empty(n + 1)
        vals[0] = values[0]
        vals[1:] = values
        self._equal_cache = (key, (lo1, lo2, vals))
        return lo1, lo2, vals

    def _quantile_equal(self, p: np.ndarray) -> np.ndarray:
        """quantile for an unweighted empirical body, without masks or compaction.

        The index ``i`` of the body value is the first with ``cum[i] >= p`` (the generalised
        inverse; ``cum = (1 - zeta) * body._cum``, the products cdf uses). Its arithmetic first
        guess ``g = ceil(p n / (1 - zeta)) - 1`` is off by at most one (both sides carry a few
        ulps of relative error, far below ``1 / n``), so one step each way settles it:
        ``i = g + [cum[g] < p] - [cum[g - 1] >= p]`` (the two cannot both hold). The tables of
        :meth:`_equal_tables` are shifted by one so that ``j = g + 1`` indexes them directly;
        ``take(mode="clip")`` stands for the bounds checks (``j`` above ``n`` only happens for
        probabilities above ``1 - zeta`` or, at ``p = 1 - zeta``, when ``cum[n - 1] = p``: the
        last value either way). Every probability goes through the body search; the few above
        ``1 - zeta`` are then overwritten by the tail.
        """
        lo1, lo2, vals = self._equal_tables()
        n = vals.size - 1
        split = 1.0 - self.zeta
        flat = p.reshape(-1)
        t = flat * (n / split)
        np.ceil(t, out=t)
        j = t.astype(np.int64)
        del t
        up = lo1.take(j, mode="clip") < flat
        down = lo2.take(j, mode="clip") >= flat
        j += up
        j -= down
        del up, down
        out = vals.take(j, mode="clip")
        high = np.flatnonzero(flat > split)
        if high.size:
            ph = flat[high]
            s = np.clip((ph - split) / self.zeta, 0.0, 1.0)
            tail = self.threshold + self._tail_quantile(s)
            out[high] = np.where(ph >= 1.0, self.support[1], tail)
        return out.reshape(p.shape)

    def _empirical_index(self, p: np.ndarray) -> np.ndarray:
        """Row of a weighted empirical body for ``p``: the first i with (1 - zeta) * cum[i] >= p
        (the same products as cdf, so an exact inverse)."""
        return step_index((1.0 - self.zeta) * self.body._cum, p)  # type: ignore[attr-defined]

    def pdf(self, x: Any) -> np.ndarray:
        """Density of the continuous part (atoms of an empirical body excluded; see pmf)."""
        x = np.asarray(x, dtype=np.float64)
        u, z = self.threshold, self.zeta
        if isinstance(self.body, EmpiricalSampler):
            below = np.zeros_like(x)
        else:
            below = np.asarray(self.body.pdf(x)) / self._fu  # type: ignore[attr-defined]
        t = np.maximum(1.0 + self.xi * (x - u) / self.sigma, 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            tail = np.where(
                x > u, z / self.sigma * self._tail_sf(x - u) / np.where(t > 0, t, 1), 0.0
            )
        return np.where(x <= u, (1.0 - z) * below, tail)

    def pmf(self, x: Any) -> np.ndarray:
        """Atoms of the body (empirical values, ties of an interpolated body); 0 elsewhere."""
        x = np.asarray(x, dtype=np.float64)
        if isinstance(self.body, ParametricSampler):
            return np.zeros_like(x)
        atoms = np.asarray(self.body.pmf(x))  # type: ignore[attr-defined]
        return np.where(x <= self.threshold, (1.0 - self.zeta) * atoms, 0.0)

    def _body_moments(self) -> tuple[float, float]:
        """E[X] and E[X^2] of the body given X <= u (numerical integrals for a family body)."""
        if self._moments is None:
            if isinstance(self.body, ParametricSampler):
                dist, u = self.body._dist, self.threshold
                lo = float(dist.support()[0])
                m1 = float(dist.expect(lambda t: t, lb=lo, ub=u, conditional=True))
                m2 = float(dist.expect(lambda t: t * t, lb=lo, ub=u, conditional=True))
            else:
                m1 = float(self.body.mean)
                m2 = float(self.body.var) + m1 * m1
            self._moments = (m1, m2)
        return self._moments

    @property
    def mean(self) -> float:
        if self.xi >= 1.0:
            return float("inf")
        b1, _ = self._body_moments()
        tail = self.threshold + self.sigma / (1.0 - self.xi)
        return float((1.0 - self.zeta) * b1 + self.zeta * tail)

    @property
    def var(self) -> float:
        if self.xi >= 0.5:
            return float("inf")
        _, b2 = self._body_moments()
        u, s, a = self.threshold, self.sigma, self.xi
        ey, ey2 = s / (1.0 - a), 2.0 * s * s / ((1.0 - a) * (1.0 - 2.0 * a))
        t2 = u * u + 2.0 * u * ey + ey2
        m2 = (1.0 - self.zeta) * b2 + self.zeta * t2
        return float(max(m2 - self.mean**2, 0.0))

    @property
    def support(self) -> tuple[float, float]:
        lo = float(self.body.support[0])
        hi = np.inf if self.xi >= 0 else self.threshold + self.sigma / -self.xi
        return lo, float(hi)

    def payload(self) -> dict[str, np.ndarray]:
        return self.body.payload()

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        p = described["params"]
        name = p["body"]
        body: Sampler
        if name == "empirical":
            body = EmpiricalSampler.from_payload(payload, {"method": "empirical"})
        elif name == "interpolated":
            body = PiecewiseSampler.from_payload(payload, {"method": "interpolated"})
        else:
            fam = get_family(name)
            body = ParametricSampler(name, {k: p[f"body_{k}"] for k in fam.param_names})
        return cls(
            body,
            threshold=p["threshold"],
            zeta=p["zeta"],
            xi=p["xi"],
            sigma=p["sigma"],
            n_exceedances=p.get("n_exceedances"),
            method=described["method"],
        )
