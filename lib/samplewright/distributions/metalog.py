"""A metalog distribution as a sampler (kind ``metalog``; Keelin 2016, Decision Analysis 13(4)).

A k-term metalog is defined by its quantile function. With ``y`` in (0, 1), ``t = logit(y)``,
``c = y - 1/2`` and the basis ``1, t, c t, c, c^2, c^2 t, c^3, c^3 t, ...``, the sum
``M(y) = sum_j a_j f_j(y)`` is the quantile on a scale fixed by the bounds:

* unbounded: ``Q = M``;
* lower bound ``b_l``: ``Q = b_l + exp(M)``;
* upper bound ``b_u``: ``Q = b_u - exp(-M)``;
* both: ``Q = b_l + (b_u - b_l) expit(M)``.

``quantile`` is that closed form; ``cdf`` inverts it by safeguarded Newton steps in ``t`` (a
257-point grid on ``t`` in [-40, 40] brackets each value); ``pdf`` is ``1 / Q'(F(x))``; ``mean``
and ``var`` are integrals of ``Q`` and ``Q^2`` over ``y``, taken in ``t`` (semi-bounded forms in
log space, so a heavy tail never overflows; infinite where the tail is too heavy for the moment).
The coefficients must give ``dM/dy > 0`` on (0, 1): the constructor checks it on a dense grid in
``t`` and in both tails (where the sign is set by the ``t`` terms).

Payload: one row per term, column ``coefficient``; the bounds are parameters. Fitting through
elicited quantiles is in :mod:`samplewright.fitting.metalog` and
:func:`samplewright.fitting.expert.from_quantiles`.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from scipy import integrate, special

from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, check_probabilities
from samplewright.distributions.mixture import invert_increasing

__all__ = ["MetalogSampler"]

_EDGE = 40.0  # t = logit(y) in [-40, 40]: y from about 4e-18
_CHECK_T = np.linspace(-_EDGE, _EDGE, 8001)
_GRID_T = np.linspace(-_EDGE, _EDGE, 257)
MAX_TERMS = 16


def _powers(n_terms: int) -> tuple[np.ndarray, np.ndarray]:
    """Power of c = y - 1/2 and whether the factor t is present, for terms 1..n_terms."""
    pairs = [(0, False), (0, True), (1, True), (1, False)][:n_terms]
    for j in range(5, n_terms + 1):
        pairs.append(((j - 1) // 2, False) if j % 2 else (j // 2 - 1, True))
    return np.array([p for p, _ in pairs]), np.array([h for _, h in pairs])


class MetalogSampler(Sampler):
    """A metalog through its coefficients ``a_1 .. a_k`` and optional bounds.

    >>> s = MetalogSampler([20.0, 2.0])  # two terms, unbounded: a logistic(20, 2)
    >>> float(s.quantile(0.5)), round(float(s.cdf(22.0)), 12), round(s.var, 9)
    (20.0, 0.73105857863, 13.159472535)
    """

    kind = "metalog"

    def __init__(
        self,
        coefficients: Any,
        *,
        lower: float | None = None,
        upper: float | None = None,
        method: str = "metalog",
        diagnostics: Mapping[str, Any] | None = None,
    ) -> None:
        a = np.asarray(coefficients, dtype=np.float64).ravel()
        if not 2 <= a.size <= MAX_TERMS or not np.all(np.isfinite(a)):
            raise MethodError(
                f"coefficients: expected 2 to {MAX_TERMS} finite numbers, found {a.size}: {a}"
            )
        for name, bound in (("lower", lower), ("upper", upper)):
            if bound is not None and (
                isinstance(bound, bool)
                or not isinstance(bound, int | float | np.number)
                or not np.isfinite(bound)
            ):
                raise MethodError(f"{name}: expected a finite number or None, found {bound!r}")
        if lower is not None and upper is not None and not lower < upper:
            raise MethodError(f"lower, upper: expected lower < upper, found {lower} and {upper}")
        self.coefficients = a
        self.lower = None if lower is None else float(lower)
        self.upper = None if upper is None else float(upper)
        self._powers, self._has_t = _powers(a.size)
        self._check_increasing()
        params = {"n_terms": int(a.size), "lower": self.lower, "upper": self.upper}
        super().__init__(method=method, params=params, diagnostics=diagnostics)
        self._moment_cache: dict[int, float] = {}

    # --- M(t) and its slope ---

    def _basis(self, t: np.ndarray) -> np.ndarray:
        c = (special.expit(t) - 0.5)[..., None]
        return np.where(self._has_t, t[..., None], 1.0) * c**self._powers

    def _m(self, t: np.ndarray) -> np.ndarray:
        return self._basis(t) @ self.coefficients

    def _dm_dt(self, t: np.ndarray) -> np.ndarray:
        """dM/dt = y (1 - y) dM/dy at y = expit(t)."""
        k, has_t = self._powers, self._has_t
        yy = (special.expit(t) * special.expit(-t))[..., None]
        c = (special.expit(t) - 0.5)[..., None]
        dc = np.where(k > 0, k * c ** np.maximum(k - 1, 0), 0.0) * yy
        return np.where(has_t, dc * t[..., None] + c**k, dc) @ self.coefficients

    def _tail_slopes(self) -> tuple[float, float]:
        """Limits of dM/dt as t -> -inf and t -> +inf (both > 0 for a distribution)."""
        a, k, has_t = self.coefficients, self._powers, self._has_t
        return (
            float(np.sum(a[has_t] * (-0.5) ** k[has_t])),
            float(np.sum(a[has_t] * 0.5 ** k[has_t])),
        )

    def _check_increasing(self) -> None:
        left, right = self._tail_slopes()
        slope = self._dm_dt(_CHECK_T)
        if left > 0 and right > 0 and np.all(slope > 0):
            return
        bad = _CHECK_T[slope <= 0]
        where = "a tail" if bad.size == 0 else f"y = {float(special.expit(bad[0])):.3g}"
        raise MethodError(
            f"coefficients: not a distribution: the metalog quantile function decreases near "
            f"{where} (found {self.coefficients.tolist()})"
        )

    # --- Q on the data scale ---

    def _from_m(self, m: np.ndarray) -> np.ndarray:
        lo, hi = self.lower, self.upper
        with np.errstate(over="ignore"):
            if lo is None and hi is None:
                return m
            if hi is None:
                return lo + np.exp(m)  # type: ignore[operator]
            if lo is None:
                return hi - np.exp(-m)
            return lo + (hi - lo) * special.expit(m)

    def _dq_dm(self, m: np.ndarray) -> np.ndarray:
        lo, hi = self.lower, self.upper
        with np.errstate(over="ignore"):
            if lo is None and hi is None:
                return np.ones_like(m)
            if hi is None:
                return np.exp(m)
            if lo is None:
                return np.exp(-m)
        s = special.expit(m)
        return (hi - lo) * s * (1.0 - s)

    def _q(self, t: np.ndarray) -> np.ndarray:
        return self._from_m(self._m(t))

    def _dq_dt(self, t: np.ndarray) -> np.ndarray:
        return self._dm_dt(t) * self._dq_dm(self._m(t))

    def quantile(self, u: Any) -> np.ndarray:
        """The closed-form quantile; ``u = 0`` and ``u = 1`` give the ends of the support."""
        p = check_probabilities(u)
        lo, hi = self.support
        out = np.where(p <= 0, lo, hi).astype(np.float64)
        inside = (p > 0) & (p < 1)
        pi = p[inside]
        out[inside] = self._q(np.log(pi) - np.log1p(-pi))
        return out

    def cdf(self, x: Any) -> np.ndarray:
        """F(x) by monotone inversion of the quantile function in ``t = logit(y)``."""
        xx = np.asarray(x, dtype=np.float64)
        flat = xx.ravel()
        grid_q = self._q(_GRID_T)
        out = np.where(flat <= grid_q[0], 0.0, 1.0)
        mid = np.flatnonzero((flat > grid_q[0]) & (flat < grid_q[-1]))
        if mid.size:
            k = np.clip(np.searchsorted(grid_q, flat[mid]), 1, _GRID_T.size - 1)
            t = invert_increasing(self._q, self._dq_dt, flat[mid], _GRID_T[k - 1], _GRID_T[k])
            out[mid] = special.expit(t)
        return out.reshape(xx.shape)

    def pdf(self, x: Any) -> np.ndarray:
        """f(x) = 1 / Q'(F(x)) inside the support, 0 outside."""
        xx = np.asarray(x, dtype=np.float64)
        y = self.cdf(xx)
        out = np.zeros(xx.shape)
        inside = (y > 0) & (y < 1)
        yi = y[inside]
        t = np.log(yi) - np.log1p(-yi)
        out[inside] = yi * (1.0 - yi) / self._dq_dt(t)
        return out

    # --- moments ---

    def _moment(self, power: int) -> float:
        """E[X^power] = integral over t of Q^power y (1 - y); semi-bounded forms expand
        ``(b +- exp(+-M))^power`` and integrate each ``exp(j M) y (1 - y)`` in log space."""
        if power in self._moment_cache:
            return self._moment_cache[power]
        lo, hi = self.lower, self.upper
        if (lo is None) == (hi is None):
            value = _integrate(lambda t: self._q(t) ** power * _log_weight(t, 0.0))
        else:
            sign, bound = (1.0, float(lo)) if lo is not None else (-1.0, float(hi or 0.0))
            value = 0.0
            for j in range(power + 1):
                coef = special.comb(power, j) * bound ** (power - j) * sign**j
                value += coef * _integrate(self._exp_m_term(sign * j))
        self._moment_cache[power] = value
        return value

    def _exp_m_term(self, factor: float) -> Callable[[np.ndarray], np.ndarray]:
        """t -> exp(factor M) y (1 - y), the integrand of one term of a semi-bounded moment."""
        return lambda t: _log_weight(t, factor * self._m(t))

    def _moment_finite(self, power: int) -> bool:
        left, right = self._tail_slopes()
        if self.lower is not None and self.upper is None:
            return right * power < 1
        if self.upper is not None and self.lower is None:
            return left * power < 1
        return True

    @property
    def mean(self) -> float:
        if not self._moment_finite(1):
            return float("inf") if self.upper is None else float("-inf")
        return self._moment(1)

    @property
    def var(self) -> float:
        if not self._moment_finite(2):
            return float("inf")
        m = self._moment(1)
        return max(self._moment(2) - m * m, 0.0)

    @property
    def support(self) -> tuple[float, float]:
        lo = -np.inf if self.lower is None else self.lower
        hi = np.inf if self.upper is None else self.upper
        return float(lo), float(hi)

    def payload(self) -> dict[str, np.ndarray]:
        return {"coefficient": self.coefficients}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        p = described["params"]
        return cls(
            payload["coefficient"], lower=p["lower"], upper=p["upper"], method=described["method"]
        )

    def describe(self) -> dict[str, Any]:
        out = super().describe()
        out["family"] = "metalog"
        return out


def _log_weight(t: np.ndarray, log_factor: Any) -> np.ndarray:
    """exp(log_factor) y (1 - y) at y = expit(t), in log space."""
    return np.exp(log_factor + special.log_expit(t) + special.log_expit(-t))


def _integrate(func: Callable[[np.ndarray], np.ndarray]) -> float:
    """Integral over the real line of a vectorised function of one variable."""
    out = integrate.quad(
        lambda t: float(func(np.array([t]))[0]),
        -np.inf,
        np.inf,
        limit=400,
        epsabs=0,
        epsrel=1e-10,
        full_output=1,
    )
    value, err = float(out[0]), float(out[1])
    if not np.isfinite(value) or err > 1e-6 * max(abs(value), 1.0):
        raise MethodError(
            f"metalog moment: the quadrature did not settle (error estimate {err:.3g})"
        )
    return value
