"""Distributions without a family from incomplete data: product-limit with entry, Turnbull's NPMLE.

Both estimators take an :class:`~samplewright.fitting.incomplete_sample.IncompleteSample` and return
the estimated CDF as knots ``(x, p)`` in the convention of the piecewise-linear sampler: ``x``
and ``p`` non-decreasing, linear between knots with ``x[i] < x[i+1]``, an atom where two knots
share an ``x``.

Product-limit with delayed entry (left truncation)
--------------------------------------------------
:func:`estimate_product_limit` takes exact and right-censored rows; a row's truncation point is
its entry time. At each distinct time ``t`` the risk set is the (weighted) rows with
``entry < t <= time``: a row entering at ``t`` is not yet at risk for an event at ``t``, as in
the survival estimate of lifelines' ``KaplanMeierFitter(entry=...)`` (whose event table, unlike
its estimate, counts the entrances at ``t``), and a censored row tied with an event counts as at
risk (events before censorings). An event at its own entry time is refused (such a row is never
at risk). Then ``S(t) = prod over event times t_j <= t of (1 - d_j / n_j)``. With entry times
this estimates survival *conditional on passing the smallest entry time*; where few rows are at
risk early on, one early event can drive ``S`` far down (or to 0): check ``n_at_risk``.

Turnbull's self-consistency NPMLE
---------------------------------
:func:`estimate_turnbull` takes any rows (Turnbull 1976, JRSS B 38(3), 290-295). A censored row
is the set ``(max(lower, truncation), upper]``, an exact row the point ``{x}``; a row truncated
at ``t`` is conditioned on ``(t, inf)``, matching the product-limit convention above.
The estimate puts all its mass on the *innermost intervals*: the intervals from a left end to
the next right end with no other end between them. The EM (self-consistency) iteration, with
Turnbull's "ghost" rows for truncation, is

    s_j <- s_j * (sum_i w_i [Q_j in A_i] / P(A_i) + sum_i w_i [Q_j outside B_i] / P(B_i))
                 / sum_i w_i / P(B_i),

accelerated by SQUAREM (Varadhan & Roland 2008, Scand. J. Statist. 35(2); from memory): each
cycle takes two EM steps, extrapolates along them, and keeps the extrapolated point (after one
more EM step) only if its likelihood is at least that of the two plain steps; a mass the
extrapolation would drive below 0 is cut to a thousandth of its plain-step value instead, never
to 0, since EM cannot revive a zero mass. It stops when no mass moves by more than ``tol`` in a
cycle, or after ``max_iter`` EM steps. EM slows down near masses heading for 0: on such data
(many overlapping censored rows) thousands of steps may be needed. An
innermost interval that straddles a truncation point counts as outside it (the likelihood may
place that mass at the interval's left end, which makes it larger). Only the innermost
intervals come from the data; with truncation the support can differ from Turnbull's
construction (Frydman 1994, JRSS B 56(1); from memory), which this module does not treat.

The mass the data cannot place
------------------------------
The likelihood fixes only how much mass each innermost interval ``[a, b]`` holds, not where it
lies inside. For sampling the mass is **spread uniformly over [a, b]** (the CDF is linear
there; an exact value ``a == b`` is an atom). Uniform spreading is the choice that adds no
information (maximum entropy on the interval) and it is the grouped-data "ogive" of loss
modelling; putting the mass at the right end instead would move every draw from an interval to
its upper end, a bias of up to the interval's width. Mass on an innermost interval reaching
``+inf`` (the largest rows are right-censored) cannot be spread: it is reported as
``mass_beyond`` and the knots stop at ``1 - mass_beyond``, for a tail rule to place; mass on one
starting at ``-inf`` (left-censored rows written with ``-inf``) is reported as ``mass_below``
and the knots start there.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.fitting.incomplete_sample import IncompleteSample

__all__ = [
    "ProductLimitResult",
    "TurnbullResult",
    "estimate_product_limit",
    "estimate_turnbull",
]


@dataclass(frozen=True)
class ProductLimitResult:
    """Product-limit estimate with delayed entry.

    Attributes
    ----------
    time : ndarray
        Distinct exact and censoring times, increasing.
    n_at_risk, n_events, n_censored : ndarray
        Weight at risk (``entry < time[j] <= row time``), of events and of censorings at each
        time.
    survival : ndarray
        ``S(time[j])``, just after ``time[j]``.
    x, p : ndarray
        Knots of the step CDF ``1 - S`` (an atom at each event time: two knots with equal ``x``),
        from ``p = 0`` to ``1 - mass_beyond``.
    mass_beyond : float
        ``S`` after the largest time (positive when the largest rows are censored): mass beyond
        the data, for a tail rule to place.
    """

    time: np.ndarray
    n_at_risk: np.ndarray
    n_events: np.ndarray
    n_censored: np.ndarray
    survival: np.ndarray
    x: np.ndarray
    p: np.ndarray
    mass_beyond: float

    def survival_at(self, t: np.ndarray | float) -> np.ndarray:
        """The estimated survival function (right-continuous step) at ``t``."""
        i = np.searchsorted(self.time, np.asarray(t, dtype=np.float64), side="right")
        return np.concatenate([[1.0], self.survival])[i]


@dataclass(frozen=True)
class TurnbullResult:
    """Turnbull's NPMLE for incomplete data.

    Attributes
    ----------
    left, right : ndarray
        Innermost intervals, increasing; ``left == right`` is an exact value (an atom), otherwise
        the interval ``(left, right]``; ``left`` may be ``-inf`` and ``right`` ``+inf``.
    mass : ndarray
        Estimated probability of each innermost interval (sums to 1).
    mass_below, mass_beyond : float
        Mass of an interval starting at ``-inf`` / reaching ``+inf`` (0 if there is none).
    x, p : ndarray
        Knots of the piecewise-linear CDF: flat between intervals, linear within each finite
        one, an atom where ``left == right``; ``p`` runs from ``mass_below`` to
        ``1 - mass_beyond``.
    loglik : float
        Log-likelihood of the data at the estimate.
    n_iter : int
        EM steps taken.
    converged : bool
        False if ``max_iter`` steps ran out before the masses settled within ``tol``.
    """

    left: np.ndarray
    right: np.ndarray
    mass: np.ndarray
    mass_below: float
    mass_beyond: float
    x: np.ndarray
    p: np.ndarray
    loglik: float
    n_iter: int
    converged: bool

    def cdf(self, t: np.ndarray | float) -> np.ndarray:
        """The estimated CDF at ``t`` (mass spread uniformly within each finite interval)."""
        t = np.asarray(t, dtype=np.float64)
        x, p = self.x, self.p
        if x.size == 0:
            return np.full(t.shape, self.mass_below)
        i = np.searchsorted(x, t, side="right") - 1  # last knot with x <= t
        j = np.clip(i, 0, max(x.size - 2, 0))
        k = np.minimum(j + 1, x.size - 1)
        with np.errstate(invalid="ignore", divide="ignore"):
            mid = np.where(x[k] > x[j], p[j] + (p[k] - p[j]) * (t - x[j]) / (x[k] - x[j]), p[k])
        return np.where(i < 0, self.mass_below, np.where(i >= x.size - 1, p[-1], mid))


# ---------------------------------------------------------------------------------------------
# product-limit


def _refuse_event_at_entry(sample: IncompleteSample, who: str) -> None:
    bad = (sample.lower == sample.upper) & (sample.truncation == sample.lower)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise MethodError(
            f"{who}: row {i} is observed exactly at its truncation (entry) point "
            f"{float(sample.lower[i])!r} ({int(bad.sum())} such rows); a row is at risk only "
            "after its entry (entry < t <= time), so it can never be seen there"
        )


def estimate_product_limit(sample: IncompleteSample) -> ProductLimitResult:
    """Kaplan–Meier estimate for right-censored rows with delayed entry (truncation).

    Parameters
    ----------
    sample : IncompleteSample
        Exact and right-censored rows; ``truncation`` holds the entry times (``-inf``: at risk
        from the start).

    Raises
    ------
    MethodError
        If a row is left- or interval-censored (use :func:`estimate_turnbull`), or observed
        exactly at its entry time.

    Examples
    --------
    >>> from samplewright.fitting.incomplete_sample import incomplete_from_flags
    >>> s = incomplete_from_flags([2.0, 3.0, 5.0], [False, True, False], truncation=[0, 0, 1])
    >>> estimate_product_limit(s).survival.round(4).tolist()  # 3 at risk at 2, 1 at risk at 5
    [0.6667, 0.6667, 0.0]
    """
    lo, hi, entry, w = sample.lower, sample.upper, sample.truncation, sample.weights
    exact = lo == hi
    bad = ~exact & (hi < np.inf)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise MethodError(
            f"estimate_product_limit takes exact and right-censored rows; row {i} is "
            f"({float(lo[i])!r}, {float(hi[i])!r}] ({int(bad.sum())} such rows): "
            "use estimate_turnbull"
        )
    _refuse_event_at_entry(sample, "estimate_product_limit")
    time, inv = np.unique(lo, return_inverse=True)
    d = np.bincount(inv, weights=np.where(exact, w, 0.0), minlength=time.size)
    c = np.bincount(inv, weights=np.where(exact, 0.0, w), minlength=time.size)
    order = np.argsort(entry, kind="stable")
    entered = np.concatenate([[0.0], np.cumsum(w[order])])
    n_in = entered[np.searchsorted(entry[order], time, side="left")]  # entry < t
    left_before = np.concatenate([[0.0], np.cumsum(d + c)])[:-1]  # time < t
    n = n_in - left_before
    with np.errstate(invalid="ignore", divide="ignore"):
        # clipped: with fractional weights n - d can round to a hair below 0
        factor = np.where(d > 0, np.clip(1.0 - d / n, 0.0, 1.0), 1.0)
    surv = np.cumprod(factor)
    ev = d > 0
    before = np.concatenate([[1.0], surv])[:-1][ev]
    x = np.repeat(time[ev], 2)
    p = np.column_stack([1.0 - before, 1.0 - surv[ev]]).ravel()
    return ProductLimitResult(
        time=time,
        n_at_risk=n,
        n_events=d,
        n_censored=c,
        survival=surv,
        x=x,
        p=p,
        mass_beyond=float(surv[-1]),
    )


# ---------------------------------------------------------------------------------------------
# Turnbull


def _innermost(a_val: np.ndarray, a_open: np.ndarray, b_val: np.ndarray) -> tuple[np.ndarray, ...]:
    """Innermost intervals of sets with left ends ``a_val`` (open or closed) and right ends.

    At equal values the order is: closed left end, right end, open left end, so ``[x, x]`` and
    ``(a, x]`` meet at ``x`` while ``(a, x]`` and ``(x, b]`` do not.
    """
    vals = np.concatenate([a_val, b_val])
    code = np.concatenate([np.where(a_open, 2, 0), np.ones(b_val.size, dtype=np.int64)])
    order = np.lexsort((code, vals))
    v, k = vals[order], code[order]
    starts = np.flatnonzero((k[:-1] != 1) & (k[1:] == 1))
    return v[starts], k[starts] == 2, v[starts + 1]


def _start_rank(
    q_val: np.ndarray, q_open: np.ndarray, a_val: np.ndarray, a_open: np.ndarray
) -> np.ndarray:
    """For each set's left end, how many innermost intervals start strictly before it."""
    # a start key is (value, 0 closed | 2 open); count q keys < a key
    n_less = np.searchsorted(q_val, a_val, side="left")
    n_eq_closed = np.searchsorted(q_val, a_val, side="right") - n_less  # ties in value
    # among tied values the closed start (an atom) sorts first; it is < an open a-key only
    tied_closed = np.zeros_like(n_less)
    has_tie = n_eq_closed > 0
    idx = np.minimum(n_less, q_val.size - 1)
    tied_closed[has_tie] = (~q_open[idx[has_tie]]).astype(np.int64)
    return n_less + np.where(a_open, tied_closed, 0)


