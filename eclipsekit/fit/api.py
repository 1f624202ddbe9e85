"""The public eclipse fit: the light curve alone or jointly with radial velocities.

:func:`fit_eclipses` turns a :class:`~eclipsekit.data.LightCurve` and a start (a
:class:`~eclipsekit.period.PeriodSearch`, an earlier :class:`EclipseFit` or explicit
values) into an :class:`EclipseFit`.  This module sits above both fits
(:mod:`~eclipsekit.fit.lightcurve` and :mod:`~eclipsekit.fit.joint`) and only chooses
between them, validates the options and issues the fit's warnings.
"""

from __future__ import annotations

import warnings
from typing import Any, Iterable, Mapping

from ..data import LightCurve
from .._threads import one_blas_thread
from ..errors import EclipsekitWarning, InputError
from .joint import joint_fit
from .lightcurve import fit_light_curve
from .result import EclipseFit
from .settings import make_settings

__all__ = ["fit_eclipses"]


@one_blas_thread
def fit_eclipses(
    lc: LightCurve,
    start: Any = None,
    *,
    period: Any = None,
    t0: Any = None,
    fix: Iterable[str] = (),
    free: Iterable[str] = (),
    errors: str = "auto",
    fixed: Mapping[str, Any] | None = None,
    priors: Mapping[str, Any] | None = None,
    exposure_time: Any = None,
    supersample: int | None = None,
    ld_law: str = "quadratic",
    ld_primary: Iterable[float] | None = None,
    ld_secondary: Iterable[float] | None = None,
    baseline_degree: int = 1,
    baseline: str = "auto",
    harmonics: int | None = None,
    gap: float | None = None,
    clip_sigma: float | None = 5.0,
    window: bool | None = None,
    mcmc_walkers: int = 32,
    mcmc_steps: int = 2000,
    mcmc_burn: int | None = None,
    mcmc_thin: int | None = None,
    n_samples: int = 4000,
    n_shifts: int | None = None,
    progress: bool = True,
    seed: int | None = None,
    velocities: Any = None,
    separate_gamma: bool = False,
    check_limb_darkening: bool = True,
    check_third_light: bool = True,
    mcmc_seconds: float | None = None,
    **values: Any,
) -> EclipseFit:
    """Fit both eclipses of a detached eclipsing binary (optionally jointly with velocities).

    Parameters
    ----------
    lc : LightCurve
        Normalised light curve.
    start : PeriodSearch, EclipseFit, dict, optional
        Where to start: a period search (start values are estimated from its depths,
        durations and secondary phase, see :func:`estimate_start`), an earlier fit, or a
        dict of parameter values (with at least ``period`` and ``t0``, optionally the
        search's depth/duration keys).  None runs :func:`eclipsekit.period.find_period`
        unless ``period`` and ``t0`` are given.
    period, t0 : float or Quantity, optional
        Ephemeris (days), overriding the start's.
    fix, free : list of str
        Parameters to hold fixed (at their start value; see ``fixed`` to give the value)
        / to fit.  Names as in :data:`PARAMETERS` plus the limb-darkening coefficients
        ``ld1_1``, ``ld1_2``, ``ld2_1``, ``ld2_2`` and their fitted combinations
        (``ld1_sum``, ``ld1_diff`` for the quadratic law, ``ld1_h1``, ``ld1_h2`` for
        power-2; :mod:`eclipsekit.limb_darkening`), and the shortcuts ``eccentricity``
        (ecosw and esinw), ``limb_darkening``, ``ld1``, ``ld2``.  Defaults: period, t0,
        radius_sum, radius_ratio, inclination, surface_brightness_ratio and the limb
        darkening of both stars free (the combinations, each with a weak Gaussian prior
        around the typical or given coefficients); ecosw and esinw free when the
        secondary's phase or width says the orbit is eccentric, else fixed at 0;
        third_light fixed at 0 (with a check of what freeing it would change).  Naming a
        star's coefficients in ``free``, ``fix``, ``fixed`` or ``priors`` fits exactly
        those coefficients of that star instead, with no automatic prior.
    errors : {"auto", "covariance", "mcmc", "permutation"}
        Uncertainties from the least-squares covariance matrix scaled by the reduced
        chi-square; from an emcee run; or from residual permutation ("prayer bead":
        cyclic shifts of the residuals, each refitted; Bouma et al. 2009, AJ 137, 4691,
        sect. 4.2; Southworth 2008, MNRAS 386, 1644), which includes correlated noise.
        "auto" (default) uses the covariance when it can be trusted and otherwise an
        MCMC that stops once its chain spans 30 autocorrelation times after burn-in, with
        the time estimate stable to 5% (at most ``mcmc_steps``; a rule of the chain alone,
        so that a seed repeats it exactly); the reasons are
        in ``diagnostics["errors_reasons"]`` (see
        :func:`eclipsekit.fit.uncertainties.trust.covariance_doubts`).
    fixed : dict, optional
        Parameters held fixed at the values given, e.g. ``{"inclination": 89.2}``.
    priors : dict, optional
        Gaussian priors ``{name: (value, sigma)}`` on any fitted parameter or on the
        light ratio ``light_ratio`` (L2/L1 = J k^2, e.g. from spectroscopy): extra
        residuals in the least squares, log-prior terms in the MCMC.
    exposure_time : float or Quantity, optional
        Integration time (days); default ``lc.meta["exposure_time"]`` or 0.
    supersample : int, optional
        Instants per exposure for the model (Gauss-Legendre nodes); default one per 2 minutes of
        exposure, at most 7, or at most 15 when an exposure exceeds a third of an eclipse.
    ld_law : {"quadratic", "linear", "power-2", "uniform"}
    ld_primary, ld_secondary : sequence of float, optional
        Limb-darkening coefficients (fixed unless freed); default typical values
        (quadratic 0.4, 0.25; linear 0.6; power-2 0.6, 0.6).
    baseline_degree : int
        Degree of the polynomial multiplying the model in each segment (0 = only a
        normalisation per segment).
    baseline : {"auto", "polynomial", "fourier", "gp"}
        What multiplies the eclipse model besides that polynomial: nothing; a Fourier
        series in orbital phase (reflection/ellipsoidal-like variation, stable spots;
        solved linearly like the polynomial); or in addition a Gaussian process
        (celerite2 SHO kernel and a jitter, fitted by maximum marginal likelihood) for
        evolving spots, granulation and oscillations.  "auto" (default) decides from
        the out-of-eclipse residuals of a polynomial fit (see
        :func:`eclipsekit.fit.baseline.choose_baseline`); the decision is in ``notes``.
    harmonics : int, optional
        Orbital harmonics of the Fourier series (0..4); default chosen by the BIC.
    gap : float, optional
        Gap (days) that splits segments; default max(0.5 d, 10 x cadence).
    clip_sigma : float or None
        Reject points whose residual exceeds this many robust standard deviations
        (iterated; recorded in ``lc.rejected["outlier"]``).  None disables.
    window : bool, optional
        Fit the data near the eclipses point by point and the rest binned by 10
        (equivalent, faster); default: when the windows hold under 60% of the data.
    mcmc_walkers, mcmc_steps, mcmc_burn, mcmc_thin :
        emcee settings.  The walkers start as draws from the covariance (scaled by the
        reduced chi-square); burn-in defaults to a tenth of the steps or 3 autocorrelation
        times, whichever is longer (at most half the chain); thinning to half the longest
        autocorrelation time.  ``diagnostics["mcmc"]`` reports the autocorrelation times,
        the effective number of independent samples and the Monte-Carlo error of the
        uncertainties (a warning when it exceeds 5%).
    n_samples : int
        Number of samples kept (draws from the covariance; at most this many from the chain).
    n_shifts : int, optional
        Permutation fits (default 100, at most the number of points).
    check_limb_darkening : bool
        When the first limb-darkening coefficient of both stars is held fixed, refit once
        with them free and warn if r1 + r2, k, i or J then move by more than 3 sigma:
        fixed limb darkening that does not match the data biases the geometry by more
        than its formal errors (deep, well-sampled eclipses constrain it).
    check_third_light : bool
        When third light is held at 0 by default, refit once with it free: adopt that fit
        when the data clearly need third light, and otherwise say how much third light
        the data allow and how much it would move the radii (``notes``).
    mcmc_seconds : float, optional
        Time budget of the MCMC (default none: it stops early, with a warning, when it runs
        out; the steps run then depend on the machine's speed, so results no longer repeat).
    progress : bool
        Show progress bars (MCMC, permutation).
    seed : int, optional
        Random seed for the samples and the MCMC.
    velocities : VelocityCurve, optional
        Radial velocities of the same binary: fit them jointly with the light curve
        (shared period, t0, e cos w, e sin w; see :func:`eclipsekit.fit.fit_joint`).
        The result then also holds ``k_primary``, ``k_secondary``, ``gamma`` and an
        ``orbit`` (:class:`~eclipsekit.spectroscopy.OrbitFit`).  Covariance errors only.
    separate_gamma : bool
        Joint fit only: a separate systemic-velocity offset for star 2.
    **values : float
        Parameter values by name (e.g. ``third_light=0.1``); a value given this way is
        held fixed unless also listed in ``free``.

    Returns
    -------
    EclipseFit

    Raises
    ------
    InputError
        Bad arguments (unknown parameter names, values outside their bounds, emcee
        missing for ``errors="mcmc"``).
    FitError
        No fit could be completed (no usable start, too few points, the model failed
        everywhere).

    Notes
    -----
    Uncertainty of the baseline: its coefficients are solved linearly at every model
    evaluation, so the eclipse-parameter covariance (from the Jacobian of the projected
    residuals) and the MCMC posterior (which includes the determinant term of the
    Gaussian marginal) are both marginalised over them (Golub & Pereyra 1973).  For
    ``errors="mcmc"`` the flux errors are first scaled by sqrt(reduced chi-square) of
    the least-squares fit, as the covariance method does.
    """
    if velocities is not None:
        # the joint fit starts from a light-curve-only fit with these options
        fit = joint_fit(lc, velocities, start, period=period, t0=t0, fix=fix, free=free, errors=errors,
                        exposure_time=exposure_time, supersample=supersample, ld_law=ld_law,
                        ld_primary=ld_primary, ld_secondary=ld_secondary, baseline_degree=baseline_degree,
                        baseline=baseline, harmonics=harmonics, gap=gap, clip_sigma=clip_sigma, window=window,
                        n_samples=n_samples, progress=progress,
                        seed=seed, separate_gamma=separate_gamma, fixed=fixed, priors=priors, **values)
    else:
        if separate_gamma:
            raise InputError("`separate_gamma` needs `velocities` (a joint fit)")
        settings = make_settings(
            lc, period=period, t0=t0, fix=fix, free=free, errors=errors, exposure_time=exposure_time,
            supersample=supersample, ld_law=ld_law, ld_primary=ld_primary, ld_secondary=ld_secondary,
            baseline_degree=baseline_degree, baseline=baseline, harmonics=harmonics, gap=gap,
            clip_sigma=clip_sigma, window=window, mcmc_walkers=mcmc_walkers, mcmc_steps=mcmc_steps, mcmc_burn=mcmc_burn, mcmc_thin=mcmc_thin,
            n_samples=n_samples, n_shifts=n_shifts, progress=progress, seed=seed,
            check_limb_darkening=check_limb_darkening, check_third_light=check_third_light, fixed=fixed,
            priors=priors, mcmc_seconds=mcmc_seconds, **values)
        fit = fit_light_curve(lc, start, settings).fit
    for msg in fit.warnings:
        warnings.warn(msg, EclipsekitWarning, stacklevel=2)
    return fit
