"""Metalog distributions through elicited quantiles (Keelin 2016).

A k-term metalog has the quantile function ``M(y) = sum_j a_j f_j(y)`` on ``y`` in (0, 1), with
``L = ln(y / (1 - y))`` and the basis ``1, L, (y - 1/2) L, (y - 1/2), (y - 1/2)^2, (y - 1/2)^2 L,
(y - 1/2)^3, (y - 1/2)^3 L, ...`` (Keelin, T. W. 2016, "The Metalog Distributions", Decision
Analysis 13(4): 243-277). Bounds enter through a transform of the quantile:

* unbounded: ``Q = M``;
* lower bound ``b_l``: ``Q = b_l + exp(M)``;
* upper bound ``b_u``: ``Q = b_u - exp(-M)``;
* both: ``Q = (b_l + b_u exp(M)) / (1 + exp(M))``.

The coefficients solve the linear system through the points exactly (least squares when fewer
terms than points are asked for). A metalog is a distribution only when ``dM/dy > 0`` on the whole
of (0, 1); :func:`fit_metalog` checks that on a dense grid and at both tails (where the sign is
fixed by the coefficients of the ``L`` terms) and refuses points that admit none.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any, Literal

import numpy as np
from scipy import integrate, special

from samplewright.core.errors import FitError, MethodError

from ._numeric import check_elicited_points, check_probabilities, solve_increasing

__all__ = ["MetalogResult", "fit_metalog"]

MetalogKind = Literal["unbounded", "lower", "upper", "bounded"]
MAX_TERMS = 16
_LOGIT_EDGE = 40.0  # cdf inversion works on t = logit(y) in [-40, 40] (y from 4e-18)
# feasibility grid: equally spaced in logit(y), so both tails are covered as densely as the middle
_CHECK_T = np.linspace(-_LOGIT_EDGE, _LOGIT_EDGE, 8001)


def _powers(n_terms: int) -> tuple[np.ndarray, np.ndarray]:
    """Power of (y - 1/2) and whether the L factor is present, for terms 1..n_terms."""
    head = [(0, False), (0, True), (1, True), (1, False)]
    pairs = head[:n_terms]
    for j in range(5, n_terms + 1):
        pairs.append(((j - 1) // 2, False) if j % 2 else (j // 2 - 1, True))
    return np.array([p for p, _ in pairs]), np.array([h for _, h in pairs])


def _basis(t: np.ndarray, n_terms: int) -> np.ndarray:
    """Basis functions f_j(y) at y = expit(t), shape t.shape + (n_terms,).

    Working from t = logit(y) keeps both tails exact: y and 1 - y are never rounded to 0 or 1.
    """
    powers, has_log = _powers(n_terms)
    c = (special.expit(t) - 0.5)[..., None]
    return np.where(has_log, t[..., None], 1.0) * c**powers


def _basis_dt(t: np.ndarray, n_terms: int) -> np.ndarray:
    """Derivatives d f_j / dt = y (1 - y) f_j'(y) at y = expit(t), shape t.shape + (n_terms,)."""
    powers, has_log = _powers(n_terms)
    yy = (special.expit(t) * special.expit(-t))[..., None]
    c = (special.expit(t) - 0.5)[..., None]
    lower = np.where(powers > 0, powers * c ** np.maximum(powers - 1, 0), 0.0) * yy
    return np.where(has_log, lower * t[..., None] + c**powers, lower)


def _logit(u: np.ndarray) -> np.ndarray:
    return np.log(u) - np.log1p(-u)


def _tail_slopes(a: np.ndarray) -> tuple[float, float]:
    """Limits of y(1-y) M'(y) as y -> 0 and y -> 1: each must be > 0 for a valid metalog."""
    powers, has_log = _powers(a.size)
    left = float(np.sum(a[has_log] * (-0.5) ** powers[has_log]))
    right = float(np.sum(a[has_log] * 0.5 ** powers[has_log]))
    return left, right


