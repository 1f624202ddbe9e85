"""Joint fit of a light curve and radial velocities sharing the orbit.

:func:`fit_joint` (also reached as ``fit_eclipses(lc, start, velocities=rv)``) fits the
eclipses and the velocities of both stars together, with one period, one time of
primary eclipse and one e cos w, e sin w.  The light curve measures e cos w precisely
(the secondary eclipse's timing) but e sin w only through the ratio of the eclipse
durations; the velocity curve's shape measures e sin w directly, so fitting both
together tightens e sin w, and through it e and the masses.

Why the code looks the way it does
----------------------------------
* The light-curve part is exactly the residual vector of :func:`~eclipsekit.fit.
  fit_eclipses` (same epoch/period offsets, same variable-projection baseline, same
  windowed and binned points), taken from a light-curve-only fit that also gives the
  start values, the outlier rejection and the windows.  The velocity residuals
  ``(v - model) / sigma`` of each star are appended to it.
* Each data set keeps its own weight: the flux errors are scaled by the square root of
  the light-curve fit's reduced chi-square (as that fit's covariance is), and each
  star's velocity errors by sqrt(chi2 / dof) when that exceeds 1 (as
  :func:`~eclipsekit.spectroscopy.fit_velocities` does).  The covariance is then
  (J^T J)^-1 without a global rescaling, so a noisy velocity set cannot inflate the
  light-curve errors or the other way round.
"""

from __future__ import annotations

import dataclasses
import math
import time as _time
import warnings
from typing import Any, Iterable, Mapping

import lmfit
import numpy as np

from .. import orbit as _orbit
from ..data import LightCurve
from ..dimensions import mass_function as _mass_function
from ..dimensions import minimum_masses as _minimum_masses
from ..dimensions import projected_semi_major_axis as _asini
from ..errors import EclipsekitWarning, FitError, InputError
from ..spectroscopy import _UNITS as _ORBIT_UNITS
from ..spectroscopy import OrbitFit, fit_velocities
from .derived import add_derived_samples, add_derived_values, summarise_samples
from .driver import central_jacobian, chi_square, run_least_squares
from .lightcurve import LightCurveSolution, fit_light_curve
from .parameters import DERIVED, ParameterMap, bounds, expand_names, unit
from .problem import Problem
from .result import EclipseFit
from .settings import make_settings
from .uncertainties import METHODS, UncertaintyContext, UncertaintyEstimate

__all__ = ["fit_joint", "joint_fit", "VELOCITY_PARAMETERS"]

#: velocity parameters added to the light-curve parameters -> unit
VELOCITY_PARAMETERS: dict[str, str] = {"k_primary": "km / s", "k_secondary": "km / s", "gamma": "km / s",
                                       "gamma_offset": "km / s"}


class _JointProblem:
    """Light-curve residuals (a :class:`~eclipsekit.fit.problem.Problem`) followed by the velocity residuals."""

    def __init__(self, lc_problem: Problem, mapping: ParameterMap, rv: Any, scale: dict[str, float],
                 double: bool):
        self.lc = lc_problem
        self.mapping = mapping
        self.time = np.asarray(rv.time, float)
        self.v1, self.e1 = np.asarray(rv.rv1, float), np.asarray(rv.rv1_err, float)
        self.m1 = np.isfinite(self.v1)
        self.double = double
        if double:
            self.v2, self.e2 = np.asarray(rv.rv2, float), np.asarray(rv.rv2_err, float)
            self.m2 = np.isfinite(self.v2)
        self.scale = dict(scale)
        self.n_rv = int(self.m1.sum() + (self.m2.sum() if double else 0))

    def velocities(self, v: Mapping[str, float], time: np.ndarray | None = None):
        """Model velocities (km/s) of both stars for physical values ``v``."""
        inc = v["inclination"] if v["inclination"] <= 90 else 180.0 - v["inclination"]
        rv1, rv2 = _orbit.radial_velocities(self.time if time is None else time, period=v["period"], t0=v["t0"],
                                            k_primary=v["k_primary"],
                                            k_secondary=v["k_secondary"] if self.double else None,
                                            gamma=v["gamma"], ecosw=v["ecosw"], esinw=v["esinw"],
                                            inclination=min(inc, 90.0))
        if rv2 is not None:
            rv2 = rv2 + v.get("gamma_offset", 0.0)
        return np.asarray(rv1, float), rv2

    def rv_residuals(self, v: Mapping[str, float]) -> list[np.ndarray]:
        mod1, mod2 = self.velocities(v)
        out = [(self.v1[self.m1] - mod1[self.m1]) / (self.e1[self.m1] * self.scale["primary"])]
        if self.double:
            out.append((self.v2[self.m2] - mod2[self.m2]) / (self.e2[self.m2] * self.scale["secondary"]))
        return out

    def residual_from(self, internal: Mapping[str, float]) -> np.ndarray:
        v = self.mapping.physical(internal)
        return np.concatenate([self.lc.evaluate(v)[2], *self.rv_residuals(v), self.mapping.prior_residuals(v)])

    def residual(self, params: lmfit.Parameters) -> np.ndarray:
        try:
            r = self.residual_from(params.valuesdict())
        except (ValueError, ArithmeticError):  # invalid geometry (e.g. stars touching): push back
            return np.full(self.lc.time.size + self.n_rv, 1e3)
        if not np.all(np.isfinite(r)):
            return np.full(self.lc.time.size + self.n_rv, 1e3)
        return r


