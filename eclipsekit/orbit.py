"""Keplerian orbit of a binary star: Kepler's equation, sky separation, eclipse times, velocities.

Conventions (``DESIGN.md``): time in days; ``t0`` is the time of mid-primary eclipse
(star 1 eclipsed by star 2); ``omega`` is the argument of periastron of the primary's
orbit, so the primary eclipse is near true anomaly nu = 90 deg - omega; radial
velocity is positive when receding.  Eccentricity enters as (ecosw, esinw).

Geometry used throughout: with theta = nu + omega the line-of-sight coordinate of
star 1 (positive away from the observer) is r_1 sin(theta) sin(i), so star 1 is
behind at 0 < theta < pi, and the projected separation of the centres in units of
the semi-major axis is

    d = r sqrt(1 - sin^2(i) sin^2(theta)),    r = (1 - e^2) / (1 + e cos nu).

Mid-eclipse is the minimum of d, which for i < 90 deg and e > 0 lies slightly off
theta = 90 deg (or 270 deg); it is found by root-finding on the derivative.

References
----------
.. [1] Hilditch, R. W. 2001, An Introduction to Close Binary Stars (CUP), ch. 2
.. [2] Danby, J. M. A. 1988, Fundamentals of Celestial Mechanics, 2nd ed. (starting
       value E0 = M + 0.85 e sign(sin M))
.. [3] Sterne, T. E. 1939, MNRAS 99, 451 (first-order displacement of the secondary eclipse)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from astropy import units as u
from scipy.optimize import brentq

from ._validate import as_float, as_times
from .errors import GeometryError

__all__ = ["solve_kepler", "true_anomaly", "sky_separation", "conjunction_times", "secondary_phase",
           "radial_velocities", "eccentricity_omega", "orbital_phase", "phase_harmonics"]

_TWO_PI = 2.0 * np.pi
_KMS = u.km / u.s


# ----------------------------------------------------------------------------------------------
# boundary helpers
# ----------------------------------------------------------------------------------------------
def _period(period) -> float:
    return as_float(period, "period", u.day, positive=True)


def eccentricity_omega(ecosw: float, esinw: float) -> tuple[float, float]:
    """Eccentricity and argument of periastron (radians) from (e cos w, e sin w).

    Raises
    ------
    GeometryError
        If the eccentricity is >= 1 or the inputs are not finite.
    """
    ecosw = float(ecosw)
    esinw = float(esinw)
    if not (math.isfinite(ecosw) and math.isfinite(esinw)):
        raise GeometryError(f"`ecosw` and `esinw` must be finite, got {ecosw}, {esinw}")
    e = math.hypot(ecosw, esinw)
    if e >= 1.0:
        raise GeometryError(f"eccentricity sqrt(ecosw^2 + esinw^2) = {e:.6g} must be < 1 for a bound orbit")
    omega = math.atan2(esinw, ecosw) if e > 0.0 else 0.0
    return e, omega


def _inclination(inclination) -> float:
    # NaN is left to the range check below, so that it raises GeometryError like any bad angle
    inc = as_float(inclination, "inclination", u.deg, finite=False)
    if not (0.0 <= inc <= 90.0):
        raise GeometryError(f"`inclination` must be between 0 and 90 degrees, got {inc}")
    return inc


# ----------------------------------------------------------------------------------------------
# Kepler's equation
# ----------------------------------------------------------------------------------------------
def _kepler_kernel(mean_anomaly: np.ndarray, e: float | np.ndarray, start: np.ndarray | None = None,
                   tol: float = 1e-6, max_iter: int = 60) -> np.ndarray:
    """Halley iterations on E - e sin E = M (M already reduced to [-pi, pi]).

    Stops after the first step smaller than ``tol``: the step estimates the error before
    it, and Halley's error after it is ~ C step^3 with C <= ~(f''/f')^2 / 4 <= 100 for
    e <= 0.95, i.e. < 1e-16 for tol = 1e-6 (one trigonometric pass saved per solve).
    """
    m = mean_anomaly
    if np.all(np.asarray(e) == 0.0):        # ``e`` may be an array broadcasting against M (one per orbit)
        return m.copy()
    ecc = start.copy() if start is not None else m + 0.85 * e * np.sign(np.sin(m))  # Danby (1988)
    for _ in range(max_iter):
        se = np.sin(ecc)
        ce = np.cos(ecc)
        f = ecc - e * se - m
        fp = 1.0 - e * ce
        # Halley: dE = -f / (f' - f f'' / (2 f')), f'' = e sin E
        step = f / (fp - 0.5 * f * e * se / fp)
        ecc -= step
        if np.max(np.abs(step), initial=0.0) < tol:
            break
    return ecc


def solve_kepler(mean_anomaly, eccentricity: float) -> np.ndarray:
    """Solve Kepler's equation E - e sin E = M for the eccentric anomaly.

    Parameters
    ----------
    mean_anomaly : array_like
        Mean anomaly M in radians (any range).
    eccentricity : float
        0 <= e < 1.

    Returns
    -------
    eccentric_anomaly : ndarray
        E in radians, on the same branch as M (E - M in [-pi, pi]); |error| < 1e-12 rad
        for e <= 0.95.

    Notes
    -----
    Danby's starting value E0 = M + 0.85 e sign(sin M) followed by Halley's iteration,
    which converges for all M and e < 1 [2]_.
    """
    e = float(eccentricity)
    if not (0.0 <= e < 1.0):
        raise GeometryError(f"`eccentricity` must satisfy 0 <= e < 1, got {e}")
    m = np.asarray(mean_anomaly, dtype=float)
    # reduce to [-pi, pi] for the iteration, then restore the branch
    turns = np.floor((m + np.pi) / _TWO_PI)
    mr = m - _TWO_PI * turns
    ecc = _kepler_kernel(np.atleast_1d(mr), e)
    ecc = ecc.reshape(mr.shape) + _TWO_PI * turns
    return ecc if ecc.ndim else float(ecc)


def _true_from_eccentric(ecc: np.ndarray, e: float) -> np.ndarray:
    return 2.0 * np.arctan2(math.sqrt(1.0 + e) * np.sin(0.5 * ecc), math.sqrt(1.0 - e) * np.cos(0.5 * ecc))


def _mean_from_true(nu: float, e: float) -> float:
    ecc = 2.0 * math.atan2(math.sqrt(1.0 - e) * math.sin(0.5 * nu), math.sqrt(1.0 + e) * math.cos(0.5 * nu))
    return ecc - e * math.sin(ecc)


# ----------------------------------------------------------------------------------------------
# eclipse geometry (private, scalar): conjunctions and contacts
# ----------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class OrbitGeometry:
    """Scalars describing the orbit, shared by the model and the public helpers.

    ``x`` below is the angle theta - theta_c from conjunction (theta_c = 90 deg for the
    primary eclipse, 270 deg for the secondary); in ``x`` the projected separation is
    d(x) = (1 - e^2) / (1 - sigma e sin(x - omega)) * sqrt(cos^2 i + sin^2 i sin^2 x),
    sigma = +1 (primary) or -1 (secondary).
    """

    period: float
    t0: float
    e: float
    omega: float
    cos_i: float
    sin_i: float
    t_periastron: float
    x_primary: float      # offset of mid-primary from theta = 90 deg (radians)
    x_secondary: float    # offset of mid-secondary from theta = 270 deg
    t_secondary: float    # time of mid-secondary, in [t0, t0 + P)
    secondary_offset: float = 0.0   # t_secondary - t0, without the rounding of a large t0

    def separation_at(self, x: np.ndarray, sigma: int) -> np.ndarray:
        """Projected separation d(x) near conjunction sigma (see class notes)."""
        r = (1.0 - self.e ** 2) / (1.0 - sigma * self.e * np.sin(x - self.omega))
        return r * np.sqrt(self.cos_i ** 2 + (self.sin_i * np.sin(x)) ** 2)

    def time_at(self, x: float, sigma: int) -> float:
        """Time (modulo P, relative to t_periastron) at angle x from conjunction sigma."""
        theta = (0.5 * np.pi if sigma > 0 else 1.5 * np.pi) + x
        return self.period * _mean_from_true(theta - self.omega, self.e) / _TWO_PI

    def contacts(self, radius_sum: float, sigma: int) -> tuple[float, float] | None:
        """Times of first and last contact relative to mid-eclipse (days; first < 0 < last), or None.

        The projected separation equals radius_sum at the outermost crossings on each side
        of mid-eclipse within |theta - theta_c| < 90 deg (star behind); d there is at least
        the periastron distance, which exceeds radius_sum for detached stars.
        """
        xc = self.x_primary if sigma > 0 else self.x_secondary
        if self.separation_at(np.array(xc), sigma) >= radius_sum:
            return None
        roots = [_contact_newton(self.e, self.omega, self.cos_i, self.sin_i, sigma, xc, radius_sum, side)
                 for side in (-1.0, 1.0)]
        if None not in roots:
            tc = self.time_at(xc, sigma)
            return tuple((self.time_at(x, sigma) - tc + 0.5 * self.period) % self.period - 0.5 * self.period
                         for x in roots)
        return self._contacts_bracketed(radius_sum, sigma)

    def _contacts_bracketed(self, radius_sum: float, sigma: int) -> tuple[float, float]:
        """:meth:`contacts` by a grid search and Brent's method (robust; slower)."""
        xc = self.x_primary if sigma > 0 else self.x_secondary
        if self.e == 0.0:
            # circular: sin^2 x = (R^2 - cos^2 i) / sin^2 i, time linear in x
            x = math.asin(min(1.0, math.sqrt(radius_sum ** 2 - self.cos_i ** 2) / self.sin_i))
            return -x * self.period / _TWO_PI, x * self.period / _TWO_PI
        e, w, c2, s2 = self.e, self.omega, self.cos_i ** 2, self.sin_i ** 2

        def f(x):
            return ((1.0 - e * e) / (1.0 - sigma * e * math.sin(x - w)) * math.sqrt(c2 + s2 * math.sin(x) ** 2)
                    - radius_sum)

        out = []
        for end in (-0.5 * np.pi, 0.5 * np.pi):
            grid = xc + (end - xc) * np.linspace(0.0, 1.0, 257) ** 2  # dense near mid-eclipse
            dgrid = self.separation_at(grid, sigma) - radius_sum
            last_inside = np.nonzero(dgrid < 0.0)[0][-1]
            if last_inside == len(grid) - 1:  # cannot happen for detached stars; be safe
                xr = end
            else:
                xr = brentq(f, grid[last_inside], grid[last_inside + 1], xtol=1e-15, rtol=8.9e-16)
            out.append(xr)
        tc = self.time_at(xc, sigma)
        t_first = self.time_at(out[0], sigma) - tc
        t_last = self.time_at(out[1], sigma) - tc
        # unwrap (the mean anomaly is continuous across the eclipse except at the +-pi cut)
        t_first = (t_first + 0.5 * self.period) % self.period - 0.5 * self.period
        t_last = (t_last + 0.5 * self.period) % self.period - 0.5 * self.period
        return t_first, t_last


