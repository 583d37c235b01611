"""The family record, its scipy mapping and the registry of families by name."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from samplewright.core.errors import MethodError

__all__ = [
    "FAMILIES",
    "Family",
    "Params",
    "get_family",
    "half_line",
    "real_line",
    "register",
    "unit_interval",
]

Params = dict[str, float]
NativeDraw = Callable[[Params, int | tuple[int, ...], np.random.Generator], np.ndarray]
# scipy keyword arguments -> the support of the standard (loc 0, scale 1) distribution
StdSupport = Callable[[Mapping[str, Any]], tuple[float, float]]


def real_line(kw: Mapping[str, Any]) -> tuple[float, float]:
    """Standard support of a family on the whole real line."""
    return -np.inf, np.inf


def half_line(kw: Mapping[str, Any]) -> tuple[float, float]:
    """Standard support of a family above its location (0 to infinity)."""
    return 0.0, np.inf


def unit_interval(kw: Mapping[str, Any]) -> tuple[float, float]:
    """Standard support of a family on [0, 1]."""
    return 0.0, 1.0


class _Bound:
    """A scipy distribution with its parameters bound but not frozen.

    Each method is the frozen distribution's: ``dist.method(x, **kwargs)``, the very call a
    frozen distribution makes, so the numbers are the same. Freezing builds a new distribution
    instance (with its docstrings), about half a millisecond, which dominated refits in loops.
    """

    __slots__ = ("dist", "kw")

    def __init__(self, dist: Any, kw: dict[str, Any]) -> None:
        self.dist = dist
        self.kw = kw

    def cdf(self, x: Any) -> Any:
        return self.dist.cdf(x, **self.kw)

    def sf(self, x: Any) -> Any:
        return self.dist.sf(x, **self.kw)

    def ppf(self, q: Any) -> Any:
        return self.dist.ppf(q, **self.kw)

    def pdf(self, x: Any) -> Any:
        return self.dist.pdf(x, **self.kw)

    def logpdf(self, x: Any) -> Any:
        return self.dist.logpdf(x, **self.kw)

    def logsf(self, x: Any) -> Any:
        return self.dist.logsf(x, **self.kw)

    def pmf(self, k: Any) -> Any:
        return self.dist.pmf(k, **self.kw)

    def logpmf(self, k: Any) -> Any:
        return self.dist.logpmf(k, **self.kw)

    def support(self) -> Any:
        return self.dist.support(**self.kw)


@dataclass(frozen=True)
class Family:
    """One parametric family: its parameters, how it maps to scipy, and how to draw from it fast.

    Attributes
    ----------
    name : str
        The trade name (the method name in ``fit``).
    param_names : tuple of str
        Parameter names, in the order stored in artifacts.
    positive : bool
        Whether the support starts at a location ``loc`` (a parameter of the family).
    discrete : bool
        Whether it is a distribution of integers (pmf instead of pdf).
    scipy_dist : scipy.stats distribution
        The scipy distribution it maps to.
    scipy_kwargs : callable
        Parameters -> scipy's keyword arguments for ``scipy_dist``.
    native_draw : callable, optional
        ``(params, size, generator) -> draws`` with numpy's own generator (faster than the
        inverse transform); None draws by ``ppf``.
    std_support : callable
        scipy's keyword arguments -> the support of the standard distribution (scipy's
        ``_get_support``); :meth:`support` scales it exactly as scipy does.
    """

    name: str
    param_names: tuple[str, ...]
    positive: bool
    discrete: bool
    scipy_dist: Any
    scipy_kwargs: Callable[[Params], dict[str, Any]]
    native_draw: NativeDraw | None = None
    std_support: StdSupport = real_line

    def support(self, params: Mapping[str, float]) -> tuple[float, float]:
        """The support ``(lower, upper)`` for these parameters, with scipy's arithmetic.

        Equal to ``frozen(params).support()`` for valid parameters (``a * scale + loc`` from
        the standard support), without the cost of scipy's argument handling.
        """
        kw = self.scipy_kwargs(dict(params))
        a, b = self.std_support(kw)
        scale, loc = kw.get("scale", 1.0), kw.get("loc", 0.0)
        return float(a * scale + loc), float(b * scale + loc)

    def frozen(self, params: Mapping[str, float]) -> Any:
        """The scipy frozen distribution for these parameters."""
        return self.scipy_dist(**self.scipy_kwargs(dict(params)))

    def bound(self, params: Mapping[str, float]) -> Any:
        """The distribution for these parameters for repeated evaluation, without freezing.

        Offers ``cdf``, ``sf``, ``ppf``, ``pdf``, ``logpdf``, ``logsf``, ``pmf``, ``logpmf`` and
        ``support`` with the same results as :meth:`frozen`'s (scipy's unfrozen methods with the
        parameters passed explicitly).
        """
        return _Bound(self.scipy_dist, self.scipy_kwargs(dict(params)))

    def draw(
        self, params: Mapping[str, float], size: int | tuple[int, ...], rng: np.random.Generator
    ) -> np.ndarray:
        """Draws by the family's native numpy generator, else by inverse transform.

        Discrete families return integers.
        """
        if self.native_draw is not None:
            return self.native_draw(dict(params), size, rng)
        return np.asarray(self.frozen(params).ppf(rng.random(size)))


FAMILIES: dict[str, Family] = {}


def register(family: Family) -> None:
    """Add a family to :data:`FAMILIES` (each family module registers its own)."""
    FAMILIES[family.name] = family


def get_family(name: str) -> Family:
    """The family registered under ``name``; unknown names raise a MethodError listing them."""
    try:
        return FAMILIES[name]
    except (KeyError, TypeError):
        raise MethodError(
            f"unknown family {name!r}; expected one of: {', '.join(sorted(FAMILIES))}"
        ) from None