def _orbit_samples(s: Mapping[str, np.ndarray], double: bool) -> dict[str, np.ndarray]:
    """Orbit-derived quantities per sample row (e, omega, mass function, a sin i, M sin^3 i, q)."""
    ecc = np.hypot(s["ecosw"], s["esinw"])
    ecc_c = np.clip(ecc, 0.0, 0.999)
    out = {"eccentricity": ecc,
           "omega": np.where(ecc > 0, np.degrees(np.arctan2(s["esinw"], s["ecosw"])) % 360.0, 90.0),
           "mass_function": np.asarray(_mass_function(s["period"], s["k_primary"], ecc_c), float),
           "a1_sin_i": np.asarray(_asini(s["period"], s["k_primary"], 0.0, ecc_c), float)}
    if double:
        out["mass_ratio"] = s["k_primary"] / s["k_secondary"]
        m1s, m2s = _minimum_masses(s["period"], s["k_primary"], s["k_secondary"], ecc_c)
        out["mass_primary_sin3i"] = np.asarray(m1s, float)
        out["mass_secondary_sin3i"] = np.asarray(m2s, float)
        out["a_sin_i"] = np.asarray(_asini(s["period"], s["k_primary"], s["k_secondary"], ecc_c), float)
    return out


def fit_joint(
    lc: LightCurve,
    velocities: Any,
    start: Any = None,
    *,
    fix: Iterable[str] = (),
    free: Iterable[str] = (),
    errors: str = "covariance",
    separate_gamma: bool = False,
    n_samples: int = 4000,
    progress: bool = True,
    seed: int | None = None,
    **kwargs: Any,
) -> EclipseFit:
    """Fit a light curve and radial velocities together, sharing period, t0, e cos w and e sin w.

    Parameters
    ----------
    lc : LightCurve
        Normalised light curve.
    velocities : VelocityCurve
        Radial velocities (km/s) of the primary and, double-lined, the secondary.
    start : PeriodSearch, EclipseFit, dict, optional
        Start of the light-curve fit, as for :func:`~eclipsekit.fit.fit_eclipses`.
    fix, free : list of str
        As for :func:`~eclipsekit.fit.fit_eclipses`.  ``ecosw`` and ``esinw`` are
        free in the joint fit unless listed in ``fix`` (the point of fitting jointly).
    errors : {"covariance"}
        Only covariance uncertainties are available for the joint fit.
    separate_gamma : bool
        Fit a separate systemic-velocity offset ``gamma_offset`` for star 2.
    n_samples : int
        Number of samples drawn from the joint covariance.
    progress : bool
        Show progress bars (period search only, when no start is given).
    seed : int, optional
        Random seed of the samples.
    **kwargs
        Further arguments of :func:`~eclipsekit.fit.fit_eclipses` (``period``,
        ``t0``, ``ld_law``, ``ld_primary``, ``exposure_time``, ``window``, fixed
        parameter values, ...).

    Returns
    -------
    EclipseFit
        The light-curve parameters at the joint solution plus ``k_primary``,
        ``k_secondary``, ``gamma`` (``gamma_offset``) in ``values``, ``uncertainties``
        and ``samples``; ``orbit`` is an :class:`~eclipsekit.spectroscopy.OrbitFit` at
        the same values whose samples are the same rows (residuals, rms and model for
        the plots and result files).  ``redchi``, ``rms``, ``bic``, ``residuals`` and
        ``baseline`` describe the light curve; ``orbit.redchi`` the velocities;
        ``diagnostics["joint"]`` holds the light-curve-only uncertainties, the joint
        chi-square and the error scales.

    Raises
    ------
    InputError
        ``velocities`` is not a VelocityCurve or has no primary velocities, ``errors``
        other than "covariance", bad light-curve arguments.
    FitError
        The light-curve fit or the joint least squares failed.

    Notes
    -----
    The model is the eclipse model of :func:`~eclipsekit.eclipse.model_flux` times the
    per-segment baseline (solved linearly at each step; Golub & Pereyra 1973, SIAM J.
    Numer. Anal. 10, 413), and v1 = gamma + K1 [cos(nu + w) + e cos w], v2 = gamma +
    gamma_offset - K2 [cos(nu + w) + e cos w] (Hilditch 2001, An Introduction to Close
    Binary Stars, eq. 2.45), both on one Keplerian orbit with the primary eclipse at
    true anomaly 90 deg - w.  Start values: :func:`~eclipsekit.fit.fit_eclipses`,
    then :func:`~eclipsekit.spectroscopy.fit_velocities` on its ephemeris.  The
    residuals of both data sets form one least-squares problem (each set weighted by its
    own error scale, see the module notes); the covariance is the inverse of J^T J from
    a central-difference Jacobian at steps of 0.1 sigma, and the samples are draws from
    it, so the velocity and light-curve parameters keep their correlations (e.g. K
    with e sin w, e sin w with the radii).
    """
    fit = joint_fit(lc, velocities, start, fix=fix, free=free, errors=errors, separate_gamma=separate_gamma,
                    n_samples=n_samples, progress=progress, seed=seed, **kwargs)
    for msg in fit.warnings:
        warnings.warn(msg, EclipsekitWarning, stacklevel=2)
    return fit


