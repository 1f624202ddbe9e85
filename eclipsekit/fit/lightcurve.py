"""The light-curve fit, step by step: start, parameters, least squares, uncertainties, derived, checks."""

from __future__ import annotations

import dataclasses
import time as _time
import warnings
from dataclasses import dataclass
from types import SimpleNamespace
from typing import Any

import numpy as np

from ..data import LightCurve
from ..errors import EclipsekitWarning, FitError, InputError
from ..summary import format_value
from .checks import limb_darkening_shift, limb_darkening_warning, validity_warnings
from .derived import add_derived_samples, add_derived_values, summarise_samples
from .driver import LeastSquaresSolution, evaluation_budget, held_least_squares, run_least_squares, solve
from .problem import window_mask
from .initial import InitialParameters, initial_parameters
from .parameters import DERIVED, ld_coefficients, parameter_names, unit
from .result import EclipseFit
from .settings import FitSettings, make_settings, supersample_for_durations
from .start import estimate_start
from .uncertainties.trust import covariance_doubts
from .uncertainties import METHODS, UncertaintyContext, UncertaintyEstimate, UncertaintyMethod

__all__ = ["LightCurveSolution", "fit_light_curve", "start_values", "estimate_uncertainties", "derive",
           "run_checks"]


@dataclass(frozen=True)
class LightCurveSolution:
    """A light-curve fit with the pieces a further fit (e.g. the joint one) builds on.

    Attributes
    ----------
    fit : EclipseFit
        The result (its ``warnings`` not yet issued).
    least_squares : LeastSquaresSolution
        The least-squares solution: problems, best values, covariance.
    initial : InitialParameters
        Start values and the fitted vector.
    settings : FitSettings
    """

    fit: EclipseFit
    least_squares: LeastSquaresSolution
    initial: InitialParameters
    settings: FitSettings


def fit_light_curve(lc: LightCurve, start: Any, settings: FitSettings) -> LightCurveSolution:
    """Fit the eclipses of ``lc`` with validated ``settings``; see :func:`~eclipsekit.fit.fit_eclipses`.

    Issues no warning itself: they are in ``fit.warnings`` for the caller to issue.
    """
    t_start = _time.perf_counter()
    rng = np.random.default_rng(settings.seed)
    initial = initial_parameters(lc, start_values(lc, start, settings), settings)
    with evaluation_budget(len(initial.mapping.free)):
        return _fit(lc, initial, settings, rng, t_start)


def _fit(lc: LightCurve, initial: InitialParameters, settings: FitSettings, rng: np.random.Generator,
         t_start: float) -> LightCurveSolution:
    """:func:`fit_light_curve` from its initial parameters, inside the fit's budget of model evaluations."""
    settings = supersample_for_durations(settings, initial.durations)
    sol = solve(lc, initial, settings)
    sol, settings = resolve_baseline(lc, initial, sol, settings)
    settings = choose_errors(sol, settings)
    with evaluation_budget(None):  # the uncertainties' refits are bounded by their own settings
        estimate, runner, method = estimate_uncertainties(sol, settings, rng)
        sol.diagnostics.update(estimate.diagnostics)
        values, unc, samples = derive(sol, settings, estimate, runner, method, rng)
    warn, status, reasons = run_checks(sol, settings, values, unc, sol.warnings + estimate.warnings)
    fit = _result(sol, initial, settings, values, unc, samples, estimate, warn, _time.perf_counter() - t_start)
    fit = dataclasses.replace(fit, status=status, status_reasons=reasons,
                              notes=baseline_notes(sol, settings) + decision_notes(sol, fit),
                              intervals=central_intervals(fit))
    lc_sol = LightCurveSolution(fit=fit, least_squares=sol, initial=initial, settings=settings)
    if settings.check_third_light and "third_light" not in set(sol.problem.mapping.free) | settings.fix \
            | set(settings.values) and sol.success:
        lc_sol = third_light_check(lc, lc_sol)
    return lc_sol


def start_values(lc: LightCurve, start: Any, settings: FitSettings) -> dict[str, Any]:
    """:func:`estimate_start` of ``start``; without one, of a period search of ``lc``, or with a given
    ephemeris, of the eclipses measured at it (the secondary at any phase and both widths, so that an
    eccentric orbit is recognised: :func:`~eclipsekit.period.measure_eclipses`)."""
    if start is None:
        from ..period import find_period, measure_eclipses  # loaded only when needed (astropy.timeseries)

        if settings.period is None or settings.t0 is None:
            start = find_period(lc, progress=settings.progress)
        else:
            start = measure_eclipses(lc, settings.period, settings.t0)
    return estimate_start(start if start is not None else {}, period=settings.period, t0=settings.t0)


