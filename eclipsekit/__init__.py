"""eclipsekit: analysis of detached eclipsing binary stars.

Find the period, fit both eclipses with two limb-darkened spherical stars on a
Keplerian orbit, and combine with radial velocities into absolute masses and radii.

The public names below are loaded on first use (PEP 562), so ``import eclipsekit`` and
the command line's ``--help`` stay quick: scipy.optimize, lmfit, astropy tables and
matplotlib are imported only by the modules that need them.
"""

from __future__ import annotations

import importlib
from typing import Any

from ._version import __version__
from .errors import EclipsekitError, EclipsekitWarning, FitError, GeometryError, InputError, NoEclipseFound

#: Public name -> submodule that defines it (imported on first access).
_LAZY = {
    # reading data
    "LightCurve": "data", "VelocityCurve": "data", "read_light_curve": "data", "read_velocities": "data",
    "magnitudes_to_flux": "data", "sample_paths": "data", "align_velocity_times": "time_systems",
    # the model
    "model_flux": "eclipse", "occulted_fraction": "eclipse", "light_ratio": "eclipse",
    "eclipse_properties": "eclipse",
    "solve_kepler": "orbit", "true_anomaly": "orbit", "sky_separation": "orbit", "conjunction_times": "orbit",
    "secondary_phase": "orbit", "radial_velocities": "orbit",
    # the analysis steps
    "find_period": "period", "PeriodSearch": "period",
    "fit_eclipses": "fit", "EclipseFit": "fit", "fit_joint": "fit",
    "fit_velocities": "spectroscopy", "OrbitFit": "spectroscopy",
    "absolute_dimensions": "dimensions", "AbsoluteDimensions": "dimensions",
    "analyse": "pipeline", "Analysis": "pipeline",
    "eclipse_times": "timings", "EclipseTimes": "timings",
    # many targets
    "survey": "survey",
}

__all__ = [
    # reading data
    "LightCurve", "VelocityCurve", "read_light_curve", "read_velocities", "magnitudes_to_flux", "sample_paths",
    "align_velocity_times",
    # the model
    "model_flux", "occulted_fraction", "light_ratio", "eclipse_properties",
    "solve_kepler", "true_anomaly", "sky_separation", "conjunction_times", "secondary_phase", "radial_velocities",
    # the analysis steps
    "find_period", "PeriodSearch", "fit_eclipses", "EclipseFit", "fit_joint", "fit_velocities", "OrbitFit",
    "absolute_dimensions", "AbsoluteDimensions", "analyse", "Analysis", "eclipse_times", "EclipseTimes", "survey",
    # errors and warnings
    "EclipsekitError", "InputError", "GeometryError", "NoEclipseFound", "FitError", "EclipsekitWarning",
    "__version__",
]


def __getattr__(name: str) -> Any:
    """Import the submodule that defines a public name on first access (PEP 562)."""
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
