"""eclipsekit: analysis of detached eclipsing binary stars.

Find the period, fit both eclipses with two limb-darkened spherical stars on a
Keplerian orbit, and combine with radial velocities into absolute masses and radii.
"""

from .errors import EclipsekitError, EclipsekitWarning, FitError, GeometryError, InputError, NoEclipseFound
from .data import LightCurve, VelocityCurve, magnitudes_to_flux, read_light_curve, read_velocities

__version__ = "0.1.0"
