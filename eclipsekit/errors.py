"""Exceptions raised by eclipsekit.

Every error the package raises on purpose derives from :class:`EclipsekitError`,
so a caller (and the command line) can catch them all in one place.
"""

from __future__ import annotations

__all__ = [
    "EclipsekitError",
    "InputError",
    "NoEclipseFound",
    "FitError",
    "GeometryError",
    "EclipsekitWarning",
]


class EclipsekitError(Exception):
    """Base class of all eclipsekit errors."""


class InputError(EclipsekitError, ValueError):
    """Bad input: an unreadable file, a missing column, an invalid argument value."""


class GeometryError(InputError):
    """Model parameters that describe no valid detached binary (e.g. touching stars, e >= 1)."""


class NoEclipseFound(EclipsekitError):
    """The period search found no significant periodic eclipse.

    Attributes
    ----------
    search : object or None
        The partial :class:`~eclipsekit.period.PeriodSearch` (periodograms, candidate
        table) when one is available, for plots and reports.
    """

    def __init__(self, message: str, search: object | None = None):
        super().__init__(message)
        self.search = search


class FitError(EclipsekitError):
    """A fit could not be completed (did not converge, degenerate data, ...)."""


class EclipsekitWarning(UserWarning):
    """Warnings issued by eclipsekit (cleaning, validity of the model, fit quality)."""
