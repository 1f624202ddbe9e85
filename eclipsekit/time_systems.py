"""Time systems of the inputs: compare them, and convert velocity times to the light curve's.

A light curve and its velocities must share one time system before an ephemeris from
the one is used on the other.  :func:`align_velocity_times` compares the systems and
offsets the readers recorded in ``meta``; with the target's sky coordinates it converts
the velocity times with astropy's light-travel-time corrections
(:meth:`astropy.time.Time.light_travel_time`), otherwise it warns, naming both systems.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from . import _notes
from .errors import InputError

__all__ = ["convert_times", "align_velocity_times", "parse_coordinates", "COMMON_OFFSETS"]

#: Offsets often subtracted from Julian dates in tables (days; common practice): JD, MJD,
#: reduced JD, the two satellite conventions.
COMMON_OFFSETS = (2400000.0, 2400000.5, 2450000.0, 2454833.0, 2457000.0)
_CONVERTIBLE = ("BJD_TDB", "HJD", "JD", "MJD")
#: Largest difference between the systems, for the warning (s): JD vs BJD up to the light time across
#: the Earth's orbit, 499 s; HJD (UTC) vs BJD_TDB up to TDB - UTC (69.2 s since 2017) plus the Sun's
#: barycentric offset (about 4 s).  Values from memory.
_MAX_DIFFERENCE_S = {frozenset({"HJD", "BJD_TDB"}): 75.0}
_FAR_APART = 36525.0   # days (a century): inputs further apart carry different offsets


def parse_coordinates(text: str) -> Any:
    """A SkyCoord from "RA DEC": degrees ("150.1 -20.5") or sexagesimal ("10:00:24 -20:30:00", "10h00m24s ...").

    Raises
    ------
    InputError
        When astropy cannot read the text.
    """
    from astropy import units as u
    from astropy.coordinates import SkyCoord

    sexagesimal = any(c in text for c in ":hms")
    try:
        return SkyCoord(text, unit=(u.hourangle if sexagesimal else u.deg, u.deg), frame="icrs")
    except (ValueError, TypeError) as exc:
        raise InputError(f"`coordinates`: cannot read {text!r} as RA and Dec ({exc}); give e.g. "
                         "\"150.1 -20.5\" (degrees) or \"10:00:24 -20:30:00\"") from None


def _geocentre() -> Any:
    from astropy import units as u
    from astropy.coordinates import EarthLocation

    # the geocentre: the observatory's own offset changes the light time by at most 21 ms (R_earth / c)
    return EarthLocation.from_geocentric(0.0, 0.0, 0.0, unit=u.m)


def convert_times(time: Any, from_system: str, to_system: str, coordinates: Any) -> np.ndarray:
    """Convert Julian dates between BJD_TDB, HJD, JD and MJD for a target at ``coordinates``.

    Parameters
    ----------
    time : array_like
        Times (days) in ``from_system``: full Julian dates for BJD_TDB, HJD, JD; MJD for MJD.
    from_system, to_system : {"BJD_TDB", "HJD", "JD", "MJD"}
    coordinates : astropy.coordinates.SkyCoord
        The target.

    Returns
    -------
    ndarray
        The times in ``to_system``.

    Notes
    -----
    JD and MJD are taken as geocentric UTC, HJD as UTC plus the heliocentric light time
    (the usual convention) and BJD_TDB as TDB plus the barycentric light time (Eastman,
    Siverd & Gaudi 2010, PASP 122, 935).  The light times come from
    :meth:`astropy.time.Time.light_travel_time` at the geocentre; a barycentric or
    heliocentric time is first taken back to the geocentre, iterating twice since the
    light time depends on the (unknown) geocentric time.
    """
    from astropy.time import Time

    for name, system in (("from_system", from_system), ("to_system", to_system)):
        if system not in _CONVERTIBLE:
            raise InputError(f"`{name}` must be one of {', '.join(_CONVERTIBLE)} to convert, got {system!r}")
    t = np.asarray(time, float)
    location = _geocentre()
    if from_system in ("JD", "MJD"):
        geo = Time(t, format="jd" if from_system == "JD" else "mjd", scale="utc", location=location)
    else:
        kind, scale = ("barycentric", "tdb") if from_system == "BJD_TDB" else ("heliocentric", "utc")
        stamped = Time(t, format="jd", scale=scale, location=location)
        geo = stamped
        for _ in range(2):
            geo = stamped - geo.light_travel_time(coordinates, kind=kind)
    if to_system == "BJD_TDB":
        return (geo.tdb + geo.light_travel_time(coordinates, kind="barycentric")).tdb.jd
    if to_system == "HJD":
        return (geo.utc + geo.light_travel_time(coordinates, kind="heliocentric")).utc.jd
    return geo.utc.jd if to_system == "JD" else geo.utc.mjd


def align_velocity_times(lc: Any, rv: Any, coordinates: Any = None) -> Any:
    """The velocities in the light curve's time system, converted or with a warning.

    Parameters
    ----------
    lc : LightCurve
    rv : VelocityCurve
    coordinates : astropy.coordinates.SkyCoord or str, optional
        The target's position ("RA DEC" text is read by :func:`parse_coordinates`).

    Returns
    -------
    VelocityCurve
        ``rv`` itself, or a copy with converted times (``meta["time_system"]`` updated,
        ``meta["time_converted_from"]`` and a note recording the conversion).

    Warns
    -----
    EclipsekitWarning
        When the two time systems differ and no coordinates are given (naming both and
        the size of the difference), when one of them is unknown but coordinates were
        given for a conversion, and when the times lie more than a century apart (the
        offsets differ, e.g. BJD - 2450000 against full BJD).
    """
    if isinstance(coordinates, str):
        coordinates = parse_coordinates(coordinates)
    lc_sys = lc.meta.get("time_system") or "unknown"
    rv_sys = rv.meta.get("time_system") or "unknown"
    lc_name = lc.meta.get("source") or "the light curve"
    rv_name = rv.meta.get("source") or "the velocities"
    if lc_sys != rv_sys:
        if lc_sys in _CONVERTIBLE and rv_sys in _CONVERTIBLE and coordinates is not None:
            rv = _converted(rv, rv_sys, lc_sys, coordinates)
        elif "unknown" in (lc_sys, rv_sys):
            if coordinates is not None:
                _notes.warn(f"time systems: light curve {lc_name} is {lc_sys}, velocities {rv_name} are {rv_sys}: "
                            "an unknown system cannot be converted; give it with --time-system / --rv-time-system "
                            "(time_system= in Python)")
        elif {lc_sys, rv_sys} == {"JD", "MJD"}:  # the same clock, a different zero point
            rv = _converted(rv, rv_sys, lc_sys, None)
        else:
            most = _MAX_DIFFERENCE_S.get(frozenset({lc_sys, rv_sys}), 499.0)
            _notes.warn(f"time systems differ: light curve {lc_name} is {lc_sys}, velocities {rv_name} are "
                        f"{rv_sys} (they differ by up to {most:.0f} s); give the target's coordinates "
                        "(--coordinates \"RA DEC\", coordinates= in Python) to convert them")
    _check_offsets(lc, rv, lc_name, rv_name)
    return rv


def _converted(rv: Any, from_system: str, to_system: str, coordinates: Any) -> Any:
    from dataclasses import replace

    if coordinates is None:  # JD <-> MJD
        time = rv.time - 2400000.5 if to_system == "MJD" else rv.time + 2400000.5
        how = "MJD = JD - 2400000.5"
    else:
        time = convert_times(rv.time, from_system, to_system, coordinates)
        how = (f"astropy light-travel-time corrections for RA {coordinates.icrs.ra.deg:.5f}, "
               f"Dec {coordinates.icrs.dec.deg:.5f} deg")
    note = f"velocity times converted from {from_system} to {to_system} ({how})"
    meta = {**rv.meta, "time_system": to_system, "time_converted_from": from_system,
            "notes": [*(rv.meta.get("notes") or []), note]}
    return replace(rv, time=time, meta=meta)


def _check_offsets(lc: Any, rv: Any, lc_name: str, rv_name: str) -> None:
    """Warn when the two inputs' times are a century or more apart: their offsets differ."""
    if not (len(lc) and len(rv)):
        return
    gap = float(np.median(rv.time) - np.median(lc.time))
    if abs(gap) < _FAR_APART:
        return
    near = min(COMMON_OFFSETS, key=lambda o: abs(abs(gap) - o))
    hint = (f"; the gap is close to the common offset {near:.1f}: give the velocities' offset "
            "(--rv-time-offset, time_offset= of read_velocities)" if abs(abs(gap) - near) < _FAR_APART else
            "; give the offsets with --time-offset / --rv-time-offset")
    _notes.warn(f"time offsets differ: light curve {lc_name} runs from {lc.time[0]:.2f} "
                f"({lc.meta.get('time_system', 'unknown')}, offset {lc.meta.get('time_offset', 0.0):g} added), "
                f"velocities {rv_name} from {rv.time[0]:.2f} ({rv.meta.get('time_system', 'unknown')}, "
                f"offset {rv.meta.get('time_offset', 0.0):g} added): {abs(gap):.1f} d apart{hint}")
