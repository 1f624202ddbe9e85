"""Uncertainties from an emcee run (affine-invariant ensemble sampler).

Goodman & Weare 2010, Comm. App. Math. Comp. Sci. 5, 65; Foreman-Mackey et al. 2013,
PASP 125, 306.  The log-posterior is the problem's: flat inside the bounds times the
fit's Gaussian priors, the baseline marginalised (see :mod:`eclipsekit.fit.problem`),
the flux errors scaled by sqrt(reduced chi-square) of the least-squares fit as the
covariance method does.  All walkers are evaluated at once (emcee's ``vectorize``):
one batched model call per step (:func:`eclipsekit.eclipse.model_flux_batch`).
"""

from __future__ import annotations

import logging
import math
import time as _time
from typing import Any

import numpy as np

from .base import UncertaintyContext, UncertaintyEstimate

__all__ = ["McmcMethod", "long_enough"]


class McmcMethod:
    """Posterior draws from emcee; values are the posterior medians, errors half the central 68% interval."""

    name = "mcmc"
    point_estimate = "median"
    interval = "central68"

    def estimate(self, context: UncertaintyContext) -> UncertaintyEstimate:
        ctx, st = context, context.settings
        pr = ctx.problem
        scale = math.sqrt(ctx.redchi)
        pr.set_err_scale(scale)
        try:
            pos = _start_positions(ctx)
            t_mc = _time.perf_counter()
            try:
                sampler, steps, stopped = _run(pr, pos, st)
            except ValueError as exc:  # emcee's own refusals (NaN parameters, a degenerate ensemble)
                from ...errors import FitError

                raise FitError(f"the MCMC could not sample this fit ({exc}); try `errors='covariance'` "
                               "or fix poorly constrained parameters") from None
            seconds = _time.perf_counter() - t_mc
            out = _chain_summary(ctx, sampler, steps, pos.shape[0], scale)
            out.diagnostics = {"mcmc_seconds": seconds, **out.diagnostics}
            out.diagnostics["mcmc"]["stopped"] = stopped
            if stopped == "time budget":
                out.warnings.append(f"MCMC stopped after {steps} of {st.mcmc_steps} steps at its time budget of "
                                    f"{st.mcmc_seconds:.0f} s")
        finally:
            pr.set_err_scale(1.0)
        return out


def _run(pr: Any, pos: np.ndarray, st: Any) -> tuple[Any, int, str]:
    """emcee from ``pos`` for ``mcmc_steps`` steps, until ``mcmc_seconds`` have passed, or (with
    ``mcmc_until_converged``) until :func:`long_enough`; (sampler, steps run, why it stopped)."""
    import emcee

    # differential-evolution proposals (with a snooker share) follow long, curved degeneracies such as the
    # k - i - third light valley of grazing eclipses better than the stretch move alone (ter Braak 2006, Stat.
    # Comput. 16, 239; ter Braak & Vrugt 2008, Stat. Comput. 18, 435; Nelson et al. 2014, ApJS 210, 11)
    moves = [(emcee.moves.DEMove(), 0.8), (emcee.moves.DESnookerMove(), 0.2)]
    sampler = emcee.EnsembleSampler(pos.shape[0], pos.shape[1], pr.log_posterior_rows, vectorize=True, moves=moves)
    if st.seed is not None:
        sampler.random_state = np.random.RandomState(int(st.seed)).get_state()
    t_end = None if st.mcmc_seconds is None else _time.perf_counter() + st.mcmc_seconds
    steps = 0
    from ..._progress import show_progress

    progress = show_progress(st.progress)
    tau_before = np.nan
    for _ in sampler.sample(pos, iterations=int(st.mcmc_steps), progress=progress):
        steps += 1
        if t_end is not None and steps % 10 == 0 and _time.perf_counter() > t_end and steps >= 100:
            return sampler, steps, "time budget"
        if st.mcmc_until_converged and steps % CHECK_EVERY == 0 and steps >= MIN_STEPS:
            stop, tau_before = long_enough(sampler, steps, pos.shape[1], tau_before)
            if stop:
                return sampler, steps, "converged"
    return sampler, steps, "steps"


#: the converging chain: checked every CHECK_EVERY steps from MIN_STEPS on
CHECK_EVERY, MIN_STEPS = 100, 500
#: stop when the chain after a 3-tau burn-in spans this many autocorrelation times, with tau stable
#: to TAU_STABLE between checks (emcee's documentation suggests 50 tau for a precise tau and a change
#: below 1%; 30 tau and 5% keep the 1-sigma intervals' Monte-Carlo error near 3% with 32 walkers, well
#: inside the 5% that _chain_summary warns about)
N_TAU, TAU_STABLE = 30, 0.05


