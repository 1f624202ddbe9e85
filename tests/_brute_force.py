"""Independent reference light curves for the fitting tests.

Nothing here imports eclipsekit's model code: the orbit is solved with
``scipy.optimize.brentq`` on Kepler's equation, and the eclipsed flux is a direct sum
over a fine polar grid on the back star's disc, each cell weighted by the exact
(``scipy.integrate.quad``) integral of the limb-darkening law over its annulus.  The
only approximation is the cell coverage at the occulting limb, which is anti-aliased
(a linear ramp one cell wide across the edge), so the error is second order in the
cell size.  ``test_brute_force_reference_*`` checks it against the exact
circle-circle overlap area.

Conventions are the package's own (documented in the README), derived here from first principles:

* the primary eclipse (star 1 behind star 2) happens at true anomaly
  nu = 90 deg - omega, omega being the argument of periastron of star 1's orbit and
  the line-of-sight coordinate pointing away from the observer (radial velocity
  positive receding), so star 1 is farthest from us when sin(nu + omega) = 1;
* separations are in units of the semi-major axis a of the relative orbit:
  r = (1 - e^2) / (1 + e cos nu), projected d = r sqrt(1 - sin^2(nu + omega) sin^2 i)
  (textbook Keplerian geometry, e.g. Hilditch 2001, "An Introduction to Close Binary
  Stars", ch. 2);
* t0 is the time of minimum projected separation at the primary eclipse.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from scipy import integrate, optimize


def intensity(mu: np.ndarray, law: str, coeffs: tuple) -> np.ndarray:
    """Normalised specific intensity I(mu)/I(1)."""
    mu = np.asarray(mu, float)
    if law == "uniform":
        return np.ones_like(mu)
    if law == "linear":
        (u,) = coeffs
        return 1 - u * (1 - mu)
    if law == "quadratic":
        u1, u2 = coeffs
        return 1 - u1 * (1 - mu) - u2 * (1 - mu) ** 2
    if law == "power-2":  # Hestroffer 1997, A&A 327, 199
        c, alpha = coeffs
        return 1 - c * (1 - mu ** alpha)
    raise ValueError(law)


class DiscGrid:
    """Polar grid over a unit disc with exact annulus weights for one limb-darkening law."""

    def __init__(self, law: str, coeffs: tuple, n_r: int = 300, n_theta: int = 600):
        edges = np.linspace(0.0, 1.0, n_r + 1)
        f = lambda r: float(intensity(np.sqrt(max(1 - r * r, 0.0)), law, coeffs)) * 2 * np.pi * r
        ann = np.array([integrate.quad(f, a, b, epsabs=1e-15, epsrel=1e-13)[0] for a, b in zip(edges[:-1], edges[1:])])
        self.total = ann.sum()
        # half disc (theta in [0, pi]) by symmetry about the line of centres
        theta_edges = np.linspace(0.0, np.pi, n_theta + 1)
        theta = 0.5 * (theta_edges[1:] + theta_edges[:-1])
        r = 0.5 * (edges[1:] + edges[:-1])
        self.r = r
        self.dr = edges[1] - edges[0]
        self.x = np.outer(r, np.cos(theta))
        self.y = np.outer(r, np.sin(theta))
        self.w = np.repeat((ann / (2 * n_theta))[:, None], n_theta, axis=1)  # weight of each half-disc cell (x2 later)
        self.rdt = np.outer(r, np.full(n_theta, np.pi / n_theta))  # tangential cell size

    def hidden_fraction(self, z: float, p: float) -> float:
        """Fraction of the disc's flux hidden by an opaque disc of radius p at distance z (unit-radius back star)."""
        if z >= 1 + p:
            return 0.0
        if p >= z + 1:
            return 1.0
        rows = (self.r + self.dr >= z - p) & (self.r - self.dr <= z + p)
        x, y, w, rdt = self.x[rows], self.y[rows], self.w[rows], self.rdt[rows]
        dist = np.sqrt((x - z) ** 2 + y * y)
        # width of the cell across the occultor's limb: its extent projected on the limb normal
        rad = np.sqrt(x * x + y * y)
        cosphi = ((x - z) * x + y * y) / np.maximum(dist * rad, 1e-300)
        h = self.dr * np.abs(cosphi) + rdt * np.sqrt(np.maximum(0.0, 1 - cosphi * cosphi))
        cover = np.clip(0.5 - (dist - p) / h, 0.0, 1.0)
        return float(2 * np.sum(w * cover) / self.total)


@lru_cache(maxsize=16)
def _grid(law: str, coeffs: tuple, n_r: int, n_theta: int) -> DiscGrid:
    return DiscGrid(law, coeffs, n_r, n_theta)


def _mean_anomaly_to_true(M: float, e: float) -> float:
    if e == 0:
        return M
    M = np.mod(M + np.pi, 2 * np.pi) - np.pi
    E = optimize.brentq(lambda E: E - e * np.sin(E) - M, -np.pi - 1e-9, np.pi + 1e-9, xtol=1e-15, rtol=1e-15)
    return 2 * np.arctan2(np.sqrt(1 + e) * np.sin(E / 2), np.sqrt(1 - e) * np.cos(E / 2))


