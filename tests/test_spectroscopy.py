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
    # the rms of n Gaussian residuals scatters by sigma / sqrt(2 n) (chi distribution, large n; common
    # practice): 3 of those, with the few fitted parameters' shrinkage sqrt(1 - p / 2n) well inside
    band = 3 / np.sqrt(2 * len(rv.time))
    assert fit.rms_primary == pytest.approx(0.8, rel=band)
    assert fit.rms_secondary == pytest.approx(1.1, rel=band)
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
    # unit spread and zero mean within 3 of their sampling errors for n = 40 pulls: 1/sqrt(2n) for the
    # standard deviation and 1/sqrt(n) for the mean (Gaussian sampling theory; common practice)
    n = pulls.size
    assert abs(np.std(pulls) - 1) < 3 / np.sqrt(2 * n)
    assert abs(np.mean(pulls)) < 3 / np.sqrt(n)


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
    # with jitter=False the primary's errors are scaled up instead, by about 2.06/0.5
    with pytest.warns(EclipsekitWarning, match="scatter"):
        plain = fit_velocities(rv, eph, jitter=False)
    assert plain.error_scale_primary == pytest.approx(np.hypot(0.5, 2.0) / 0.5, rel=0.25)
    assert plain.noise_model == "scaled errors" and not plain.jitter


def test_jitter_fitted_by_default_when_scatter_exceeds_twice_the_errors():
    # invented data with known jitter: 1.5 km/s (primary) and 2.5 km/s (secondary) on quoted errors of
    # 0.5 km/s, i.e. scatter 3.2x and 5.1x the errors (over the factor 2 of the brief)
    rv = make_rv(seed=29, n=60, err1=0.5, err2=0.5, jitter=(1.5, 2.5))
    eph = Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"],
                     "ecosw": TRUE["e"] * np.cos(np.radians(TRUE["omega"])),
                     "esinw": TRUE["e"] * np.sin(np.radians(TRUE["omega"]))})
    fit = fit_velocities(rv, eph, seed=5)           # no option: the default decides
    assert fit.jitter and fit.noise_model == "jitter"
    assert any("jitter term per star was fitted" in n for n in fit.notes)
    for star, truth in (("primary", 1.5), ("secondary", 2.5)):
        s, ds = fit.values[f"jitter_{star}"], fit.uncertainties[f"jitter_{star}"]
        # maximum-likelihood jitter within 2 sigma of its Fisher error (sigma of a variance estimate
        # from 60 points: s / sqrt(2 * 60) ~ 0.15-0.25 km/s; Gaussian likelihood theory)
        assert abs(s - truth) < 2 * ds, star
    # the same as asking for it explicitly
    asked = fit_velocities(rv, eph, jitter=True, seed=5)
    assert asked.values["jitter_primary"] == pytest.approx(fit.values["jitter_primary"], rel=1e-9)