def _contact_newton(e: float, omega: float, cos_i: float, sin_i: float, sigma: int, xc: float, radius: float,
                    side: float) -> float | None:
    """Angle x of the crossing d(x) = radius on one side of mid-eclipse ``xc``, by Newton's method.

    Newton on phi(x) = ln d^2(x) - ln radius^2 from the circular-orbit crossing (exact for e = 0),
    one step past |step| < 1e-13 rad (quadratic convergence).  None if it fails to converge on
    the requested side of mid-eclipse within |x| < 90 deg (the caller then brackets).
    """
    c2 = cos_i * cos_i
    s2 = sin_i * sin_i
    one_e2 = 1.0 - e * e
    rc = one_e2 / (1.0 - sigma * e * math.sin(xc - omega))
    arg = ((radius / rc) ** 2 - c2) / s2 if s2 > 0.0 else 1.0
    x = xc + side * math.asin(math.sqrt(min(max(arg, 0.0), 1.0)))
    log_r2 = 2.0 * math.log(radius)
    last_pass = False
    for _ in range(40):
        if not -0.5 * math.pi < x < 0.5 * math.pi:
            return None
        sx = math.sin(x)
        q = c2 + s2 * sx * sx
        den = 1.0 - sigma * e * math.sin(x - omega)
        dphi = 2.0 * sigma * e * math.cos(x - omega) / den + 2.0 * s2 * sx * math.cos(x) / q
        if q <= 0.0 or dphi * side <= 0.0:      # d must grow away from mid-eclipse
            return None
        step = (2.0 * math.log(one_e2 / den) + math.log(q) - log_r2) / dphi
        x -= step
        if last_pass:
            return x if side * (x - xc) > 0.0 else None
        last_pass = abs(step) < 1e-13
    return None


