"""Tests of the absolute dimensions (eclipsekit.dimensions).

Each physical check names its source beside it.  The end-to-end test generates
velocities with an independent textbook expression (Kepler's equation by brentq), not
with eclipsekit.orbit.
"""

from __future__ import annotations

import json
import warnings

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest

from _textbook import textbook_velocity
from eclipsekit.data import VelocityCurve
from eclipsekit.dimensions import (
    ASINI_FACTOR,
    MSIN3I_FACTOR,
    AbsoluteDimensions,
    absolute_dimensions,
    bolometric_magnitude,
    distance_from_parallax,
    luminosity,
    mass_function,
    minimum_masses,
    parse_value_error,
    projected_semi_major_axis,
    semi_amplitude,
    surface_gravity,
    total_mass,
)
from eclipsekit.errors import EclipsekitWarning, InputError
from eclipsekit.spectroscopy import fit_velocities


class Fit:
    """Duck-typed fit result (values / uncertainties / samples dicts)."""

    def __init__(self, values, uncertainties=None, samples=None):
        self.values = dict(values)
        self.uncertainties = dict(uncertainties or {})
        self.samples = dict(samples or {})


def light_curve_fit(values, errors, n=4000, seed=0, corr=None):
    """A light-curve fit with Gaussian samples (optionally correlated r1-r2)."""
    rng = np.random.default_rng(seed)
    keys = list(values)
    cov = np.diag([errors[k] ** 2 for k in keys])
    if corr is not None:
        i, j = keys.index("frac_radius_primary"), keys.index("frac_radius_secondary")
        cov[i, j] = cov[j, i] = corr * errors[keys[i]] * errors[keys[j]]
    draws = rng.multivariate_normal([values[k] for k in keys], cov, size=n)
    return Fit(values, errors, {k: draws[:, i] for i, k in enumerate(keys)})


# --- Kepler's third law and the standard numerical forms ------------------------------------------
def test_kepler_third_law_sun_earth():
    # a = 1 au (IAU 2012 B2), P = 1 sidereal year = 365.256363 d (common practice; from memory)
    # -> M1 + M2 = 1 M_sun within 1e-4 (IAU 2015 B3 nominal GM_sun; Earth+Moon is 3e-6 M_sun)
    assert total_mass(365.256363004 * u.day, 1 * u.au) == pytest.approx(1.0, abs=1e-4)
    # floats are days and nominal solar radii
    assert total_mass(365.256363004, (const.au / const.R_sun).decompose().value) == pytest.approx(1.0, abs=1e-4)


def test_standard_numerical_forms():
    # M sin^3 i = 1.036149e-7 (1-e^2)^{3/2} (K1+K2)^2 K2 P and a sin i = 1.976569e-2 (1-e^2)^{1/2} (K1+K2) P
    # (these follow from IAU 2015 Resolution B3 nominal GM_sun and R_sun; checked from first principles below)
    assert MSIN3I_FACTOR == pytest.approx(1.036149e-7, rel=1e-6)
    assert ASINI_FACTOR == pytest.approx(1.976569e-2, rel=1e-6)
    p, k1, k2, e = 7.3, 84.2, 101.7, 0.23
    m1, m2 = minimum_masses(p, k1, k2, e)
    asini = projected_semi_major_axis(p, k1, k2, e)
    assert m1 == pytest.approx(1.036149e-7 * (1 - e**2) ** 1.5 * (k1 + k2) ** 2 * k2 * p, rel=1e-6)
    assert m2 == pytest.approx(1.036149e-7 * (1 - e**2) ** 1.5 * (k1 + k2) ** 2 * k1 * p, rel=1e-6)
    assert asini == pytest.approx(1.976569e-2 * (1 - e**2) ** 0.5 * (k1 + k2) * p, rel=1e-6)
    # first principles through astropy.units: M1 sin^3 i = P (1-e^2)^{3/2} (K1+K2)^2 K2 / (2 pi G)
    P, K1, K2 = p * u.day, k1 * u.km / u.s, k2 * u.km / u.s
    m1_ap = (P * (1 - e**2) ** 1.5 * (K1 + K2) ** 2 * K2 / (2 * np.pi * const.G)).to_value(u.M_sun)
    a_ap = (P * (1 - e**2) ** 0.5 * (K1 + K2) / (2 * np.pi)).to_value(u.R_sun)
    assert m1 == pytest.approx(m1_ap, rel=1e-10)
    assert asini == pytest.approx(a_ap, rel=1e-10)
    # Kepler's third law closes the loop: (a sin i)^3 / P^2 = (M1 + M2) sin^3 i
    assert total_mass(p, asini) == pytest.approx(m1 + m2, rel=1e-10)


