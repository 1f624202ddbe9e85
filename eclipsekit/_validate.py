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

__all__ = ["to_unit", "as_float", "as_times", "finite_or_none"]

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
