"""Tests of the spectroscopic orbit fit (eclipsekit.spectroscopy).

Reference velocities come from an independent textbook expression (tests/_textbook.py:
v = gamma + K [cos(nu + w) + e cos w], Kepler's equation solved with
scipy.optimize.brentq), not from eclipsekit.orbit, so the checks are independent.
"""

from __future__ import annotations

import warnings

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest

from _textbook import textbook_velocity
from eclipsekit.data import VelocityCurve
from eclipsekit.dimensions import absolute_dimensions, mass_function
from eclipsekit.errors import EclipsekitWarning, InputError
from eclipsekit.spectroscopy import OrbitFit, fit_velocities


# --- independent reference model ----------------------------------------------------------
class Ephemeris:
    """Duck-typed light-curve ephemeris (values / uncertainties dicts)."""

    def __init__(self, values, uncertainties=None):
        self.values = dict(values)
        self.uncertainties = dict(uncertainties or {})


TRUE = dict(period=4.2, t0=2459000.3, k1=78.0, k2=96.0, gamma=-12.5, e=0.12, omega=110.0)


def make_rv(seed=1, n=30, err1=0.8, err2=1.1, missing2=(), single=False, true=TRUE, jitter=(0.0, 0.0)):
    rng = np.random.default_rng(seed)
    time = true["t0"] + np.sort(rng.uniform(0, 40, n))
    common = dict(period=true["period"], t0=true["t0"], gamma=true["gamma"], e=true["e"], omega_deg=true["omega"])
    v1 = textbook_velocity(time, k=true["k1"], **common)
    v2 = textbook_velocity(time, k=true["k2"], sign=-1.0, **common)
    rv1 = v1 + np.hypot(err1, jitter[0]) * rng.standard_normal(n)
    rv2 = v2 + np.hypot(err2, jitter[1]) * rng.standard_normal(n)
    e1, e2 = np.full(n, err1), np.full(n, err2)
    if single:
        rv2, e2 = None, None
    else:
        rv2[list(missing2)] = np.nan
        e2[list(missing2)] = np.nan
    return VelocityCurve(time, rv1, e1, rv2, e2)


def test_textbook_model_circular_limit():
    # circular orbit: v1 = gamma - K sin(2 pi (t - t0) / P), falling through gamma at primary eclipse
    # (our conventions: RV positive receding, primary eclipse at nu = 90 deg - w; common practice)
    t = np.linspace(0, 3, 7)
    v = textbook_velocity(t, period=3.0, t0=0.0, k=50.0, gamma=5.0, e=0.0, omega_deg=90.0)
    np.testing.assert_allclose(v, 5.0 - 50.0 * np.sin(2 * np.pi * t / 3.0), atol=1e-9)


def test_double_lined_eccentric_recovers_truth():
    rv = make_rv(seed=3)
    eph = Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"]})
    fit = fit_velocities(rv, eph, fit_eccentricity=True, seed=0)
    assert isinstance(fit, OrbitFit) and fit.success and fit.double_lined
    v, s = fit.values, fit.uncertainties
    # injected values within 4 sigma (noise drawn with a fixed seed)
    for key, truth in (("k_primary", TRUE["k1"]), ("k_secondary", TRUE["k2"]), ("gamma", TRUE["gamma"]),
                       ("ecosw", TRUE["e"] * np.cos(np.radians(TRUE["omega"]))),
                       ("esinw", TRUE["e"] * np.sin(np.radians(TRUE["omega"])))):
        assert abs(v[key] - truth) < 4 * s[key], key
    assert v["mass_ratio"] == pytest.approx(TRUE["k1"] / TRUE["k2"], rel=0.03)
    assert v["omega"] == pytest.approx(TRUE["omega"], abs=4 * s["omega"])
    # model and residuals are consistent with each other and with the noise level
    rv1, rv2 = fit.model(rv.time)
    np.testing.assert_allclose(rv.rv1 - rv1, fit.residuals_primary)
    assert fit.rms_primary == pytest.approx(0.8, rel=0.35)
    assert fit.rms_secondary == pytest.approx(1.1, rel=0.35)
    # samples follow the covariance
    assert np.std(fit.samples["k_primary"]) == pytest.approx(s["k_primary"], rel=0.1)
    assert set(fit.samples) >= {"k_primary", "k_secondary", "eccentricity", "omega", "period", "t0"}
    assert "k_primary" in fit.summary()