def test_sun_reflex_velocity_from_jupiter():
    # Sun's reflex velocity due to Jupiter is about 12.5 m/s (common practice; from memory);
    # Jupiter: P = 11.862 yr = 4332.6 d, e = 0.049 (from memory), M_jup IAU 2015 B3 nominal
    p, m_j = 4332.59, (const.M_jup / const.M_sun).value
    k = semi_amplitude(p, 1.0, m_j, inclination=90.0, eccentricity=0.0489)
    assert k * 1e3 == pytest.approx(12.5, abs=0.2)
    # single-lined mass function: f(M) = M2^3 sin^3 i / (M1 + M2)^2 (Hilditch 2001, eq. 2.50)
    assert mass_function(p, k, 0.0489) == pytest.approx(m_j**3 / (1 + m_j) ** 2, rel=1e-9)


# --- luminosities, magnitudes, gravity, parallax -------------------------------------------------------
def test_solar_luminosity_and_bolometric_magnitude():
    # L = 4 pi R^2 sigma T^4 with R = 1 R_sun, T = 5772 K -> 1 L_sun to 1e-3 (IAU 2015 B3)
    assert luminosity(1.0, 5772.0) == pytest.approx(1.0, abs=1e-3)
    assert luminosity(1 * u.R_sun, 5772 * u.K) == pytest.approx(1.0, abs=1e-3)
    # M_bol,sun = 4.74 on the IAU 2015 Resolution B2 scale (L0 = 3.0128e28 W)
    assert bolometric_magnitude(1.0) == pytest.approx(4.74, abs=1e-3)
    # 5 magnitudes per factor 100 in luminosity (Pogson scale; common practice)
    assert bolometric_magnitude(100.0) == pytest.approx(4.74 - 5.0, abs=1e-3)
    # log g of the Sun = 4.438 cgs (common practice; from memory)
    assert surface_gravity(1.0, 1.0) == pytest.approx(4.438, abs=1e-3)


def test_parallax_distance():
    # 1 arcsec -> 1 pc = 3.2616 light years (IAU 2015 Resolution B2: 1 pc = (648000 / pi) au exactly)
    d = distance_from_parallax(1 * u.arcsec)
    assert d == pytest.approx(1.0, rel=1e-12)
    ly = (d * u.pc).to_value(u.lyr)
    assert ly == pytest.approx(3.2616, abs=1e-4)
    pc_first_principles = const.au * 648000 / np.pi
    assert (pc_first_principles / (const.c * 365.25 * u.day)).to_value(u.one) == pytest.approx(3.2616, abs=1e-4)
    assert distance_from_parallax(10.0) == pytest.approx(100.0)  # floats are mas


def test_parse_value_error():
    assert parse_value_error("85.2±0.4") == (85.2, 0.4)
    assert parse_value_error("85.2+-0.4") == (85.2, 0.4)
    assert parse_value_error(" 1.2e2 +/- 3 ") == (120.0, 3.0)
    with pytest.raises(InputError, match="VALUE±ERROR"):
        parse_value_error("85.2")


