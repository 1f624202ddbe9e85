"""The eclipse fit with no options on light curves from the independent brute-force reference.

Truth comes from tests/_brute_force.py (grid integration of the discs, Kepler's equation
by brentq), never from the package's own model, and every system's true limb darkening is
at least 0.08 from the typical coefficients in its linear term (tests/_systems.py).
"""

import warnings

import numpy as np
import pytest

import eclipsekit as ek
from _systems import SYSTEMS, light_curve_arrays, truth

GEOMETRY = ("radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio")


def _fit(name: str, seed: int = 1, **options):
    t, f, e = light_curve_arrays(name, seed)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fit = ek.fit_eclipses(ek.LightCurve(t, f, e), progress=False, seed=seed, **options)
    return fit, [str(w.message) for w in caught]


@pytest.mark.parametrize("name", ["partial", "total", "eccentric", "power-2"])
def test_recovery_with_no_options(name):
    fit, _ = _fit(name)
    tr = truth(name)
    for key in GEOMETRY:
        value, sigma = fit.values[key], fit.uncertainties[key]
        # within 3 sigma of the truth (the fit's own stated uncertainty) and within 1% (issue's bound)
        assert abs(value - tr[key]) < 3 * sigma, f"{name} {key}: {value} vs {tr[key]} +- {sigma}"
        assert abs(value / tr[key] - 1) < 0.01, f"{name} {key}: {value} vs {tr[key]}"
    assert fit.status == "ok", fit.warnings