def joint_fit(lc: LightCurve, velocities: Any, start: Any = None, *, fix: Iterable[str] = (),
              free: Iterable[str] = (), errors: str = "auto", separate_gamma: bool = False,
              n_samples: int = 4000, progress: bool = True, seed: int | None = None, **kwargs: Any) -> EclipseFit:
    """:func:`fit_joint` without issuing the warnings (they are in the result's ``warnings``)."""
    t_start = _time.perf_counter()
    double = _check_velocities(velocities, errors, n_samples, separate_gamma)
    rng = np.random.default_rng(seed)
    notes: list[str] = []
    # -- start: light curve alone, then the velocities on its ephemeris -------------------
    with warnings.catch_warnings():
        # its warnings describe the light curve and the model's validity: re-issued with the joint fit's
        warnings.simplefilter("ignore", EclipsekitWarning)
        # the light curve alone only starts the joint fit: its covariance is all it needs (no MCMC)
        settings = make_settings(lc, fix=fix, free=free, n_samples=min(int(n_samples), 200), progress=progress,
                                 seed=seed, errors="covariance", **kwargs)
        lc_sol = fit_light_curve(lc, start, settings)
    lc_fit = lc_sol.fit
    with warnings.catch_warnings():
        # its notes (e.g. e sin w moved away from the light curve's value) concern the start only
        warnings.simplefilter("ignore", EclipsekitWarning)
        orbit0 = fit_velocities(velocities, lc_fit, separate_gamma=separate_gamma, fit_eccentricity=True,
                                n_samples=100, seed=seed)
    n_vel = 2 + int(double) + int(separate_gamma)
    n_rv_total = int(np.isfinite(np.asarray(velocities.rv1, float)).sum()) + _n_secondary(velocities)
    if n_rv_total <= n_vel + 1:
        raise InputError(f"{n_rv_total} velocities cannot constrain {n_vel} velocity parameters and e sin w")
    jp, values0 = _joint_problem(lc_sol, orbit0, velocities, expand_names(fix, lc_fit.ld_law, "fix"), double,
                                 separate_gamma)
    res, vbest = _solve(jp, values0, n_vel, notes)
    cov, xbest = _covariance(jp, res, vbest)
    ctx = UncertaintyContext(problem=jp, mapping=jp.mapping, best=vbest, x_best=xbest, covariance=cov, redchi=1.0,
                             rng=rng, settings=dataclasses.replace(settings, n_samples=n_samples))
    estimate = METHODS["covariance"].estimate(ctx)  # draws from the joint covariance
    ordered, unc, samples = _values_and_samples(lc_sol, jp, vbest, estimate, rng)
    stats = _light_curve_statistics(lc_sol, vbest, jp)
    orbit_fit = _orbit_result(velocities, jp, vbest, samples, unc, jp.mapping.free, double, separate_gamma, res,
                              notes)
    success, message, joint = _verdict(lc_sol, jp, res, orbit0, notes)
    diag = dict(lc_fit.diagnostics)
    diag.update(seconds=_time.perf_counter() - t_start, joint={**joint, "velocity_error_scale": dict(jp.scale)})
    return dataclasses.replace(
        lc_fit, values=ordered, uncertainties=unc, units={n: VELOCITY_PARAMETERS[n] if n in VELOCITY_PARAMETERS else unit(n) for n in ordered},
        samples=samples, **stats, n_free=len(jp.mapping.free), free=list(jp.mapping.free), lmfit_result=res,
        warnings=list(lc_fit.warnings) + notes, success=success, message=message, diagnostics=diag,
        covariance=cov, orbit=orbit_fit)


