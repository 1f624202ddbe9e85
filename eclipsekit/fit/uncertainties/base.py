"""The interface of the uncertainty plug-ins: one context in, draws and diagnostics out.

A method is an object with a ``name``, the way its samples are summarised
(``point_estimate``, ``interval``) and an ``estimate(context)`` method.  Everything a
method may need arrives in one :class:`UncertaintyContext`, so a new method (or a new
need of an old one) does not change any signature; it returns an
:class:`UncertaintyEstimate` with draws of the fitted vector in the fitted
parameterisation, which the caller maps to physical values through the context's
:class:`~eclipsekit.fit.parameters.ParameterMap`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable, Mapping, Protocol

import numpy as np

from ..parameters import ParameterMap
from ..problem import Problem

__all__ = ["UncertaintyContext", "UncertaintyEstimate", "UncertaintyMethod", "UncertaintyOptions"]


class UncertaintyOptions(Protocol):
    """The options the plug-ins read (a :class:`~eclipsekit.fit.settings.FitSettings` has them all)."""

    n_samples: int
    mcmc_walkers: int
    mcmc_steps: int
    mcmc_burn: int | None
    mcmc_thin: int | None
    mcmc_seconds: float | None
    mcmc_until_converged: bool
    n_shifts: int | None
    progress: bool
    seed: int | None


@dataclass(frozen=True)
class UncertaintyContext:
    """Everything an uncertainty method may use.

    Attributes
    ----------
    problem : Problem
        The residual problem the least squares fitted (windowed points, baseline solved linearly).
    mapping : ParameterMap
        The fitted vector: names, bounds, folding, link to physical values.
    best : dict
        Physical best-fit values of every parameter.
    x_best : ndarray
        The best fit in the fitted parameterisation.
    covariance : ndarray or None
        Covariance of the fitted vector, scaled by ``redchi``.
    redchi : float
        Reduced chi-square of ``problem`` at the best fit.
    rng : numpy.random.Generator
        The fit's random generator (draws must keep their order for reproducibility).
    settings : UncertaintyOptions
        The fit's options (sample counts, MCMC settings, seed, progress).
    model_full, residuals_full : ndarray
        Model times baseline and the residuals at every point of the light curve.
    refit : callable
        ``refit(flux, max_nfev)``: physical values of a least-squares refit of ``problem``
        to other fluxes at its points, from ``best``.
    profile : callable
        ``profile(name, value)``: a least-squares refit with parameter ``name`` held at
        ``value``, as (fitted vector with ``value`` in its place, chi-square rise over the
        best fit), or None when it fails.
    """

    problem: Problem
    mapping: ParameterMap
    best: Mapping[str, float]
    x_best: np.ndarray
    covariance: np.ndarray | None
    redchi: float
    rng: np.random.Generator
    settings: UncertaintyOptions
    model_full: np.ndarray | None = None
    residuals_full: np.ndarray | None = None
    refit: Callable[[np.ndarray, int], Mapping[str, float]] | None = None
    profile: Callable[[str, float], tuple[np.ndarray, float] | None] | None = None


@dataclass
class UncertaintyEstimate:
    """What an uncertainty method returns.

    Attributes
    ----------
    draws : ndarray, shape (n, n_free)
        Draws of the fitted vector (fitted parameterisation, folded).
    sigma : dict or None
        Exact standard deviations of fitted quantities (fitted parameterisation) that
        replace the draws' scatter (e.g. from the covariance matrix itself).
    diagnostics : dict
        Added to the fit's ``diagnostics``.
    warnings : list of str
    lmfit_result : object or None
        Replaces the least-squares result in the fit (e.g. the emcee result).
    """

    draws: np.ndarray
    sigma: dict[str, float] | None = None
    diagnostics: dict[str, Any] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    lmfit_result: Any = None


class UncertaintyMethod(Protocol):
    """An uncertainty plug-in.

    ``point_estimate`` is "best" (report the least-squares values) or "median" (the
    samples' medians); ``interval`` is "std" or "central68" (see
    :func:`~eclipsekit.fit.derived.summarise_samples`).
    """

    name: str
    point_estimate: str
    interval: str

    def estimate(self, context: UncertaintyContext) -> UncertaintyEstimate:
        ...
