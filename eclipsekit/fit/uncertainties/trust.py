"""When the covariance matrix can be trusted for the uncertainties.

The covariance of a least-squares fit is the inverse curvature of chi-square at the best
fit: it describes the posterior only when that is close to a Gaussian over the range
the uncertainties span (e.g. Press et al. 2007, Numerical Recipes, 3rd ed., sect. 15.6).
Partial, grazing or low signal-to-noise eclipses break that: radius ratio, inclination
and third light trade off along a curved, often one-sided valley.  These tests look
for the signs, cheaply, from the fit itself.
"""

from __future__ import annotations

import math
from typing import Callable, Sequence

import numpy as np

#: geometric parameters whose uncertainties the user relies on
KEY = ("radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio", "third_light", "ecosw", "esinw")

MAX_CORRELATION = 0.999   # |rho| above which two parameters are nearly degenerate (a linear correlation alone
#                           is Gaussian; the profile tests below catch the curved valleys)
MAX_RELATIVE_ERROR = 0.10  # relative error above which a linear approximation rarely holds
#: accepted chi-square rise at +-1 sigma, in units of the expected 1: each side's true 1-sigma point lies
#: within a factor 1.5 of the covariance's (the rise scales as the inverse square of that factor)
PROFILE_RANGE = (1 / 1.5 ** 2, 1.5 ** 2)


def covariance_doubts(names: Sequence[str], x: np.ndarray, cov: np.ndarray | None, lo: np.ndarray, hi: np.ndarray,
                      chi2: Callable[[np.ndarray], float], chi2_scale: float,
                      values: dict[str, float]) -> list[str]:
    """Reasons not to trust the covariance uncertainties; empty when they can be trusted.

    Parameters
    ----------
    names : sequence of str
        Public names of the free parameters, in the order of ``x``.
    x, cov : ndarray
        Best fit (fitted parameterisation) and its covariance, already scaled so that
        one sigma corresponds to a chi-square rise of ``chi2_scale``.
    lo, hi : ndarray
        Bounds of each parameter.
    chi2 : callable
        Chi-square (including prior terms) at a parameter vector; may raise ValueError
        or ArithmeticError for invalid geometry.
    chi2_scale : float
        Chi-square rise that one sigma corresponds to (the reduced chi-square by which the
        covariance was scaled).
    values : dict
        Physical best-fit values, for the relative-error test.
    """
    if cov is None:
        return ["no covariance matrix (the Jacobian was singular)"]
    sd = np.sqrt(np.diag(cov))
    if not np.all(np.isfinite(sd)) or np.any(sd <= 0):
        return ["the covariance matrix is singular"]
    reasons: list[str] = []
    key = [i for i, n in enumerate(names) if n in KEY]
    corr = cov / np.outer(sd, sd)
    for a in key:
        for b in key:
            if a < b and abs(corr[a, b]) > MAX_CORRELATION:
                reasons.append(f"{names[a]} and {names[b]} are degenerate (correlation {corr[a, b]:+.4f})")
    for i in key:
        n = names[i]
        if x[i] - 2 * sd[i] < lo[i] or x[i] + 2 * sd[i] > hi[i]:
            side = "lower" if x[i] - 2 * sd[i] < lo[i] else "upper"
            reasons.append(f"{n} is within 2 sigma of its {side} bound")
            continue
        v = values.get(n)
        if n in ("radius_sum", "radius_ratio", "surface_brightness_ratio") and v and sd[i] / abs(v) > MAX_RELATIVE_ERROR:
            reasons.append(f"{n} has a relative error of {100 * sd[i] / abs(v):.0f}%")
            continue
        reasons += _profile_doubts(n, i, x, cov, sd, lo, hi, chi2, chi2_scale)
    return reasons


def _profile_doubts(name, i, x, cov, sd, lo, hi, chi2, chi2_scale) -> list[str]:
    """Chi-square one sigma either side along the conditional direction of parameter i.

    Moving parameter i by +-sigma_i and the others by their regression on it,
    cov[:, i] / sigma_i, follows the profile of chi-square in the linear approximation,
    where it rises by exactly one (scaled) unit on either side.
    """
    step = cov[:, i] / sd[i]
    try:
        c0 = chi2(x)
        rises = []
        for sign in (1.0, -1.0):
            xs = x + sign * step
            if np.any(xs < lo) or np.any(xs > hi):
                return [f"the 1-sigma range of {name} reaches a bound of a correlated parameter"]
            rises.append((chi2(xs) - c0) / chi2_scale)
    except (ValueError, ArithmeticError, np.linalg.LinAlgError):
        return [f"the model fails within 1 sigma of the best {name}"]
    up, down = rises
    if not all(math.isfinite(r) for r in rises):
        return [f"the model fails within 1 sigma of the best {name}"]
    if min(up, down) < PROFILE_RANGE[0] or max(up, down) > PROFILE_RANGE[1]:
        return [f"chi-square is not parabolic in {name} (rises {up:.2f} and {down:.2f} at +-1 sigma, 1 expected)"]
    return []