def _n_secondary(rv: Any) -> int:
    v1 = np.asarray(rv.rv1, float)
    v2 = np.asarray(rv.rv2, float) if rv.rv2 is not None else np.full(v1.size, np.nan)
    return int(np.isfinite(v2).sum())


def _check_velocities(rv: Any, errors: str, n_samples: int, separate_gamma: bool) -> bool:
    """Validate the joint fit's own arguments; True when the velocities are double-lined."""
    if not all(hasattr(rv, a) for a in ("time", "rv1", "rv1_err", "rv2", "rv2_err")):
        raise InputError("`velocities` must be a VelocityCurve (see eclipsekit.read_velocities)")
    if errors not in ("auto", "covariance"):
        raise InputError(f"the joint fit (`velocities=`) supports errors='covariance' only, got {errors!r}")
    if int(n_samples) != n_samples or n_samples < 1:
        raise InputError(f"`n_samples` must be a positive integer, got {n_samples!r}")
    if int(np.isfinite(np.asarray(rv.rv1, float)).sum()) == 0:
        raise InputError("`velocities` has no primary velocities (rv1)")
    double = _n_secondary(rv) > 0
    if separate_gamma and not double:
        raise InputError("`separate_gamma` needs double-lined velocities (rv2)")
    return double


def _joint_problem(lc_sol: LightCurveSolution, orbit0: OrbitFit, rv: Any, fix_set: set[str], double: bool,
                   separate_gamma: bool) -> tuple[_JointProblem, dict[str, float]]:
    """The joint problem (the light curve's free parameters, e cos w, e sin w, the velocity ones) and its start."""
    lc_fit, lc_map = lc_sol.fit, lc_sol.initial.mapping
    values0 = dict(lc_fit.values)
    shared = [n for n in ("ecosw", "esinw") if n not in fix_set]
    lc_free = [n for n in lc_fit.free] + [n for n in shared if n not in lc_fit.free]
    vel_names = ["k_primary"] + (["k_secondary"] if double else []) + ["gamma"] \
        + (["gamma_offset"] if separate_gamma else [])
    for n in vel_names:
        values0[n] = float(orbit0.values[n])
    if "ecosw" not in lc_fit.free and "ecosw" in shared:
        # the light curve held e fixed (circular-looking): start e sin w from the velocities
        values0["esinw"] = float(orbit0.values["esinw"])
    ib = lc_sol.initial.internal_bounds

    def bounds_of(n: str) -> tuple[float, float]:
        ni = {"t0": "t0_offset", "period": "period_offset"}.get(n, n)
        if ni in ib:
            return ib[ni]
        if n in VELOCITY_PARAMETERS:
            return (0.0, np.inf) if n.startswith("k_") else (-np.inf, np.inf)
        lo, hi = bounds(n, lc_fit.ld_law)
        return (-np.inf if lo is None else lo), (np.inf if hi is None else hi)

    free_names = lc_free + vel_names
    mapping = ParameterMap(free=free_names, fixed=lc_map.fixed, t_ref=lc_map.t_ref, p_ref=lc_map.p_ref,
                           n_cycles=lc_map.n_cycles, limits=[bounds_of(n) for n in free_names],
                           ld_law=lc_map.ld_law, priors=lc_map.priors)
    pr_lc = lc_sol.least_squares.problem
    # the light curve keeps its own weight: flux errors scaled as its covariance was (undone in the statistics)
    pr_lc.set_err_scale(math.sqrt(lc_sol.least_squares.redchi_fit))
    scale = {"primary": orbit0.error_scale_primary, "secondary": orbit0.error_scale_secondary}
    return _JointProblem(pr_lc, mapping, rv, scale, double), values0


