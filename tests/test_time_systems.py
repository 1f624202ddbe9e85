"""Tests of the time-system checks and conversions (eclipsekit.time_systems).

Conversions are checked against astropy.time used directly (Time.light_travel_time, the time
scales), the reference library the module builds on.
"""

from __future__ import annotations

import warnings

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time

from eclipsekit.data import LightCurve, VelocityCurve
from eclipsekit.errors import EclipsekitWarning, InputError
from eclipsekit.time_systems import align_velocity_times, convert_times, parse_coordinates

TARGET = SkyCoord(150.1 * u.deg, -20.5 * u.deg)          # invented position
TIMES = np.array([2459000.3, 2459090.8, 2459180.1, 2459270.6])   # a year, so the light time changes sign
GEOCENTRE = EarthLocation.from_geocentric(0, 0, 0, unit=u.m)


def _lc(system, start=2459000.0):
    t = start + np.linspace(0, 10, 40)
    return LightCurve(t, np.ones(t.size), np.full(t.size, 1e-3), meta={"time_system": system, "source": "lc.csv"})


def _rv(time, system, offset=0.0):
    v = np.linspace(-50, 50, len(time))
    return VelocityCurve(time, v, np.ones(len(time)), meta={"time_system": system, "time_offset": offset,
                                                            "source": "rv.csv"})


def test_jd_to_bjd_matches_astropy_directly():
    # BJD_TDB = JD(TDB) + barycentric light time (astropy.time, Time.light_travel_time; Eastman et al. 2010)
    t = Time(TIMES, format="jd", scale="utc", location=GEOCENTRE)
    expected = (t.tdb + t.light_travel_time(TARGET, kind="barycentric")).tdb.jd
    got = convert_times(TIMES, "JD", "BJD_TDB", TARGET)
    np.testing.assert_allclose(got, expected, rtol=0, atol=1e-9)   # 0.1 ms: float64 JD resolution ~ 40 us


def test_hjd_to_bjd_matches_astropy_and_round_trips():
    bjd = convert_times(TIMES, "HJD", "BJD_TDB", TARGET)
    # astropy directly: the geocentric UTC time whose heliocentric time is TIMES (fixed point), then BJD_TDB
    stamped = Time(TIMES, format="jd", scale="utc", location=GEOCENTRE)
    geo = stamped
    for _ in range(3):
        geo = stamped - geo.light_travel_time(TARGET, kind="heliocentric")
    expected = (geo.tdb + geo.light_travel_time(TARGET, kind="barycentric")).tdb.jd
    np.testing.assert_allclose(bjd, expected, rtol=0, atol=1e-8)   # 1 ms; the light time moves 1e-4 s per s
    # BJD_TDB - HJD(UTC) is TDB - UTC (69.18 s since 2017: 32.184 s + 37 leap seconds, from memory) plus the
    # Sun's barycentric offset along the line of sight (under 5 s, from memory)
    assert np.all(np.abs((bjd - TIMES) * 86400 - 69.18) < 5)
    np.testing.assert_allclose(convert_times(bjd, "BJD_TDB", "HJD", TARGET), TIMES, rtol=0, atol=1e-8)


def test_mjd_is_jd_minus_2400000_5():
    # MJD = JD - 2400000.5 (IAU definition, common practice)
    np.testing.assert_allclose(convert_times(TIMES, "JD", "MJD", TARGET), TIMES - 2400000.5, atol=1e-9)


def test_hjd_velocities_with_bjd_light_curve_warn_naming_both():
    with pytest.warns(EclipsekitWarning, match=r"light curve lc.csv is BJD_TDB, velocities rv.csv are HJD"):
        same = align_velocity_times(_lc("BJD_TDB"), _rv(TIMES, "HJD"))
    np.testing.assert_array_equal(same.time, TIMES)    # warned, not changed


def test_coordinates_convert_instead_of_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error", EclipsekitWarning)   # no warning: converted
        rv = align_velocity_times(_lc("BJD_TDB"), _rv(TIMES, "HJD"), "10:00:24 -20:30:00")
    np.testing.assert_allclose(rv.time, convert_times(TIMES, "HJD", "BJD_TDB", parse_coordinates("150.1 -20.5")),
                               atol=1e-9)
    assert rv.meta["time_system"] == "BJD_TDB" and rv.meta["time_converted_from"] == "HJD"
    assert any("converted from HJD to BJD_TDB" in n for n in rv.meta["notes"])


def test_different_offsets_warn_with_the_common_offset():
    # velocities in BJD - 2450000 read without their offset, light curve in full BJD
    with pytest.warns(EclipsekitWarning, match=r"time offsets differ.*2450000"):
        align_velocity_times(_lc("BJD_TDB"), _rv(TIMES - 2450000, "BJD_TDB"))
    with warnings.catch_warnings():
        warnings.simplefilter("error", EclipsekitWarning)   # a century apart is the limit: 30 years pass
        align_velocity_times(_lc("BJD_TDB"), _rv(TIMES - 11000, "BJD_TDB"))


def test_bad_coordinates_name_the_argument():
    with pytest.raises(InputError, match="`coordinates`"):
        parse_coordinates("somewhere north")
    with pytest.raises(InputError, match="from_system"):
        convert_times(TIMES, "unknown", "HJD", TARGET)
