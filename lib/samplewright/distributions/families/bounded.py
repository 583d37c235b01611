"""Families on a bounded interval: beta (on [lower, upper]), uniform, triangular."""

from __future__ import annotations

from scipy import stats

from samplewright.distributions.families.base import Family, register, unit_interval

__all__: list[str] = []

register(
    Family(
        "beta",
        ("alpha", "beta", "lower", "upper"),
        positive=False,
        discrete=False,
        scipy_dist=stats.beta,
        scipy_kwargs=lambda p: dict(
            a=p["alpha"], b=p["beta"], loc=p["lower"], scale=p["upper"] - p["lower"]
        ),
        native_draw=lambda p, size, rng: (
            p["lower"] + (p["upper"] - p["lower"]) * rng.beta(p["alpha"], p["beta"], size)
        ),
        std_support=unit_interval,
    )
)
register(
    Family(
        "uniform",
        ("lower", "upper"),
        positive=False,
        discrete=False,
        scipy_dist=stats.uniform,
        scipy_kwargs=lambda p: dict(loc=p["lower"], scale=p["upper"] - p["lower"]),
        native_draw=lambda p, size, rng: rng.uniform(p["lower"], p["upper"], size),
        std_support=unit_interval,
    )
)
register(
    Family(
        "triangular",
        ("lower", "mode", "upper"),
        positive=False,
        discrete=False,
        scipy_dist=stats.triang,
        scipy_kwargs=lambda p: dict(
            c=(p["mode"] - p["lower"]) / (p["upper"] - p["lower"]),
            loc=p["lower"],
            scale=p["upper"] - p["lower"],
        ),
        native_draw=lambda p, size, rng: rng.triangular(p["lower"], p["mode"], p["upper"], size),
        std_support=unit_interval,
    )
)