def _true_to_mean(nu: float, e: float) -> float:
    E = 2 * np.arctan2(np.sqrt(1 - e) * np.sin(nu / 2), np.sqrt(1 + e) * np.cos(nu / 2))
    return E - e * np.sin(E)


def separation(phase_time: np.ndarray, *, period: float, e: float, omega_deg: float, inclination: float,
               t_peri: float) -> tuple[np.ndarray, np.ndarray]:
    """Projected separation (units of a) and 'star 1 behind' flag at each time."""
    w = np.radians(omega_deg)
    inc = np.radians(inclination)
    d = np.empty(len(phase_time))
    back1 = np.empty(len(phase_time), bool)
    for j, t in enumerate(phase_time):
        nu = _mean_anomaly_to_true(2 * np.pi * (t - t_peri) / period, e)
        r = (1 - e * e) / (1 + e * np.cos(nu))
        s = np.sin(nu + w)
        d[j] = r * np.sqrt(max(0.0, 1 - s * s * np.sin(inc) ** 2))
        back1[j] = s > 0
    return d, back1


def reference_separation(time, *, period, t0, eccentricity=0.0, omega=90.0, inclination=90.0):
    """Projected separation (units of a) and 'star 1 behind' flag, t0 at the minimum separation.

    The time of periastron follows from the conjunction nu = 90 deg - omega; t0 is then moved to
    the minimum of the projected separation (they differ when i < 90 deg and e > 0).
    """
    e = float(eccentricity)
    w = np.radians(omega)
    M_conj = _true_to_mean(np.pi / 2 - w, e)
    t_peri = -M_conj * period / (2 * np.pi)  # periastron time if conjunction were at 0
    kw = dict(period=period, e=e, omega_deg=omega, inclination=inclination)
    res = optimize.minimize_scalar(lambda t: separation([t], t_peri=t_peri, **kw)[0][0],
                                   bounds=(-0.05 * period, 0.05 * period), method="bounded",
                                   options={"xatol": 1e-12 * period})
    return separation(np.asarray(time, float), t_peri=t_peri - res.x + t0, **kw)


def brute_force_flux(time, *, period, t0, radius_sum, radius_ratio, inclination, surface_brightness_ratio,
                     eccentricity=0.0, omega=90.0, third_light=0.0, ld_law="quadratic",
                     ld_primary=(0.4, 0.25), ld_secondary=(0.4, 0.25), n_r=300, n_theta=600):
    """Normalised flux of two limb-darkened spheres on a Keplerian orbit, by grid integration.

    ``omega`` in degrees (star 1's orbit); ``t0`` the time of mid-primary eclipse
    (minimum projected separation).
    """
    time = np.asarray(time, float)
    r1 = radius_sum / (1 + radius_ratio)
    r2 = radius_sum - r1
    d, back1 = reference_separation(time, period=period, t0=t0, eccentricity=eccentricity, omega=omega,
                                    inclination=inclination)
    g1 = _grid(ld_law, tuple(ld_primary), n_r, n_theta)
    g2 = _grid(ld_law, tuple(ld_secondary), n_r, n_theta)
    lr = surface_brightness_ratio * radius_ratio ** 2  # L2/L1
    flux = np.empty(time.size)
    for j in range(time.size):
        if d[j] >= radius_sum:
            flux[j] = 1.0
            continue
        if back1[j]:  # primary eclipse: star 1 behind, star 2 occults
            hid = g1.hidden_fraction(d[j] / r1, r2 / r1)
            flux[j] = (1 - hid + lr) / (1 + lr)
        else:
            hid = g2.hidden_fraction(d[j] / r2, r1 / r2)
            flux[j] = (1 + lr * (1 - hid)) / (1 + lr)
    return (1 - third_light) * flux + third_light


def exposure_averaged_flux(time, exposure: float, n_sub: int = 15, **system) -> np.ndarray:
    """:func:`brute_force_flux` averaged over an exposure of ``exposure`` days centred on each time.

    The mean of ``n_sub`` instants at the midpoints of equal sub-intervals (the composite
    midpoint rule), as a detector integrating over its exposure records; independent of the
    package's Gauss-Legendre smearing.
    """
    time = np.asarray(time, float)
    offsets = ((np.arange(n_sub) + 0.5) / n_sub - 0.5) * exposure
    return np.mean([brute_force_flux(time + dt, **system) for dt in offsets], axis=0)


def overlap_area(z: float, p: float) -> float:
    """Exact area of the intersection of a unit circle and a circle of radius p at distance z.

    Standard circle-circle intersection (lens) formula, e.g. Mandel & Agol 2002, ApJ 580,
    L171, eq. (1) (lambda^e times pi).
    """
    if z >= 1 + p:
        return 0.0
    if z <= abs(1 - p):
        return np.pi * min(1.0, p) ** 2
    k0 = np.arccos((p * p + z * z - 1) / (2 * p * z))
    k1 = np.arccos((1 - p * p + z * z) / (2 * z))
    return p * p * k0 + k1 - 0.5 * np.sqrt(4 * z * z - (1 + z * z - p * p) ** 2)