#: fewest out-of-eclipse points for the automatic choice of the baseline
MIN_OUT_OF_ECLIPSE = 50


def resolve_baseline(lc: LightCurve, initial: InitialParameters, sol: LeastSquaresSolution,
                     settings: FitSettings) -> tuple[LeastSquaresSolution, FitSettings]:
    """Resolve ``baseline="auto"`` (or the harmonics of "fourier"/"gp") from the polynomial fit ``sol``.

    The out-of-eclipse residuals decide (:func:`~eclipsekit.fit.baseline.choose_baseline`);
    for anything but the polynomial the fit is redone from the same start with that
    baseline.  The decision goes to ``diagnostics["baseline"]`` (and the notes).
    """
    if settings.baseline == "polynomial" or (settings.baseline != "auto" and settings.harmonics is not None):
        sol.diagnostics.setdefault("baseline", {"kind": settings.baseline, "harmonics": settings.harmonics or 0})
        return sol, settings
    from .baseline import choose_baseline

    d1, d2 = sol.durations
    oot = ~window_mask(sol.lc.time, sol.best, d1, d2, flank=0.25)
    if oot.sum() < MIN_OUT_OF_ECLIPSE:
        kind = "polynomial" if settings.baseline == "auto" else settings.baseline
        choice = {"kind": kind, "harmonics": 1 if kind == "fourier" else 0, "hyper": None,
                  "note": f"baseline: {kind}, as only {int(oot.sum())} points lie out of eclipse (too few to test "
                          "for variability)"}
    else:
        t = sol.lc.time[oot]
        choice = choose_baseline(t, sol.residuals[oot] / sol.baseline[oot], sol.lc.flux_err[oot] / sol.baseline[oot],
                                 sol.best["period"], sol.problem.mapping.t_ref, max(d1, d2), settings.baseline)
    if choice["kind"] == "gp" and choice["hyper"] is None:
        choice["hyper"] = {"jitter": 0.0, "sigma": float(np.median(sol.lc.flux_err)), "rho": 2 * max(d1, d2),
                           "Q": 1.0}
    settings = dataclasses.replace(settings, baseline=choice["kind"], harmonics=choice["harmonics"],
                                   gp_start=choice["hyper"])
    scale = error_scale(choice)
    if scale != 1.0:
        # the priors (limb darkening, the user's) weigh against the data through the errors: scale them before
        # fitting, not only the covariance after
        lc = dataclasses.replace(lc, flux_err=lc.flux_err * scale)
    if choice["kind"] != "polynomial" or scale != 1.0:
        sol = solve(lc, initial, settings)
        sol.diagnostics["input_error_scale"] = scale
        if "gp_hyperparameters" in sol.diagnostics:  # refits (checks) start from the fitted kernel
            settings = dataclasses.replace(settings, gp_start=dict(sol.diagnostics["gp_hyperparameters"]))
    sol.diagnostics["baseline"] = {k: v for k, v in choice.items() if k != "hyper"}
    return sol, settings


def error_scale(choice: dict[str, Any]) -> float:
    """Factor for the quoted errors: sqrt of the out-of-eclipse reduced chi-square when it is not 1.

    Not 1 when it differs from 1 by more than 3 times its sampling scatter, sqrt(2/n) for
    n points (chi-square distribution).  Under a GP baseline the fitted jitter takes
    excess scatter instead, and errors are left as quoted.
    """
    rc, n = choice.get("redchi_out"), choice.get("n_out", 0)
    if choice["kind"] == "gp" or rc is None or not n or abs(rc - 1.0) <= 3 * np.sqrt(2.0 / n):
        return 1.0
    return float(np.sqrt(rc))


