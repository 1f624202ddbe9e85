"""Synthetic eclipse-timing light curves from the independent brute-force reference (tests/_brute_force.py).

The brute-force flux of one primary and one secondary eclipse of an invented circular binary is
computed once on a fine grid of times from mid-eclipse and interpolated by a cubic spline (its
error, of order (h/D)^4 of the depth where the flux is smooth and larger only within a step of the
contacts (cubic-spline error, from memory), with the step h ≈ D/250, is far below the noise); each
eclipse of a light curve is that shape moved to its own mid-time, which may carry any injected
shift (a light-travel-time orbit, a period change). Only windows of ±0.25 d around the eclipses are
sampled, with a random phase of the cadence per eclipse. Nothing here uses eclipsekit's model.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from scipy.interpolate import CubicSpline

from _brute_force import brute_force_flux

#: an invented detached binary: partial eclipses of similar stars, circular orbit (duration ~0.19 d)
SYSTEM = dict(period=3.0, radius_sum=0.2, radius_ratio=0.8, inclination=88.0, surface_brightness_ratio=0.8,
              ld_law="quadratic", ld_primary=(0.45, 0.2), ld_secondary=(0.5, 0.18))
T0 = 100.0
HALF_WINDOW = 0.25


@lru_cache(maxsize=None)
def shapes() -> tuple[CubicSpline, CubicSpline]:
    """Brute-force primary and secondary eclipse shapes against time from mid-eclipse (days)."""
    dt = np.linspace(-HALF_WINDOW - 0.05, HALF_WINDOW + 0.05, 801)
    kw = dict(t0=0.0, n_r=150, n_theta=300, **SYSTEM)
    half = 0.5 * SYSTEM["period"]
    return CubicSpline(dt, brute_force_flux(dt, **kw)), CubicSpline(dt, brute_force_flux(half + dt, **kw))


def light_curve(shift, n_orbits: int, cadence: float, noise: float, seed: int):
    """Time, flux, error and the true mid-times [(kind, cycle, time)] of ``n_orbits`` orbits.

    ``shift(cycle, tc)`` gives the delay (days) of the eclipse predicted at ``tc``.
    """
    primary, secondary = shapes()
    rng = np.random.default_rng(seed)
    times, fluxes, truth = [], [], []
    for cycle in range(n_orbits):
        for kind, offset, shape in (("primary", 0.0, primary), ("secondary", 0.5 * SYSTEM["period"], secondary)):
            tc = T0 + offset + cycle * SYSTEM["period"]
            true_time = tc + shift(cycle, tc)
            t = np.arange(tc - HALF_WINDOW + rng.uniform(0, cadence), tc + HALF_WINDOW, cadence)
            times.append(t)
            fluxes.append(shape(t - true_time))
            truth.append((kind, cycle, true_time))
    t = np.concatenate(times)
    return t, np.concatenate(fluxes) + noise * rng.standard_normal(t.size), np.full(t.size, noise), truth


def model_parameters() -> dict:
    """The true parameters, for eclipsekit's template (the truth data never come from it)."""
    return dict(SYSTEM, t0=T0)


def continuous_light_curve(shift, n_orbits: int, cadence: float, noise: float, seed: int):
    """Like :func:`light_curve`, but sampled without gaps over ``n_orbits`` orbits (for the period search).

    Out of eclipse the two spheres give exactly the normalised flux 1 (no other light variation).
    """
    primary, secondary = shapes()
    period = SYSTEM["period"]
    t = np.arange(T0 - 0.25 * period, T0 + (n_orbits - 0.25) * period, cadence)
    flux = np.ones(t.size)
    truth = []
    for cycle in range(n_orbits):
        for kind, offset, shape in (("primary", 0.0, primary), ("secondary", 0.5 * period, secondary)):
            tc = T0 + offset + cycle * period
            true_time = tc + shift(cycle, tc)
            near = np.abs(t - true_time) < HALF_WINDOW
            flux[near] = shape(t[near] - true_time)
            truth.append((kind, cycle, true_time))
    rng = np.random.default_rng(seed)
    return t, flux + noise * rng.standard_normal(t.size), np.full(t.size, noise), truth