@dataclass(frozen=True)
class MetalogResult:
    """A metalog distribution fitted through elicited quantiles.

    Attributes
    ----------
    coefficients : numpy.ndarray
        ``a_1 .. a_k`` of ``M(y)`` (on the transformed scale when bounded).
    kind : str
        ``"unbounded"``, ``"lower"``, ``"upper"`` or ``"bounded"``.
    lower, upper : float or None
        The bounds (None where the distribution is unbounded on that side).
    probabilities, values : numpy.ndarray
        The elicited points, sorted by probability.
    n_terms : int
        Number of terms k.
    misses : numpy.ndarray
        ``Q(p_i) - x_i`` at each elicited point (zero up to rounding for an exact fit).
    tail_slopes : tuple of float
        ``lim y(1-y) M'(y)`` at y -> 0 and y -> 1 (both > 0): the metalog's tails decay like a
        logistic with these scales on the transformed scale.
    """

    coefficients: np.ndarray
    kind: MetalogKind
    lower: float | None
    upper: float | None
    probabilities: np.ndarray
    values: np.ndarray
    n_terms: int
    misses: np.ndarray
    tail_slopes: tuple[float, float]

    @property
    def support(self) -> tuple[float, float]:
        lo = -np.inf if self.lower is None else self.lower
        hi = np.inf if self.upper is None else self.upper
        return float(lo), float(hi)

    def _m(self, t: np.ndarray) -> np.ndarray:
        """M at y = expit(t)."""
        return _basis(t, self.n_terms) @ self.coefficients

    def _q_of_t(self, t: np.ndarray) -> np.ndarray:
        return self._transform(self._m(t))

    def _dq_dt(self, t: np.ndarray) -> np.ndarray:
        return (_basis_dt(t, self.n_terms) @ self.coefficients) * self._dq_dm(self._m(t))

    def _transform(self, m: np.ndarray) -> np.ndarray:
        """Q from M; a semi-bounded tail beyond float range is +-inf, without a warning."""
        if self.kind == "unbounded":
            return m
        if self.kind == "lower":
            with np.errstate(over="ignore"):
                return float(self.lower) + np.exp(m)  # type: ignore[arg-type]
        if self.kind == "upper":
            with np.errstate(over="ignore"):
                return float(self.upper) - np.exp(-m)  # type: ignore[arg-type]
        lo, hi = float(self.lower), float(self.upper)  # type: ignore[arg-type]
        return lo + (hi - lo) * special.expit(m)

    def _dq_dm(self, m: np.ndarray) -> np.ndarray:
        if self.kind == "unbounded":
            return np.ones_like(m)
        with np.errstate(over="ignore"):
            if self.kind == "lower":
                return np.exp(m)
            if self.kind == "upper":
                return np.exp(-m)
        s = special.expit(m)
        return (float(self.upper) - float(self.lower)) * s * (1.0 - s)  # type: ignore[arg-type]

    def quantile(self, u: Any) -> np.ndarray:
        """The quantile function Q(u); u = 0 and u = 1 give the support's ends."""
        uu = check_probabilities(u)
        inside = (uu > 0) & (uu < 1)
        lo, hi = self.support
        out = np.where(uu <= 0, lo, hi).astype(np.float64)
        out[inside] = self._q_of_t(_logit(uu[inside]))
        return out

    def quantile_density(self, u: Any) -> np.ndarray:
        """dQ/du at u in (0, 1): the reciprocal of the density at Q(u)."""
        uu = check_probabilities(u)
        inside = (uu > 0) & (uu < 1)
        out = np.full(uu.shape, np.inf)
        ui = uu[inside]
        out[inside] = self._dq_dt(_logit(ui)) / (ui * (1.0 - ui))
        return out

    def cdf(self, x: Any) -> np.ndarray:
        """F(x), by monotone inversion of Q (safeguarded Newton in t = logit(y))."""
        xx = np.asarray(x, dtype=np.float64)
        flat = xx.ravel()
        out = np.full(flat.shape, np.nan)
        grid_t = np.linspace(-_LOGIT_EDGE, _LOGIT_EDGE, 257)
        grid_q = self._q_of_t(grid_t)
        out[flat <= grid_q[0]] = 0.0
        out[flat >= grid_q[-1]] = 1.0
        mid = np.flatnonzero((flat > grid_q[0]) & (flat < grid_q[-1]))
        if mid.size:
            k = np.clip(np.searchsorted(grid_q, flat[mid]), 1, grid_t.size - 1)
            t = solve_increasing(
                self._q_of_t, self._dq_dt, flat[mid], grid_t[k - 1], grid_t[k], xtol=1e-15
            )
            out[mid] = special.expit(t)
        return out.reshape(xx.shape)

    def pdf(self, x: Any) -> np.ndarray:
        """Density f(x) = 1 / Q'(F(x)); zero outside the support."""
        xx = np.asarray(x, dtype=np.float64)
        y = self.cdf(xx)
        out = np.zeros(xx.shape)
        inside = (y > 0) & (y < 1)
        out[inside] = 1.0 / self.quantile_density(y[inside])
        return out

    def _moment(self, power: int) -> float:
        """E[X^power] = integral of Q(y)^power dy, taken over t = logit(y).

        Semi-bounded forms expand ``(b +- exp(+-M))^power`` binomially and integrate each
        ``exp(j M) y (1 - y)`` in log space, so a heavy tail never overflows.
        """
        if self.kind in ("unbounded", "bounded"):
            return _integrate_t(lambda t: self._q_of_t(t) ** power * _log_weight(t, 0.0))
        sign = 1.0 if self.kind == "lower" else -1.0
        bound = float(self.lower if self.kind == "lower" else self.upper)  # type: ignore[arg-type]
        total = 0.0
        for j in range(power + 1):
            coef = special.comb(power, j) * bound ** (power - j) * sign**j
            total += coef * _integrate_t(lambda t, j=j: _log_weight(t, sign * j * self._m(t)))
        return total

    def _moment_finite(self, power: int) -> bool:
        left, right = self.tail_slopes
        if self.kind == "lower":
            return right * power < 1
        if self.kind == "upper":
            return left * power < 1
        return True

    @property
    def mean(self) -> float:
        """Mean (inf when a semi-bounded tail is too heavy: right tail slope >= 1)."""
        if not self._moment_finite(1):
            return np.inf if self.kind == "lower" else -np.inf
        return self._moment(1)

    @property
    def var(self) -> float:
        """Variance (inf when the heavy tail has slope >= 1/2)."""
        if not self._moment_finite(2):
            return np.inf
        m = self.mean
        return max(self._moment(2) - m * m, 0.0)


