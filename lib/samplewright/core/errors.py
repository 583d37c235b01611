"""Exceptions raised by samplewright.

Every error the package raises on purpose derives from :class:`SamplewrightError`; errors caused
by what the caller passed in also derive from :class:`ValueError`, so generic handlers work::

    SamplewrightError
    ├── InputDataError (ValueError)     a data file, column or value is unusable
    ├── MethodError (ValueError)        unknown method, bad option, too few rows, impossible fit
    ├── KnotsError (ValueError)         a user-drawn CDF is not a CDF
    ├── ConfigError (ValueError)        the workflow configuration is invalid
    ├── FitError                        an optimiser failed or reached an impossible answer
    └── ArtifactError                   an artifact is missing, unreadable or altered
        └── IntegrityError              its content hash does not match

Messages are one line and name the file, column, option or argument, what was expected and what
was found.
"""

from __future__ import annotations

__all__ = [
    "ArtifactError",
    "ConfigError",
    "FitError",
    "InputDataError",
    "IntegrityError",
    "KnotsError",
    "MethodError",
    "SamplewrightError",
]


class SamplewrightError(Exception):
    """Root of every error samplewright raises on purpose."""


class InputDataError(SamplewrightError, ValueError):
    """A data file, column or value cannot be used."""


class MethodError(SamplewrightError, ValueError):
    """A method name or option is invalid, or the data do not suit the method."""


class KnotsError(SamplewrightError, ValueError):
    """User-drawn CDF knots do not form a CDF."""


class ConfigError(SamplewrightError, ValueError):
    """The samplewright section of a workflow configuration is invalid."""


class FitError(SamplewrightError):
    """Fitting failed or produced an answer that cannot be right."""


class ArtifactError(SamplewrightError):
    """A sampler artifact is missing, unreadable or malformed."""


class IntegrityError(ArtifactError):
    """An artifact's stored content hash does not match its content."""
