"""Invented detached binaries whose light curves come from the independent brute-force reference.

Used by the recovery and coverage tests of the eclipse fit (and by
``scripts/calibrate_errors.py``).  The cadence divides the period exactly, so every orbit
samples the same phases: the brute-force flux (tests/_brute_force.py, slow) is computed for
one orbit and repeated, and each noise realisation only draws new noise.

The true limb darkening of every system is at least 0.08 away from the package's typical
coefficients in the linear term, so a fit that held limb darkening at the typical values
would be biased.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from _brute_force import brute_force_flux

CADENCE = 2.0 / 1440  # days

SYSTEMS: dict[str, dict] = {
    # partial eclipses of unequal stars
    "partial": dict(period=1944 * CADENCE, t0=0.71, radius_sum=0.20, radius_ratio=0.80, inclination=85.6,
                    surface_brightness_ratio=0.78, ld_law="quadratic", ld_primary=(0.52, 0.20),
                    ld_secondary=(0.56, 0.18)),
    # total eclipse of the small star, transit of the large one
    "total": dict(period=2160 * CADENCE, t0=0.93, radius_sum=0.18, radius_ratio=0.55, inclination=89.3,
                  surface_brightness_ratio=0.62, ld_law="quadratic", ld_primary=(0.28, 0.30),
                  ld_secondary=(0.52, 0.20)),
    # eccentric orbit: eclipses of different widths, secondary away from phase 0.5
    "eccentric": dict(period=3456 * CADENCE, t0=1.37, radius_sum=0.12, radius_ratio=0.85, inclination=88.4,
                      surface_brightness_ratio=0.85, eccentricity=0.20, omega=62.0, ld_law="quadratic",
                      ld_primary=(0.50, 0.22), ld_secondary=(0.52, 0.20)),
    # grazing eclipses diluted by a third star: k, i and third light nearly degenerate
    "grazing": dict(period=2268 * CADENCE, t0=0.64, radius_sum=0.20, radius_ratio=0.82, inclination=80.4,
                    surface_brightness_ratio=0.80, third_light=0.30, ld_law="quadratic", ld_primary=(0.50, 0.22),
                    ld_secondary=(0.52, 0.20)),
    # power-2 limb darkening (Hestroffer 1997), high precision
    "power-2": dict(period=2592 * CADENCE, t0=0.52, radius_sum=0.16, radius_ratio=0.75, inclination=87.9,
                    surface_brightness_ratio=0.70, ld_law="power-2", ld_primary=(0.72, 0.45),
                    ld_secondary=(0.70, 0.50)),
}

#: white noise per 2-minute point (relative flux)
NOISE = {"grazing": 1e-3, "partial": 2e-4, "total": 4e-4, "eccentric": 4e-4, "power-2": 2e-4}


def truth(name: str) -> dict[str, float]:
    """True values in the fit's parameterisation (ecosw, esinw, derived radii, light ratio)."""
    s = SYSTEMS[name]
    e, w = s.get("eccentricity", 0.0), np.radians(s.get("omega", 90.0))
    k = s["radius_ratio"]
    return dict(period=s["period"], t0=s["t0"], radius_sum=s["radius_sum"], radius_ratio=k,
                inclination=s["inclination"], surface_brightness_ratio=s["surface_brightness_ratio"],
                ecosw=e * np.cos(w), esinw=e * np.sin(w),
                frac_radius_primary=s["radius_sum"] / (1 + k), frac_radius_secondary=s["radius_sum"] * k / (1 + k),
                third_light=s.get("third_light", 0.0), light_ratio=s["surface_brightness_ratio"] * k * k)


@lru_cache(maxsize=None)
def _one_orbit(name: str, n_r: int, n_theta: int) -> tuple[np.ndarray, np.ndarray]:
    s = dict(SYSTEMS[name])
    n = int(round(s["period"] / CADENCE))
    t = s["t0"] + np.arange(n) * CADENCE - 0.25 * s["period"]
    return t, brute_force_flux(t, n_r=n_r, n_theta=n_theta, **s)


def light_curve_arrays(name: str, seed: int, n_orbits: int = 5, *, n_r: int = 200,
                       n_theta: int = 400) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Time, flux and error of ``n_orbits`` orbits of system ``name`` with white noise of seed ``seed``."""
    t1, f1 = _one_orbit(name, n_r, n_theta)
    P = SYSTEMS[name]["period"]
    t = np.concatenate([t1 + j * P for j in range(n_orbits)])
    f = np.tile(f1, n_orbits)
    rng = np.random.default_rng(seed)
    sigma = NOISE[name]
    return t, f + rng.normal(0.0, sigma, t.size), np.full(t.size, sigma)
