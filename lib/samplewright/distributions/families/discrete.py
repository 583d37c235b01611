"""Count families (integers from 0): poisson, negative binomial, geometric, binomial."""

from __future__ import annotations

import numpy as np
from scipy import stats

from samplewright.distributions.families.base import Family, half_line, register

__all__: list[str] = []

register(
    Family(
        "poisson",
        ("lambda",),
        positive=False,
        discrete=True,
        scipy_dist=stats.poisson,
        scipy_kwargs=lambda p: dict(mu=p["lambda"]),
        native_draw=lambda p, size, rng: rng.poisson(p["lambda"], size),
        std_support=half_line,
    )
)
register(
    Family(
        "negative_binomial",
        ("r", "p"),
        positive=False,
        discrete=True,
        scipy_dist=stats.nbinom,
        scipy_kwargs=lambda p: dict(n=p["r"], p=p["p"]),
        native_draw=lambda p, size, rng: rng.negative_binomial(p["r"], p["p"], size),
        std_support=half_line,
    )
)
register(
    Family(
        "geometric",
        ("p",),
        positive=False,
        discrete=True,
        scipy_dist=stats.geom,
        scipy_kwargs=lambda p: dict(p=p["p"], loc=-1),
        native_draw=lambda p, size, rng: rng.geometric(p["p"], size) - 1,
        std_support=lambda kw: (1.0, np.inf),  # scipy's geom starts at 1 (loc -1 moves it)
    )
)
register(
    Family(
        "binomial",
        ("n_trials", "p"),
        positive=False,
        discrete=True,
        scipy_dist=stats.binom,
        scipy_kwargs=lambda p: dict(n=int(p["n_trials"]), p=p["p"]),
        native_draw=lambda p, size, rng: rng.binomial(int(p["n_trials"]), p["p"], size),
        std_support=lambda kw: (0.0, float(kw["n"])),
    )
)
