"""The Kaplan–Meier sampler: point masses at event times, plus a rule for the mass beyond.

``time`` holds the event times and ``survival`` the value of the product-limit estimate ``S``
just after each; the CDF is ``1 - S``, a step CDF (:mod:`samplewright.distributions.steps`). When
the largest value was censored some survival is left after it; ``tail`` says where it goes:
``"at_last"`` (an atom at the largest value, stored as a last survival of 0) or
``"exponential"`` (beyond the largest value ``S`` continues as
``S_last * exp(-tail_rate * (t - last_value))``). Estimating it is in
:mod:`samplewright.fitting.kaplan_meier`.

``quantile(u)`` is the generalised inverse ``inf{t : F(t) >= u}`` of the product-limit CDF. ``S``
is a product of factors computed in floating point, so a level that equals ``F(t_j)`` in exact
arithmetic may differ from the stored value by a few roundings; levels within
:data:`~samplewright.distributions.steps.LEVEL_TOLERANCE` (1e-12) above a step select that step's
time, so quantiles at the estimate's own levels are those of the exact product-limit estimate.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from samplewright.core.errors import MethodError
from samplewright.distributions.base import Sampler, check_probabilities
from samplewright.distributions.choices import TAIL_RULES, TailRule
from samplewright.distributions.steps import LEVEL_TOLERANCE, step_cdf, step_index, step_mass

__all__ = ["KaplanMeierSampler"]

_NAME = "kaplan_meier"
# params copied into the artifact's ``diagnostics.censoring`` section
_DIAGNOSTIC_KEYS = (
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


class KaplanMeierSampler(Sampler):
    """Point masses at the event times of a Kaplan–Meier estimate, plus a rule for the rest.

    Built by :func:`~samplewright.fitting.kaplan_meier.fit_kaplan_meier`; ``params`` holds
    ``tail``, ``tail_rate``, ``last_value`` and the event and censoring counts, which are also
    its ``diagnostics`` (section ``censoring``).

    >>> s = KaplanMeierSampler([2.0, 3.0, 5.0], [0.75, 0.5, 0.0],
    ...                        {"tail": "at_last", "last_value": 5.0})
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
        self.tail: TailRule = tail
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
        censoring = {k: params[k] for k in _DIAGNOSTIC_KEYS if k in params}
        super().__init__(method=_NAME, params=dict(params), diagnostics={"censoring": censoring})

    def cdf(self, x: Any) -> np.ndarray:
        q = np.asarray(x, dtype=np.float64)
        out = step_cdf(self.time, self._cdf, q)
        if self._has_tail:
            assert self.tail_rate is not None
            beyond = q > self.last_value
            dt = np.where(beyond, q - self.last_value, 0.0)
            tail = 1.0 - self._tail_mass * np.exp(-self.tail_rate * dt)
            out = np.where(beyond, tail, out)
        return out

    def pmf(self, x: Any) -> np.ndarray:
        """Mass of the atom at ``x`` (0 where there is none)."""
        return step_mass(self.time, self._cdf, x)

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
        uu = check_probabilities(u)
        out = self.time[step_index(self._cdf, uu)]
        if self._has_tail:
            assert self.tail_rate is not None
            beyond = uu > self._cdf[-1] + LEVEL_TOLERANCE
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
