"""Parametric families: trade names, parameters, the scipy mapping, fast native draws.

Each family maps to one scipy.stats distribution in the modules of this package and nowhere
else. Parameters use the trade's names and are stored in artifacts exactly as listed here (fixed
ones included, so a parameter dict always freezes the distribution on its own):

==================  ==========================  ================================================
family              parameters                  meaning (scipy mapping)
==================  ==========================  ================================================
normal              mu, sigma                   mean, standard deviation (norm)
lognormal           mu, sigma, loc              mean and sd of log(x - loc) (lognorm)
exponential         scale, loc                  mean of x - loc; rate = 1/scale (expon)
gamma               shape, scale, loc           shape k, scale theta; mean k theta + loc (gamma)
weibull             shape, scale, loc           shape k, scale lambda (weibull_min)
gumbel              mu, beta                    mode, scale; for maxima (gumbel_r)
logistic            mu, s                       mean (= median), scale (logistic)
loglogistic         alpha, beta, loc            scale (= median of x - loc), shape (fisk)
pareto              alpha, xm, loc              tail index, minimum of x - loc (pareto)
generalized_pareto  xi, sigma, loc              shape, scale, threshold (genpareto, c = xi)
gev                 mu, sigma, xi               location, scale, shape (genextreme, c = -xi)
beta                alpha, beta, lower, upper   shapes on [lower, upper] (beta)
uniform             lower, upper                bounds (uniform)
triangular          lower, mode, upper          bounds and mode (triang)
inverse_gaussian    mu, lambda, loc             mean of x - loc, shape (invgauss)
student_t           mu, sigma, nu               location, scale, degrees of freedom (t)
rayleigh            sigma, loc                  scale (rayleigh)
poisson             lambda                      mean (poisson)
negative_binomial   r, p                        failures before the r-th success (nbinom)
geometric           p                           failures before the first success (geom, loc -1)
binomial            n_trials, p                 successes in n_trials trials (binom)
==================  ==========================  ================================================

Any parameter can be held fixed in a fit by passing it as an option under its own name
(:mod:`samplewright.fitting.mle`); fixed parameters are stored like the others.
:meth:`Family.support` gives scipy's support for given parameters without scipy's overhead.

``gev`` stores the extreme-value convention's ``xi`` (xi > 0: heavy upper tail, Fréchet type;
xi < 0: bounded above, Weibull type); scipy's ``genextreme`` uses ``c = -xi``. The discrete
families count from 0, so ``geometric`` is ``negative_binomial`` with ``r = 1``.

Modules: :mod:`.base` (the :class:`Family` record and the registry), :mod:`.continuous`,
:mod:`.extreme`, :mod:`.bounded`, :mod:`.discrete`. Fitting them (maximum likelihood, options,
censoring) lives in :mod:`samplewright.fitting.mle`.
"""

from __future__ import annotations

# the kind modules register their families on import
from samplewright.distributions.families import bounded, continuous, discrete, extreme  # noqa: F401
from samplewright.distributions.families.base import FAMILIES, Family, Params, get_family

__all__ = ["FAMILIES", "Family", "Params", "get_family"]