# --- absolute_dimensions --------------------------------------------------------------------------
def test_end_to_end_masses_and_radii():
    # invented system: 1.40 + 1.10 M_sun, R = 1.60, 1.15 R_sun, P = 3.5 d, e = 0.05, w = 70 deg, i = 87.5 deg
    m1, m2, r1, r2, p, e, w, inc, t0 = 1.40, 1.10, 1.60, 1.15, 3.5, 0.05, 70.0, 87.5, 2458000.25
    # a from Kepler's third law via astropy (IAU 2015 B3 GM_sun), K = 2 pi a_j sin i / (P sqrt(1-e^2))
    a = ((const.GM_sun * (m1 + m2) * (p * u.day) ** 2 / (4 * np.pi**2)) ** (1 / 3)).to_value(u.R_sun)
    sini = np.sin(np.radians(inc))
    k_sum = (2 * np.pi * a * u.R_sun * sini / (p * u.day * np.sqrt(1 - e**2))).to_value(u.km / u.s)
    k1, k2 = k_sum * m2 / (m1 + m2), k_sum * m1 / (m1 + m2)
    rng = np.random.default_rng(42)
    n = 40
    time = t0 + np.sort(rng.uniform(0, 60, n))
    kw = dict(period=p, t0=t0, gamma=21.0, e=e, omega_deg=w)
    v1 = textbook_velocity(time, k=k1, **kw) + 0.5 * rng.standard_normal(n)
    v2 = textbook_velocity(time, k=k2, sign=-1.0, **kw) + 0.7 * rng.standard_normal(n)
    v2[::5] = np.nan  # secondary not measured at some epochs
    rv = VelocityCurve(time, v1, np.full(n, 0.5), v2, np.where(np.isfinite(v2), 0.7, np.nan))
    # light-curve fit: truth + its own noise, correlated r1-r2 samples
    ecosw, esinw = e * np.cos(np.radians(w)), e * np.sin(np.radians(w))
    err = {"period": 2e-6, "t0": 1e-4, "inclination": 0.1, "frac_radius_primary": 0.0008,
           "frac_radius_secondary": 0.0008, "ecosw": 1e-4, "esinw": 0.005}
    truth = {"period": p, "t0": t0, "inclination": inc, "frac_radius_primary": r1 / a,
             "frac_radius_secondary": r2 / a, "ecosw": ecosw, "esinw": esinw}
    observed = {k: v + err[k] * rng.standard_normal() for k, v in truth.items()}
    lc = light_curve_fit(observed, err, seed=1, corr=-0.6)
    lc.values["eccentricity"] = float(np.hypot(observed["ecosw"], observed["esinw"]))

    orbit = fit_velocities(rv, lc, fit_eccentricity=True, seed=2)
    dims = absolute_dimensions(lc, orbit, teff_primary=(6700, 80), teff_secondary=(6100, 80),
                               parallax=(4.0, 0.04), seed=3)
    assert isinstance(dims, AbsoluteDimensions)
    for key, truth_value in (("mass_primary", m1), ("mass_secondary", m2), ("radius_primary", r1),
                             ("radius_secondary", r2), ("a", a), ("mass_ratio", m2 / m1)):
        value, sigma = dims.values[key], dims.uncertainties[key]
        assert abs(value - truth_value) < 3 * sigma, key          # within 3 sigma
        assert abs(value / truth_value - 1) < 0.01, key             # and within 1%
        assert sigma / truth_value < 0.01, key                      # a useful measurement
    assert dims.values["distance"] == pytest.approx(250.0, rel=0.01)
    # formulas of the derived quantities against astropy, sample by sample
    s = dims.samples
    R = s["radius_primary"] * u.R_sun
    M = s["mass_primary"] * const.GM_sun / const.G
    np.testing.assert_allclose(s["vsync_primary"], (2 * np.pi * R / (s["input_period"] * u.day)).to_value(u.km / u.s),
                               rtol=1e-9)
    np.testing.assert_allclose(s["logg_primary"], np.log10((const.G * M / R**2).to_value(u.cm / u.s**2)), rtol=1e-9)
    np.testing.assert_allclose(s["density_primary"], (M / (4 / 3 * np.pi * R**3)).to_value(u.g / u.cm**3),
                               rtol=1e-9)
    lum = (4 * np.pi * R**2 * const.sigma_sb * (s["input_teff_primary"] * u.K) ** 4).to_value(u.L_sun)
    np.testing.assert_allclose(s["luminosity_primary"], lum, rtol=1e-9)
    json.dumps(dims.to_dict())
    assert "mass_primary" in dims.summary()


@pytest.mark.filterwarnings("ignore::eclipsekit.errors.EclipsekitWarning")  # expected notes
def test_budget_and_linear_propagation():
    # K1 = K2 with equal relative errors: M1 ~ (K1+K2)^2 K2 gives d ln M1 = d ln K1 + 2 d ln K2,
    # so first-order propagation (common practice) gives shares 1/5 (K1) and 4/5 (K2)
    geom = Fit({"period": 5.0, "inclination": 89.9, "frac_radius_primary": 0.1, "frac_radius_secondary": 0.08,
                "eccentricity": 0.0}, {"period": 0.0, "inclination": 0.0, "frac_radius_primary": 0.0,
                                       "frac_radius_secondary": 0.0, "eccentricity": 0.0})
    dims = absolute_dimensions(geom, k_primary=(100.0, 0.5), k_secondary=(100.0, 0.5), seed=4)
    shares = dims.budget_shares["mass_primary"]
    assert shares["k_secondary"] == pytest.approx(0.8, abs=0.03)
    assert shares["k_primary"] == pytest.approx(0.2, abs=0.03)
    assert dims.budget["mass_primary"].startswith("80% from K2")  # the inputs by their table labels
    # sampled uncertainty = first-order sqrt(1 + 4) * sigma_K / K
    assert dims.uncertainties["mass_primary"] / dims.values["mass_primary"] == pytest.approx(
        np.sqrt(5) * 0.005, rel=0.05)


