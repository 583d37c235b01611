"""Right-censored data without a family: the Kaplan–Meier (product-limit) sampler.

Method ``kaplan_meier`` turns values ``x`` with right-censoring flags (True where the true value
is only known to exceed ``x``) and optional frequency weights into a sampler. With distinct
values ``t_1 < ... < t_m``, ``d_j`` the (weighted) number of uncensored values at ``t_j`` and
``n_j`` the (weighted) number of values ``>= t_j`` (at risk), the survival estimate is

    S(t) = prod over t_j <= t of (1 - d_j / n_j)            (Kaplan & Meier, 1958, JASA 53)

A censored value tied with an event time counts as still at risk at that time (events first), as
in lifelines and scipy. ``S`` falls only at event times, so the sampler puts point masses
``S(t_j-) - S(t_j)`` there and its CDF is ``1 - S``. Without censoring this is exactly the
empirical distribution.

Mass beyond the data
--------------------
When the largest value ``t_max`` is censored, ``S(t_max) = S_last > 0`` and the estimate says
nothing about where that mass lies. Option ``tail`` chooses:

* ``"at_last"`` (default): an atom of mass ``S_last`` at ``t_max``, as if the largest value had
  been an event (Efron's 1967 redistribute-to-the-right convention for the last value). Draws
  never exceed the data; with heavy censoring this understates the upper tail.
* ``"exponential"``: beyond ``t_max`` the survival continues as
  ``S_last * exp(-rate * (t - t_max))``, with the constant-hazard rate estimated from the whole
  sample as ``rate = (weighted events) / (weighted total time at risk) = sum(w e) / sum(w x)``:
  the maximum-likelihood exponential rate for right-censored data. It needs non-negative
  values (time at risk is counted from 0) and is a whole-sample rate, not a local one: check it
  against what you know about late failures.

When ``S_last = 0`` (the largest value is an uncensored event) both rules give the same sampler.

Reproducibility: a sampler holds no randomness; ``draw`` takes an ``rng`` and uses inverse
transform of ``rng.random(size)``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal, get_args

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, _check_u
from samplewright.fitting.registry import EXTENSION_METHODS

__all__ = [
    "TAIL_RULES",
    "KaplanMeierSampler",
    "SurvivalResult",
    "estimate_survival",
    "fit_kaplan_meier",
]

TailRule = Literal["at_last", "exponential"]
TAIL_RULES: tuple[str, ...] = get_args(TailRule)
_NAME = "kaplan_meier"


@dataclass(frozen=True)
class SurvivalResult:
    """Product-limit table at each distinct value.

    Attributes
    ----------
    time : ndarray
        Distinct values, increasing.
    n_at_risk : ndarray
        Weight of values ``>= time``.
    n_events, n_censored : ndarray
        Weight of uncensored and of censored values equal to ``time``.
    survival : ndarray
        ``S(time)``, the estimate just after ``time``.
    """

    time: np.ndarray
    n_at_risk: np.ndarray
    n_events: np.ndarray
    n_censored: np.ndarray
    survival: np.ndarray


def _check_inputs(
    values: Any, censored: Any, weights: Any
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Values, event indicators (bool) and weights, checked; messages name the argument."""
    x = np.asarray(values, dtype=np.float64)
    if x.ndim != 1:
        raise MethodError(f"{_NAME}: values must be 1-d, found {x.ndim} dimensions")
    if x.size == 0:
        raise MethodError(f"{_NAME}: at least 1 value is needed, found 0")
    bad = np.flatnonzero(~np.isfinite(x))
    if bad.size:
        raise MethodError(f"{_NAME}: values must be finite; value {bad[0] + 1} is {x[bad[0]]}")
    if censored is None:
        c = np.zeros(x.size, dtype=bool)
    else:
        raw = np.asarray(censored)
        if raw.shape != x.shape:
            raise MethodError(f"censored: expected {x.size} flags, found {raw.size}")
        if raw.dtype != bool:
            try:
                num = raw.astype(np.float64)
            except (TypeError, ValueError):
                raise MethodError("censored: flags must be 0/1 or booleans") from None
            bad = np.flatnonzero((num != 0) & (num != 1))
            if bad.size:
                raise MethodError(
                    f"censored: flags must be 0/1 or booleans; flag {bad[0] + 1} is "
                    f"{raw[bad[0]].item()!r}"
                )
        c = raw.astype(bool)
    if weights is None:
        w = np.ones(x.size)
    else:
        w = np.asarray(weights, dtype=np.float64)
        if w.shape != x.shape:
            raise MethodError(f"weights: expected {x.size} weights, found {w.size}")
        bad = np.flatnonzero(~(np.isfinite(w) & (w > 0)))
        if bad.size:
            raise MethodError(
                f"weights: every weight must be finite and > 0; weight {bad[0] + 1} is {w[bad[0]]}"
            )
    return x, ~c, w