def baseline_notes(sol: LeastSquaresSolution, settings: FitSettings) -> list[str]:
    """The baseline decision and the noise model (scaled errors or a fitted jitter), one note each."""
    notes = []
    choice = sol.diagnostics.get("baseline") or {}
    if choice.get("note"):
        notes.append(choice["note"])
    ref = float(sol.diagnostics.get("redchi_reference", float("nan")))
    hyper = sol.diagnostics.get("gp_hyperparameters")
    if settings.baseline == "gp" and hyper:
        notes.append(f"noise model: a jitter of {hyper['jitter'] * 1e6:.0f} ppm fitted with the GP, added in "
                     f"quadrature to the quoted errors (GP amplitude {hyper['sigma'] * 1e6:.0f} ppm, timescale "
                     f"{hyper['rho']:.3f} d, quality factor {hyper['Q']:.2f}); errors not otherwise scaled")
        sol.diagnostics["noise_model"] = {"kind": "jitter", "jitter": hyper["jitter"]}
        return notes
    given = float(sol.diagnostics.get("input_error_scale", 1.0))
    if given != 1.0:
        notes.append(f"noise model: the quoted errors are scaled by {given:.3f} before the fit (the out-of-eclipse "
                     f"residuals scatter {given:.3f}x more than they say); then scaled by sqrt(reduced chi-square) "
                     f"= {np.sqrt(sol.redchi_fit):.3f} for the uncertainties")
        sol.diagnostics["noise_model"] = {"kind": "scaled", "error_scale": given * float(np.sqrt(sol.redchi_fit))}
        return notes
    scale = float(np.sqrt(sol.redchi_fit))
    dof = max(1, sol.problem.time.size - len(sol.problem.mapping.free) - sol.problem.n_linear)
    # the reduced chi-square of pure noise scatters by sqrt(2/dof) (chi-square distribution); 3 of those
    agree = abs(sol.redchi_fit - 1) < 3 * np.sqrt(2.0 / dof)
    scatter = f"out-of-eclipse point-to-point scatter {np.sqrt(ref):.2f}x the quoted errors" if np.isfinite(ref) \
        else "no out-of-eclipse scatter measured"
    if agree:
        notes.append(f"noise model: the quoted errors agree with the residuals (sqrt of the reduced chi-square "
                     f"{scale:.2f}; {scatter}); uncertainties use them as they are (scaled by {scale:.2f})")
    else:
        notes.append(f"noise model: the quoted errors are scaled by sqrt(reduced chi-square) = {scale:.2f} ({scatter})"
                     ", for the uncertainties and the MCMC")
    sol.diagnostics["noise_model"] = {"kind": "scaled", "error_scale": scale}
    return notes


def choose_errors(sol: LeastSquaresSolution, settings: FitSettings) -> FitSettings:
    """Resolve ``errors="auto"``: the covariance when it can be trusted, else an MCMC.

    The MCMC stops once its chain is long enough by its own autocorrelation time (at most
    ``mcmc_steps``; :func:`~eclipsekit.fit.uncertainties.mcmc.long_enough`), or at
    ``mcmc_seconds`` when the user gave one.  Both the stopping rule and the steps are
    functions of the chain alone, so the same input and seed give the same result on any
    machine and under any load (a wall-clock budget would not).

    The reasons (see :func:`~eclipsekit.fit.uncertainties.trust.covariance_doubts`) go to
    ``diagnostics["errors_reasons"]``.
    """
    if settings.errors != "auto":
        return settings
    pr, pm = sol.problem, sol.problem.mapping
    doubts = covariance_doubts(
        pm.free, sol.x_best, sol.covariance, pm.lower, pm.upper,
        lambda x: float(np.sum(pr.residual_from(dict(zip(pm.internal, x))) ** 2)), sol.redchi_fit, sol.best)
    sol.diagnostics["errors_reasons"] = doubts
    if not doubts:
        return dataclasses.replace(settings, errors="covariance")
    # doubts include a missing covariance (a singular Jacobian): the MCMC then starts its walkers along the
    # radius-ratio profile, or in a tiny ball about the best fit
    return dataclasses.replace(settings, errors="mcmc", mcmc_profile=True, mcmc_until_converged=True)