def test_fixed_eccentricity_from_ephemeris_and_uncertainty_calibration():
    # 40 noise realisations: K1 pulls (fit - truth) / sigma should have unit spread (chi-square theory)
    eph = Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"],
                     "ecosw": TRUE["e"] * np.cos(np.radians(TRUE["omega"])),
                     "esinw": TRUE["e"] * np.sin(np.radians(TRUE["omega"]))})
    pulls = []
    for seed in range(40):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", EclipsekitWarning)  # some realisations scatter more
            fit = fit_velocities(make_rv(seed=100 + seed, n=20), eph, n_samples=10)
        assert "ecosw" not in fit.free
        assert fit.uncertainties["ecosw"] is None  # fixed from the light curve
        pulls.append((fit.values["k_primary"] - TRUE["k1"]) / fit.uncertainties["k_primary"])
    pulls = np.asarray(pulls)
    # the scaling never shrinks errors, so the pull spread is <= 1 within sampling noise (~0.11 for 40)
    assert 0.65 < np.std(pulls) < 1.3
    assert abs(np.mean(pulls)) < 0.5


def test_single_lined_mass_function():
    rv = make_rv(seed=5, single=True)
    eph = Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"]})
    fit = fit_velocities(rv, eph, fit_eccentricity=True, seed=1)
    assert not fit.double_lined
    assert np.isnan(fit.values["k_secondary"])
    # f(M) = P K1^3 (1-e^2)^{3/2} / (2 pi G) through astropy.units (first principles)
    e = fit.values["eccentricity"]
    fm = (fit.values["period"] * u.day * (fit.values["k_primary"] * u.km / u.s) ** 3
          * (1 - e**2) ** 1.5 / (2 * np.pi * const.G)).to_value(u.M_sun)
    assert fit.values["mass_function"] == pytest.approx(fm, rel=1e-9)
    true_fm = mass_function(TRUE["period"], TRUE["k1"], TRUE["e"])
    assert abs(fit.values["mass_function"] - true_fm) < 4 * fit.uncertainties["mass_function"]
    with pytest.raises(InputError, match="k_secondary"):
        absolute_dimensions(Ephemeris({"period": 4.2, "inclination": 88.0}), fit)


def test_missing_secondary_epochs():
    # the secondary was not measured at 10 of 30 epochs (lines blended near conjunction)
    rv = make_rv(seed=7, missing2=range(0, 30, 3))
    fit = fit_velocities(rv, Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"]}), fit_eccentricity=True)
    assert np.isnan(fit.residuals_secondary[::3]).all()
    assert np.isfinite(fit.residuals_secondary[1::3]).all()
    assert fit.n_data == 30 + 20
    assert abs(fit.values["k_secondary"] - TRUE["k2"]) < 4 * fit.uncertainties["k_secondary"]


def test_jitter_recovers_extra_scatter():
    # primary errors underestimated: true scatter hypot(0.5, 2.0) km/s, quoted 0.5 km/s
    rv = make_rv(seed=11, n=60, err1=0.5, err2=0.5, jitter=(2.0, 0.0))
    eph = Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"],
                     "ecosw": TRUE["e"] * np.cos(np.radians(TRUE["omega"])),
                     "esinw": TRUE["e"] * np.sin(np.radians(TRUE["omega"]))})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", EclipsekitWarning)
        fit = fit_velocities(rv, eph, jitter=True, seed=2)
    s1, ds1 = fit.values["jitter_primary"], fit.uncertainties["jitter_primary"]
    assert abs(s1 - 2.0) < 3 * ds1          # maximum likelihood, Fisher error
    assert fit.values["jitter_secondary"] < 0.5
    assert abs(fit.values["k_primary"] - TRUE["k1"]) < 4 * fit.uncertainties["k_primary"]
    # without jitter the primary's errors are scaled up instead, by about 2.06/0.5
    with pytest.warns(EclipsekitWarning, match="scatter"):
        plain = fit_velocities(rv, eph)
    assert plain.error_scale_primary == pytest.approx(np.hypot(0.5, 2.0) / 0.5, rel=0.25)


