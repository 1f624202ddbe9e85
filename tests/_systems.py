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

from _brute_force import brute_force_flux, exposure_averaged_flux

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
    # strongly eccentric orbit (e = 0.35): secondary near phase 0.65, eclipses of widths differing by ~1.7
    "eccentric-wide": dict(period=2880 * CADENCE, t0=0.88, radius_sum=0.14, radius_ratio=0.80, inclination=88.5,
                           surface_brightness_ratio=0.80, eccentricity=0.35, omega=50.0, ld_law="quadratic",
                           ld_primary=(0.50, 0.22), ld_secondary=(0.52, 0.20)),
    # power-2 limb darkening (Hestroffer 1997), high precision
    "power-2": dict(period=2592 * CADENCE, t0=0.52, radius_sum=0.16, radius_ratio=0.75, inclination=87.9,
                    surface_brightness_ratio=0.70, ld_law="power-2", ld_primary=(0.72, 0.45),
                    ld_secondary=(0.70, 0.50)),
}

#: white noise per 2-minute point (relative flux)
NOISE = {"grazing": 1e-3, "partial": 2e-4, "total": 4e-4, "eccentric": 4e-4, "eccentric-wide": 4e-4, "power-2": 2e-4}


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


# ------------------------------------------------------------------------------------------
# Long-cadence (30-minute) analogues of real survey light curves: spots, correlated noise,
# multi-year baselines.  Eclipses from the brute-force reference; the spot waves and the noise
# are written here (sinusoids at the rotation period with slowly changing amplitudes; AR(1)).
# ------------------------------------------------------------------------------------------
LONG_CADENCE = 30.0 / 1440  # days

LONG_SYSTEMS: dict[str, dict] = {
    # young M-dwarf pair, P ~ 0.86 d: wide V-shaped partial eclipses (half-depth width ~8%, box ~12% of the period), about 35% and 18% deep
    "spotted-short": dict(period=0.8613, t0=0.3172, radius_sum=0.50, radius_ratio=0.92, inclination=79.0,
                          surface_brightness_ratio=0.50, ld_law="quadratic", ld_primary=(0.35, 0.30),
                          ld_secondary=(0.36, 0.30)),
    # eccentric red-giant-like pair, P = 8208 cadences of 30 min = 171 d: eclipses of different widths
    "eccentric-long": dict(period=8208 * LONG_CADENCE, t0=53.27, radius_sum=0.075, radius_ratio=0.80,
                           inclination=89.6, surface_brightness_ratio=0.75, eccentricity=0.35, omega=40.0,
                           ld_law="quadratic", ld_primary=(0.55, 0.18), ld_secondary=(0.55, 0.18)),
}


def long_truth(name: str) -> dict[str, float]:
    """True period, t0, e cos w and e sin w of a system of ``LONG_SYSTEMS`` (from its definition)."""
    s = LONG_SYSTEMS[name]
    e, w = s.get("eccentricity", 0.0), np.radians(s.get("omega", 90.0))
    return dict(period=s["period"], t0=s["t0"], ecosw=e * np.cos(w), esinw=e * np.sin(w))


def ar1_noise(rng: np.random.Generator, n: int, sigma: float, rho: float) -> np.ndarray:
    """Stationary AR(1) noise of standard deviation ``sigma`` and lag-one correlation ``rho`` (per point)."""
    white = rng.normal(0.0, sigma * np.sqrt(1.0 - rho * rho), n)
    out = np.empty(n)
    out[0] = rng.normal(0.0, sigma)
    for i in range(1, n):
        out[i] = rho * out[i - 1] + white[i]
    return out


def spot_wave(t: np.ndarray, period: float, amplitude: float, rng: np.random.Generator, *,
              n_harm: int = 2, evolution: float = 20.0) -> np.ndarray:
    """Relative flux of a spot wave: a fundamental and ``n_harm - 1`` harmonics at ``period`` whose
    amplitudes wander slowly (timescale ``evolution`` days, up to +-30%) and whose phases drift a little."""
    out = np.zeros_like(t)
    for k in range(1, n_harm + 1):
        a = amplitude / k ** 1.5
        slow = 1.0 + 0.3 * np.sin(2 * np.pi * t / (evolution * (1 + 0.3 * k)) + rng.uniform(0, 2 * np.pi))
        phase = rng.uniform(0, 2 * np.pi) + 0.2 * np.sin(2 * np.pi * t / (1.7 * evolution))
        out += a * slow * np.cos(2 * np.pi * k * t / period + phase)
    return out