def _solve(jp: _JointProblem, values0: dict[str, float], n_vel: int, notes: list[str]
           ) -> tuple[Any, dict[str, float]]:
    """Least squares; then each star's velocity errors scaled to its own scatter (never shrunk) and a refit."""
    try:
        res, vbest = run_least_squares(jp, values0)
        dof_frac = max(jp.n_rv - n_vel - 1, 1) / jp.n_rv
        chis = [float(np.sum(r ** 2)) for r in jp.rv_residuals(vbest)]
        counts = [int(jp.m1.sum()), int(jp.m2.sum()) if jp.double else 0]
        new = dict(jp.scale)
        for star, c, n in zip(("primary", "secondary"), chis, counts):
            new[star] = float(jp.scale[star] * math.sqrt(max(1.0, c / (n * dof_frac))))
        if any(new[s] > 1.001 * jp.scale[s] for s in new):
            jp.scale = new
            res, vbest = run_least_squares(jp, vbest)
    except (ValueError, ArithmeticError, np.linalg.LinAlgError) as exc:
        raise FitError(f"the joint light-curve and velocity fit failed: {exc}") from exc
    for star in ("primary", "secondary"):
        if jp.scale[star] > 1.5:
            notes.append(f"the {star}'s velocity scatter is {jp.scale[star]:.2f}x its quoted errors; "
                         f"its errors were scaled")
    return res, vbest


def _covariance(jp: _JointProblem, res: Any, vbest: Mapping[str, float]) -> tuple[np.ndarray, np.ndarray]:
    """(J^T J)^-1 from a central-difference Jacobian at steps of 0.1 sigma, and the best-fit vector."""
    pm = jp.mapping
    xbest = pm.vector(vbest)
    cov = None
    jac = getattr(res, "jac", None)
    if jac is not None:
        try:
            cov = np.linalg.inv(jac.T @ jac)
            jc = central_jacobian(jp.residual_from, pm.internal, xbest, 0.1 * np.sqrt(np.abs(np.diag(cov))),
                                  pm.limits)
            if jc is not None:
                c2 = np.linalg.inv(jc.T @ jc)
                if np.all(np.isfinite(c2)) and np.all(np.diag(c2) > 0):
                    cov = c2
            if not np.all(np.isfinite(cov)) or np.any(np.diag(cov) <= 0):
                raise np.linalg.LinAlgError
        except np.linalg.LinAlgError:
            cov = None
    if cov is None:
        raise FitError("the covariance of the joint fit could not be estimated (singular problem); "
                       "fix some parameters")
    return cov, xbest