def estimate_turnbull(
    sample: IncompleteSample, *, tol: float = 1e-10, max_iter: int = 100_000
) -> TurnbullResult:
    """Turnbull's nonparametric maximum-likelihood estimate for incomplete data.

    Parameters
    ----------
    sample : IncompleteSample
        Any mix of exact, censored, interval and truncated rows.
    tol : float
        Stop when no interval's mass changes by more than ``tol`` in an iteration cycle.
    max_iter : int
        Largest number of EM steps.

    Raises
    ------
    MethodError
        If ``tol`` or ``max_iter`` is invalid, or a row is observed exactly at its truncation
        point.

    Examples
    --------
    >>> from samplewright.fitting.incomplete_sample import incomplete_sample
    >>> s = incomplete_sample([0.0, 0.0, 2.0, 0.0], [1.0, 1.0, 3.0, 3.0])
    >>> r = estimate_turnbull(s)
    >>> r.left.tolist(), r.right.tolist(), r.mass.round(6).tolist()
    ([0.0, 2.0], [1.0, 3.0], [0.666667, 0.333333])
    """
    if not (isinstance(tol, float | int) and 0 < tol < 1):
        raise MethodError(f"tol: expected a number in (0, 1), found {tol!r}")
    if isinstance(max_iter, bool) or not isinstance(max_iter, int | np.integer) or max_iter < 1:
        raise MethodError(f"max_iter: expected an integer >= 1, found {max_iter!r}")
    _refuse_event_at_entry(sample, "estimate_turnbull")
    exact = sample.is_exact
    a_val, a_open, b_val = sample.effective_lower, ~exact, sample.upper
    q_lo, q_open, q_hi = _innermost(a_val, a_open, b_val)
    first = _start_rank(q_lo, q_open, a_val, a_open)
    last = np.searchsorted(q_hi, b_val, side="right") - 1
    # Q_j inside (t, inf): an atom above t, an interval (a, b] with a >= t
    inside_from = _start_rank(q_lo, q_open, sample.truncation, np.ones(sample.n_rows, dtype=bool))
    keys, inverse = np.unique(
        np.column_stack([first, last, inside_from]), axis=0, return_inverse=True
    )
    w = np.bincount(inverse.ravel(), weights=sample.weights, minlength=keys.shape[0])
    em = _Em(keys[:, 0], keys[:, 1], keys[:, 2], w, q_lo.size)
    mass, n_iter, converged = em.solve(tol, int(max_iter))
    return _turnbull_result(q_lo, q_hi, mass, em.loglik(mass), n_iter, converged)