def _log_weight(t: np.ndarray, log_factor: Any) -> np.ndarray:
    """exp(log_factor) * y (1 - y) at y = expit(t), computed in log space."""
    return np.exp(log_factor + special.log_expit(t) + special.log_expit(-t))


def _integrate_t(func: Any) -> float:
    """Integral over the real line of ``func(t)`` (a vectorised function of one variable)."""
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
        raise FitError(f"metalog moment: the quadrature did not settle (error estimate {err:.3g})")
    return value


def _transformed(x: np.ndarray, lower: float | None, upper: float | None) -> np.ndarray:
    if lower is not None and not np.all(x > lower):
        raise MethodError(f"values: expected every value > lower={lower:g}, found min {x.min():g}")
    if upper is not None and not np.all(x < upper):
        raise MethodError(f"values: expected every value < upper={upper:g}, found max {x.max():g}")
    if lower is None and upper is None:
        return x
    if upper is None:
        return np.log(x - float(lower))  # type: ignore[arg-type]
    if lower is None:
        return -np.log(upper - x)
    return np.log(x - lower) - np.log(upper - x)


def fit_metalog(
    probabilities: Any,
    values: Any,
    *,
    lower: float | None = None,
    upper: float | None = None,
    n_terms: int | None = None,
) -> MetalogResult:
    """Fit a metalog through elicited points ``(p_i, x_i)``.

    Parameters
    ----------
    probabilities, values : array_like
        Cumulative probabilities in (0, 1) and the values at them (at least 2 points; values must
        increase with probability).
    lower, upper : float, optional
        Bounds of the support; give one for a semi-bounded metalog, both for a bounded one.
    n_terms : int, optional
        Number of terms k, from 2 to the number of points (default: the number of points, which
        passes exactly through every point; fewer terms give the least-squares fit).

    Raises
    ------
    MethodError
        Bad points or options, or points through which no metalog is a distribution (the message
        names the elicited points between which the quantile function would decrease).

    Examples
    --------
    >>> m = fit_metalog([0.1, 0.5, 0.9], [12.0, 20.0, 35.0], lower=0.0)
    >>> m.quantile([0.1, 0.5, 0.9]).round(10).tolist()
    [12.0, 20.0, 35.0]
    """
    p, x = check_elicited_points(probabilities, values)
    for label, bound in (("lower", lower), ("upper", upper)):
        if bound is not None and not np.isfinite(bound):
            raise MethodError(f"{label}: expected a finite number or None, found {bound!r}")
    if lower is not None and upper is not None and not lower < upper:
        raise MethodError(f"lower, upper: expected lower < upper, found {lower} and {upper}")
    k = p.size if n_terms is None else n_terms
    if isinstance(k, bool) or not isinstance(k, int | np.integer) or not 2 <= k <= p.size:
        raise MethodError(f"n_terms: expected an integer from 2 to {p.size}, found {n_terms!r}")
    if k > MAX_TERMS:
        raise MethodError(f"n_terms: at most {MAX_TERMS} terms are supported, found {k}")
    z = _transformed(x, lower, upper)
    design = _basis(_logit(p), int(k))
    if np.linalg.matrix_rank(design) < k:
        raise MethodError(
            f"probabilities: the {p.size} levels do not determine a {k}-term metalog "
            f"(singular linear system); use fewer terms or other levels"
        )
    a = np.linalg.lstsq(design, z, rcond=None)[0]
    kind: MetalogKind
    if lower is None:
        kind = "unbounded" if upper is None else "upper"
    else:
        kind = "lower" if upper is None else "bounded"
    _check_feasible(a, p, x)
    result = MetalogResult(
        coefficients=a,
        kind=kind,
        lower=None if lower is None else float(lower),
        upper=None if upper is None else float(upper),
        probabilities=p,
        values=x,
        n_terms=int(k),
        misses=np.zeros_like(x),
        tail_slopes=_tail_slopes(a),
    )
    return replace(result, misses=result.quantile(p) - x)