def _mid_eclipse_offset(e: float, omega: float, cos_i: float, sin_i: float, sigma: int) -> float:
    """Angle x (from theta = 90 or 270 deg) of the minimum projected separation.

    Zero of H(x) = 2 e sigma cos(x - w) (c^2 + s^2 sin^2 x) + s^2 sin(2x) (1 - sigma e sin(x - w)),
    the derivative of ln d^2 times its (positive) denominators; H < 0 -> H > 0 is a minimum.
    Newton's method from x = 0 (quadratic convergence, one step past |step| < 1e-13); where it
    fails (H' <= 0, |x| >= 0.5 rad) or below 60 deg inclination, where d may have several minima,
    the stationary points are bracketed on a grid instead.
    """
    if e == 0.0 or cos_i == 0.0:
        return 0.0
    if cos_i < 0.5:
        c2 = cos_i * cos_i
        s2 = sin_i * sin_i
        x = 0.0
        last_pass = False
        for _ in range(30):
            sx, cx = math.sin(x), math.cos(x)
            sw, cw = math.sin(x - omega), math.cos(x - omega)
            q = c2 + s2 * sx * sx
            s2x = 2.0 * sx * cx
            h = 2.0 * e * sigma * cw * q + s2 * s2x * (1.0 - sigma * e * sw)
            hp = (-2.0 * e * sigma * sw * q + e * sigma * s2 * s2x * cw
                  + 2.0 * s2 * (cx * cx - sx * sx) * (1.0 - sigma * e * sw))
            if not hp > 0.0 or abs(x) >= 0.5:
                break
            step = h / hp
            x -= step
            if last_pass:
                return x
            last_pass = abs(step) < 1e-13
    return _mid_eclipse_offset_bracketed(e, omega, cos_i, sin_i, sigma)


