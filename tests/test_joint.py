"""Tests of the joint light-curve + radial-velocity fit (eclipsekit.fit.joint).

The velocities come from an independent textbook expression written here
(v = gamma + K [cos(nu + w) + e cos w], Kepler's equation solved with
scipy.optimize.brentq; textbook Keplerian RV, common practice), not from
eclipsekit.orbit.  The light curve is eclipsekit.eclipse.model_flux plus noise: the
geometry is not what is tested here (tests/test_fitting.py checks it against the
independent brute-force generator); the velocity parameters, e sin w and the masses are.
"""

from __future__ import annotations

import os
import time as _time
import warnings

import numpy as np
import pytest

from _textbook import textbook_velocity
from eclipsekit.data import LightCurve, VelocityCurve
from eclipsekit.dimensions import absolute_dimensions
from eclipsekit.eclipse import model_flux
from eclipsekit.errors import EclipsekitWarning, InputError
from eclipsekit.fit import EclipseFit, fit_eclipses
from eclipsekit.fit import fit_joint
from eclipsekit.spectroscopy import OrbitFit

BJD0 = 2460000.0
# ground-based-like photometry (4 mmag every 10 minutes) of partial eclipses: the eclipse durations then
# measure e sin w only loosely, the situation where the velocities help
CADENCE = 10.0 / 1440
TRUE = dict(period=4.3, t0=BJD0 + 1.234, radius_sum=0.16, radius_ratio=0.75, inclination=87.0,
            surface_brightness_ratio=0.7, e=0.10, omega=60.0, k1=80.0, k2=95.0, gamma=-12.0)
LD = dict(ld_primary=(0.42, 0.22), ld_secondary=(0.48, 0.20))
ECOSW = TRUE["e"] * np.cos(np.radians(TRUE["omega"]))
ESINW = TRUE["e"] * np.sin(np.radians(TRUE["omega"]))
SEED = int(os.environ.get("JOINT_SEED", 2))


def _data(seed=SEED, n_rv=24, sigma_lc=4e-3, err1=1.0, err2=1.3):
    rng = np.random.default_rng(seed)
    t = BJD0 + np.arange(0.0, 2.2 * TRUE["period"], CADENCE)
    geo = {k: TRUE[k] for k in ("period", "t0", "radius_sum", "radius_ratio", "inclination",
                                "surface_brightness_ratio")}
    f = model_flux(t, **geo, ecosw=ECOSW, esinw=ESINW, **LD)
    lc = LightCurve(t, f + rng.normal(0.0, sigma_lc, t.size), np.full(t.size, sigma_lc))
    # velocities: t0 here is the conjunction; mid-eclipse (the light curve's t0) differs by ~1e-4 d at
    # i = 87 deg, a velocity change of ~0.01 km/s, far below the 1 km/s errors
    tv = TRUE["t0"] + np.sort(rng.uniform(0.0, 30.0, n_rv))
    kw = dict(period=TRUE["period"], t0=TRUE["t0"], gamma=TRUE["gamma"], e=TRUE["e"], omega_deg=TRUE["omega"])
    v1 = textbook_velocity(tv, k=TRUE["k1"], **kw) + err1 * rng.standard_normal(n_rv)
    v2 = textbook_velocity(tv, k=TRUE["k2"], sign=-1.0, **kw) + err2 * rng.standard_normal(n_rv)
    v2[::6] = np.nan  # the secondary not measured at some epochs
    rv = VelocityCurve(tv, v1, np.full(n_rv, err1), v2, np.where(np.isfinite(v2), err2, np.nan))
    # start of the light-curve fit: what a careful look at the noise-free folded curve gives
    ph = ((t - TRUE["t0"]) / TRUE["period"] + 0.25) % 1.0 - 0.25
    start = {"period": TRUE["period"], "t0": TRUE["t0"]}
    for key, m in (("primary", np.abs(ph) < 0.25), ("secondary", np.abs(ph) >= 0.25)):
        ine = m & (f < 1 - 1e-9)
        start[f"depth_{key}"] = 1 - f[m].min()
        start[f"duration_{key}"] = (ph[ine].max() - ph[ine].min()) * TRUE["period"] + CADENCE
    sec = (np.abs(ph) >= 0.25) & (f < 1 - 1e-9)
    start["phase_secondary"] = float(0.5 * (ph[sec].max() + ph[sec].min()) % 1.0)
    return lc, rv, start


