"""From data to a sampler: the ``fit`` entry point and the method registry.

Methods (``method=``):

* ``empirical``: the data's own (weighted) distribution; exact ECDF, no value beyond the data.
* ``interpolated``: a continuous piecewise-linear CDF through the sorted data. The i-th smallest
  of n values (i = 1..n) gets plotting position ``p = (i - 1) / (n - 1)``, so the CDF is 0 at the
  minimum and 1 at the maximum and no draw falls outside [min, max]. Its quantile function is the
  "linear" sample quantile (Hyndman & Fan type 7, numpy's default). Tied values become a vertical
  step (an atom) carrying their share of the mass. Weights are not supported.
* a parametric family name (see :mod:`samplewright.distributions.families`): maximum likelihood.

User-drawn CDFs are not fitted: see :func:`samplewright.distributions.piecewise.from_knots` and
:func:`read_knots`.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from samplewright.core.errors import KnotsError, MethodError
from samplewright.distributions.base import Sampler
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.families import FAMILIES, fit_family
from samplewright.distributions.parametric import ParametricSampler
from samplewright.distributions.piecewise import PiecewiseSampler

__all__ = [
    "NONPARAMETRIC_METHODS",
    "canonical_method",
    "fit",
    "known_methods",
    "read_knots",
]

COUNT_FAMILIES = frozenset({"poisson", "negative_binomial", "geometric", "binomial"})

# method -> (fewest values, options accepted)
NONPARAMETRIC_METHODS: dict[str, tuple[int, frozenset[str]]] = {
    "empirical": (1, frozenset()),
    "interpolated": (2, frozenset()),
}


def known_methods() -> list[str]:
    """Every method name ``fit`` accepts."""
    from samplewright.fitting.catalog import METHODS

    return list(METHODS)


def canonical_method(method: str, options: Mapping[str, Any] | None = None) -> str:
    """A canonical text for a method and its options (sorted JSON), used in content keys.

    >>> canonical_method("gamma", {"loc": 0})
    '{"method":"gamma","options":{"loc":0}}'
    """
    return json.dumps(
        {"method": method, "options": dict(options or {})}, sort_keys=True, separators=(",", ":")
    )


def _interpolated(x: np.ndarray) -> PiecewiseSampler:
    xs = np.sort(x)
    p = np.arange(xs.size, dtype=np.float64) / (xs.size - 1)
    return PiecewiseSampler(xs, p, method="interpolated")


def fit(
    values: Any,
    method: str = "empirical",
    *,
    weights: Any = None,
    censored: Any = None,
    **options: Any,
) -> Sampler:
    """Fit a sampler to observed values.

    Parameters
    ----------
    values : 1-d array of finite observations.
    method : ``"empirical"``, ``"interpolated"``, a family name, or an extension method.
    weights : optional positive frequency weights, one per value.
    censored : optional booleans, True where the value is right-censored.
    **options : method options (e.g. ``loc`` for positive families).

    >>> s = fit([2.0, 4.0, 9.0], method="exponential")
    >>> s.method, s.params["scale"], round(s.loglik, 4)
    ('exponential', 5.0, -7.8283)
    """
    x = np.asarray(values, dtype=np.float64)
    if x.ndim != 1:
        raise MethodError(f"values: expected a 1-d array, found {x.ndim} dimensions")
    if not np.all(np.isfinite(x)):
        raise MethodError("values: every value must be finite (clean NaN/inf before fitting)")
    w = None if weights is None else np.asarray(weights, dtype=np.float64)
    c = None if censored is None else np.asarray(censored, dtype=bool)
    if c is not None and c.shape != x.shape:
        raise MethodError(f"censored: expected {x.size} flags, found {c.size}")

    from samplewright.fitting.registry import load_extensions

    EXTENSION_METHODS = load_extensions()
    if method in EXTENSION_METHODS:
        return EXTENSION_METHODS[method](x, w, c, **options)
    if c is not None and c.any():
        if method in FAMILIES:
            out = fit_family(method, x, w, censored=c, **options)
            return ParametricSampler(
                method, out.params, loglik=out.loglik, aic=out.aic, bic=out.bic
            )
        raise MethodError(
            f"method {method!r} does not handle censored data; use a parametric family "
            "or 'kaplan_meier'"
        )
    if method in NONPARAMETRIC_METHODS:
        min_n, allowed = NONPARAMETRIC_METHODS[method]
        unknown = set(options) - allowed
        if unknown:
            raise MethodError(f"unknown option {sorted(unknown)[0]!r} for method {method!r}")
        if x.size < min_n:
            raise MethodError(f"method {method!r} needs at least {min_n} values, found {x.size}")
        if method == "empirical":
            return EmpiricalSampler(x, w)
        if w is not None:
            raise MethodError("method 'interpolated' does not take weights; use 'empirical'")
        return _interpolated(x)
    if method in FAMILIES:
        out = fit_family(method, x, w, **options)
        sampler = ParametricSampler(method, out.params, loglik=out.loglik, aic=out.aic, bic=out.bic)
        if method in COUNT_FAMILIES:
            from samplewright.fitting.counts import count_diagnostics

            sampler.diagnostics = count_diagnostics(x, w)  # type: ignore[attr-defined]
        return sampler
    raise MethodError(f"unknown method {method!r}; expected one of: {', '.join(known_methods())}")


def read_knots(path: str | Path) -> PiecewiseSampler:
    """Knots of a user-drawn CDF from a CSV/TSV (columns ``x`` and ``p``) or YAML file.

    YAML forms: ``{x: [...], p: [...]}`` or a list of ``[x, p]`` pairs.
    """
    path = Path(path)
    if not path.is_file():
        raise KnotsError(f"{path}: knots file not found")
    suffix = path.suffix.lower()
    if suffix in (".yaml", ".yml"):
        import yaml

        try:
            doc = yaml.safe_load(path.read_text())
        except yaml.YAMLError as exc:
            raise KnotsError(f"{path}: not valid YAML ({str(exc).splitlines()[0]})") from None
        if isinstance(doc, dict) and set(doc) >= {"x", "p"}:
            x, p = doc["x"], doc["p"]
        elif isinstance(doc, list) and all(
            isinstance(r, list | tuple) and len(r) == 2 for r in doc
        ):
            x, p = [r[0] for r in doc], [r[1] for r in doc]
        else:
            raise KnotsError(
                f"{path}: expected a mapping with keys x and p, or a list of [x, p] pairs"
            )
    elif suffix in (".csv", ".tsv", ".tab"):
        from samplewright.intake.columns import _to_float, read_raw_columns

        cols = read_raw_columns(path, ["x", "p"])
        x, p = _to_float(cols["x"], path, "x"), _to_float(cols["p"], path, "p")
    else:
        raise KnotsError(f"{path}: knots file must be .csv, .tsv or .yaml, found {suffix!r}")
    try:
        from samplewright.distributions.piecewise import from_knots

        return from_knots(x, p)
    except KnotsError as exc:
        raise KnotsError(f"{path}: {exc}") from None


def parse_knots_text(text: str) -> PiecewiseSampler:
    """Knots from command-line text ``"x1:p1,x2:p2,..."``."""
    from samplewright.distributions.piecewise import from_knots

    try:
        pairs = [item.split(":") for item in text.split(",") if item.strip()]
        x = [float(a) for a, _ in pairs]
        p = [float(b) for _, b in pairs]
    except ValueError:
        raise KnotsError(
            f"--points: expected 'x1:p1,x2:p2,...' with numbers, found {text!r}"
        ) from None
    return from_knots(x, p)