def estimate_survival(values: Any, censored: Any = None, *, weights: Any = None) -> SurvivalResult:
    """Kaplan–Meier table of right-censored values (frequency ``weights`` optional).

    Parameters
    ----------
    values : array_like
        1-d finite observations.
    censored : array_like of bool or 0/1, optional
        True (1) where the value is right-censored. Default: none censored.
    weights : array_like, optional
        Positive frequency weights, one per value.

    Returns
    -------
    SurvivalResult

    Examples
    --------
    >>> r = estimate_survival([2.0, 3.0, 3.0, 5.0], [False, True, False, True])
    >>> r.time.tolist(), r.survival.tolist()
    ([2.0, 3.0, 5.0], [0.75, 0.5, 0.5])
    """
    return _table(*_check_inputs(values, censored, weights))


def _table(x: np.ndarray, event: np.ndarray, w: np.ndarray) -> SurvivalResult:
    time, inv = np.unique(x, return_inverse=True)
    d = np.bincount(inv, weights=w * event, minlength=time.size)
    c = np.bincount(inv, weights=w * ~event, minlength=time.size)
    at_risk = np.cumsum((d + c)[::-1])[::-1]  # weight at or after each time
    if not np.any(c > 0):
        # No censoring: S is the share still to come, exactly as in the empirical distribution.
        after = np.append(at_risk[1:], 0.0)
        survival = after / at_risk[0]
    else:
        survival = np.cumprod(1.0 - d / at_risk)
    return SurvivalResult(time, at_risk, d, c, survival)


