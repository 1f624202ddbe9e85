"""The least-squares driver: restarts, outlier rejection, windows, statistics and covariance.

lmfit's ``least_squares`` (scipy's trust-region reflective method) fits the problem of
:mod:`eclipsekit.fit.problem`.  Around it: up to three ranked starts plus perturbed
restarts (the k-i degeneracy of partial eclipses), iterated outlier rejection on the
whole light curve with a refresh of the windows around the fitted eclipses, statistics
over the whole light curve, and the covariance of the fitted vector from a
central-difference Jacobian.
"""

from __future__ import annotations

import contextlib
import contextvars
import copy
import math
from dataclasses import dataclass, field, replace
from typing import Any, Callable, Iterator, Mapping, Sequence

import lmfit
import numpy as np

from ..data import LightCurve
from ..errors import FitError
from .derived import eclipse_props
from .initial import InitialParameters
from .parameters import ParameterMap, bounds
from .baseline import VariabilityProblem, fit_hyperparameters
from .problem import Problem, build_problem, window_mask
from .settings import FitSettings
from .start import ranked_starts

__all__ = ["LeastSquaresSolution", "solve", "run_least_squares", "held_least_squares", "partial_eclipses",
           "central_jacobian", "chi_square", "evaluation_budget", "EVALUATIONS_PER_PARAMETER"]

_LINALG_ERRORS = (ValueError, ArithmeticError, np.linalg.LinAlgError)

#: model evaluations one fit may spend on least squares (its starts, restarts, refinement, baseline
#: choice and checks; not its uncertainties), per fitted parameter plus one: five runs to the cap of
#: one.  The test suite's fits need at most ~310 (the fit with a wrong fixed inclination; most need
#: under 100); fuzzed light curves with no eclipse at the period tried ran on to ~2,200 (28,000
#: evaluations, a minute of CPU for 124 points)
EVALUATIONS_PER_PARAMETER = 1000

#: [evaluations left, evaluations given] of the open budget, or None
_BUDGET: contextvars.ContextVar[list[int] | None] = contextvars.ContextVar("eclipsekit_fit_budget", default=None)


@contextlib.contextmanager
def evaluation_budget(n_parameters: int | None) -> Iterator[None]:
    """Charge the least squares run inside to one budget of model evaluations.

    ``n_parameters`` None pauses the budget (uncertainties: their refits are bounded by their
    own settings).  Inside a budget already open, a new one shares it: a check's refit is
    part of the fit that asked for it.
    """
    if n_parameters is not None and _BUDGET.get() is not None:
        yield
        return
    total = EVALUATIONS_PER_PARAMETER * ((n_parameters or 0) + 1)
    token = _BUDGET.set(None if n_parameters is None else [total, total])
    try:
        yield
    finally:
        _BUDGET.reset(token)


@dataclass
class LeastSquaresSolution:
    """The least-squares fit of the eclipses, before uncertainties.

    Attributes
    ----------
    result : lmfit.minimizer.MinimizerResult
        The last least-squares run.
    best : dict
        Physical best-fit values of every parameter.
    problem, full : Problem
        The problem fitted last (windowed points) and the one of every point of ``lc``.
    lc : LightCurve
        The light curve with the outliers removed.
    durations : (float, float)
        Durations of the fitted eclipses (days).
    model, baseline, residuals : ndarray
        Eclipse model, baseline and flux - baseline * model at every point of ``lc``.
    chi2, redchi, rms, bic : float
        Statistics over ``lc``.
    redchi_fit : float
        Reduced chi-square of ``problem`` (scales the covariance).
    covariance : ndarray or None
        Covariance of the fitted vector.
    """

    result: Any
    best: dict[str, float]
    problem: Problem
    full: Problem
    lc: LightCurve
    windowed: bool
    durations: tuple[float, float]
    model: np.ndarray
    baseline: np.ndarray
    residuals: np.ndarray
    chi2: float
    redchi: float
    rms: float
    bic: float
    redchi_fit: float
    covariance: np.ndarray | None
    x_best: np.ndarray
    success: bool
    message: str
    warnings: list[str] = field(default_factory=list)
    diagnostics: dict[str, Any] = field(default_factory=dict)
    problems: list[Problem] = field(default_factory=list)


