"""Fit both eclipses of a detached binary: geometry, light ratio and honest uncertainties.

The eclipse model is :func:`eclipsekit.eclipse.model_flux` (two limb-darkened spheres on
a Keplerian orbit); this package adds the start values, the parameter set with its
bounds, a per-segment polynomial baseline, outlier rejection, restarts, and pluggable
ways to get uncertainties.  Modules, in data-flow order:

``parameters``
    names, units, bounds, limb-darkening laws; :class:`~.parameters.ParameterMap`, the
    one link between the fitted vector and physical values
``settings``
    the options of a fit, validated into a frozen :class:`~.settings.FitSettings`
``start``, ``initial``
    start values from a period search or an earlier fit; the fitted vector and bounds
``problem``
    the residuals: model times a per-segment baseline solved by variable projection,
    points far from the eclipses binned
``driver``
    least squares with restarts, outlier rejection, windows, statistics, covariance
``uncertainties``
    plug-ins by ``errors=`` name: covariance, mcmc, permutation
``derived``, ``checks``, ``result``
    derived quantities and uncertainty summaries; validity warnings; :class:`EclipseFit`
``lightcurve``, ``joint``, ``api``
    the light-curve fit step by step; the joint fit with velocities; :func:`fit_eclipses`
"""

from .api import fit_eclipses
from .joint import VELOCITY_PARAMETERS, fit_joint
from .parameters import DERIVED, PARAMETERS, eclipse_parameters
from .result import EclipseFit
from .start import estimate_start

__all__ = ["fit_eclipses", "EclipseFit", "estimate_start", "eclipse_parameters", "PARAMETERS", "DERIVED",
           "fit_joint", "VELOCITY_PARAMETERS"]