def _values_and_samples(lc_sol: LightCurveSolution, jp: _JointProblem, vbest: Mapping[str, float],
                        estimate: UncertaintyEstimate, rng: np.random.Generator):
    """Values, uncertainties and samples of the light-curve, derived and velocity quantities."""
    lc_fit, pm = lc_sol.fit, jp.mapping
    lc_names = [n for n in lc_fit.values if n not in DERIVED]
    vel_names = [n for n in pm.free if n in VELOCITY_PARAMETERS]
    lc_free = [n for n in pm.free if n not in VELOCITY_PARAMETERS]
    par_names = lc_names + vel_names
    samples = pm.samples(estimate.draws, vbest, par_names)
    add_derived_samples(samples, lc_names, lc_free, lc_fit.ld_law, rng)
    values = {n: float(vbest[n]) for n in par_names}
    add_derived_values(values, lc_names, lc_fit.ld_law)
    unc = summarise_samples(samples, par_names, pm.free)
    for n, s in estimate.sigma.items():
        unc[n] = pm.sigma(n, s)  # exact from the matrix (samples are truncated at bounds)
    ordered = {n: values[n] for n in lc_names + list(DERIVED) + vel_names}
    return ordered, unc, samples


def _light_curve_statistics(lc_sol: LightCurveSolution, vbest: Mapping[str, float], jp: _JointProblem
                            ) -> dict[str, Any]:
    """Baseline, residuals, reduced chi-square, rms and BIC over the whole light curve at the joint values."""
    jp.lc.set_err_scale(1.0)
    full = lc_sol.least_squares.full
    m_full, base_full, z_full, _ = full.evaluate(vbest)
    n_full = len(lc_sol.fit.lc)
    n_lc_free = len([n for n in jp.mapping.free if n not in VELOCITY_PARAMETERS])
    chi2_full = float(z_full @ z_full)
    redchi = chi2_full / max(1, n_full - n_lc_free - full.n_linear)
    resid = lc_sol.fit.lc.flux - m_full * base_full
    return dict(baseline=base_full, residuals=resid, redchi=float(redchi), rms=float(np.sqrt(np.mean(resid ** 2))),
                bic=float(chi2_full + (n_lc_free + full.n_linear) * math.log(n_full)))


def _verdict(lc_sol: LightCurveSolution, jp: _JointProblem, res: Any, orbit0: OrbitFit, notes: list[str]
             ) -> tuple[bool, str, dict[str, Any]]:
    """Success, message and the ``diagnostics["joint"]`` entries; notes on disagreements are appended."""
    lc_fit = lc_sol.fit
    chi2_joint = chi_square(res)
    n_dof_joint = max(1, jp.lc.time.size + jp.n_rv - len(jp.mapping.free) - jp.lc.n_linear)
    redchi_joint = chi2_joint / n_dof_joint
    success = bool(res.success) and redchi_joint < 2.0
    message = str(res.message) if success else (
        f"poor joint fit (reduced chi-square {redchi_joint:.2f} with each data set's errors scaled to its own "
        f"scatter): the light curve and the velocities disagree on the shared orbit" if res.success
        else str(res.message))
    for key in ("ecosw", "esinw"):
        a, ea = lc_fit.values[key], lc_fit.uncertainties.get(key)
        b, eb = orbit0.values[key], orbit0.uncertainties.get(key)
        if ea and eb and abs(a - b) > 4 * math.hypot(ea, eb):
            notes.append(f"{key} from the light curve alone ({a:.4f} ± {ea:.4f}) and from the velocities alone "
                         f"({b:.4f} ± {eb:.4f}) differ by more than 4 sigma; check the joint fit")
    if not success:
        notes.append(f"joint fit did not converge cleanly: {message}")
    joint = {"light_curve_only": {n: lc_fit.uncertainties.get(n) for n in ("period", "t0", "ecosw", "esinw",
                                                                          "radius_sum", "radius_ratio",
                                                                          "inclination")},
             "light_curve_only_values": {n: lc_fit.values[n] for n in ("ecosw", "esinw")},
             "chi2": chi2_joint, "redchi": redchi_joint, "n_velocities": jp.n_rv,
             "flux_error_scale": math.sqrt(lc_sol.least_squares.redchi_fit)}
    return success, message, joint