def estimate_uncertainties(sol: LeastSquaresSolution, settings: FitSettings, rng: np.random.Generator
                           ) -> tuple[UncertaintyEstimate, UncertaintyMethod, UncertaintyMethod]:
    """Run the ``errors=`` plug-in; the covariance one when there is no covariance matrix to start
    from, except for an MCMC whose walkers start along the radius-ratio profile.

    Returns the estimate, the plug-in that made it and the one requested (whose summary
    rules apply: with no covariance the draws are all the best fit, summarised as asked).
    """
    method = METHODS[settings.errors]
    from_profile = settings.errors == "mcmc" and settings.mcmc_profile and "radius_ratio" in sol.problem.mapping.free
    runner = method if sol.covariance is not None or from_profile else METHODS["covariance"]
    pr = sol.problem
    ctx = UncertaintyContext(
        problem=pr, mapping=pr.mapping, best=sol.best, x_best=sol.x_best, covariance=sol.covariance,
        redchi=sol.redchi_fit, rng=rng, settings=settings, model_full=sol.model * sol.baseline,
        residuals_full=sol.residuals,
        refit=lambda flux, max_nfev: run_least_squares(pr, sol.best, flux=flux, max_nfev=max_nfev)[1],
        profile=lambda name, value: profile_point(sol, name, value))
    return runner.estimate(ctx), runner, method


def profile_point(sol: LeastSquaresSolution, name: str, value: float) -> tuple[np.ndarray, float] | None:
    """Least squares of the windowed problem with ``name`` held at ``value``: (fitted vector, chi-square rise)."""
    pr, pm = sol.problem, sol.problem.mapping
    try:
        res, v = held_least_squares(pr, sol.best, name, value, max_nfev=100 * len(pm.free))
    except (ValueError, ArithmeticError, np.linalg.LinAlgError):
        return None
    chi2_best = float(np.sum(pr.residual_from(dict(zip(pm.internal, sol.x_best))) ** 2))
    return pm.vector(v), float(np.sum(res.residual ** 2)) - chi2_best


def derive(sol: LeastSquaresSolution, settings: FitSettings, estimate: UncertaintyEstimate,
           runner: UncertaintyMethod, method: UncertaintyMethod, rng: np.random.Generator) -> tuple[dict[str, float], dict[str, float | None], dict[str, np.ndarray]]:
    """Reported values, one-sigma uncertainties and samples of every parameter and derived quantity.

    The fitted parameters are reported at the best fit, or at the draws' medians when
    ``runner`` says so; ``method`` sets the interval and whether the derived quantities
    are reported at their medians.
    """
    pm = sol.problem.mapping
    names = parameter_names(settings.ld_law)
    names += [n for n in pm.free if n not in names]  # fitted limb-darkening combinations
    values = dict(sol.best)
    samples = pm.samples(estimate.draws, sol.best, names)
    if runner.point_estimate == "median":
        for n in names:
            if pm.varies(n):
                values[n] = float(np.median(samples[n]))
    add_derived_samples(samples, names, pm.free, settings.ld_law, rng)
    add_derived_values(values, names, settings.ld_law)
    unc = summarise_samples(samples, names, [n for n in names if pm.varies(n)], method.interval)
    for n, s in (estimate.sigma or {}).items():
        unc[n] = pm.sigma(n, s)
    if method.point_estimate == "median":
        for n in DERIVED:
            if n in samples and np.all(np.isfinite(samples[n])):
                values[n] = float(np.median(samples[n]))
    # omega of a circular orbit is a convention (90 deg), not a measurement
    if "omega" in unc and values.get("eccentricity", 0) == 0 and "ecosw" not in pm.free:
        unc["omega"] = None
    ordered = {n: float(values[n]) for n in names}
    ordered.update({n: float(values[n]) for n in DERIVED})
    return ordered, unc, samples


def run_checks(sol: LeastSquaresSolution, settings: FitSettings, values: dict[str, float],
               unc: dict[str, float | None], warn: list[str]) -> tuple[list[str], str, list[str]]:
    """Warnings (``warn`` followed by the checks'), status and the reasons for it.

    The status is "poor_fit" when the model does not describe the data (no clean
    convergence, eclipse residuals above the out-of-eclipse scatter, outliers concentrated
    in the eclipses), "caution" when a warning says the answer may be biased or its MCMC did
    not mix, else "ok".
    """
    warn, poor, biased = list(warn), [], []
    for kind, msg in validity_warnings(values, unc, sol.lc.time, sol.lc.flux_err, sol.residuals, sol.baseline,
                                       sol.durations, sol.redchi, sol.diagnostics.get("redchi_reference", 1.0)):
        warn.append(msg)
        {"poor": poor, "bias": biased}.get(kind, []).append(msg)
    if not sol.success:
        warn.append(f"fit did not converge cleanly: {sol.message}")
        poor.append(warn[-1])
    clip = sol.diagnostics.get("clipping_in_eclipse")
    if clip:
        warn.append(f"{clip['in_eclipse']} of {clip['flagged']} points beyond {settings.clip_sigma} sigma lie inside "
                    f"the eclipses (~{clip['expected']:.0f} expected by chance): kept, since the model rather than "
                    "the data is at fault")
        poor.append(warn[-1])
    poor += [w for w in sol.warnings if w.startswith("outlier rejection stopped")]
    biased += [w for w in sol.warnings if w.startswith("covariance matrix is singular")]
    # an MCMC that did not mix (acceptance outside 0.1-0.8, a chain too short for its autocorrelation time,
    # stopped at its time budget) gives intervals that cannot be trusted: the coverage runs of a grazing
    # system showed medians 2-8 sigma off in such chains (scripts/calibrate_errors.py --system grazing)
    biased += [w for w in warn if w.startswith("MCMC ")]
    if settings.check_limb_darkening and settings.ld_law != "uniform" and not sol.problem.mapping.varies("ld1_1") \
            and not sol.problem.mapping.varies("ld2_1"):
        sol.diagnostics["limb_darkening_check"] = shift = _limb_darkening_check(sol, settings, values, unc)
        msg = limb_darkening_warning(shift, values)
        if msg:
            warn.append(msg)
            biased.append(msg)
    status = "poor_fit" if poor else "caution" if biased else "ok"
    return warn, status, poor + biased