_CACHE: dict = {}


def _fits():
    """Light-curve-only fit, joint fit and their timings (computed once for the module)."""
    if not _CACHE:
        lc, rv, start = _data()
        opts = dict(free=["eccentricity"], progress=False, **LD)
        t = _time.perf_counter()
        # covariance errors, as the joint fit's: the comparisons below are like with like (the default
        # errors="auto" may run an MCMC for the light curve alone)
        alone = fit_eclipses(lc, start, seed=3, errors="covariance", **opts)
        t_alone = _time.perf_counter() - t
        t = _time.perf_counter()
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", EclipsekitWarning)
            joint = fit_eclipses(lc, start, velocities=rv, seed=3, **opts)
        # consistent data: the joint step itself raises no warning (the light curve's own notes, e.g. on
        # the radius ratio of partial eclipses, may pass through)
        assert not [w for w in caught if any(x in str(w.message) for x in ("joint", "velocit", "differ"))]
        t_joint = _time.perf_counter() - t
        _CACHE.update(lc=lc, rv=rv, start=start, alone=alone, joint=joint, t_alone=t_alone, t_joint=t_joint)
    return _CACHE


def test_joint_fit_recovers_the_velocity_orbit_and_eccentricity():
    c = _fits()
    fit = c["joint"]
    assert isinstance(fit, EclipseFit) and fit.success, fit.message
    assert {"k_primary", "k_secondary", "gamma", "ecosw", "esinw", "period", "t0"} <= set(fit.free)
    v, s = fit.values, fit.uncertainties
    # injected values (textbook Keplerian RV above; common practice) within 3 sigma
    for key, truth in (("k_primary", TRUE["k1"]), ("k_secondary", TRUE["k2"]), ("gamma", TRUE["gamma"]),
                       ("ecosw", ECOSW), ("esinw", ESINW)):
        assert abs(v[key] - truth) < 3 * s[key], (key, v[key], truth, s[key])
    assert fit.units["k_primary"] == "km / s"
    # light-curve statistics still describe the light curve: white noise of the stated sigma gives a
    # reduced chi-square 1 +- sqrt(2/N) (chi-square distribution); 5 sigma
    assert fit.redchi == pytest.approx(1.0, abs=5 * np.sqrt(2 / len(fit.lc)))
    np.testing.assert_allclose(fit.detrended_flux * fit.baseline, fit.lc.flux)
    print(f"\nesinw: light curve alone {c['alone'].values['esinw']:.5f} +- {c['alone'].uncertainties['esinw']:.5f}, "
          f"joint {v['esinw']:.5f} +- {s['esinw']:.5f} (truth {ESINW:.5f}); ecosw: alone +- "
          f"{c['alone'].uncertainties['ecosw']:.2e}, joint +- {s['ecosw']:.2e}; "
          f"fit times {c['t_alone']:.1f} s alone, {c['t_joint']:.1f} s joint")


def test_velocities_tighten_esinw():
    c = _fits()
    alone, joint = c["alone"].uncertainties, c["joint"].uncertainties
    # the point of the joint fit: the velocity curve's shape measures e sin w, the light curve only
    # through the eclipse durations (Kopal 1959, ch. VI; common practice)
    assert joint["esinw"] < 0.7 * alone["esinw"]
    # e cos w is pinned by the secondary's timing in both; the velocities cannot loosen it
    assert joint["ecosw"] <= 1.05 * alone["ecosw"]
    # samples are draws from the covariance, so their spread is the quoted uncertainty (common practice);
    # the period is fitted as a timing shift, which must be converted back to days
    for fit in (c["alone"], c["joint"]):
        for key in ("period", "t0", "esinw", "k_primary"):
            if key in fit.samples:
                assert np.std(fit.samples[key]) == pytest.approx(fit.uncertainties[key], rel=0.1), key
    # the internal light-curve-only start fit is the same fit as the separate one
    assert c["joint"].diagnostics["joint"]["light_curve_only"]["esinw"] == pytest.approx(alone["esinw"], rel=1e-6)