_FLOOR = 1e-3


class _Em:
    """Turnbull's self-consistency step on rows given as ranges of innermost intervals."""

    def __init__(
        self, first: np.ndarray, last: np.ndarray, b: np.ndarray, w: np.ndarray, m: int
    ) -> None:
        self.first, self.last, self.b, self.w, self.m = first, last, b, w, m
        self.truncated = bool(np.any(b > 0))

    def _probs(self, s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        cum = np.concatenate([[0.0], np.cumsum(s)])
        cum /= cum[-1]
        return cum[self.last + 1] - cum[self.first], 1.0 - cum[self.b]

    def loglik(self, s: np.ndarray) -> float:
        pa, pb = self._probs(s)
        with np.errstate(divide="ignore"):
            return float(np.sum(self.w * (np.log(pa) - np.log(pb))))

    def step(self, s: np.ndarray) -> np.ndarray:
        pa, pb = self._probs(s)
        diff = np.zeros(self.m + 1)
        np.add.at(diff, self.first, self.w / pa)
        np.add.at(diff, self.last + 1, -self.w / pa)
        if self.truncated:  # ghost rows: the mass outside (t, inf) that went unrecorded
            diff[0] += np.sum(self.w / pb)
            np.add.at(diff, self.b, -self.w / pb)
        new: np.ndarray = s * np.cumsum(diff)[:-1]
        return new / new.sum()

    def solve(self, tol: float, max_iter: int) -> tuple[np.ndarray, int, bool]:
        """SQUAREM cycles: two EM steps, an extrapolation, a stabilising EM step."""
        s = np.full(self.m, 1.0 / self.m)
        used = 0
        while used < max_iter:
            s1 = self.step(s)
            s2 = self.step(s1)
            used += 2
            new = s2
            r, v = s1 - s, s2 - 2.0 * s1 + s
            nr, nv = float(np.linalg.norm(r)), float(np.linalg.norm(v))
            if nv > 0 and used < max_iter:
                alpha = min(-nr / nv, -1.0)
                trial = s - 2.0 * alpha * r + alpha * alpha * v
                # a mass the extrapolation drives below 0 shrinks by FLOOR instead (never to 0:
                # EM cannot bring a zero mass back)
                trial = np.maximum(trial, _FLOOR * s2)
                trial = self.step(trial / trial.sum())
                used += 1
                ll_trial = self.loglik(trial)
                if np.isfinite(ll_trial) and ll_trial >= self.loglik(s2):
                    new = trial
            moved = float(np.max(np.abs(new - s)))
            s = new
            if moved < tol:
                return s, used, True
        return s, used, False


def _turnbull_result(
    q_lo: np.ndarray, q_hi: np.ndarray, mass: np.ndarray, ll: float, n_iter: int, conv: bool
) -> TurnbullResult:
    below = float(mass[q_lo == -np.inf].sum())
    beyond = float(mass[q_hi == np.inf].sum())
    xs: list[float] = []
    ps: list[float] = []
    cum = 0.0
    for a, b, s in zip(q_lo.tolist(), q_hi.tolist(), mass.tolist(), strict=True):
        if a > -np.inf:
            xs.append(a)
            ps.append(cum)
        cum += s
        if b < np.inf:
            xs.append(b)
            ps.append(min(cum, 1.0))
    x, p = np.array(xs), np.maximum.accumulate(np.array(ps)) if ps else np.array([])
    keep = np.ones(x.size, dtype=bool)
    keep[1:] = (np.diff(x) != 0) | (np.diff(p) != 0)  # drop repeated knots
    return TurnbullResult(
        left=q_lo,
        right=q_hi,
        mass=mass,
        mass_below=below,
        mass_beyond=beyond,
        x=x[keep],
        p=p[keep],
        loglik=ll,
        n_iter=n_iter,
        converged=conv,
    )