def test_sample_pairing_preserves_correlations():
    # r1 + r2 known exactly (perfectly anticorrelated samples): R1 + R2 scatters only through a
    rng = np.random.default_rng(5)
    r1 = 0.1 + 0.002 * rng.standard_normal(3000)
    lc = Fit({"period": 2.0, "inclination": 88.0, "frac_radius_primary": 0.1, "frac_radius_secondary": 0.1},
             {}, {"period": np.full(3000, 2.0), "inclination": np.full(3000, 88.0),
                  "frac_radius_primary": r1, "frac_radius_secondary": 0.2 - r1, "eccentricity": np.zeros(3000)})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", EclipsekitWarning)
        dims = absolute_dimensions(lc, k_primary=(90.0, 1e-6), k_secondary=(110.0, 1e-6), seed=6)
    rsum = dims.samples["radius_primary"] + dims.samples["radius_secondary"]
    a = dims.values["a"]
    assert np.std(rsum) < 1e-6 * a                              # exact, as the input correlation demands
    assert dims.uncertainties["radius_primary"] == pytest.approx(0.002 * a, rel=0.05)


@pytest.mark.filterwarnings("ignore::eclipsekit.errors.EclipsekitWarning")  # expected notes
def test_inputs_as_quantities_and_overrides():
    geom = Fit({"period": 5.0, "inclination": 88.0, "frac_radius_primary": 0.06, "frac_radius_secondary": 0.05},
               {"period": 1e-6, "inclination": 0.2, "frac_radius_primary": 5e-4, "frac_radius_secondary": 5e-4})
    kw = dict(eccentricity=(0.0, 0.0), seed=8)
    a = absolute_dimensions(geom, k_primary=(90.0, 0.3), k_secondary="100±0.3", **kw)
    b = absolute_dimensions(geom, k_primary=(90 * u.km / u.s, 300 * u.m / u.s),
                            k_secondary=(1e5 * u.m / u.s, 0.3 * u.km / u.s), **kw)
    assert a.values == b.values
    c = absolute_dimensions(period=5.0 * u.day, inclination=(88 * u.deg).to(u.rad), frac_radius_primary=(0.06, 5e-4),
                            frac_radius_secondary=(0.05, 5e-4), k_primary=(90.0, 0.3), k_secondary=(100.0, 0.3),
                            eccentricity=0.0, seed=8)
    assert c.values["mass_primary"] == pytest.approx(a.values["mass_primary"], rel=2e-3)


@pytest.mark.filterwarnings("ignore::eclipsekit.errors.EclipsekitWarning")  # expected notes
def test_bad_inputs():
    geom = Fit({"period": 5.0, "inclination": 88.0, "frac_radius_primary": 0.06, "frac_radius_secondary": 0.05,
                "eccentricity": 0.0}, {"period": 1e-6, "inclination": 0.2, "frac_radius_primary": 5e-4,
                                       "frac_radius_secondary": 5e-4, "eccentricity": 0.0})
    good = dict(k_primary=(90.0, 0.3), k_secondary=(100.0, 0.3))
    with pytest.raises(InputError, match="k_primary"):
        absolute_dimensions(geom, k_primary=(-90.0, 0.3), k_secondary=(100.0, 0.3))
    with pytest.raises(InputError, match="sin i = 0"):
        absolute_dimensions(geom, inclination=0.0, **good)
    with pytest.raises(InputError, match="1000"):  # K's given in m/s by mistake
        absolute_dimensions(geom, k_primary=(90e3, 300), k_secondary=(100e3, 300))
    with pytest.raises(InputError, match="k_secondary"):
        absolute_dimensions(geom, k_primary=(90.0, 0.3))
    with pytest.raises(InputError, match="inclination"):
        absolute_dimensions(period=5.0, **good)
    with pytest.raises(InputError, match="eccentricity"):
        absolute_dimensions(geom, eccentricity=1.2, **good)
    with pytest.raises(InputError, match="parallax"):
        absolute_dimensions(geom, parallax=(-1.0, 0.5), **good)
    with pytest.raises(InputError, match="frac_radius_primary"):
        absolute_dimensions(geom, frac_radius_primary=1.5, **good)
    with pytest.warns(EclipsekitWarning, match="no uncertainty"):
        absolute_dimensions(geom, k_primary=90.0, k_secondary=100.0)