def test_consistent_scatter_keeps_quoted_errors_and_says_so():
    # noise drawn with exactly the quoted errors: no jitter, errors scaled at most mildly (never by 2x)
    rv = make_rv(seed=31, n=40)
    fit = fit_velocities(rv, Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"]}), fit_eccentricity=True)
    assert not fit.jitter and fit.noise_model in ("quoted errors", "scaled errors")
    assert fit.error_scale_primary < 2 and fit.error_scale_secondary < 2
    said = {"quoted errors": "errors used as given", "scaled errors": "errors scaled"}[fit.noise_model]
    assert any(said in n for n in fit.notes) and said in fit.summary()


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


# --- velocity labels (issue 12) -------------------------------------------------------------
ECC_EPH = {"period": TRUE["period"], "t0": TRUE["t0"], "inclination": 86.0,
           "ecosw": TRUE["e"] * np.cos(np.radians(TRUE["omega"])),
           "esinw": TRUE["e"] * np.sin(np.radians(TRUE["omega"]))}


def _exchanged(rv):
    """The same velocities with the file's columns the other way round (star 2 labelled rv1)."""
    return VelocityCurve(rv.time, rv.rv2, rv.rv2_err, rv.rv1, rv.rv1_err)


def _kepler_minimum_masses(period_d, k1, k2, e):
    # M1 sin^3 i = P K2 (K1 + K2)^2 (1 - e^2)^{3/2} / (2 pi G), and M2 sin^3 i with K1 (Hilditch 2001,
    # "An Introduction to Close Binary Stars", ch. 2; formula from memory), G from astropy.constants
    p, k1, k2 = period_d * u.day, k1 * u.km / u.s, k2 * u.km / u.s
    common = p * (k1 + k2) ** 2 * (1 - e**2) ** 1.5 / (2 * np.pi * const.G)
    return (common * k2).to_value(u.M_sun), (common * k1).to_value(u.M_sun)


@pytest.mark.parametrize("eph", [ECC_EPH, {**ECC_EPH, "ecosw": 0.0, "esinw": 0.0}], ids=["eccentric", "circular"])
def test_swapped_columns_give_the_same_masses_with_a_note(eph):
    true = TRUE if eph["ecosw"] else {**TRUE, "e": 0.0}
    rv = make_rv(seed=37, true=true)
    right = fit_velocities(rv, Ephemeris(eph), seed=6)
    swapped = fit_velocities(_exchanged(rv), Ephemeris(eph), seed=6)
    assert right.labels == "as given" and swapped.labels == "swapped"
    assert any(n.startswith("velocity columns swapped:") for n in swapped.notes)
    assert "velocity columns swapped" in swapped.summary()
    for key in ("mass_primary_sin3i", "mass_secondary_sin3i", "k_primary", "k_secondary"):
        sigma = right.uncertainties[key]
        assert abs(swapped.values[key] - right.values[key]) < 0.01 * sigma, key
    # the masses follow Kepler's third law from the fitted K's, and match the invented truth
    v = right.values
    m1, m2 = _kepler_minimum_masses(v["period"], v["k_primary"], v["k_secondary"], v["eccentricity"])
    assert v["mass_primary_sin3i"] == pytest.approx(m1, rel=1e-9)
    assert v["mass_secondary_sin3i"] == pytest.approx(m2, rel=1e-9)
    t1, t2 = _kepler_minimum_masses(true["period"], true["k1"], true["k2"], true["e"])
    assert abs(v["mass_primary_sin3i"] - t1) < 4 * right.uncertainties["mass_primary_sin3i"]
    assert abs(v["mass_secondary_sin3i"] - t2) < 4 * right.uncertainties["mass_secondary_sin3i"]


def test_wrong_labels_kept_on_request_are_never_a_quiet_answer():
    # regression test for issue 12: columns the wrong way round on a circular orbit gave K1 = K2 = 0 and
    # masses of 0.009 M_sun with no warning.  Kept as labelled on purpose, the orbit is flagged.
    rv = _exchanged(make_rv(seed=41, true={**TRUE, "e": 0.0}))
    eph = Ephemeris({"period": TRUE["period"], "t0": TRUE["t0"], "ecosw": 0.0, "esinw": 0.0})
    with pytest.warns(EclipsekitWarning, match="consistent with zero"):
        fit = fit_velocities(rv, eph, labels="given", seed=7)
    assert fit.labels == "as given"
    assert len(fit.no_orbit_reasons) == 2     # K1 and K2 both consistent with zero
    with pytest.raises(InputError, match="labels"):
        fit_velocities(rv, eph, labels="backwards")


def test_secondary_only_velocities_are_fitted():
    # a file with the secondary's velocities only (issue 12, issue 13 item 7)
    full = make_rv(seed=43, n=25)
    rv2_only = VelocityCurve(full.time, None, None, full.rv2, full.rv2_err)
    eph = Ephemeris(ECC_EPH)
    fit = fit_velocities(rv2_only, eph, seed=8)
    assert fit.labels == "as given" and not fit.double_lined
    assert np.isnan(fit.values["k_primary"])
    assert abs(fit.values["k_secondary"] - TRUE["k2"]) < 4 * fit.uncertainties["k_secondary"]
    # mass function of the secondary's orbit, f = P K2^3 (1 - e^2)^{3/2} / (2 pi G) (Hilditch 2001, ch. 2,
    # from memory), through astropy.constants
    e = fit.values["eccentricity"]
    fm = (fit.values["period"] * u.day * (fit.values["k_secondary"] * u.km / u.s) ** 3 * (1 - e**2) ** 1.5
          / (2 * np.pi * const.G)).to_value(u.M_sun)
    assert fit.values["mass_function"] == pytest.approx(fm, rel=1e-9)
    rv1_model, rv2_model = fit.model(rv2_only.time)
    assert np.isnan(rv1_model).all()
    np.testing.assert_allclose(rv2_only.rv2 - rv2_model, fit.residuals_secondary)
    # the same velocities labelled as star 1 are recognised as the secondary's
    mislabelled = VelocityCurve(full.time, full.rv2, full.rv2_err)
    again = fit_velocities(mislabelled, eph, seed=8)
    assert again.labels == "swapped"
    assert again.values["k_secondary"] == pytest.approx(fit.values["k_secondary"], abs=0.01 * fit.uncertainties["k_secondary"])