def chi_square(res: Any, n_data: int | None = None) -> float:
    """Sum of the squared residuals of a least-squares result (the first ``n_data``: prior terms excluded)."""
    return float(np.sum(res.residual[:n_data] ** 2))


def run_least_squares(problem: Any, values: Mapping[str, float], flux: np.ndarray | None = None,
                      max_nfev: int | None = None) -> tuple[Any, dict[str, float]]:
    """One least-squares fit of ``problem`` (anything with ``residual`` and ``mapping``) from ``values``.

    Returns the lmfit result and the physical values (``values`` updated with the fit).
    """
    p = problem.mapping.lmfit_parameters(values)
    mini = lmfit.Minimizer(problem.residual, p, fcn_kws={"flux": flux} if flux is not None else None,
                           nan_policy="propagate")
    cap = max_nfev or 200 * (len(p) + 1)
    budget = _BUDGET.get()
    if budget is not None:
        if budget[0] <= 0:
            raise FitError(f"the least-squares fit did not settle within {budget[1]} model evaluations (its starts, "
                           "restarts and refinements): the light curve shows no eclipse the model can describe "
                           f"at P = {problem.mapping.p_ref:.6g} d; check the period and t0, or give start values")
        cap = min(cap, budget[0])
    # lsmr subproblems: no SVD of the tall Jacobian (multithreaded LAPACK on busy machines is slow), same optimum
    res = mini.least_squares(x_scale="jac", tr_solver="lsmr", max_nfev=cap)
    if budget is not None:
        budget[0] -= res.nfev
    newv = dict(values)
    newv.update(problem.mapping.physical(res.params.valuesdict()))
    return res, newv


def held_least_squares(problem: Problem, values: Mapping[str, float], name: str, value: float,
                       max_nfev: int | None = None) -> tuple[Any, dict[str, float]]:
    """:func:`run_least_squares` with parameter ``name`` held at ``value`` (a profile point)."""
    pm = problem.mapping
    keep = [i for i, n in enumerate(pm.free) if n != name]
    held = copy.copy(problem)
    held.mapping = replace(pm, free=[pm.free[i] for i in keep], fixed={**pm.fixed, name: value},
                           limits=[pm.limits[i] for i in keep])
    return run_least_squares(held, {**values, name: value}, max_nfev=max_nfev)


def partial_eclipses(v: Mapping[str, float]) -> bool:
    """Whether both eclipses at physical values ``v`` are partial (neither total nor annular).

    The projected separation at conjunction, in units of a, is r cos i with
    r = (1 - e^2) / (1 +- e sin w) (textbook Keplerian geometry, e.g. Hilditch 2001, ch. 2);
    an eclipse is total or annular when it is below |r1 - r2|.
    """
    k, rs = v["radius_ratio"], v["radius_sum"]
    r1 = rs / (1 + k)
    e2 = v["ecosw"] ** 2 + v["esinw"] ** 2
    cos_i = math.cos(math.radians(v["inclination"]))
    return all((1 - e2) / (1 + sign * v["esinw"]) * cos_i > abs(r1 - k * r1) for sign in (1, -1))