def long_enough(sampler: Any, steps: int, nvar: int, tau_before: float) -> tuple[bool, float]:
    """Whether an MCMC chain of ``steps`` steps is long enough by its autocorrelation time.

    Returns (stop, longest tau now); deterministic in the chain (no clock).
    """
    tau = float(np.nanmax(_autocorr(sampler, steps // 10, nvar)))
    if not math.isfinite(tau) or tau <= 0:
        return False, np.nan
    stable = math.isfinite(tau_before) and abs(tau - tau_before) <= TAU_STABLE * tau
    return bool(stable and steps - 3 * tau >= N_TAU * tau), tau


def _start_positions(ctx: UncertaintyContext) -> np.ndarray:
    """Walker starts: along the profile of a degenerate radius ratio, else draws from the covariance."""
    if ctx.settings.mcmc_profile and "radius_ratio" in ctx.mapping.free and ctx.profile is not None:
        pos = _valley_positions(ctx)
        if pos is not None and np.all(np.isfinite(pos)):
            return pos
    return _covariance_positions(ctx)


#: radius ratios of the profile, as factors of the best fit's (k and 1/k both appear: partial and grazing
#: eclipses hardly tell which star is the larger)
_PROFILE_FACTORS = (1 / 3, 1 / 2, 2 / 3, 0.8, 1.25, 1.5, 2, 3)


def _valley_positions(ctx: UncertaintyContext) -> np.ndarray | None:
    """Walkers spread over the chi-square valley of a degenerate fit.

    Least-squares fits at radius ratios held at a range of values around the best fit
    (a profile of chi-square in k) trace the valley along which k, inclination, r1 + r2
    and third light trade off; walkers start at the points whose chi-square rise is below
    11.6 (a little beyond 10.83, the 99.9% point of chi-square with one degree of freedom;
    standard tables), so the differential-evolution moves can sample the whole valley rather
    than the neighbourhood of one end of it.
    """
    pm = ctx.mapping
    i_k = pm.free.index("radius_ratio")
    lo, hi = pm.limits[i_k]
    k0 = ctx.best["radius_ratio"]
    points = [ctx.x_best]
    for fac in _PROFILE_FACTORS:
        k = float(np.clip(k0 * fac, lo, hi))
        found = ctx.profile("radius_ratio", k)
        if found is not None and found[1] < 11.6 * ctx.redchi and np.all(np.isfinite(found[0])):
            points.append(found[0])
    if len(points) < 2:
        return None
    nvar = len(pm.free)
    nwalk = max(int(ctx.settings.mcmc_walkers), 2 * nvar + 2)
    pts = np.array(points)
    ball = _bounded_ball(ctx.covariance if ctx.covariance is not None else np.diag(np.full(nvar, 1e-8)),
                         pm.lower, pm.upper)
    pos = pts[np.arange(nwalk) % len(pts)] + ctx.rng.multivariate_normal(np.zeros(nvar), 0.01 * ball, size=nwalk)
    pos = pm.fold(pos)
    return np.clip(pos, pm.lower + 1e-9 * (pm.upper - pm.lower), pm.upper - 1e-9 * (pm.upper - pm.lower))


def _covariance_positions(ctx: UncertaintyContext) -> np.ndarray:
    """Walker starts: draws from the covariance inside the bounds (the best fit where too few are)."""
    pm = ctx.mapping
    lo_int, hi_int = pm.lower, pm.upper
    nvar = len(pm.free)
    nwalk = max(int(ctx.settings.mcmc_walkers), 2 * nvar + 2)
    pos = np.empty((nwalk, nvar))
    # walkers start as draws from the Laplace approximation itself (the covariance, already scaled by the
    # reduced chi-square like the errors used here): its widths match the posterior's within ~5% on the
    # calibration systems (scripts/calibrate_errors.py), so the ensemble starts near stationarity and
    # the burn-in only has to absorb the non-Gaussian part.  (A ball of half the widths also spread out
    # within ~25 steps, so it was not what limited the coverage; it only wasted burn-in.)
    ball = _bounded_ball(ctx.covariance if ctx.covariance is not None else np.eye(nvar) * 1e-8, lo_int, hi_int)
    w, v = np.linalg.eigh(ball)
    root = v * np.sqrt(np.clip(w, 0.0, None))  # a slightly indefinite covariance still gives real draws
    k = 0
    for _ in range(100):
        draw = pm.fold(ctx.x_best + ctx.rng.standard_normal((nwalk, nvar)) @ root.T)
        good = np.all((draw > lo_int) & (draw < hi_int), axis=1)
        take = draw[good][: nwalk - k]
        pos[k:k + take.shape[0]] = take
        k += take.shape[0]
        if k >= nwalk:
            break
    if k < nwalk:
        # the rest at the best fit, each nudged by its own tiny offset: identical walkers would span no
        # volume, and emcee refuses an initial ensemble that is not linearly independent
        width = hi_int - lo_int
        nudge = ctx.rng.uniform(-1e-6, 1e-6, size=(nwalk - k, nvar)) * width
        pos[k:] = np.clip(ctx.x_best + nudge, lo_int + 1e-9 * width, hi_int - 1e-9 * width)
    return pos


def _bounded_ball(cov: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    """The covariance with each standard deviation capped at a tenth of its parameter's allowed range.

    A parameter the data hardly constrain (e.g. the inclination of a fit stuck at 90 deg) can have a
    covariance width of thousands of degrees; draws that wide all fall outside the bounds.  Scaling its
    row and column keeps the correlations and gives starts inside the bounds.
    """
    cov = np.where(np.isfinite(cov), cov, 0.0)
    sd = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    cap = 0.1 * (upper - lower)
    f = np.where(sd > cap, cap / np.where(sd > 0, sd, 1.0), 1.0)
    return cov * np.outer(f, f)


def _autocorr(sampler: Any, discard: int, nvar: int) -> np.ndarray:
    """Integrated autocorrelation time of each parameter after ``discard`` steps."""
    import emcee

    ch = sampler.get_chain(discard=discard)  # (steps - discard, walkers, nvar)
    # a walker that never moved has a zero autocovariance, which emcee divides by (NaN and a numpy warning
    # for the whole parameter): leave such walkers out (the acceptance fraction reports them)
    ch = ch[:, np.all(np.ptp(ch, axis=0) > 0, axis=1), :]
    if ch.shape[0] < 2 or ch.shape[1] == 0:
        return np.full(nvar, np.nan)
    emcee_log = logging.getLogger("emcee")
    level = emcee_log.level
    emcee_log.setLevel(logging.ERROR)  # the short-chain notice is reported by the caller, as a warning
    try:
        return emcee.autocorr.integrated_time(ch, quiet=True)
    finally:
        emcee_log.setLevel(level)


def _chain_summary(ctx: UncertaintyContext, sampler: Any, steps: int, nwalk: int,
                   scale: float) -> UncertaintyEstimate:
    """Burn-in, thinning, diagnostics and warnings of the chain; its draws."""
    st, free = ctx.settings, ctx.mapping.free
    nvar = len(free)
    # default burn-in: a tenth of the chain (the walkers start from the Laplace approximation), extended to 3
    # autocorrelation times when tau turns out longer ("a few tau" of burn-in: emcee documentation,
    # autocorrelation tutorial, from memory)
    burn = min(int(st.mcmc_burn), steps - 1) if st.mcmc_burn is not None else steps // 10
    tau = _autocorr(sampler, burn, nvar)
    if st.mcmc_burn is None and np.isfinite(np.nanmax(tau)):
        need = min(int(math.ceil(3 * np.nanmax(tau))), steps // 2)
        if need > burn:
            burn = need
            tau = _autocorr(sampler, burn, nvar)
    tau_max = float(np.nanmax(tau))
    thin = int(st.mcmc_thin) if st.mcmc_thin is not None else max(1, int(tau_max / 2)) if math.isfinite(tau_max) else 1
    flat = sampler.get_chain(discard=burn, thin=thin, flat=True)
    n_kept = steps - burn
    n_tau = n_kept / tau_max if tau_max > 0 else np.inf
    # what the chain length must buy is a precise 1-sigma interval: with n_eff independent draws the half
    # width of the 15.9-84.1% interval of a Gaussian scatters by 0.96 sigma / sqrt(n_eff) (asymptotic
    # (co)variance of sample quantiles, p_a (1 - p_b) / (n f_a f_b); Cramer 1946, Mathematical Methods of
    # Statistics, ch. 28, from memory; 0.96 evaluated here for p = 0.159, 0.841 of a Gaussian)
    n_eff = nwalk * n_kept / tau_max if tau_max > 0 else np.inf
    mc_err = 0.96 / math.sqrt(n_eff) if n_eff > 0 else np.inf
    acc = float(np.mean(sampler.acceptance_fraction))
    diag = {"walkers": nwalk, "steps": steps, "burn": burn, "thin": thin,
            "autocorr_time": dict(zip(free, map(float, tau))), "chain_over_tau": float(n_tau),
            "n_effective": float(n_eff), "uncertainty_mc_error": float(mc_err),
            # emcee's own criterion for trusting the tau estimate (integrated_time's tol=50)
            "autocorr_reliable": bool(n_tau >= 50),
            "acceptance_fraction": acc, "error_scale": scale}
    warn = []
    # warn when the quoted uncertainties carry > 5% Monte-Carlo error, or when the chain is so short (< 20
    # tau, a judgement call) that tau itself, and with it n_eff, is likely underestimated.  (Before, any
    # chain under 50 tau warned: the default 32 x 2000 chain, ~25 tau at tau ~ 65, warned on every run
    # although its 1-sigma intervals have ~3% Monte-Carlo error and match the covariance errors.)
    if mc_err > 0.05 or n_tau < 20:
        warn.append(f"MCMC chain after burn-in is {n_tau:.0f} autocorrelation times long, ~{n_eff:.0f} "
                    f"independent samples ({100 * mc_err:.0f}% Monte-Carlo error on the uncertainties): "
                    f"run more steps (longest tau {tau_max:.0f} steps, {free[int(np.nanargmax(tau))]})")
    if not 0.1 < acc < 0.8:
        warn.append(f"MCMC acceptance fraction {acc:.2f} is outside 0.1-0.8")
    if flat.shape[0] > st.n_samples:
        flat = flat[ctx.rng.choice(flat.shape[0], st.n_samples, replace=False)]
    return UncertaintyEstimate(draws=ctx.mapping.fold(flat.copy()), diagnostics={"mcmc": diag}, warnings=warn)
