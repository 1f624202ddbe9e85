"""Independent textbook references for the tests (not eclipsekit code)."""

from __future__ import annotations

import numpy as np
from scipy.optimize import brentq


def textbook_velocity(time, *, period, t0, k, gamma, e, omega_deg, sign=+1.0):
    """Radial velocity of one star (Hilditch 2001, eq. 2.45): gamma + sign K [cos(nu + w) + e cos w].

    t0 is the primary conjunction, where nu + w = 90 deg (primary behind its companion).
    Kepler's equation M = E - e sin E is solved point by point with brentq.
    """
    w = np.radians(omega_deg)
    nu0 = np.pi / 2 - w
    e_anom0 = 2 * np.arctan2(np.sqrt(1 - e) * np.sin(nu0 / 2), np.sqrt(1 + e) * np.cos(nu0 / 2))
    mean0 = e_anom0 - e * np.sin(e_anom0)
    out = np.empty(np.size(time))
    for i, t in enumerate(np.atleast_1d(time)):
        mean = (mean0 + 2 * np.pi * (t - t0) / period) % (2 * np.pi)
        ecc_anom = brentq(lambda x: x - e * np.sin(x) - mean, 0.0, 2 * np.pi, xtol=1e-14)
        nu = 2 * np.arctan2(np.sqrt(1 + e) * np.sin(ecc_anom / 2), np.sqrt(1 - e) * np.cos(ecc_anom / 2))
        out[i] = gamma + sign * k * (np.cos(nu + w) + e * np.cos(w))
    return out