def _mid_eclipse_offset_bracketed(e: float, omega: float, cos_i: float, sin_i: float, sigma: int) -> float:
    """:func:`_mid_eclipse_offset` by bracketing every stationary point on a grid (Brent's method)."""
    c2 = cos_i * cos_i
    s2 = sin_i * sin_i

    def h(x):
        sx = np.sin(x)
        return (2.0 * e * sigma * np.cos(x - omega) * (c2 + s2 * sx * sx)
                + s2 * np.sin(2.0 * x) * (1.0 - sigma * e * np.sin(x - omega)))

    def h_scalar(x):
        sx = math.sin(x)
        return (2.0 * e * sigma * math.cos(x - omega) * (c2 + s2 * sx * sx)
                + s2 * math.sin(2.0 * x) * (1.0 - sigma * e * math.sin(x - omega)))

    # a sign change of H brackets each stationary point; the one near x = 0 lies in the cell
    # around 0 however small cos i is, so a coarse grid suffices
    grid = np.linspace(-0.5 * np.pi, 0.5 * np.pi, 515)[1:-1]
    hg = h(grid)
    idx = np.nonzero((hg[:-1] < 0.0) & (hg[1:] >= 0.0))[0]
    if idx.size == 0:  # no interior minimum (very low inclination): take the least separation
        r = (1.0 - e * e) / (1.0 - sigma * e * np.sin(grid - omega))
        return float(grid[np.argmin(r * np.sqrt(c2 + s2 * np.sin(grid) ** 2))])
    cands = [brentq(h_scalar, grid[i], grid[i + 1], xtol=1e-15, rtol=8.9e-16) for i in idx]
    xs = np.array(cands)
    r = (1.0 - e * e) / (1.0 - sigma * e * np.sin(xs - omega))
    return float(xs[np.argmin(r * np.sqrt(c2 + s2 * np.sin(xs) ** 2))])