class KaplanMeierSampler(Sampler):
    """Point masses at the event times of a Kaplan–Meier estimate, plus a rule for the rest.

    Built by :func:`fit_kaplan_meier`. ``time`` holds the atoms and ``survival`` the value of
    ``S`` just after each; the CDF is ``1 - S``. See the module docstring for ``tail``.

    >>> s = fit_kaplan_meier([2.0, 3.0, 3.0, 5.0], [False, True, False, True])
    >>> s.cdf([1.0, 2.0, 3.0, 5.0]).tolist(), s.pmf(5.0).item()
    ([0.0, 0.25, 0.5, 1.0], 0.5)
    """

    kind = "kaplan_meier"

    def __init__(self, time: Any, survival: Any, params: dict[str, Any]) -> None:
        self.time = np.asarray(time, dtype=np.float64).ravel()
        self.survival = np.asarray(survival, dtype=np.float64).ravel()
        if self.time.size == 0 or self.time.shape != self.survival.shape:
            raise MethodError(
                f"{_NAME}: time and survival must be equally long and non-empty, found "
                f"{self.time.size} and {self.survival.size}"
            )
        if np.any(np.diff(self.time) <= 0) or np.any(np.diff(self.survival) > 0):
            raise MethodError(f"{_NAME}: time must increase and survival must not increase")
        tail = params.get("tail")
        if tail not in TAIL_RULES:
            raise MethodError(
                f"option 'tail' of {_NAME}: expected one of {', '.join(TAIL_RULES)}, found {tail!r}"
            )
        self.method = _NAME
        self.params = dict(params)
        self.tail: str = tail
        self.last_value = float(params["last_value"])
        self._tail_mass = float(self.survival[-1])
        rate = params.get("tail_rate")
        self.tail_rate = None if rate is None else float(rate)
        self._has_tail = tail == "exponential" and self._tail_mass > 0
        if tail == "at_last" and self._tail_mass != 0.0:
            raise MethodError(f"{_NAME}: with tail 'at_last' the last survival value must be 0")
        if self._has_tail and not (self.tail_rate is not None and self.tail_rate > 0):
            raise MethodError(f"{_NAME}: the exponential tail needs a rate > 0, found {rate!r}")
        self._cdf = 1.0 - self.survival
        self._mass = np.diff(np.concatenate([[0.0], self._cdf]))

    @property
    def diagnostics(self) -> dict[str, Any]:
        """Counts and the tail rule, for the artifact's ``diagnostics`` section."""
        keys = (
            "n_events",
            "n_censored",
            "events_weight",
            "censored_weight",
            "survival_at_last",
            "last_value",
            "last_censored",
            "tail",
            "tail_rate",
        )
        return {"censoring": {k: self.params[k] for k in keys if k in self.params}}

    def cdf(self, x: Any) -> np.ndarray:
        q = np.asarray(x, dtype=np.float64)
        idx = np.searchsorted(self.time, q, side="right")
        out = np.where(idx > 0, self._cdf[np.maximum(idx - 1, 0)], 0.0)
        if self._has_tail:
            assert self.tail_rate is not None
            beyond = q > self.last_value
            dt = np.where(beyond, q - self.last_value, 0.0)
            tail = 1.0 - self._tail_mass * np.exp(-self.tail_rate * dt)
            out = np.where(beyond, tail, out)
        return out

    def pmf(self, x: Any) -> np.ndarray:
        """Mass of the atom at ``x`` (0 where there is none)."""
        q = np.asarray(x, dtype=np.float64)
        idx = np.clip(np.searchsorted(self.time, q, side="left"), 0, self.time.size - 1)
        return np.where(self.time[idx] == q, self._mass[idx], 0.0)

    def pdf(self, x: Any) -> np.ndarray:
        """Density of the continuous part (the exponential tail; atoms excluded, see pmf)."""
        q = np.asarray(x, dtype=np.float64)
        if not self._has_tail:
            return np.zeros(q.shape)
        assert self.tail_rate is not None
        beyond = q > self.last_value
        dt = np.where(beyond, q - self.last_value, 0.0)
        dens = self._tail_mass * self.tail_rate * np.exp(-self.tail_rate * dt)
        return np.where(beyond, dens, 0.0)

    def quantile(self, u: Any) -> np.ndarray:
        uu = _check_u(u)
        idx = np.searchsorted(self._cdf, uu, side="left")
        out = self.time[np.minimum(idx, self.time.size - 1)]
        if self._has_tail:
            assert self.tail_rate is not None
            beyond = uu > self._cdf[-1]
            with np.errstate(divide="ignore"):
                gap = np.log(self._tail_mass) - np.log1p(-np.where(beyond, uu, 0.0))
            tail = self.last_value + np.maximum(gap, 0.0) / self.tail_rate
            out = np.where(beyond, tail, out)
        return out

    @property
    def mean(self) -> float:
        m = float(np.dot(self._mass, self.time))
        if self._has_tail:
            assert self.tail_rate is not None
            m += self._tail_mass * (self.last_value + 1.0 / self.tail_rate)
        return m

    @property
    def var(self) -> float:
        m = self.mean
        v = float(np.dot(self._mass, (self.time - m) ** 2))
        if self._has_tail:
            assert self.tail_rate is not None
            a, r = self.last_value - m, self.tail_rate
            v += self._tail_mass * (a * a + 2.0 * a / r + 2.0 / (r * r))
        return v

    @property
    def support(self) -> tuple[float, float]:
        hi = np.inf if self._has_tail else float(self.time[-1])
        return float(self.time[0]), hi

    def payload(self) -> dict[str, np.ndarray]:
        return {"time": self.time, "survival": self.survival}

    @classmethod
    def from_payload(cls, payload: dict[str, np.ndarray], described: dict[str, Any]) -> Sampler:
        return cls(payload["time"], payload["survival"], dict(described["params"]))


