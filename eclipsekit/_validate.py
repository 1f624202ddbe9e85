"""Conversion and validation of arguments at the public boundary (private helpers).

Public functions accept astropy ``Quantity`` objects or plain numbers (already in the
documented unit, e.g. days or degrees).  These helpers strip the unit, check the value and
raise :class:`~eclipsekit.errors.InputError` with a one-line message naming the argument,
so that every module words the same mistake the same way.  Kernels then trust their inputs.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from astropy import units as u

from .errors import InputError

__all__ = ["to_unit", "as_float", "as_times", "finite_or_none", "light_curve_range_problem",
           "MAX_ABS_TIME", "MAX_TIME_SPAN", "ERR_FACTOR", "FLUX_FACTOR", "VALUE_LIMIT"]

# Numerical ranges of light-curve values.  The kernels square, invert and sum these
# values (weights 1/σ², χ² sums, time binning, phase folding); inside these ranges all
# of that stays finite and resolved in float64 (largest ~1.8e308, smallest normal ~2.2e-308).
#: Largest |time| in days: 1e8 d (~270,000 years) from the zero of any time system in use
#: (JD, MJD, BJD_TDB, offsets); larger values are fill values, not dates.  At 1e8 d the
#: float64 spacing is 1.5e-8 d (1.3 ms).
MAX_ABS_TIME = 1e8
#: Longest span of one light curve in days (~274 years, longer than any photometric
#: archive).  It also bounds the trial-period grid, whose size grows with the span.
MAX_TIME_SPAN = 1e5
#: Flux errors must lie within this factor of their median: a point 1e3 times more
#: precise than the rest would carry a million times the weight.
ERR_FACTOR = 1e3
#: Fluxes above this factor times the median |flux| are not measurements of a star
#: (fill values, unit slips); the readers reject such rows.
FLUX_FACTOR = 1e3
#: Absolute bounds: |flux| <= VALUE_LIMIT and 1/VALUE_LIMIT <= flux_err <= VALUE_LIMIT, so
#: that weights (<= 1e100), weighted squares (<= 1e200) and their sums stay finite.
VALUE_LIMIT = 1e50

# How a unit is named in messages: (what the argument must be, what a plain number means).
_UNIT_WORDS = {
    u.day: ("a time (days)", "a number of days"),
    u.deg: ("an angle (degrees)", "a number of degrees"),
}


def _words(unit: u.UnitBase | None) -> tuple[str, str]:
    if unit is None:
        return "a number", "a number"
    return _UNIT_WORDS.get(unit, (f"convertible to {unit}", f"a number in {unit}"))


def to_unit(value: Any, unit: u.UnitBase, name: str, *, equivalencies: Any = None) -> Any:
    """Value(s) of a Quantity in ``unit``; anything else is returned unchanged.

    Parameters
    ----------
    value : Quantity or object
        The argument.  A plain number or array is taken to be in ``unit`` already.
    unit : astropy unit
        Unit of the result.
    name : str
        Name of the argument, for the error message.
    equivalencies : list, optional
        astropy equivalencies allowed in the conversion (e.g. ``u.dimensionless_angles()``).

    Returns
    -------
    object
        ``value.to_value(unit)`` (float or ndarray) for a Quantity, else ``value``.

    Raises
    ------
    InputError
        If ``value`` is a Quantity whose unit cannot be converted to ``unit``.
    """
    if not isinstance(value, u.Quantity):
        return value
    try:
        return value.to_value(unit, equivalencies=equivalencies or [])
    except u.UnitConversionError:
        raise InputError(f"`{name}` must be {_words(unit)[0]}, got unit {value.unit}") from None


def as_float(value: Any, name: str, unit: u.UnitBase | None = None, *, positive: bool = False,
             finite: bool = True, allow_none: bool = False,
             error: type[InputError] = InputError) -> float | None:
    """A scalar argument as a float in ``unit`` (from a float or a Quantity), checked.

    Parameters
    ----------
    value : float, Quantity or None
        The argument.  A plain number is taken to be in ``unit`` already.
    name : str
        Name of the argument, for the error messages.
    unit : astropy unit, optional
        Unit of the result (a Quantity ``value`` is converted to it).  None: no Quantity
        conversion is attempted (a Quantity must then be dimensionless to become a float).
    positive : bool, optional
        Require ``value > 0``.
    finite : bool, optional
        Require a finite value (default).  Pass False where a later range check rejects
        NaN with a more specific message or error class.
    allow_none : bool, optional
        Return None for None instead of raising.
    error : type, optional
        Exception class (an :class:`InputError` subclass, e.g. ``GeometryError``) raised by
        the finiteness and positivity checks.  A value of the wrong type or unit always
        raises :class:`InputError`.

    Returns
    -------
    float or None
        The value in ``unit``.

    Raises
    ------
    InputError
        If ``value`` has the wrong unit or is not a number.
    error
        If ``value`` is not finite (with ``finite``) or not > 0 (with ``positive``).
    """
    if value is None and allow_none:
        return None
    if unit is not None and isinstance(value, u.Quantity):
        value = to_unit(value, unit, name)
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise InputError(f"`{name}` must be {_words(unit)[1]}, got {value!r}") from None
    if finite and not math.isfinite(value):
        raise error(f"`{name}` must be finite, got {value}")
    if positive and not value > 0.0:
        raise error(f"`{name}` must be positive, got {value}")
    return value


def as_times(values: Any, name: str = "time") -> np.ndarray:
    """Times in days as a float ndarray, from numbers (days), a time Quantity or an astropy ``Time``.

    An astropy ``Time`` gives its Julian Date.  No finiteness check: callers that need one
    make it (a kernel may accept NaN times and return NaN).

    Parameters
    ----------
    values : array_like, Quantity or Time
        The times.
    name : str, optional
        Name of the argument, for the error message.

    Returns
    -------
    ndarray
        Times in days (same shape as ``values``).

    Raises
    ------
    InputError
        If ``values`` is a Quantity that is not a time.
    """
    if hasattr(values, "jd") and hasattr(values, "scale"):  # astropy Time: its JD in days
        values = values.jd
    if isinstance(values, u.Quantity):
        values = to_unit(values, u.day, name)
    return np.asarray(values, dtype=float)


def finite_or_none(value: Any) -> float | None:
    """``value`` as a float when it is a finite number, else None (JSON has no NaN or infinity)."""
    if value is None:
        return None
    try:
        value = float(value)
    except (TypeError, ValueError):
        return None
    return value if math.isfinite(value) else None


def light_curve_range_problem(time: np.ndarray, flux: np.ndarray,
                              flux_err: np.ndarray) -> tuple[int, str, str] | None:
    """The first value of a light curve outside the numerical ranges above, or None.

    ``time``, ``flux`` and ``flux_err`` are finite 1-D float arrays of one length with
    ``flux_err > 0`` (checked before).  The checks, in order: ``|time| <= MAX_ABS_TIME``;
    span ``<= MAX_TIME_SPAN`` (the time farthest from the median is named);
    ``|flux| <= VALUE_LIMIT``; ``1/VALUE_LIMIT <= flux_err <= VALUE_LIMIT``; and
    largest/smallest error ``<= ERR_FACTOR**2`` (a bound that every subset keeps, so a
    light curve with rows removed stays valid; the error farthest from the median, in
    ratio, is named).

    Returns
    -------
    (index, role, text) or None
        Index of the offending value, which array (``"time"``, ``"flux"``,
        ``"flux_err"``) and what is wrong with it and what to do, for a one-line message.
    """
    bad = np.flatnonzero(np.abs(time) > MAX_ABS_TIME)
    if bad.size:
        return int(bad[0]), "time", (f"time {time[bad[0]]:.6g} d is beyond ±{MAX_ABS_TIME:g} d, not a date "
                                     "in any time system; remove the row")
    if time.size and float(time.max()) - float(time.min()) > MAX_TIME_SPAN:
        i = int(np.argmax(np.abs(time - np.median(time))))
        return i, "time", (f"time {time[i]:.10g} d makes the light curve span "
                           f"{float(time.max()) - float(time.min()):.6g} d, more than {MAX_TIME_SPAN:g} d; "
                           "remove the row or split the data")
    bad = np.flatnonzero(np.abs(flux) > VALUE_LIMIT)
    if bad.size:
        return int(bad[0]), "flux", f"flux {flux[bad[0]]:.6g} is beyond ±{VALUE_LIMIT:g}; rescale the fluxes"
    bad = np.flatnonzero((flux_err < 1.0 / VALUE_LIMIT) | (flux_err > VALUE_LIMIT))
    if bad.size:
        return int(bad[0]), "flux_err", (f"error {flux_err[bad[0]]:.6g} is outside {1.0 / VALUE_LIMIT:g} to "
                                         f"{VALUE_LIMIT:g}; rescale the fluxes and errors")
    if flux_err.size and float(flux_err.max()) > ERR_FACTOR ** 2 * float(flux_err.min()):
        i = int(np.argmax(np.abs(np.log(flux_err / np.median(flux_err)))))
        return i, "flux_err", (f"error {flux_err[i]:.6g}: the errors span a factor "
                               f"{float(flux_err.max() / flux_err.min()):.3g}, more than {ERR_FACTOR ** 2:g}; "
                               f"remove rows whose error is not within {ERR_FACTOR:g} times the median")
    return None
