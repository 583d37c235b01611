"""Data with (almost) no spread: fits that collapse onto a point are refused, never returned.

Most continuous families have no proper maximum-likelihood fit to values that all coincide: the
likelihood grows without bound as the distribution shrinks onto the common value. Exact ties are
refused by each fitter (``need_spread`` in :mod:`.mle_fits`). Values that differ only by rounding
(a few ulps apart), or a fit that shrinks onto one value most of the data share, slip past an
exact test and used to come back as a "fit" with a scale of 1e-16 and a log-likelihood in the
thousands. Two checks close that gap, both in :func:`~samplewright.fitting.mle.fit_checked`:

* :func:`check_collapse`, after a fit that estimated something: the fit's *effective width*
  ``exp(-loglik / n_obs)`` (the geometric mean over the data of ``1 / density``: the width of a
  uniform distribution with the same log-likelihood) must exceed :data:`REL_WIDTH` times the
  data's magnitude ``max(|min|, |max|)``. A narrower density resolves the values no better than
  float64 rounding does (relative precision 2.2e-16; the bound leaves a factor of about 4,500).
  Common practice, no source: the bound is this package's choice.
* :func:`explain_failure`, when a fit fails (:class:`~samplewright.core.errors.FitError`) on
  concentrated data (a relative spread below :data:`REL_WIDTH`, or one value carrying at least
  half of the weight): a :class:`~samplewright.core.errors.MethodError` that says the data have
  almost no spread, with the optimiser's reason after it.

Both raise a one-line MethodError (an input error: the data, not the code, are the problem).
The first costs nothing (it reads the log-likelihood and the extremes); the second counts
distinct values only on the failure path.
"""

from __future__ import annotations

import math

import numpy as np

from samplewright.core.errors import FitError, MethodError
from samplewright.fitting.mle_sums import Obs

__all__ = ["REL_WIDTH", "check_collapse", "explain_failure", "relative_spread"]

REL_WIDTH = 1e-12  # narrowest effective width, relative to the data's magnitude (no source)
_TIE_SHARE = 0.5  # a value carrying this share of the weight concentrates the data


def relative_spread(obs: Obs) -> float:
    """``(max - min) / max(|min|, |max|)`` (0 for all-zero data)."""
    scale = max(abs(obs.lo), abs(obs.hi))
    return (obs.hi - obs.lo) / scale if scale > 0 else 0.0


def _top_value(obs: Obs) -> tuple[float, float]:
    """The value carrying the most weight, and its share of the total."""
    values, inverse = np.unique(obs.x, return_inverse=True)
    weight = np.bincount(inverse, weights=obs.w, minlength=values.size)
    i = int(np.argmax(weight))
    return float(values[i]), float(weight[i]) / obs.total


def _where(obs: Obs) -> str:
    """Where the data sit: their span, or the value most of them share."""
    if obs.lo == obs.hi:
        return f"all {obs.n} values equal {obs.lo!r}"
    rel = relative_spread(obs)
    if rel < REL_WIDTH:
        return (
            f"all {obs.n} values lie between {obs.lo!r} and {obs.hi!r}, a relative spread of "
            f"{rel:.2g}"
        )
    value, share = _top_value(obs)
    if obs.w is None:
        return f"{round(share * obs.n)} of {obs.n} values equal {value!r}"
    return f"{share:.0%} of the weight sits on the value {value!r}"


def check_collapse(name: str, obs: Obs, loglik: float, n_obs: float | None = None) -> None:
    """Refuse a fit whose density is narrower than float64 can resolve (module docstring).

    ``n_obs`` is the total weight the log-likelihood sums over (default: that of ``obs``; a
    fit to incomplete rows passes its own, ``obs`` then holding the rows' finite ends).

    >>> x = Obs(np.array([3.0, 3.0, 3.0000000000000004]))
    >>> check_collapse("normal", x, 100.0)
    Traceback (most recent call last):
    ...
    samplewright.core.errors.MethodError: normal: the data have almost no spread (all 3 ...
    """
    total = obs.total if n_obs is None else n_obs
    scale = max(abs(obs.lo), abs(obs.hi))
    if not (scale > 0 and math.isfinite(loglik) and total > 0):
        return
    log_width = -loglik / total
    if log_width > math.log(REL_WIDTH * scale):
        return
    raise MethodError(
        f"{name}: the data have almost no spread ({_where(obs)}): the fit shrinks onto a point "
        f"(a density of about {math.exp(min(-log_width, 700.0)):.3g} at each value), which is "
        "no proper fit"
    )


def explain_failure(name: str, obs: Obs, err: FitError) -> MethodError | None:
    """A MethodError saying the data have almost no spread, when they do (else None)."""
    if obs.n == 0:
        return None
    rel = relative_spread(obs)
    if not rel < REL_WIDTH and _top_value(obs)[1] < _TIE_SHARE:
        return None
    reason = str(err)
    if reason.startswith(f"{name}: "):
        reason = reason[len(name) + 2 :]
    return MethodError(
        f"{name}: the data have almost no spread ({_where(obs)}) and the fit failed on them: "
        f"{reason}"
    )
