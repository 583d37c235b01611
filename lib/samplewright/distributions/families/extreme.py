"""Heavy-tailed and extreme-value families: gumbel, pareto, generalized Pareto, gev."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from scipy import stats

from samplewright.distributions.families.base import Family, Params, register

__all__: list[str] = []


def _gpd_draw(p: Params, size: int | tuple[int, ...], rng: np.random.Generator) -> np.ndarray:
    e = rng.standard_exponential(size)
    if p["xi"] == 0:
        return p["loc"] + p["sigma"] * e
    return p["loc"] + p["sigma"] * np.expm1(p["xi"] * e) / p["xi"]


def _pareto_support(kw: Mapping[str, Any]) -> tuple[float, float]:
    return 1.0, np.inf


def _gpd_support(kw: Mapping[str, Any]) -> tuple[float, float]:
    c = kw["c"]  # scipy's genpareto._get_support
    return 0.0, (-1.0 / c if c < 0 else np.inf)


def _gev_support(kw: Mapping[str, Any]) -> tuple[float, float]:
    c = kw["c"]  # scipy's genextreme._get_support (c = -xi)
    return (1.0 / c if c < 0 else -np.inf), (1.0 / c if c > 0 else np.inf)


def _gev_draw(p: Params, size: int | tuple[int, ...], rng: np.random.Generator) -> np.ndarray:
    le = np.log(rng.standard_exponential(size))
    if p["xi"] == 0:
        return p["mu"] - p["sigma"] * le
    return p["mu"] + p["sigma"] * np.expm1(-p["xi"] * le) / p["xi"]


register(
    Family(
        "gumbel",
        ("mu", "beta"),
        positive=False,
        discrete=False,
        scipy_dist=stats.gumbel_r,
        scipy_kwargs=lambda p: dict(loc=p["mu"], scale=p["beta"]),
        native_draw=lambda p, size, rng: rng.gumbel(p["mu"], p["beta"], size),
    )
)
register(
    Family(
        "pareto",
        ("alpha", "xm", "loc"),
        positive=True,
        discrete=False,
        scipy_dist=stats.pareto,
        scipy_kwargs=lambda p: dict(b=p["alpha"], loc=p["loc"], scale=p["xm"]),
        native_draw=lambda p, size, rng: p["xm"] * (rng.pareto(p["alpha"], size) + 1.0) + p["loc"],
        std_support=_pareto_support,
    )
)
register(
    Family(
        "generalized_pareto",
        ("xi", "sigma", "loc"),
        positive=True,
        discrete=False,
        scipy_dist=stats.genpareto,
        scipy_kwargs=lambda p: dict(c=p["xi"], loc=p["loc"], scale=p["sigma"]),
        native_draw=_gpd_draw,
        std_support=_gpd_support,
    )
)
register(
    Family(
        "gev",
        ("mu", "sigma", "xi"),
        positive=False,
        discrete=False,
        scipy_dist=stats.genextreme,
        scipy_kwargs=lambda p: dict(c=-p["xi"], loc=p["mu"], scale=p["sigma"]),
        native_draw=_gev_draw,
        std_support=_gev_support,
    )
)
