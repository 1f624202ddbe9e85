"""Walker starts of the MCMC (eclipsekit.fit.uncertainties.mcmc).

Regression tests: fuzz input 393 of ``scripts/fuzz_inputs.py --seed 1`` (a light curve with
zero-flux rows) ended with a least-squares covariance whose inclination width was ~4e4 deg.
Every draw from it fell outside the bounds, all walkers started at the best fit, and emcee
refused the ensemble ("Initial state has a large condition number"): a crash, not a message.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
from emcee.ensemble import walkers_independent

from eclipsekit.fit.uncertainties.mcmc import _bounded_ball, _covariance_positions


class _Map:
    """The part of a ParameterMap the walker starts use: bounds and (identity) folding."""

    free = ["a", "b", "c"]
    lower = np.array([0.0, 30.0, -1.0])
    upper = np.array([1.0, 90.0, 1.0])

    @staticmethod
    def fold(x):
        return x


def _context(cov, x_best):
    settings = SimpleNamespace(mcmc_walkers=8)
    return SimpleNamespace(mapping=_Map(), covariance=np.asarray(cov, float), x_best=np.asarray(x_best, float),
                           rng=np.random.default_rng(3), settings=settings)


def test_unconstrained_parameter_still_gives_independent_walkers_inside_bounds():
    # regression test (see the module docstring): one parameter 1e9 wide, the best fit on its upper bound
    ctx = _context(np.diag([1e-4, 1.9e9, 1e-3]), [0.5, 90.0, 0.0])
    pos = _covariance_positions(ctx)
    assert pos.shape == (8, 3)
    assert np.all((pos > _Map.lower) & (pos < _Map.upper))
    # emcee's own test of the initial ensemble (the reference library: the check EnsembleSampler.sample runs)
    assert walkers_independent(pos)


def test_ball_keeps_correlations_and_caps_widths():
    # regression test: the cap scales a row and a column, so the correlation coefficients are unchanged
    cov = np.array([[1e6, 0.5e3 * 0.9], [0.5e3 * 0.9, 0.25]])
    ball = _bounded_ball(cov, np.array([0.0, 0.0]), np.array([10.0, 10.0]))
    assert np.sqrt(ball[0, 0]) == 1.0  # a tenth of the range 0..10
    assert ball[1, 1] == 0.25          # inside its cap: unchanged
    assert np.isclose(ball[0, 1] / np.sqrt(ball[0, 0] * ball[1, 1]), 0.9)


def test_sampler_refusal_is_a_fit_error(monkeypatch):
    # regression test: emcee's ValueError ("At least one parameter value was NaN", seen once in a survey
    # benchmark run and not reproduced) reached the user as a traceback; it is now the package's FitError
    import pytest

    import eclipsekit as ek
    from eclipsekit.errors import FitError
    from eclipsekit.fit.uncertainties import mcmc

    from _systems import light_curve_arrays

    def refuse(*args, **kwargs):
        raise ValueError("At least one parameter value was NaN")

    monkeypatch.setattr(mcmc, "_run", refuse)
    t, f, e = light_curve_arrays("partial", 1, n_orbits=2)
    with pytest.raises(FitError, match="MCMC could not sample"):
        ek.fit_eclipses(ek.LightCurve(t, f, e), errors="mcmc", progress=False, check_third_light=False)


class _ChainPrefix:
    """The first ``steps`` steps of a finished emcee chain, as a sampler that has run that far."""

    def __init__(self, sampler, steps):
        self.sampler, self.steps = sampler, steps

    def get_chain(self, discard=0, **kw):
        return self.sampler.get_chain(**kw)[discard:self.steps]


def test_converging_chain_stops_at_thirty_autocorrelation_times():
    # An AR(1)-like target for emcee: a correlated 2-D Gaussian.  The rule stops a chain once it spans
    # N_TAU = 30 autocorrelation times after a 3-tau burn-in, tau (emcee.autocorr.integrated_time, the
    # reference estimator) stable to 5% between checks; never earlier than MIN_STEPS.
    import emcee

    from eclipsekit.fit.uncertainties.mcmc import CHECK_EVERY, MIN_STEPS, N_TAU, long_enough

    icov = np.linalg.inv([[1.0, 0.9], [0.9, 1.0]])
    sampler = emcee.EnsembleSampler(16, 2, lambda x: -0.5 * x @ icov @ x)
    sampler.random_state = np.random.RandomState(4).get_state()
    sampler.run_mcmc(np.random.default_rng(4).normal(size=(16, 2)), 4000, progress=False)
    tau_before, stopped_at = np.nan, None
    for steps in range(CHECK_EVERY, 4001, CHECK_EVERY):
        if steps < MIN_STEPS:
            continue
        stop, tau = long_enough(_ChainPrefix(sampler, steps), steps, 2, tau_before)
        if stop:
            stopped_at = steps
            break
        tau_before = tau
    assert stopped_at is not None
    tau = np.max(emcee.autocorr.integrated_time(sampler.get_chain()[stopped_at // 10:stopped_at], quiet=True))
    assert stopped_at - 3 * tau >= 0.9 * N_TAU * tau      # long enough by the reference's own tau (10% leeway)
    assert stopped_at - CHECK_EVERY - 3 * tau < 1.2 * N_TAU * tau   # and not much longer than needed


def test_autocorrelation_ignores_walkers_that_never_moved():
    # Regression: a stuck walker (constant chain) made emcee's integrated_time divide 0 by 0, a numpy
    # "invalid value" warning and a NaN tau.  The moving walkers' tau is emcee's own on them alone.
    import warnings

    import emcee

    from eclipsekit.fit.uncertainties.mcmc import _autocorr

    rng = np.random.default_rng(2)
    chain = np.cumsum(rng.normal(size=(400, 6, 2)), axis=0) * 0.05 + rng.normal(size=(400, 6, 2))
    chain[:, 3, :] = 0.7                           # walker 3 never moved
    sampler = SimpleNamespace(get_chain=lambda discard=0: chain[discard:])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        tau = _autocorr(sampler, 0, 2)
    moving = np.delete(chain, 3, axis=1)
    np.testing.assert_allclose(tau, emcee.autocorr.integrated_time(moving, quiet=True), rtol=1e-12)