def test_free_ephemeris_with_prior_and_separate_gamma():
    rv = make_rv(seed=13)
    # shift star 2 by 1.5 km/s (template mismatch)
    rv = VelocityCurve(rv.time, rv.rv1, rv.rv1_err, rv.rv2 + 1.5, rv.rv2_err)
    eph = Ephemeris({"period": TRUE["period"] + 2e-5, "t0": TRUE["t0"] - 0.002},
                    {"period": 1e-5, "t0": 0.001})
    fit = fit_velocities(rv, eph, fit_ephemeris=True, fit_eccentricity=True, separate_gamma=True)
    assert "period" in fit.free and "t0" in fit.free
    assert abs(fit.values["gamma_offset"] - 1.5) < 4 * fit.uncertainties["gamma_offset"]
    # posterior uncertainties cannot exceed the prior's (the prior is one of the residuals)
    assert fit.uncertainties["period"] <= 1e-5 * 1.0001
    assert fit.uncertainties["t0"] <= 0.001 * 1.0001


def test_quantities_and_period_search_like_ephemeris():
    class Search:  # PeriodSearch-like: attributes, not dicts
        period, period_err, t0, t0_err = TRUE["period"], 1e-5, TRUE["t0"], 1e-3

    rv = make_rv(seed=17)
    a = fit_velocities(rv, Search(), ecosw=0.0, esinw=0.0, fit_eccentricity=True, seed=3)
    b = fit_velocities(rv, period=TRUE["period"] * u.day, t0=TRUE["t0"], fit_eccentricity=True, seed=3)
    assert a.values["k_primary"] == pytest.approx(b.values["k_primary"], rel=1e-6)


def test_bad_input_raises():
    rv = make_rv(seed=19, n=3)
    with pytest.raises(InputError, match="period"):
        fit_velocities(rv)
    with pytest.raises(InputError, match="free parameters"):
        fit_velocities(rv, period=4.2, t0=TRUE["t0"], fit_eccentricity=True, jitter=True)
    with pytest.raises(InputError, match="period"):
        fit_velocities(rv, period=-1.0, t0=0.0)
    with pytest.raises(InputError, match="VelocityCurve"):
        fit_velocities(np.zeros(5), period=1.0, t0=0.0)


def test_light_curve_eccentricity_as_prior_by_default():
    # light curve: e cos w precise, e sin w poor (common practice: eclipse timing gives e cos w,
    # eclipse durations only e sin w); the velocities should sharpen e sin w, keep e cos w
    ecosw = TRUE["e"] * np.cos(np.radians(TRUE["omega"]))
    esinw = TRUE["e"] * np.sin(np.radians(TRUE["omega"]))
    eph = Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"], "ecosw": ecosw + 5e-5, "esinw": esinw - 0.03},
                    {"period": 1e-6, "t0": 1e-4, "ecosw": 1e-4, "esinw": 0.05})
    fit = fit_velocities(make_rv(seed=23), eph, seed=4)
    assert {"ecosw", "esinw"} <= set(fit.free)
    assert fit.uncertainties["ecosw"] <= 1e-4 * 1.0001
    assert fit.uncertainties["esinw"] < 0.01
    assert abs(fit.values["esinw"] - esinw) < 4 * fit.uncertainties["esinw"]