def central_jacobian(residual_from: Callable[[Mapping[str, float]], np.ndarray], internal_names: Sequence[str],
                     x: np.ndarray, steps: np.ndarray, limits: Sequence[tuple[float | None, float | None]]
                     ) -> np.ndarray | None:
    """Jacobian of the residuals by central differences (one-sided at a bound); None where it fails."""
    base = {n: v for n, v in zip(internal_names, x)}
    cols = []
    try:
        r0 = residual_from(base)
        for i, (ni, h) in enumerate(zip(internal_names, steps)):
            if not (h > 0 and math.isfinite(h)):
                return None
            lo, hi = limits[i]
            lo = -np.inf if lo is None else lo
            hi = np.inf if hi is None else hi
            up, dn = dict(base), dict(base)
            if x[i] + h <= hi and x[i] - h >= lo:
                up[ni], dn[ni] = x[i] + h, x[i] - h
                cols.append((residual_from(up) - residual_from(dn)) / (2 * h))
            elif x[i] + h <= hi:
                up[ni] = x[i] + h
                cols.append((residual_from(up) - r0) / h)
            else:
                dn[ni] = x[i] - h
                cols.append((r0 - residual_from(dn)) / h)
    except (ValueError, ArithmeticError):
        return None
    # least_squares minimises 0.5 sum r^2 of the residuals r = (f - model)/sigma; J = dr/dx
    return np.column_stack(cols)