def _orbit_result(rv, jp: _JointProblem, v: Mapping[str, float], samples: Mapping[str, np.ndarray],
                  unc: Mapping[str, float | None], free_names: list[str], double: bool, separate_gamma: bool,
                  res: Any, notes: list[str]) -> OrbitFit:
    """An OrbitFit at the joint values; its samples are the joint fit's rows (same arrays)."""
    n = next(iter(samples.values())).size
    s = {k: samples[k] for k in ("period", "t0", "ecosw", "esinw", "k_primary", "gamma")}
    s["k_secondary"] = samples["k_secondary"] if double else np.full(n, np.nan)
    s["gamma_offset"] = samples["gamma_offset"] if separate_gamma else np.zeros(n)
    s.update(_orbit_samples(s, double))
    s["jitter_primary"] = s["jitter_secondary"] = np.zeros(n)
    best = {k: np.atleast_1d(float(v[k])) for k in ("period", "ecosw", "esinw", "k_primary")}
    best["k_secondary"] = np.atleast_1d(float(v["k_secondary"]) if double else np.nan)
    derived_best = {k: float(a[0]) for k, a in _orbit_samples(best, double).items()}
    values = {"k_primary": v["k_primary"], "k_secondary": v["k_secondary"] if double else np.nan,
              "gamma": v["gamma"], "gamma_offset": v.get("gamma_offset", 0.0), "ecosw": v["ecosw"],
              "esinw": v["esinw"], **derived_best, "jitter_primary": 0.0, "jitter_secondary": 0.0,
              "period": v["period"], "t0": v["t0"]}
    if not double:
        values["mass_ratio"] = np.nan
    values = {k: float(x) for k, x in values.items()}
    # omega unwrapped around the best value (as fit_velocities reports it), so its spread is meaningful
    s["omega"] = values["omega"] + (s["omega"] - values["omega"] + 180.0) % 360.0 - 180.0
    uncert: dict[str, float | None] = {}
    for k in values:
        if k in unc and k in free_names:
            uncert[k] = unc[k]
        elif k in ("eccentricity", "omega", "mass_function", "a1_sin_i", "mass_ratio", "mass_primary_sin3i",
                   "mass_secondary_sin3i", "a_sin_i") and np.isfinite(values[k]) and np.ptp(s[k]) > 0:
            uncert[k] = float(np.std(s[k]))
        else:
            uncert[k] = None
    mod1, mod2 = jp.velocities(v)
    res1 = np.where(jp.m1, jp.v1 - mod1, np.nan)
    res2 = np.where(jp.m2, jp.v2 - mod2, np.nan) if double else np.full(jp.time.size, np.nan)
    rms1 = float(np.sqrt(np.mean(res1[jp.m1] ** 2)))
    rms2 = float(np.sqrt(np.mean(res2[jp.m2] ** 2))) if double else float("nan")
    chisqr = float(np.sum((res1[jp.m1] / jp.e1[jp.m1]) ** 2))
    if double:
        chisqr += float(np.sum((res2[jp.m2] / jp.e2[jp.m2]) ** 2))
    n_vel = 2 + int(double) + int(separate_gamma)
    dof = jp.n_rv - n_vel - 1  # the velocity parameters and, mostly from the velocities, e sin w
    return OrbitFit(values=values, uncertainties=uncert, units={k: _ORBIT_UNITS[k] for k in values},
                    samples={k: s[k] for k in values if k in s}, free=[n for n in free_names
                                                                       if n in _ORBIT_UNITS],
                    rv=rv, residuals_primary=res1, residuals_secondary=res2, rms_primary=rms1,
                    rms_secondary=rms2, error_scale_primary=jp.scale["primary"],
                    error_scale_secondary=jp.scale["secondary"], chisqr=chisqr,
                    redchi=chisqr / dof if dof > 0 else float("nan"), n_free=len(free_names), n_data=jp.n_rv,
                    double_lined=double, jitter=False, separate_gamma=separate_gamma, success=bool(res.success),
                    message=f"joint fit with the light curve: {res.message}",
                    warnings=[m for m in notes if "velocity" in m], lmfit_result=res,
                    inclination=float(v["inclination"]))
