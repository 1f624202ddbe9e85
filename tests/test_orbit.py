"""Tests of eclipsekit.orbit against outside references (scipy root finders, textbook formulas)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from astropy import units as u
from scipy.optimize import brentq, minimize_scalar

from eclipsekit.errors import GeometryError, InputError
from eclipsekit.orbit import (conjunction_times, radial_velocities, secondary_phase, sky_separation, solve_kepler,
                              true_anomaly)


# ----------------------------------------------------------------------------------------------
# independent reference orbit (test-local; shares no code with eclipsekit.orbit)
# ----------------------------------------------------------------------------------------------
def _kepler_brentq(m: float, e: float) -> float:
    # E - e sin E - M changes sign on [M - e, M + e] (|E - M| <= e); root by scipy.optimize.brentq
    return brentq(lambda x: x - e * math.sin(x) - m, m - e - 1e-12, m + e + 1e-12, xtol=1e-15, rtol=1e-15)


def _nu_reference(t: float, tp: float, period: float, e: float) -> float:
    ecc = _kepler_brentq(2 * math.pi * (t - tp) / period, e)
    return 2 * math.atan(math.sqrt((1 + e) / (1 - e)) * math.tan(ecc / 2))


def _sky_reference(t: float, tp: float, period: float, e: float, w: float, inc_deg: float) -> float:
    # textbook relative orbit: r = a (1 - e^2) / (1 + e cos nu); projected separation
    # r sqrt(1 - sin^2(nu + w) sin^2 i)  (e.g. Hilditch 2001, ch. 2; from memory)
    nu = _nu_reference(t, tp, period, e)
    r = (1 - e * e) / (1 + e * math.cos(nu))
    return r * math.sqrt(1 - (math.sin(nu + w) * math.sin(math.radians(inc_deg))) ** 2)


def _tp_from_eclipse_at_90(t0: float, period: float, e: float, w: float) -> float:
    # at i = 90 deg mid-primary is exactly at nu = 90 deg - w (our convention)
    nu = math.pi / 2 - w
    ecc = 2 * math.atan(math.sqrt((1 - e) / (1 + e)) * math.tan(nu / 2))
    return t0 - period * (ecc - e * math.sin(ecc)) / (2 * math.pi)


# ----------------------------------------------------------------------------------------------
# Kepler's equation
# ----------------------------------------------------------------------------------------------
@pytest.mark.parametrize("e", [0.0, 0.1, 0.5, 0.9, 0.95])
def test_kepler_matches_brentq(e):
    # reference: scipy.optimize.brentq on E - e sin E = M; our requirement: 1e-12 rad
    m = np.concatenate([np.linspace(-3 * np.pi, 3 * np.pi, 301), [0.0, 1e-9, -1e-9, np.pi, -np.pi, 2e-3]])
    ecc = solve_kepler(m, e)
    ref = np.array([_kepler_brentq(mi, e) for mi in m])
    assert np.max(np.abs(ecc - ref)) < 1e-12


def test_kepler_scalar_and_residual():
    # Kepler's equation itself: E - e sin E == M (definition)
    ecc = solve_kepler(1.234, 0.7)
    assert isinstance(ecc, float)
    assert abs(ecc - 0.7 * math.sin(ecc) - 1.234) < 1e-14


@pytest.mark.parametrize("e", [1.0, 1.5, -0.1])
def test_kepler_rejects_unbound(e):
    with pytest.raises(GeometryError, match="eccentricity"):
        solve_kepler([0.1, 0.2], e)


# ----------------------------------------------------------------------------------------------
# true anomaly, sky separation, conjunctions
# ----------------------------------------------------------------------------------------------
@pytest.mark.parametrize("ecosw,esinw", [(0.0, 0.0), (0.1, 0.2), (-0.4, 0.3), (0.05, -0.6)])
def test_true_anomaly_against_reference(ecosw, esinw):
    period, t0 = 2.5, 1.3
    e, w = math.hypot(ecosw, esinw), math.atan2(esinw, ecosw)
    tp = _tp_from_eclipse_at_90(t0, period, e, w)
    t = np.linspace(-3.0, 7.0, 57)
    nu = true_anomaly(t, period=period, t0=t0, ecosw=ecosw, esinw=esinw)
    ref = np.array([_nu_reference(ti, tp, period, e) for ti in t])
    dnu = (nu - ref + np.pi) % (2 * np.pi) - np.pi
    assert np.max(np.abs(dnu)) < 1e-10
    # our convention: primary eclipse (t0) at nu = 90 deg - omega (exact at i = 90 deg)
    nu0 = true_anomaly([t0], period=period, t0=t0, ecosw=ecosw, esinw=esinw)[0]
    assert abs((nu0 - (np.pi / 2 - w) + np.pi) % (2 * np.pi) - np.pi) < 1e-12


@pytest.mark.parametrize("ecosw,esinw,inc", [(0.0, 0.0, 86.0), (0.2, 0.1, 85.0), (-0.3, 0.4, 87.0),
                                             (0.5, -0.2, 80.0), (0.01, 0.6, 88.5)])
def test_conjunction_times_are_minima_of_sky_separation(ecosw, esinw, inc):
    # reference: scipy.optimize.minimize_scalar of the textbook projected separation
    period = 3.7
    e, w = math.hypot(ecosw, esinw), math.atan2(esinw, ecosw)
    tp = 0.0
    d = lambda t: _sky_reference(t, tp, period, e, w, inc)  # noqa: E731
    # conjunctions at nu = 90 - w and 270 - w bracket the minima (+- 0.05 P is generous)
    def t_of_nu(nu):
        ecc = 2 * math.atan(math.sqrt((1 - e) / (1 + e)) * math.tan(nu / 2))
        return (ecc - e * math.sin(ecc)) / (2 * math.pi) * period % period
    tc1, tc2 = t_of_nu(math.pi / 2 - w), t_of_nu(3 * math.pi / 2 - w)
    opts = {"xatol": 1e-12}
    t_prim = minimize_scalar(d, bounds=(tc1 - 0.05 * period, tc1 + 0.05 * period), method="bounded", options=opts).x
    t_sec = minimize_scalar(d, bounds=(tc2 - 0.05 * period, tc2 + 0.05 * period), method="bounded", options=opts).x
    t1, t2 = conjunction_times(period=period, t0=t_prim, ecosw=ecosw, esinw=esinw, inclination=inc)
    # Brent's minimiser resolves a quadratic minimum to ~sqrt(machine eps) of the scale: 1e-7 d here
    dt = (t2 - t_sec + period / 2) % period - period / 2
    assert abs(dt) < 1e-7
    assert t_prim <= t2 < t_prim + period
    # the package's periastron placement reproduces the reference separation everywhere
    t = t_prim + np.linspace(-1.0, 5.0, 41)
    dpkg, _ = sky_separation(t, period=period, t0=t_prim, ecosw=ecosw, esinw=esinw, inclination=inc)
    ref = np.array([d(ti) for ti in t])
    # 1e-7 d timing uncertainty times d(sep)/dt <= 2 pi (1 + e) / ((1 - e) P) per day
    assert np.max(np.abs(dpkg - ref)) < 2e-6


def test_mid_eclipse_offset_from_conjunction_at_low_inclination():
    # at i < 90 and e > 0 mid-eclipse is not at nu = 90 - w: the minima of the projected separation move
    # (common practice).  Reference: scipy.optimize.minimize_scalar of the textbook separation at each i
    period, ecosw, esinw = 5.0, 0.3, 0.3
    e, w = math.hypot(ecosw, esinw), math.atan2(esinw, ecosw)
    gaps = {}
    for inc in (80.0, 90.0):
        d = lambda t: _sky_reference(t, 0.0, period, e, w, inc)  # noqa: E731
        minima = []
        for nu in (math.pi / 2 - w, 3 * math.pi / 2 - w):
            ecc = 2 * math.atan(math.sqrt((1 - e) / (1 + e)) * math.tan(nu / 2))
            tc = (ecc - e * math.sin(ecc)) / (2 * math.pi) * period % period
            minima.append(minimize_scalar(d, bounds=(tc - 0.05 * period, tc + 0.05 * period), method="bounded",
                                          options={"xatol": 1e-12}).x)
        gaps[inc] = (minima[1] - minima[0]) % period
        _, t2 = conjunction_times(period=period, t0=0.0, ecosw=ecosw, esinw=esinw, inclination=inc)
        # Brent's minimiser resolves a quadratic minimum to ~sqrt(machine eps) of the scale: 1e-7 d
        assert abs(t2 - gaps[inc]) < 2e-7, inc
    assert abs(gaps[80.0] - gaps[90.0]) > 1e-5  # the offset is real, far above the 1e-7 resolution


@pytest.mark.parametrize("w_deg", [0.0, 30.0, 90.0, 135.0, 200.0, 300.0])
def test_secondary_phase_first_order(w_deg):
    # 0.5 + (2/pi) e cos w to first order in e at i = 90 (classical expansion; common practice);
    # the neglected terms are O(e^3) (no e^2 term), so 1e-5 at e = 0.01
    e = 0.01
    w = math.radians(w_deg)
    phase = secondary_phase(ecosw=e * math.cos(w), esinw=e * math.sin(w))
    assert abs(phase - (0.5 + 2 / math.pi * e * math.cos(w))) < 1e-5


@pytest.mark.parametrize("e,w_deg", [(0.3, 20.0), (0.6, 110.0), (0.45, 250.0)])
def test_secondary_phase_exact_edge_on(e, w_deg):
    # exact phase of secondary minimum at i = 90 deg (Sterne 1939, PNAS 25, 297; from memory):
    # phi = 0.5 + [atan(e cos w / sqrt(1 - e^2)) + e cos w sqrt(1 - e^2) / (1 - e^2 sin^2 w)] / pi
    w = math.radians(w_deg)
    ref = 0.5 + (math.atan(e * math.cos(w) / math.sqrt(1 - e * e))
                 + e * math.cos(w) * math.sqrt(1 - e * e) / (1 - (e * math.sin(w)) ** 2)) / math.pi
    assert abs(secondary_phase(ecosw=e * math.cos(w), esinw=e * math.sin(w)) - ref % 1.0) < 1e-12


def test_which_star_in_front():
    # primary eclipse: star 2 in front; secondary: star 1 in front (our convention)
    t0, period = 10.0, 2.0
    d, front = sky_separation([t0, t0 + 1.0], period=period, t0=t0, inclination=90.0)
    assert d[0] < 1e-12 and d[1] < 1e-12
    assert not front[0] and front[1]


# ----------------------------------------------------------------------------------------------
# radial velocities
# ----------------------------------------------------------------------------------------------
@pytest.mark.parametrize("ecosw,esinw", [(0.0, 0.0), (0.2, -0.1), (-0.35, 0.5)])
def test_radial_velocities_textbook(ecosw, esinw):
    # textbook Keplerian: v = gamma + K [cos(nu + w) + e cos w] (e.g. Hilditch 2001, ch. 2; from memory)
    period, t0, k1, k2, gamma = 4.2, 0.7, 55.0, 70.0, -12.0
    e, w = math.hypot(ecosw, esinw), math.atan2(esinw, ecosw)
    tp = _tp_from_eclipse_at_90(t0, period, e, w)
    t = np.linspace(0.0, 9.0, 40)
    rv1, rv2 = radial_velocities(t, period=period, t0=t0, k_primary=k1, k_secondary=k2, gamma=gamma,
                                 ecosw=ecosw, esinw=esinw)
    nu = np.array([_nu_reference(ti, tp, period, e) for ti in t])
    assert np.allclose(rv1, gamma + k1 * (np.cos(nu + w) + e * math.cos(w)), atol=1e-9, rtol=0)
    # star 2 orbits with w + 180 deg
    assert np.allclose(rv2, gamma + k2 * (np.cos(nu + w + np.pi) + e * math.cos(w + np.pi)), atol=1e-9, rtol=0)
    # momentum conservation: K2 (v1 - gamma) + K1 (v2 - gamma) = 0 (common practice)
    assert np.allclose(k2 * (rv1 - gamma) + k1 * (rv2 - gamma), 0.0, atol=1e-9)


def test_radial_velocity_sign_convention():
    # circular orbit, positive = receding (our convention): at primary eclipse star 1 is at the far side,
    # its distance is largest, so it is approaching (rv1 < gamma) just after t0 (common practice)
    rv1, rv2 = radial_velocities([0.1], period=1.0, t0=0.0, k_primary=50.0)
    assert rv2 is None
    assert rv1[0] < 0.0


def test_quantity_inputs():
    # astropy units: the same orbit in hours and days
    t = np.linspace(0, 3, 7)
    a = true_anomaly(t * u.day, period=48 * u.hour, t0=0.5 * u.day, ecosw=0.1, esinw=0.05)
    b = true_anomaly(t, period=2.0, t0=0.5, ecosw=0.1, esinw=0.05)
    assert np.allclose(a, b, atol=1e-13)


@pytest.mark.parametrize("kwargs,err", [
    (dict(ecosw=0.8, esinw=0.7), GeometryError),
    (dict(inclination=95.0), GeometryError),
    (dict(inclination=-1.0), GeometryError),
    (dict(period=-2.0), InputError),
    (dict(period=0.0), InputError),
])
def test_bad_orbit_rejected(kwargs, err):
    base = dict(period=2.0, t0=0.0, ecosw=0.0, esinw=0.0, inclination=88.0)
    base.update(kwargs)
    with pytest.raises(err):
        sky_separation([0.0, 0.5], **base)


@pytest.mark.parametrize("start", [0.0, -0.25, -0.5])
def test_orbital_phase_range_and_zero_point(start):
    from eclipsekit.orbit import orbital_phase

    t = np.linspace(-10.0, 10.0, 1001)
    ph = orbital_phase(t, 3.0, 1.0, start)
    assert np.all((ph >= start) & (ph < start + 1.0))
    # phase is time since t0 in periods, modulo one cycle (definition; common practice)
    cycles = ph - (t - 1.0) / 3.0
    np.testing.assert_allclose(cycles, np.round(cycles), atol=1e-12)
    assert orbital_phase(1.0 + 7 * 3.0, 3.0, 1.0, start) == pytest.approx(0.0, abs=1e-12)


# ----------------------------------------------------------------------------------------------
# contacts and mid-eclipse by Newton's method (the model's windows)
# ----------------------------------------------------------------------------------------------
@pytest.mark.parametrize("seed", [1, 2])
def test_contacts_are_where_the_reference_separation_equals_the_radius(seed):
    # independent reference: the test-local orbit (brentq on Kepler's equation, textbook separation)
    # evaluated at the package's contact times must give d = radius; a contact time good to
    # ~1e-15 P moves d by ~2 pi (1 + e) / (1 - e)^2 * 1e-15 < 4e-14 (units of a)
    from eclipsekit.orbit import orbit_geometry
    rng = np.random.default_rng(seed)
    checked = 0
    for _ in range(40):
        period = rng.uniform(0.5, 10.0)
        e = rng.uniform(0.0, 0.6) if rng.uniform() < 0.8 else 0.0
        w = rng.uniform(0.0, 2 * math.pi)
        inc = rng.uniform(75.0, 90.0)
        radius = rng.uniform(0.05, 0.5) * (1 - e)
        g = orbit_geometry(period, 0.0, e * math.cos(w), e * math.sin(w), inc)
        for sigma, tc in ((+1, g.t0), (-1, g.t_secondary)):
            window = g.contacts(radius, sigma)
            if window is None:
                continue
            for dt in window:
                d = _sky_reference(tc + dt, g.t_periastron, period, e, g.omega, inc)   # omega = 0 if e = 0
                assert abs(d - radius) < 1e-12
                checked += 1
    assert checked > 80


def test_newton_and_bracketing_agree():
    # internal twin check: Newton's method (fast path) against the grid-and-Brent path kept as fallback
    from eclipsekit.orbit import _mid_eclipse_offset, _mid_eclipse_offset_bracketed, orbit_geometry
    rng = np.random.default_rng(7)
    for _ in range(300):
        e = rng.uniform(0.0, 0.8)
        w = rng.uniform(0.0, 2 * math.pi)
        inc = rng.uniform(61.0, 90.0)
        cos_i, sin_i = math.cos(math.radians(inc)), math.sin(math.radians(inc))
        for sigma in (+1, -1):
            x = _mid_eclipse_offset(e, w, cos_i, sin_i, sigma)
            assert abs(x - _mid_eclipse_offset_bracketed(e, w, cos_i, sin_i, sigma)) < 1e-13
        g = orbit_geometry(rng.uniform(1, 5), 0.0, e * math.cos(w), e * math.sin(w), inc)
        radius = rng.uniform(0.05, 0.9) * (1 - e)
        for sigma in (+1, -1):
            fast = g.contacts(radius, sigma)
            if fast is not None:
                slow = g._contacts_bracketed(radius, sigma)
                assert max(abs(fast[0] - slow[0]), abs(fast[1] - slow[1])) < 1e-12 * g.period