def _gapped_long_cadence(start: float, span: float, n: int, gap_every: float, gap_length: float) -> np.ndarray:
    """Regular 30-min slots from ``start`` over ``span`` days with a gap of ``gap_length`` d every ``gap_every``
    days (data downlinks), thinned evenly to ``n`` points when more are left."""
    slots = start + np.arange(int(span / LONG_CADENCE) + 1) * LONG_CADENCE
    keep = np.mod(slots - start, gap_every) < gap_every - gap_length
    slots = slots[keep]
    if slots.size > n:
        slots = slots[np.round(np.linspace(0, slots.size - 1, n)).astype(int)]
    return slots


@lru_cache(maxsize=None)
def _spotted_eclipses(span: float, n_r: int, n_theta: int) -> tuple[np.ndarray, np.ndarray]:
    t = _gapped_long_cadence(0.0, span, 10 ** 9, 13.7, 1.0)
    return t, exposure_averaged_flux(t, LONG_CADENCE, n_r=n_r, n_theta=n_theta, **LONG_SYSTEMS["spotted-short"])


def spotted_binary_arrays(seed: int, *, span: float = 27.0, sigma: float = 2e-3, rho: float = 0.6,
                          spot_amplitude: float = 0.04, n_r: int = 120, n_theta: int = 240):
    """The spotted short-period binary at 30-minute cadence: brute-force eclipses integrated over
    each 30-minute exposure (fit with ``exposure_time=LONG_CADENCE``), times a spot wave at the
    (synchronised) orbital period, plus AR(1) noise.  Returns ``(time, flux, flux_err)``."""
    s = LONG_SYSTEMS["spotted-short"]
    t, f = _spotted_eclipses(span, n_r, n_theta)
    rng = np.random.default_rng(seed)
    f = f * (1.0 + spot_wave(t, s["period"], spot_amplitude / 2, rng))  # 4% peak to peak
    return t, f + ar1_noise(rng, t.size, sigma, rho), np.full(t.size, sigma)


def spotted_star_arrays(seed: int, *, period: float = 2.37, span: float = 27.0, sigma: float = 1e-3,
                        rho: float = 0.6):
    """A spotted single star, no eclipse: two spots at different longitudes, each seen as a
    foreshortened, limb-darkened area (``mu (1 - 0.6 (1 - mu))`` with ``mu = max(cos(phase), 0)``,
    so the minima are sharper than a sinusoid), amplitudes wandering slowly, plus AR(1) noise."""
    t = _gapped_long_cadence(0.0, span, 10 ** 9, 13.7, 1.0)
    rng = np.random.default_rng(seed)
    flux = np.ones_like(t)
    for depth, longitude, tau in ((0.03, 0.0, 23.0), (0.018, 2.2, 31.0)):
        mu = np.maximum(np.cos(2 * np.pi * t / period - longitude), 0.0)
        slow = 1.0 + 0.25 * np.sin(2 * np.pi * t / tau + rng.uniform(0, 2 * np.pi))
        flux -= depth * slow * mu * (1 - 0.6 * (1 - mu))
    return t, flux + ar1_noise(rng, t.size, sigma, rho), np.full(t.size, sigma)


@lru_cache(maxsize=None)
def _one_long_orbit(name: str, n_r: int, n_theta: int) -> tuple[np.ndarray, np.ndarray]:
    s = LONG_SYSTEMS[name]
    n = int(round(s["period"] / LONG_CADENCE))
    phase_slots = np.arange(n) * LONG_CADENCE
    return phase_slots, exposure_averaged_flux(phase_slots, LONG_CADENCE, n_r=n_r, n_theta=n_theta, **s)


def eccentric_long_arrays(seed: int, *, span: float = 1470.0, n_points: int = 65_000, sigma: float = 4e-4,
                          rho: float = 0.3, n_r: int = 120, n_theta: int = 240):
    """The four-year eccentric pair at 30-minute cadence: ``n_points`` over ``span`` days, a 3-day gap
    every 93 days, brute-force eclipses integrated over each 30-minute exposure (one orbit computed,
    repeated: the cadence divides the period) and AR(1) noise.  Returns ``(time, flux, flux_err)``."""
    s = LONG_SYSTEMS[name := "eccentric-long"]
    slots, f1 = _one_long_orbit(name, n_r, n_theta)
    t = _gapped_long_cadence(0.0, span, n_points, 93.0, 3.0)
    index = np.round(np.mod(t, s["period"]) / LONG_CADENCE).astype(int) % slots.size
    rng = np.random.default_rng(seed)
    return t, f1[index] + ar1_noise(rng, t.size, sigma, rho), np.full(t.size, sigma)