def _limb_darkening_check(sol: LeastSquaresSolution, settings: FitSettings, values: dict[str, float],
                          unc: dict[str, float | None]) -> dict[str, float]:
    """:func:`~eclipsekit.fit.checks.limb_darkening_shift` with a refit of this light curve from ``values``."""
    lc = sol.lc

    def refit(**kw: Any) -> EclipseFit:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", EclipsekitWarning)
            s = make_settings(lc, ld_law=settings.ld_law, clip_sigma=None, errors="covariance", n_samples=2,
                              progress=False, check_limb_darkening=False, exposure_time=settings.exposure_time,
                              supersample=settings.supersample, baseline_degree=settings.baseline_degree,
                              baseline=settings.baseline, harmonics=settings.harmonics,
                              gap=settings.gap, window=settings.window, **kw)
            s = dataclasses.replace(s, gp_start=settings.gp_start)
            return fit_light_curve(lc, SimpleNamespace(values=dict(values)), s).fit

    return limb_darkening_shift(values, unc, sol.problem.mapping.free, float(sol.redchi), len(lc),
                                settings.ld_law, refit)


def _result(sol: LeastSquaresSolution, initial: InitialParameters, settings: FitSettings, values: dict[str, float],
            unc: dict[str, float | None], samples: dict[str, np.ndarray], estimate: UncertaintyEstimate,
            warn: list[str], seconds: float) -> EclipseFit:
    pm, pr, full = sol.problem.mapping, sol.problem, sol.full
    diag = sol.diagnostics
    diag.update(n_points=len(sol.lc), n_fitted=int(pr.time.size), windowed=sol.windowed,
                n_model_evaluations=int(sum(p_.nfev for p_ in sol.problems)), seconds=seconds,
                redchi_window=sol.redchi_fit, t_ref=pm.t_ref, n_cycles=pm.n_cycles,
                internal_bounds=initial.internal_bounds, baseline_coefficients=full.project(sol.model)[1].tolist())
    return EclipseFit(values=values, uncertainties=unc, units={n: unit(n) for n in values}, samples=samples,
                      lc=sol.lc, baseline=sol.baseline, residuals=sol.residuals, redchi=float(sol.redchi),
                      rms=sol.rms, bic=float(sol.bic), n_free=len(pm.free), free=list(pm.free),
                      errors_method=settings.errors, ld_law=settings.ld_law,
                      ld_primary=ld_coefficients(values, settings.ld_law)[0],
                      ld_secondary=ld_coefficients(values, settings.ld_law)[1],
                      exposure_time=settings.exposure_time, supersample=settings.supersample,
                      lmfit_result=estimate.lmfit_result if estimate.lmfit_result is not None else sol.result,
                      warnings=warn, success=sol.success, message=str(sol.message), diagnostics=diag,
                      covariance=sol.covariance, n_baseline=full.n_linear, segments=full.segments, _problem=full,
                      priors=dict(pm.priors), fixed=[n for n in parameter_names(settings.ld_law) if not pm.varies(n)])


#: posterior over prior width below which a limb-darkening combination counts as measured by the data
LD_CONSTRAINED = 0.5