def orbit_geometry(period: float, t0: float, ecosw: float, esinw: float, inclination_deg: float) -> OrbitGeometry:
    """Validated scalars of the orbit with exact mid-eclipse angles and the time of periastron."""
    e, omega = eccentricity_omega(ecosw, esinw)
    inc = math.radians(inclination_deg)
    cos_i = math.cos(inc) if inclination_deg != 90.0 else 0.0
    sin_i = math.sin(inc)
    xp = _mid_eclipse_offset(e, omega, cos_i, sin_i, +1)
    xs = _mid_eclipse_offset(e, omega, cos_i, sin_i, -1)
    m_p = _mean_from_true(0.5 * np.pi + xp - omega, e)
    m_s = _mean_from_true(1.5 * np.pi + xs - omega, e)
    t_peri = t0 - period * m_p / _TWO_PI
    phase_sec = ((m_s - m_p) / _TWO_PI) % 1.0
    return OrbitGeometry(period, t0, e, omega, cos_i, sin_i, t_peri, xp, xs, t0 + phase_sec * period,
                         phase_sec * period)


# ----------------------------------------------------------------------------------------------
# public functions
# ----------------------------------------------------------------------------------------------
def _true_anomaly_geom(t: np.ndarray, g: OrbitGeometry) -> np.ndarray:
    m = _TWO_PI * ((t - g.t_periastron) / g.period)
    m -= _TWO_PI * np.floor((m + np.pi) / _TWO_PI)
    if g.e == 0.0:
        return m
    ecc = _kepler_kernel(np.atleast_1d(m), g.e).reshape(m.shape)
    return _true_from_eccentric(ecc, g.e)


def true_anomaly(time, *, period, t0, ecosw: float = 0.0, esinw: float = 0.0,
                 inclination=90.0) -> np.ndarray:
    """True anomaly of the orbit at the given times.

    Parameters
    ----------
    time : array_like or Quantity
        Times (days).
    period, t0 : float or Quantity
        Orbital period and time of mid-primary eclipse (days).
    ecosw, esinw : float
        e cos(omega), e sin(omega), omega the argument of periastron of the primary.
    inclination : float or Quantity, optional
        Degrees.  Only used to place periastron exactly (mid-eclipse is the minimum of
        the projected separation, slightly off nu = 90 deg - omega when i < 90 deg).

    Returns
    -------
    nu : ndarray
        True anomaly in radians, in [-pi, pi].
    """
    g = orbit_geometry(_period(period), as_float(t0, "t0", u.day), ecosw, esinw, _inclination(inclination))
    return _true_anomaly_geom(as_times(time), g)


