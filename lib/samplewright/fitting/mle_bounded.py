"""Maximum-likelihood fits of the families with estimated bounds: uniform and triangular.

Triangular (lower ``a``, mode ``c``, upper ``b``): for given bounds the likelihood's maximum over
the mode lies at a bound or at an order statistic (Oliver, 1972), so the profile likelihood
``P(a, b) = max_c L(a, c, b)`` is evaluated over all of them at once. ``P`` is continuous on the
closed region ``a <= min(x)``, ``b >= max(x)``: the maximum lies inside it or on one of its
edges. The edges are the boundary solutions: ``a = min(x)`` forces the mode to ``a`` (any other
mode gives the smallest value density 0), leaving a one-dimensional search over ``b``, and
``b = max(x)`` likewise forces ``c = b``. The fit takes the best of the interior maximum
(Nelder–Mead on ``log`` distances from the edges, from two starts, and a third when those two
disagree) and both edge maxima (a grid over ``log(b - max x)`` refined by a bounded Brent
search). A fixed ``mode`` (option) is used as given, and a fixed bound removes its direction.

scipy computes the upper end as ``a + (b - a)``, which can round below ``b``: the fitted ends
are widened by a few ulps until scipy's support contains every value with a finite density at
both extremes, so a plain triangular sample is never refused for rounding.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from scipy import optimize

from samplewright.core.errors import FitError, MethodError
from samplewright.distributions.families import Params, get_family
from samplewright.fitting import optimise as _mle
from samplewright.fitting.mle_fits import Fitted, fixed, need_spread
from samplewright.fitting.mle_numeric import bounds_option
from samplewright.fitting.mle_sums import Obs, dot
from samplewright.fitting.optimise import Kind

__all__ = ["fit_triangular", "fit_uniform", "triangular_loglik"]

_LOG2 = float(np.log(2.0))


def fit_uniform(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    """Uniform: the sample extremes, or the bounds given; scipy's upper end kept above max(x)."""
    lo, hi = bounds_option(obs, o, "uniform", (None, None))
    lo = obs.lo if lo is None else lo
    if hi is None:
        hi = obs.hi
        for _ in range(64):  # scipy's support is loc + scale: keep the top inside
            if lo + (hi - lo) >= obs.hi:
                break
            hi = float(np.nextafter(hi, np.inf))
    if not lo < hi:
        raise MethodError(
            f"uniform cannot be fitted: all {obs.n} values equal {lo!r} (the data have no spread)"
        )
    if not np.isfinite(hi - lo):
        raise MethodError(
            f"uniform: the values span {lo!r} to {hi!r}, a spread that overflows float64"
        )
    return {"lower": lo, "upper": hi}, None


def _best_mode(xs: np.ndarray, ws: np.ndarray, a: float, b: float) -> tuple[float, float]:
    """Best mode for bounds (a, b) over {a, sorted values, b} (Oliver, 1972); its mean loglik."""
    with np.errstate(divide="ignore", invalid="ignore"):
        la, lb = np.log(xs - a), np.log(b - xs)
        lab = float(np.log(b - a))
        cand = np.concatenate([[a], xs, [b]])
        k = np.concatenate([[0.0], np.cumsum(ws)])  # weight at or left of each candidate
        total = k[-1]
        k = np.concatenate([k, [total]])
        wla, wlb = ws * la, ws * lb
        left = np.concatenate([[0.0], np.cumsum(wla), [np.sum(wla)]])
        right = np.concatenate([[np.sum(wlb)], np.sum(wlb) - np.cumsum(wlb), [0.0]])
        lca = np.concatenate([[-np.inf], la, [lab]])  # log(candidate - a), reusing la
        lbc = np.concatenate([[lab], lb, [-np.inf]])  # log(b - candidate)
        ll = (
            total * (_LOG2 - lab)
            + left
            + right
            - np.where(k > 0, k * lca, 0.0)
            - np.where(total - k > 0, (total - k) * lbc, 0.0)
        )
    ll = np.where(np.isnan(ll), -np.inf, ll)
    j = int(np.argmax(ll))
    return float(cand[j]), float(ll[j]) / total


def triangular_loglik(xs: np.ndarray, ws: np.ndarray, a: float, c: float, b: float) -> float:
    """Mean log-likelihood of sorted values ``xs`` (weights ``ws``) under triangular(a, c, b)."""
    if not (a <= xs[0] and xs[-1] <= b and a <= c <= b and a < b):
        return -np.inf
    with np.errstate(divide="ignore", invalid="ignore"):
        left, right = xs < c, xs > c
        ll = np.sum(ws) * (_LOG2 - np.log(b - a))
        if left.any():
            ll += float(dot(ws[left], np.log(xs[left] - a))) - np.sum(ws[left]) * np.log(c - a)
        if right.any():
            ll += float(dot(ws[right], np.log(b - xs[right]))) - np.sum(ws[right]) * np.log(b - c)
    return float(ll) / float(np.sum(ws)) if np.isfinite(ll) else -np.inf