def test_orbit_attribute_behaves_like_a_velocity_fit():
    c = _fits()
    fit, rv = c["joint"], c["rv"]
    orbit = fit.orbit
    assert isinstance(orbit, OrbitFit) and orbit.double_lined
    for key in ("k_primary", "k_secondary", "gamma", "ecosw", "esinw", "period", "t0"):
        assert orbit.values[key] == fit.values[key]
        assert orbit.uncertainties[key] == pytest.approx(fit.uncertainties[key])
    rv1, rv2 = orbit.model(rv.time)
    np.testing.assert_allclose(rv.rv1 - rv1, orbit.residuals_primary, atol=1e-9)
    ok = np.isfinite(rv.rv2)
    np.testing.assert_allclose((rv.rv2 - rv2)[ok], orbit.residuals_secondary[ok], atol=1e-9)
    # rms of white noise of the stated errors (1.0 and 1.3 km/s): relative spread 1/sqrt(2n) for n points
    # (chi distribution, large-n limit); 4 sigma
    n1, n2 = int(np.isfinite(rv.rv1).sum()), int(ok.sum())
    assert orbit.rms_primary == pytest.approx(1.0, rel=4 / np.sqrt(2 * n1))
    assert orbit.rms_secondary == pytest.approx(1.3, rel=4 / np.sqrt(2 * n2))
    # the textbook model at the fitted values agrees with the orbit's model (independent Kepler solver);
    # 0.03 km/s: the textbook t0 is the conjunction, the fit's t0 mid-eclipse (~1e-4 d apart at i = 87 deg)
    ref = textbook_velocity(rv.time, period=orbit.values["period"], t0=orbit.values["t0"],
                            k=orbit.values["k_primary"], gamma=orbit.values["gamma"],
                            e=orbit.values["eccentricity"], omega_deg=orbit.values["omega"])
    np.testing.assert_allclose(rv1, ref, atol=0.03)
    q_err = orbit.uncertainties["mass_ratio"]
    assert orbit.values["mass_ratio"] == pytest.approx(TRUE["k1"] / TRUE["k2"], abs=3 * q_err)  # q = K1/K2
    assert "k_primary" in orbit.summary() and "k_primary" in fit.summary()


def test_masses_from_joint_samples():
    c = _fits()
    fit = c["joint"]
    dims = absolute_dimensions(fit, fit.orbit, seed=4)
    # truth: M sin^3 i = 1.036149e-7 (1 - e^2)^{3/2} (K1 + K2)^2 K_other P [M_sun; K km/s, P d]
    # (standard numerical form; IAU 2015 Resolution B3 nominal constants)
    sin3i = np.sin(np.radians(TRUE["inclination"])) ** 3
    common = 1.036149e-7 * (1 - TRUE["e"] ** 2) ** 1.5 * (TRUE["k1"] + TRUE["k2"]) ** 2 * TRUE["period"] / sin3i
    for key, truth in (("mass_primary", common * TRUE["k2"]), ("mass_secondary", common * TRUE["k1"])):
        assert abs(dims.values[key] - truth) < 3 * dims.uncertainties[key], (key, dims.values[key], truth)
    # the orbit's samples are rows of the joint fit's samples: paired row by row, not re-paired at random
    s = fit.samples
    order = np.argsort(s["k_primary"])
    rows = order[np.searchsorted(s["k_primary"], dims.samples["input_k_primary"], sorter=order)]
    np.testing.assert_array_equal(dims.samples["input_k_primary"], s["k_primary"][rows])
    for key in ("k_secondary", "period", "inclination", "frac_radius_primary"):
        np.testing.assert_array_equal(dims.samples[f"input_{key}"], s[key][rows])
    # with only the fit given, its orbit is used
    dims2 = absolute_dimensions(fit, seed=4)
    assert dims2.values["mass_primary"] == pytest.approx(dims.values["mass_primary"], rel=1e-12)


def test_fit_joint_function_and_bad_input():
    c = _fits()
    with pytest.raises(InputError, match="velocities"):
        fit_joint(c["lc"], np.arange(3.0), c["start"])
    with pytest.raises(InputError, match="covariance"):
        fit_eclipses(c["lc"], c["start"], velocities=c["rv"], errors="mcmc")
    with pytest.raises(InputError, match="separate_gamma"):
        fit_eclipses(c["lc"], c["start"], separate_gamma=True)
    single = VelocityCurve(c["rv"].time, c["rv"].rv1, c["rv"].rv1_err)
    with pytest.raises(InputError, match="separate_gamma"):
        fit_joint(c["lc"], single, c["start"], separate_gamma=True)
