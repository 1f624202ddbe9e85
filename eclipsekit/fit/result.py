"""The result of an eclipse fit: :class:`EclipseFit` and its printed report."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import lmfit
import numpy as np
from astropy import units as u

from ..data import LightCurve
from .parameters import DERIVED, PARAMETERS, bounds

__all__ = ["EclipseFit"]


@dataclass(eq=False)
class EclipseFit:
    """Outcome of :func:`fit_eclipses`.

    Attributes
    ----------
    values, uncertainties, units : dict
        Best-fit (``errors="mcmc"``: posterior median) value, one-sigma uncertainty
        (None for fixed parameters) and unit of every parameter and derived quantity:
        period, t0 (days), radius_sum, radius_ratio, inclination (deg),
        surface_brightness_ratio, ecosw, esinw, third_light, ld1_1 ... (limb darkening
        coefficient j of star i), frac_radius_primary, frac_radius_secondary,
        eccentricity, omega (deg), light_ratio (L2/L1), depth_primary, depth_secondary.
    samples : dict of str -> ndarray
        Draws of every parameter and derived quantity, all the same length (from the
        covariance matrix, the MCMC chain or the permutation fits), so later steps can
        propagate uncertainties with their correlations.
    lc : LightCurve
        The light curve fitted, with outliers moved to ``lc.rejected["outlier"]``.
    baseline, detrended_flux, residuals : ndarray
        At ``lc.time``: the fitted baseline (normalisation x polynomial per segment),
        ``lc.flux / baseline`` and ``lc.flux - baseline * model``.
    redchi, rms, bic : float
        Reduced chi-square (degrees of freedom: points - eclipse parameters - baseline
        coefficients), rms of the residuals (relative flux) and BIC, over ``lc``.
    n_free, free : int, list of str
        Number and names of the free eclipse parameters (baseline coefficients excluded;
        see ``n_baseline``).
    errors_method : str
    ld_law, ld_primary, ld_secondary : str, tuple, tuple
    exposure_time : float
        Days; ``supersample`` the number of sub-exposures in the model.
    lmfit_result : lmfit.minimizer.MinimizerResult
        Least-squares result (``errors="mcmc"``: the emcee result, with ``chain``).
    warnings : list of str
    success : bool
    message : str
    diagnostics : dict
        Model evaluations, timings, attempts, points fitted; MCMC autocorrelation times,
        acceptance, burn-in and thinning; permutation shifts.
    covariance : ndarray
        Covariance of the free parameters (in the order of ``free``), scaled by the
        reduced chi-square, in the fitted parameterisation: ``t0`` as the offset from
        ``diagnostics["t_ref"]``, ``period`` as ``(P - P_ref) * diagnostics["n_cycles"]``.
    status : str
        "ok" when the fit is acceptable (eclipse residuals consistent with the
        out-of-eclipse scatter, converged, no parameter at a bound) and no warning says
        the answer is biased; "poor_fit" when the model does not describe the eclipses
        (or the fit did not converge); "caution" when the fit is acceptable but a warning
        says the answer may be biased (e.g. stars too large for spherical shapes,
        unmodelled out-of-eclipse variation).  ``status_reasons`` says why.
    notes : list of str
        What the fit decided and the user should know, not warnings: which limb-darkening
        combinations the data constrain, why an MCMC was run, what third light the data allow.
    priors : dict of str -> (float, float)
        Every Gaussian prior used (centre, sigma), the automatic limb-darkening ones included.
    fixed : list of str
        Model parameters held fixed (neither fitted nor computed from fitted combinations).
    intervals : dict of str -> (float, float)
        Central 68.27% interval (lower, upper) of every varying parameter and derived
        quantity, from the samples; asymmetric where the posterior is.
    orbit : OrbitFit or None
        Joint fit only (``velocities=`` given): the spectroscopic orbit at the joint
        values, an :class:`~eclipsekit.spectroscopy.OrbitFit` whose samples are rows of
        this fit's samples (``absolute_dimensions(fit, fit.orbit)`` pairs them row by
        row).  The velocity parameters ``k_primary``, ``k_secondary``, ``gamma`` (and
        ``gamma_offset``) are then also in ``values``, ``uncertainties`` and ``samples``.
    """

    values: dict[str, float]
    uncertainties: dict[str, float | None]
    units: dict[str, str]
    samples: dict[str, np.ndarray]
    lc: LightCurve
    baseline: np.ndarray
    residuals: np.ndarray
    redchi: float
    rms: float
    bic: float
    n_free: int
    free: list[str]
    errors_method: str
    ld_law: str
    ld_primary: tuple[float, ...]
    ld_secondary: tuple[float, ...]
    exposure_time: float
    supersample: int
    lmfit_result: Any
    warnings: list[str]
    success: bool
    message: str
    diagnostics: dict[str, Any] = field(default_factory=dict)
    covariance: np.ndarray | None = None
    n_baseline: int = 0
    segments: list[tuple[float, float]] = field(default_factory=list)
    status: str = "ok"
    status_reasons: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    priors: dict[str, tuple[float, float]] = field(default_factory=dict)
    fixed: list[str] = field(default_factory=list)
    intervals: dict[str, tuple[float, float]] = field(default_factory=dict)
    orbit: Any = None
    _problem: Any = field(default=None, repr=False)

    @property
    def detrended_flux(self) -> np.ndarray:
        return self.lc.flux / self.baseline

    @property
    def params(self) -> lmfit.Parameters:
        """The fitted values as lmfit Parameters (public names, with ``stderr``)."""
        p = lmfit.Parameters()
        for name, val in self.values.items():
            if name in DERIVED:
                continue
            lo, hi = bounds(name, self.ld_law) if (name in PARAMETERS or name.startswith("ld")) else (None, None)
            p.add(name, value=val, vary=name in self.free,
                  min=-np.inf if lo is None else lo, max=np.inf if hi is None else hi)
            p[name].stderr = self.uncertainties.get(name)
        return p

    def model(self, time: Any) -> np.ndarray:
        """Normalised eclipse model (no baseline) at ``time`` (days) for the fitted values."""
        if hasattr(time, "unit"):
            time = time.to_value(u.day)
        return self._problem.model(self.values, np.atleast_1d(np.asarray(time, float)))

    def summary(self) -> str:
        from ..summary import format_value

        lines = [f"Eclipse fit, status {self.status} ({self.errors_method} uncertainties): {len(self.lc)} points, "
                 f"{self.n_free} free eclipse parameters + {self.n_baseline} baseline coefficients "
                 f"in {len(self.segments)} segment(s)",
                 f"reduced chi-square {self.redchi:.3f}, rms {self.rms * 1e6:.0f} ppm, BIC {self.bic:.1f}, "
                 f"{'converged' if self.success else 'NOT CONVERGED'}: {self.message}",
                 f"limb darkening: {self.ld_law}; exposure {self.exposure_time * 86400:.0f} s x {self.supersample}",
                 "",
                 f"{'parameter':<26}{'value ± uncertainty':>32}  {'unit':<4} status"]
        for name, val in self.values.items():
            err = self.uncertainties.get(name)
            status = "free" if name in self.free else ("derived" if name in DERIVED or name not in self.fixed
                                                       else "fixed")
            digits = 11 if name in ("t0", "period") else 6
            lines.append(f"{name:<26}{format_value(val, err, digits=digits):>32}  {self.units.get(name, ''):<4} "
                         f"{status}")
        if self.notes:
            lines.append("")
            lines += [f"note: {n}" for n in self.notes]
        if self.warnings:
            lines.append("")
            lines += [f"warning: {w}" for w in self.warnings]
        return "\n".join(lines)

    def __repr__(self) -> str:
        v = self.values
        return (f"<EclipseFit {self.errors_method}: P={v['period']:.6f} d, r1+r2={v['radius_sum']:.4f}, "
                f"k={v['radius_ratio']:.4f}, i={v['inclination']:.3f} deg, J={v['surface_brightness_ratio']:.4f}, "
                f"redchi={self.redchi:.3f}>")