def _edge_search(f: Callable[[float], float]) -> tuple[float, float]:
    """Maximise ``f(t)`` over ``t`` (a log distance from an edge): grid, then bounded Brent."""
    ts = np.linspace(-36.0, 6.0, 29)
    vals = np.array([f(t) for t in ts])
    i = int(np.argmax(vals))
    if not np.isfinite(vals[i]):
        return float(ts[i]), -np.inf
    lo, hi = ts[max(i - 1, 0)], ts[min(i + 1, ts.size - 1)]
    res = optimize.minimize_scalar(
        lambda t: -f(t), bounds=(lo, hi), method="bounded", options={"xatol": 1e-10}
    )
    if np.isfinite(res.fun) and -float(res.fun) >= vals[i]:
        return float(res.x), -float(res.fun)
    return float(ts[i]), float(vals[i])


def _contain(p: Params, x1: float, xn: float, free_lo: bool, free_hi: bool) -> Params:
    """Widen free ends by ulps until scipy's support holds [x1, xn] with finite density there."""
    fam = get_family("triangular")
    p = dict(p)
    for _ in range(64):
        lo, hi = fam.support(p)
        with np.errstate(all="ignore"):
            lp = np.asarray(fam.bound(p).logpdf(np.array([x1, xn])))
        bad_lo = lo > x1 or not np.isfinite(lp[0])
        bad_hi = hi < xn or not np.isfinite(lp[1])
        if not ((bad_lo and free_lo) or (bad_hi and free_hi)):
            return p
        if bad_lo and free_lo:
            p["lower"] = float(np.nextafter(p["lower"], -np.inf))
        if bad_hi and free_hi:
            p["upper"] = float(np.nextafter(p["upper"], np.inf))
    return p


def fit_triangular(obs: Obs, o: Mapping[str, Any]) -> Fitted:
    """Triangular: the best of the interior and boundary maxima (see the module docstring)."""
    need_spread(obs, "triangular")
    lo_f, hi_f = bounds_option(obs, o, "triangular", (None, None))
    c_f = fixed(o, "mode")
    if c_f is not None and not ((lo_f is None or lo_f <= c_f) and (hi_f is None or c_f <= hi_f)):
        raise MethodError(f"triangular: option mode={c_f!r} is outside [lower, upper]")
    order = np.argsort(obs.x, kind="stable")
    xs, ws = obs.x[order], obs.weights()[order]
    x1, xn = float(xs[0]), float(xs[-1])
    spread = xn - x1
    a_max = x1 if c_f is None else min(x1, c_f)
    b_min = xn if c_f is None else max(xn, c_f)

    def profile(a: float, b: float) -> tuple[float, float]:
        if c_f is None:
            return _best_mode(xs, ws, a, b)
        return c_f, triangular_loglik(xs, ws, a, c_f, b)

    def ends(ta: float | None, tb: float | None) -> tuple[float, float]:
        a = lo_f if lo_f is not None else (a_max if ta is None else a_max - spread * np.exp(ta))
        b = hi_f if hi_f is not None else (b_min if tb is None else b_min + spread * np.exp(tb))
        return float(a), float(b)

    found: list[tuple[float, float, float]] = []  # (mean loglik, a, b)

    def keep(a: float, b: float) -> None:
        found.append((profile(a, b)[1], a, b))

    free = [n for n, v in (("lower", lo_f), ("upper", hi_f)) if v is None]
    if free:  # interior: both free ends strictly beyond the data
        kinds: dict[str, Kind] = {n: ("real", 1.0) for n in free}

        def mean_ll(p: Params) -> float:
            return profile(*ends(p.get("lower"), p.get("upper")))[1]

        runs: list[float] = []
        for s0 in (0.05, 0.3, 0.005):  # a third start only when the first two disagree
            try:
                p = _mle.maximise_params(
                    mean_ll, {n: float(np.log(s0)) for n in free}, free, kinds, label="triangular"
                )
            except FitError:
                continue
            keep(*ends(p.get("lower"), p.get("upper")))
            runs.append(found[-1][0])
            if len(runs) == 2 and abs(runs[0] - runs[1]) <= 1e-10 * max(1.0, abs(runs[0])):
                break
    # boundary solutions: a at its largest (mode = lower) or b at its smallest (mode = upper)
    if lo_f is None:
        if hi_f is None:
            t, _ = _edge_search(lambda t: profile(*ends(None, t))[1])
            keep(*ends(None, t))
        else:
            keep(*ends(None, None))
    if hi_f is None:
        if lo_f is None:
            t, _ = _edge_search(lambda t: profile(*ends(t, None))[1])
            keep(*ends(t, None))
        else:
            keep(*ends(None, None))
    if not free:
        keep(*ends(None, None))
    ll, a, b = max(found, key=lambda r: r[0])
    if not np.isfinite(ll):
        raise FitError(f"triangular: no mode gives a finite likelihood on [{a!r}, {b!r}]")
    c = profile(a, b)[0]
    p = _contain({"lower": a, "mode": c, "upper": b}, x1, xn, lo_f is None, hi_f is None)
    return p, None