def _check_feasible(a: np.ndarray, p: np.ndarray, x: np.ndarray) -> None:
    """MethodError unless M'(y) > 0 on (0, 1): on a dense logit grid and in both tails."""
    y = special.expit(_CHECK_T)
    slope = _basis_dt(_CHECK_T, a.size) @ a  # dM/dt = y (1 - y) M'(y): same sign as M'(y)
    left, right = _tail_slopes(a)
    bad_y = y[slope <= 0]
    if left <= 0:
        bad_y = np.concatenate([[0.0], bad_y])
    if right <= 0:
        bad_y = np.concatenate([bad_y, [1.0]])
    if bad_y.size == 0:
        return
    where = float(bad_y[0])
    i = int(np.searchsorted(p, where))
    points = "; ".join(f"(p={pi:g}, x={xi:g})" for pi, xi in zip(p, x, strict=True))
    if i == 0:
        near = f"below the first point (p={p[0]:g}, x={x[0]:g})"
    elif i == p.size:
        near = f"above the last point (p={p[-1]:g}, x={x[-1]:g})"
    else:
        near = f"between (p={p[i - 1]:g}, x={x[i - 1]:g}) and (p={p[i]:g}, x={x[i]:g})"
    raise MethodError(
        f"probabilities, values: no valid {a.size}-term metalog passes through {points}: its "
        f"quantile function would decrease {near} (near p={where:.3g}); use fewer terms, "
        f"other bounds or less extreme points"
    )