class _Driver:
    """State of one least-squares fit: the light curve (outliers go), problems made, notes."""

    def __init__(self, lc: LightCurve, initial: InitialParameters, settings: FitSettings):
        self.lc = lc
        self.initial = initial
        self.mapping: ParameterMap = initial.mapping
        self.settings = settings
        self.diag: dict[str, Any] = {"attempts": [], "n_points": len(lc)}
        self.warnings: list[str] = []
        self.problems: list[Problem] = []
        # "auto" fits the polynomial baseline first; fit_light_curve then decides
        self.variability = settings.baseline in ("fourier", "gp")
        self.hyper = None
        if settings.baseline == "gp":
            self.hyper = dict(settings.gp_start or {"jitter": 0.0, "sigma": float(np.median(lc.flux_err)),
                                                    "rho": float(np.ptp(lc.time)) / 10, "Q": 1.0})

    def problem(self, mask: np.ndarray | None) -> Problem:
        """A residual problem of the current light curve (every point when ``mask`` is None)."""
        st = self.settings
        extra: dict[str, Any] = {}
        if self.variability:
            extra = dict(cls=VariabilityProblem, harmonics=st.harmonics or 0, period_ref=self.mapping.p_ref,
                         t_ref=self.mapping.t_ref, hyper=self.hyper)
        pr = build_problem(self.lc, mask, mapping=self.mapping, gap=st.gap, degree=st.baseline_degree,
                           ld_law=st.ld_law, exposure_time=st.exposure_time, supersample=st.supersample, **extra)
        self.problems.append(pr)
        return pr

    def fit_hyper(self, pr: Problem, res: Any, v: dict[str, float], rho_min: float
                  ) -> tuple[Problem, Any, dict[str, float]]:
        """GP baseline: alternate the kernel and jitter (maximum marginal likelihood) with the eclipses.

        Coordinate ascent of one likelihood: at most 4 rounds, until the log-likelihood
        gained by the hyperparameters is below 0.1.
        """
        span = float(np.ptp(self.lc.time))
        for _ in range(4):
            m = pr.model(v)
            hyper, _ = fit_hyperparameters(pr.time, pr.flux / m, (pr.sig / m) ** 2, rho_min=rho_min,
                                           rho_max=max(span, 2 * rho_min), X=pr.X, start=self.hyper,
                                           jitter_scale=1.0 / m)
            before = pr.log_posterior(res.params)
            pr.set_hyper(hyper)
            gain = pr.log_posterior(res.params) - before
            self.hyper = hyper
            res, v = run_least_squares(pr, v)
            if not gain > 0.1:
                break
        self.diag["gp_hyperparameters"] = dict(self.hyper)
        return pr, res, v

    def windows_for(self, v: Mapping[str, float], w1: float, w2: float) -> np.ndarray | None:
        """Points near the eclipses, or None to fit every point (``window`` False, or windows over 60%).

        A Fourier or GP baseline varies away from the eclipses: every point is fitted.
        """
        if self.settings.window is False or self.variability:
            return None
        mask = window_mask(self.lc.time, v, w1, w2, flank=0.5)
        if self.settings.window is None and mask.mean() > 0.6:
            return None
        return mask

    def good_enough(self, res: Any, pr: Problem) -> tuple[bool, str]:
        """Whether a least-squares result needs no restart, and why not."""
        bad = self.mapping.at_bounds(res.params)
        n_dof = max(1, pr.time.size - len(self.mapping.free) - pr.n_linear)
        rc = chi_square(res, pr.time.size) / n_dof
        # noise-only reference: the scatter of the flanks and out-of-eclipse points
        ref = self.diag.get("redchi_reference", 1.0)
        if bad:
            return False, f"ended at the bound of {', '.join(bad)}"
        # the global minimum of a good model sits within the chi-square scatter of the noise level
        # (sqrt(2/dof), chi-square distribution); beyond that a restart is cheap and we keep the best
        if rc > 1.05 * ref + 5 * math.sqrt(2.0 / n_dof):
            return False, f"poor fit (reduced chi-square {rc:.3f} vs {ref:.3f} from the out-of-eclipse scatter)"
        return True, "ok"

    def noise_reference(self, v: Mapping[str, float], win: tuple[float, float]) -> None:
        """Reduced chi-square of the noise alone, from point-to-point differences far from the eclipses."""
        try:
            far = ~window_mask(self.lc.time, v, win[0], win[1], flank=0.5)
            if far.sum() > 20:
                ff, ee = self.lc.flux[far], self.lc.flux_err[far]
                diffs = np.diff(ff) / np.hypot(ee[1:], ee[:-1])
                self.diag["redchi_reference"] = float((1.4826 * np.median(np.abs(diffs - np.median(diffs)))) ** 2)
        except (ValueError, ArithmeticError):
            pass

    def restarts(self, pr: Problem, starts: list[dict[str, float]]) -> tuple[Any, dict[str, float], str]:
        """Fit from the three best starts, then perturbed restarts, until a result is good enough (at most 7)."""
        best = None
        tried = 0
        last_error = None
        queue = starts[:3]
        while queue and tried < 7:
            v0 = queue.pop(0)
            tried += 1
            where = {k: v0[k] for k in ("radius_sum", "radius_ratio", "inclination")}
            try:
                res, v1 = run_least_squares(pr, v0)
            except _LINALG_ERRORS as exc:
                last_error = exc
                self.diag["attempts"].append({"start": where, "chi2": float("nan"), "ok": False,
                                              "note": f"failed: {exc}"})
                continue
            ok, why = self.good_enough(res, pr)
            self.diag["attempts"].append({"start": where, "chi2": chi_square(res), "ok": ok, "note": why})
            if best is None or chi_square(res) < chi_square(best[0]):
                best = (res, v1, ok, why)
            if best[2]:
                break
            if tried == 1:  # perturbed restarts around the first result: the k-i degeneracy of partial eclipses
                queue += self.perturbed(v1)
        if best is None:
            raise FitError(f"least-squares fit of the eclipses failed from all {tried} start(s); "
                           f"last error: {last_error}")
        if best[2] and partial_eclipses(best[1]) and "radius_ratio" in self.mapping.free:
            best = self.walk_valley(pr, best)
        return best[0], best[1], best[3]

    def walk_valley(self, pr: Problem, best: tuple) -> tuple:
        """Partial eclipses: look for a deeper minimum along the radius-ratio valley.

        Partial eclipses fix r1 + r2, i and k only in combination (a long, curved valley of
        chi-square that can hold more than one minimum).  A start that merely moves k is
        pulled back into the basin it came from, so each trial follows the valley: k held
        at 0.8x and 1.25x its value while the rest adjust (a short fit); only when that
        already beats the best chi-square is everything released from there.  The lowest
        chi-square wins.
        """
        v0 = best[1]
        lo, hi = bounds("radius_ratio", self.settings.ld_law)
        for factor in (0.8, 1.25):
            k = float(np.clip(v0["radius_ratio"] * factor, lo * 1.01, hi * 0.99))
            where = {"radius_sum": v0["radius_sum"], "radius_ratio": k, "inclination": v0["inclination"]}
            try:
                held, vk = held_least_squares(pr, v0, "radius_ratio", k, max_nfev=5 * len(self.mapping.free))
                if not chi_square(held) < chi_square(best[0]):
                    self.diag["attempts"].append({"start": where, "chi2": chi_square(held), "ok": False,
                                                  "note": f"valley trial (k held at {factor:g}x): no lower"})
                    continue
                res, v1 = run_least_squares(pr, vk)
            except _LINALG_ERRORS as exc:
                self.diag["attempts"].append({"start": where, "chi2": float("nan"), "ok": False,
                                              "note": f"valley trial failed: {exc}"})
                continue
            ok, why = self.good_enough(res, pr)
            self.diag["attempts"].append({"start": where, "chi2": chi_square(res), "ok": ok,
                                          "note": f"valley trial (k held at {factor:g}x, then freed): {why}"})
            if ok and chi_square(res) < chi_square(best[0]):
                best = (res, v1, ok, why)
        return best

    def perturbed(self, v1: Mapping[str, float]) -> list[dict[str, float]]:
        """Restarts around a first result: k x 0.8 and x 1.25, i halfway to 90 deg, r1 + r2 x 0.9."""
        out = []
        for name, how in (("radius_ratio", 0.8), ("radius_ratio", 1.25), ("inclination", 0.5), ("radius_sum", 0.9)):
            if name not in self.initial.vary:
                continue
            vp = dict(v1)
            lo, hi = bounds(name, self.settings.ld_law)
            if name == "inclination":
                vp[name] = float(np.clip(v1[name] + how * (90.0 - v1[name]) - 0.3, lo + 1, hi))
            else:
                vp[name] = float(np.clip(v1[name] * how, lo * 1.01, hi * 0.99))
            out.append(vp)
        return out

    def clip_outliers(self, z_full: np.ndarray, in_eclipse: np.ndarray) -> int:
        """Remove points beyond ``clip_sigma`` robust sigmas (unless over 5% are); the number removed.

        Points inside the eclipses are never dropped silently: when more of the flagged
        points fall in eclipse than chance would put there (their share of the data, plus
        3 binomial sigmas), the model rather than the data is at fault, so the points in
        eclipse are kept and the fit is marked poor (``diagnostics["clipping_in_eclipse"]``).
        Otherwise the in-eclipse points removed are counted in ``diagnostics``.
        """
        clip_sigma = self.settings.clip_sigma
        if clip_sigma is None or not clip_sigma > 0:
            return 0
        med = np.median(z_full)
        s = 1.4826 * np.median(np.abs(z_full - med))
        flag = np.abs(z_full - med) > clip_sigma * s
        if flag.mean() > 0.05:
            msg = (f"outlier rejection stopped: {flag.sum()} points ({100 * flag.mean():.1f}%) beyond "
                   f"{clip_sigma} sigma suggests a poor model rather than outliers")
            if msg not in self.warnings:
                self.warnings.append(msg)
            return 0
        n_flag, n_in = int(flag.sum()), int(np.sum(flag & in_eclipse))
        share = float(in_eclipse.mean())
        # binomial expectation of flagged points in eclipse if outliers fall anywhere (common practice)
        expected = n_flag * share
        if n_in > expected + 3 * math.sqrt(max(expected * (1 - share), 1.0)):
            self.diag["clipping_in_eclipse"] = {"flagged": n_flag, "in_eclipse": n_in, "expected": expected}
            flag &= ~in_eclipse
        self.diag["outliers_in_eclipse"] = self.diag.get("outliers_in_eclipse", 0) + int(np.sum(flag & in_eclipse))
        if flag.any():
            self.lc = self.lc.without(flag, "outlier")
        return int(flag.sum())

    def fitted_durations(self, v: Mapping[str, float], previous: tuple[float, float]) -> tuple[float, float]:
        """Durations (first to last contact) of the fitted eclipses; the previous ones where undefined."""
        try:
            props = eclipse_props(v, self.settings.ld_law)
            nw1, nw2 = float(props["duration_primary"]), float(props["duration_secondary"])
        except (ValueError, ArithmeticError, KeyError):
            nw1, nw2 = previous
        return (nw1 if nw1 > 0 else previous[0]), (nw2 if nw2 > 0 else previous[1])

    def refine(self, pr: Problem, res: Any, vbest: dict[str, float], why: str, sel: np.ndarray | None,
               win: tuple[float, float]) -> tuple[Problem, Any, dict[str, float], str, np.ndarray | None,
                                                  tuple[float, float]]:
        """Outlier rejection and window refresh (on the whole light curve), refitting until nothing changes."""
        n_clip_total = 0
        durations = win
        for it in range(6):
            full = self.problem(None)
            z_full = full.evaluate(vbest)[2]
            durations = nw1, nw2 = self.fitted_durations(vbest, durations)
            n_clip = self.clip_outliers(z_full, window_mask(self.lc.time, vbest, nw1, nw2, flank=0.0))
            n_clip_total += n_clip
            changed = n_clip > 0
            # are the fitted eclipses (first to last contact) inside the windows, with flanks of half an eclipse?
            if sel is not None and (nw1 > win[0] or nw2 > win[1]):
                changed = True
                win = (max(nw1, win[0]), max(nw2, win[1]))
            if sel is not None and not changed:
                # an eclipse that moved (e.g. a wrong start for the secondary's phase) must still be fitted point by point
                if np.any(window_mask(self.lc.time, vbest, nw1, nw2, flank=0.25) & ~sel):
                    changed = True
            if not changed or it == 5:
                break
            sel = self.windows_for(vbest, *win)
            pr = self.problem(sel)
            res, vbest = run_least_squares(pr, vbest)
            why = self.good_enough(res, pr)[1]
        self.diag["n_outliers"] = n_clip_total
        return pr, res, vbest, why, sel, durations

    def covariance(self, pr: Problem, res: Any, vbest: Mapping[str, float], redchi_fit: float
                   ) -> tuple[np.ndarray | None, np.ndarray]:
        """Covariance of the fitted vector (scaled by ``redchi_fit``) and the vector at the best fit."""
        pm = self.mapping
        jac = getattr(res, "jac", None)
        cov = None
        if jac is not None and len(pm.free):
            jtj = jac.T @ jac
            try:
                cov = np.linalg.inv(jtj) * redchi_fit
                if not np.all(np.isfinite(cov)) or np.any(np.diag(cov) <= 0):
                    raise np.linalg.LinAlgError
            except np.linalg.LinAlgError:
                cov = np.linalg.pinv(jtj) * redchi_fit
                self.warnings.append("covariance matrix is singular: some parameters are not constrained by the "
                                     "data; fix some of them")
        xbest = pm.vector(vbest)
        if cov is not None and len(pm.free):
            # refine with central differences at steps of 0.1 sigma: the optimiser's forward differences (steps
            # ~1e-8) pick up the model's numerical noise (root-finding tolerances of contact and mid-eclipse times)
            jc = central_jacobian(pr.residual_from, pm.internal, xbest, 0.1 * np.sqrt(np.diag(cov)), pm.limits)
            if jc is not None:
                try:
                    c2 = np.linalg.inv(jc.T @ jc) * redchi_fit
                    if np.all(np.isfinite(c2)) and np.all(np.diag(c2) > 0):
                        cov = c2
                except np.linalg.LinAlgError:
                    pass
        return cov, xbest

    def verdict(self, res: Any, redchi_fit: float, why: str) -> tuple[bool, str]:
        """Success and message: converged, not at a bound, and not grossly worse than the noise."""
        bad = self.mapping.at_bounds(res.params)
        if bad:
            self.warnings.append(f"parameters at their bounds: {', '.join(bad)} (uncertainties unreliable)")
        # a mildly high chi-square (e.g. from imperfect limb darkening) is reported by the reduced chi-square and
        # warnings, not as a failure
        ref = self.diag.get("redchi_reference", 1.0)
        gross = redchi_fit > 1.5 * ref + 0.5
        success = bool(res.success) and not bad and not gross
        if success:
            message = res.message if isinstance(res.message, str) else str(res.message)
        elif gross:
            message = f"poor fit (reduced chi-square {redchi_fit:.2f} vs {ref:.2f} out of eclipse)"
        elif not res.success:
            message = f"the least-squares optimiser stopped before converging ({res.message})"
        else:
            message = why
        return success, message