def sky_separation(time, *, period, t0, ecosw: float = 0.0, esinw: float = 0.0,
                   inclination) -> tuple[np.ndarray, np.ndarray]:
    """Projected separation of the two centres (units of a) and which star is in front.

    Returns
    -------
    d : ndarray
        Sky-projected centre separation over the semi-major axis.
    primary_in_front : ndarray of bool
        True where star 1 is nearer the observer (a secondary eclipse if they overlap);
        False where star 2 is in front (primary eclipse).
    """
    g = orbit_geometry(_period(period), as_float(t0, "t0", u.day), ecosw, esinw, _inclination(inclination))
    t = as_times(time)
    nu = _true_anomaly_geom(t, g)
    theta = nu + g.omega
    r = (1.0 - g.e ** 2) / (1.0 + g.e * np.cos(nu))
    st = np.sin(theta)
    d = r * np.sqrt(np.maximum(1.0 - (g.sin_i * st) ** 2, 0.0))
    return d, st < 0.0


def conjunction_times(*, period, t0, ecosw: float = 0.0, esinw: float = 0.0,
                      inclination=90.0) -> tuple[float, float]:
    """Times of mid-primary and mid-secondary eclipse (minimum projected separation).

    Returns
    -------
    t_primary, t_secondary : float
        ``t_primary == t0`` by definition; ``t0 <= t_secondary < t0 + period``.
    """
    g = orbit_geometry(_period(period), as_float(t0, "t0", u.day), ecosw, esinw, _inclination(inclination))
    return g.t0, g.t_secondary


def secondary_phase(*, ecosw: float, esinw: float, inclination=90.0) -> float:
    """Orbital phase of mid-secondary eclipse (mid-primary at phase 0), in [0, 1).

    To first order in e at i = 90 deg this is 0.5 + (2 / pi) e cos(omega) [3]_; the value
    returned is exact (minimum projected separation of a Keplerian orbit).
    """
    g = orbit_geometry(1.0, 0.0, ecosw, esinw, _inclination(inclination))
    return float(g.t_secondary % 1.0)


def radial_velocities(time, *, period, t0, k_primary: float, k_secondary: float | None = None,
                      gamma: float = 0.0, ecosw: float = 0.0, esinw: float = 0.0,
                      inclination=90.0) -> tuple[np.ndarray, np.ndarray | None]:
    """Radial velocities of both stars (km/s, positive receding).

    v1 = gamma + K1 [cos(nu + omega) + e cos omega],
    v2 = gamma - K2 [cos(nu + omega) + e cos omega]   (star 2's omega is omega + 180 deg) [1]_.

    Returns
    -------
    rv1, rv2 : ndarray, ndarray or None
        ``rv2`` is None when ``k_secondary`` is None.
    """
    g = orbit_geometry(_period(period), as_float(t0, "t0", u.day), ecosw, esinw, _inclination(inclination))

    def kms(v, name):
        return as_float(v, name, _KMS, finite=False)   # NaN passes: a velocity model is plain arithmetic

    k1 = kms(k_primary, "k_primary")
    gam = kms(gamma, "gamma")
    nu = _true_anomaly_geom(as_times(time), g)
    shape = np.cos(nu + g.omega) + g.e * math.cos(g.omega)
    rv1 = gam + k1 * shape
    rv2 = None if k_secondary is None else gam - kms(k_secondary, "k_secondary") * shape
    return rv1, rv2


def orbital_phase(time, period: float, t0: float, start: float = 0.0) -> np.ndarray:
    """Orbital phase of ``time`` in [start, start + 1), 0 at the primary eclipse ``t0``.

    All in days; ``start = -0.25`` keeps the primary eclipse clear of the edges of a plot.
    """
    return np.mod((np.asarray(time, float) - t0) / period - start, 1.0) + start


def phase_harmonics(phase, harmonics: int) -> np.ndarray:
    """cos and sin of 2 pi j phase for j = 1..``harmonics``: columns of shape (n, 2 harmonics).

    The design-matrix columns of a Fourier series in orbital phase (phase in cycles).
    """
    x = _TWO_PI * np.asarray(phase, float)
    cols = []
    for j in range(1, harmonics + 1):
        cols += [np.cos(j * x), np.sin(j * x)]
    return np.column_stack(cols) if cols else np.zeros((x.size, 0))
