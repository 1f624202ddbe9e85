"""eclipsekit: analysis of detached eclipsing binary stars.

Find the period, fit both eclipses with two limb-darkened spherical stars on a
Keplerian orbit, and combine with radial velocities into absolute masses and radii.
"""

from .errors import EclipsekitError, EclipsekitWarning, FitError, GeometryError, InputError, NoEclipseFound
from .data import LightCurve, VelocityCurve, magnitudes_to_flux, read_light_curve, read_velocities, sample_paths
from .orbit import (conjunction_times, radial_velocities, secondary_phase, sky_separation, solve_kepler,
                    true_anomaly)
from .eclipse import eclipse_properties, light_ratio, model_flux, occulted_fraction
from .period import PeriodSearch, find_period
from .fit import EclipseFit, fit_eclipses, fit_joint
from .spectroscopy import OrbitFit, fit_velocities
from .dimensions import AbsoluteDimensions, absolute_dimensions
from .pipeline import Analysis, analyse

__version__ = "0.1.0"

__all__ = [
    # reading data
    "LightCurve", "VelocityCurve", "read_light_curve", "read_velocities", "magnitudes_to_flux", "sample_paths",
    # the model
    "model_flux", "occulted_fraction", "light_ratio", "eclipse_properties",
    "solve_kepler", "true_anomaly", "sky_separation", "conjunction_times", "secondary_phase", "radial_velocities",
    # the analysis steps
    "find_period", "PeriodSearch", "fit_eclipses", "EclipseFit", "fit_joint", "fit_velocities", "OrbitFit",
    "absolute_dimensions", "AbsoluteDimensions", "analyse", "Analysis",
    # errors and warnings
    "EclipsekitError", "InputError", "GeometryError", "NoEclipseFound", "FitError", "EclipsekitWarning",
    "__version__",
]