def _tail_option(options: dict[str, Any]) -> str:
    unknown = sorted(set(options) - {"tail"})
    if unknown:
        raise MethodError(f"unknown option {unknown[0]!r} for method {_NAME!r}; it takes 'tail'")
    tail = options.get("tail", "at_last")
    if tail not in TAIL_RULES:
        raise MethodError(
            f"option 'tail' of {_NAME}: expected one of {', '.join(TAIL_RULES)}, found {tail!r}"
        )
    return str(tail)


def fit_kaplan_meier(
    values: Any,
    censored: Any = None,
    *,
    weights: Any = None,
    tail: TailRule = "at_last",
) -> KaplanMeierSampler:
    """Kaplan–Meier sampler of right-censored values.

    Parameters
    ----------
    values : array_like
        1-d finite observations.
    censored : array_like of bool or 0/1, optional
        True (1) where the value is right-censored. Default: none censored (the empirical
        distribution).
    weights : array_like, optional
        Positive frequency weights, one per value.
    tail : {"at_last", "exponential"}
        Where the survival left after the largest value goes (module docstring).

    Returns
    -------
    KaplanMeierSampler
        Its ``diagnostics`` hold the counts, ``S`` at the largest value and the tail rule.

    Examples
    --------
    >>> s = fit_kaplan_meier([4.0, 6.0, 9.0], [False, False, True], tail="exponential")
    >>> s.params["survival_at_last"], s.params["tail_rate"], s.support
    (0.33333333333333337, 0.10526315789473684, (4.0, inf))
    """
    rule = _tail_option({"tail": tail})
    x, event, w = _check_inputs(values, censored, weights)
    if not np.any(event):
        raise MethodError(
            f"censored: every value is censored; {_NAME} needs at least one uncensored value"
        )
    table = _table(x, event, w)
    last = float(table.time[-1])
    s_last = float(table.survival[-1])
    keep = table.n_events > 0
    time, surv = table.time[keep], table.survival[keep].copy()
    rate: float | None = None
    if rule == "exponential":
        if x.min() < 0:
            raise MethodError(
                f"option 'tail'='exponential' of {_NAME} needs non-negative values (time at "
                f"risk counts from 0); found {float(x.min())!r}"
            )
        exposure = float(np.sum(w * x))
        if not exposure > 0:
            raise MethodError(
                f"option 'tail'='exponential' of {_NAME} needs a positive total time at risk; "
                "every value is 0"
            )
        rate = float(np.sum(w * event)) / exposure
    elif s_last > 0:
        if time[-1] != last:
            time = np.append(time, last)
            surv = np.append(surv, 0.0)
        else:
            surv[-1] = 0.0
    params: dict[str, Any] = {
        "n_events": int(np.count_nonzero(event)),
        "n_censored": int(np.count_nonzero(~event)),
    }
    if weights is not None:
        params["events_weight"] = float(np.sum(w * event))
        params["censored_weight"] = float(np.sum(w * ~event))
    params.update(
        {
            "weighted": weights is not None,
            "tail": rule,
            "tail_rate": rate,
            "last_value": last,
            "last_censored": bool(table.n_censored[-1] > 0),
            "survival_at_last": s_last,
        }
    )
    return KaplanMeierSampler(time, surv, params)


def _fit_method(x: np.ndarray, weights: Any, censored: Any, **options: Any) -> KaplanMeierSampler:
    """The ``kaplan_meier`` entry of :data:`~samplewright.fitting.registry.EXTENSION_METHODS`."""
    rule: Any = _tail_option(options)
    return fit_kaplan_meier(x, censored, weights=weights, tail=rule)


EXTENSION_METHODS[_NAME] = _fit_method