def solve(lc: LightCurve, initial: InitialParameters, settings: FitSettings) -> LeastSquaresSolution:
    """Least-squares fit of the eclipses in ``lc`` from ``initial``, with restarts, outlier rejection and windows.

    Raises
    ------
    FitError
        Too few points near the eclipses, the model fails at every start, or every
        least-squares attempt fails.
    """
    drv = _Driver(lc, initial, settings)
    pm = initial.mapping
    val = initial.values
    w1, w2 = initial.durations
    # first windows from the start's durations, widened by 30% (durations from a period search are rough);
    # refreshed from the fitted durations
    win = (1.3 * max(w1, 1e-4), 1.3 * max(w2, 1e-4))
    sel = drv.windows_for(val, *win)
    pr = drv.problem(sel)
    if pr.time.size < len(pm.free) + pr.n_linear + 5:
        raise FitError(f"only {pr.time.size} points near the eclipses for {len(pm.free)} parameters and "
                       f"{pr.n_linear} baseline coefficients: too few to fit")
    starts = ranked_starts(initial.start, val, set(initial.vary), pr.chi2)
    drv.noise_reference(val, win)
    res, vbest, why = drv.restarts(pr, starts)
    if drv.hyper is not None:
        pr, res, vbest = drv.fit_hyper(pr, res, vbest, rho_min=2 * max(win))
    pr, res, vbest, why, sel, durations = drv.refine(pr, res, vbest, why, sel, win)

    # statistics over the whole light curve
    full = drv.problem(None)
    m_full, base_full, z_full, _ = full.evaluate(vbest)
    n_full = len(drv.lc)
    chi2_full = float(z_full @ z_full)
    redchi = chi2_full / max(1, n_full - len(pm.free) - full.n_linear)
    resid = drv.lc.flux - m_full * base_full
    bic = chi2_full + (len(pm.free) + full.n_linear) * math.log(n_full)
    # covariance from the window fit's Jacobian, scaled by its reduced chi-square
    redchi_fit = chi_square(res, pr.time.size) / max(1, pr.time.size - len(pm.free) - pr.n_linear)
    cov, xbest = drv.covariance(pr, res, vbest, redchi_fit)
    success, message = drv.verdict(res, redchi_fit, why)
    return LeastSquaresSolution(
        result=res, best=vbest, problem=pr, full=full, lc=drv.lc, windowed=sel is not None, durations=durations,
        model=m_full, baseline=base_full, residuals=resid, chi2=chi2_full, redchi=redchi,
        rms=float(np.sqrt(np.mean(resid ** 2))), bic=bic, redchi_fit=redchi_fit, covariance=cov, x_best=xbest,
        success=success, message=message, warnings=drv.warnings, diagnostics=drv.diag, problems=drv.problems)