def decision_notes(sol: LeastSquaresSolution, fit: EclipseFit) -> list[str]:
    """What the fit decided: which limb-darkening combinations the data constrain, and why an MCMC ran."""
    pm = sol.problem.mapping
    notes = []
    parts = []
    for name in pm.free:
        if name.startswith("ld") and name in pm.priors and fit.uncertainties.get(name):
            ratio = fit.uncertainties[name] / pm.priors[name][1]
            verdict = "measured" if ratio < LD_CONSTRAINED else "mostly from its prior"
            parts.append(f"{name} = {format_value(fit.values[name], fit.uncertainties[name])} ({verdict}: "
                         f"{ratio:.2f} of the prior's width {pm.priors[name][1]:g})")
    if parts:
        notes.append(f"limb darkening ({fit.ld_law} law) fitted with weak priors: " + "; ".join(parts))
    reasons = sol.diagnostics.get("errors_reasons")
    if reasons and fit.errors_method == "mcmc":
        notes.append("uncertainties from an MCMC because the covariance matrix cannot be trusted: "
                     + "; ".join(reasons))
    return notes


def central_intervals(fit: EclipseFit) -> dict[str, tuple[float, float]]:
    """Central 68.27% interval of every quantity that varies across the samples."""
    out = {}
    for name, s in fit.samples.items():
        s = s[np.isfinite(s)]
        if s.size > 1 and np.ptp(s) > 0:
            lo, hi = np.percentile(s, [15.865, 84.135])
            out[name] = (float(lo), float(hi))
    return out


def third_light_check(lc: LightCurve, lc_sol: LightCurveSolution) -> LightCurveSolution:
    """Refit with third light free: adopt it when the data need it, else note what they allow.

    Third light dilutes both eclipses and trades off with the inclination and the radii,
    so holding it at 0 biases the geometry when there is any.  The refit's chi-square
    drop (noise-scaled) above 10.83, the 0.1% point of chi-square with one degree of
    freedom (standard tables), with third light above 3 sigma, adopts the refit (its
    uncertainties by the same ``errors`` rule).  Otherwise a note gives the 95% upper
    limit and how far that much third light would move r1, r2, k and i (their
    regression on third light over the refit's samples).
    """
    fit, st = lc_sol.fit, lc_sol.settings
    start = SimpleNamespace(values=dict(fit.values))
    quick = dataclasses.replace(st, free=st.free | {"third_light"}, errors="covariance", check_third_light=False,
                                check_limb_darkening=False, clip_sigma=None, n_samples=400, progress=False)
    try:
        refit = fit_light_curve(lc_sol.least_squares.lc, start, quick).fit
    except (FitError, InputError):
        return lc_sol
    l3, sd = refit.values["third_light"], refit.uncertainties.get("third_light")
    if not sd:
        return lc_sol
    n = len(refit.lc)
    dchi2 = (fit.redchi * (n - fit.n_free) - refit.redchi * (n - refit.n_free)) / max(refit.redchi, 1e-300)
    if dchi2 > 10.83 and l3 > 3 * sd:
        full = dataclasses.replace(st, free=st.free | {"third_light"}, check_third_light=False)
        adopted = fit_light_curve(lc, start, full)
        note = (f"third light fitted: the data need it (L3 = {format_value(l3, sd)}, chi-square drop {dchi2:.0f} "
                "when it is freed)")
        return dataclasses.replace(adopted, fit=dataclasses.replace(adopted.fit, notes=adopted.fit.notes + [note]))
    limit = max(0.0, l3 + 1.96 * sd)
    s = refit.samples
    moves = []
    for name, label in (("frac_radius_primary", "r1"), ("frac_radius_secondary", "r2"), ("radius_ratio", "k")):
        slope = np.cov(s[name], s["third_light"])[0, 1] / np.var(s["third_light"], ddof=1)
        moves.append(f"{label} by {100 * slope * limit / fit.values[name]:+.1f}%")
    slope = np.cov(s["inclination"], s["third_light"])[0, 1] / np.var(s["third_light"], ddof=1)
    moves.append(f"i by {slope * limit:+.2f} deg")
    note = (f"third light held at 0; the data allow up to L3 = {limit:.3f} (95%, L3 = {format_value(l3, sd)} when "
            f"freed), which would move " + ", ".join(moves) + " (free it with `free=['third_light']`)")
    return dataclasses.replace(lc_sol, fit=dataclasses.replace(fit, notes=fit.notes + [note]))
