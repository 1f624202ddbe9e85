"""Tests of eclipsekit.eclipse against outside references (geometry, published limits, scipy.integrate)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from astropy import units as u
from scipy import integrate

from eclipsekit.errors import GeometryError, InputError
from eclipsekit.eclipse import eclipse_properties, light_ratio, model_flux, occulted_fraction
from eclipsekit.orbit import conjunction_times

from _brute_force import reference_separation

LAWS = [("linear", (0.6,)), ("quadratic", (0.4, 0.25)), ("power-2", (0.7, 0.6))]


# ----------------------------------------------------------------------------------------------
# independent brute-force reference: 2-D scipy.integrate over the occulted region
# ----------------------------------------------------------------------------------------------
def _intensity(mu, law, c):
    # the published forms: linear, quadratic (Kopal 1950), power-2 (Hestroffer 1997, A&A 327, 199)
    if law == "linear":
        return 1 - c[0] * (1 - mu)
    if law == "quadratic":
        return 1 - c[0] * (1 - mu) - c[1] * (1 - mu) ** 2
    if law == "power-2":
        return 1 - c[0] * (1 - mu ** c[1])
    return 1.0


def _hidden_reference(z, p, law, c, tol=1e-11):
    """Hidden fraction by nested scipy.integrate.quad in polar coordinates centred on the occultor.

    A point at (rho, psi) from the occultor's centre is at r^2 = z^2 + 2 z rho cos psi + rho^2 from
    the back star's centre; rho runs over the part of [0, p] with r <= 1.  Independent of the
    production path (which integrates over annuli centred on the back star).
    """
    def i_r(r):
        return _intensity(math.sqrt(max(1.0 - r * r, 0.0)), law, c)

    total = integrate.quad(lambda r: i_r(r) * 2 * math.pi * r, 0, 1, epsabs=tol, epsrel=tol, limit=200)[0]

    def inner(psi):
        disc = 1.0 - (z * math.sin(psi)) ** 2
        if disc <= 0:
            return 0.0
        sq = math.sqrt(disc)
        lo, hi = max(0.0, -z * math.cos(psi) - sq), min(p, -z * math.cos(psi) + sq)
        if hi <= lo:
            return 0.0
        f = lambda rho: i_r(math.sqrt(z * z + 2 * z * rho * math.cos(psi) + rho * rho)) * rho  # noqa: E731
        return integrate.quad(f, lo, hi, epsabs=tol, epsrel=tol, limit=200)[0]

    # kinks of the inner limits: where the circles cross, and the tangent directions to the disc
    pts = []
    cs = (1 - z * z - p * p) / (2 * z * p) if z > 0 else 2.0
    if abs(cs) < 1:
        pts.append(math.acos(cs))
    if z > 1:
        pts += [math.asin(1 / z), math.pi - math.asin(1 / z)]
    hidden = 2 * integrate.quad(inner, 0, math.pi, points=pts or None, epsabs=tol, epsrel=tol, limit=400)[0]
    return hidden / total


def _cases():
    # radius ratios 0.1 .. 10 (the occultor/back-star ratio is k in primary, 1/k in secondary
    # eclipse); separations inside, near internal contact, mid-partial, near external contact
    out = []
    for p in (0.1, 0.5, 1.0, 2.0, 10.0):
        a, b = abs(1 - p), 1 + p
        out += [(0.5 * a, p), (a + 0.02 * min(p, 1), p), (0.5 * (a + b), p), (b - 0.03 * min(p, 1), p)]
    return out


CASES = _cases()


@pytest.mark.parametrize("law,coeffs", LAWS)
def test_occulted_fraction_vs_2d_integration(law, coeffs):
    # brute-force 2-D scipy.integrate reference; target 1 ppm of total flux (our requirement).  The hidden
    # fraction of one star bounds the error in units of the total flux (its light share is <= 1).
    ref = np.array([_hidden_reference(z, p, law, coeffs) for z, p in CASES])
    direct = np.array([occulted_fraction(z, p, law, coeffs) for z, p in CASES])
    assert np.max(np.abs(direct - ref)) < 1e-6
    # the fast path (Chebyshev interpolation in z, used for many points) meets the same target
    fast = []
    for z, p in CASES:
        zz = np.concatenate([[z], np.linspace(0.0, 1.2 * (1 + p), 400)])
        fast.append(occulted_fraction(zz, p, law, coeffs)[0])
    assert np.max(np.abs(np.array(fast) - ref)) < 1e-6
    # measured: both paths agree with the reference to ~1e-13 (reference tolerance 1e-11)
    assert np.max(np.abs(np.array(fast) - ref)) < 1e-9


def _lens_area_mathworld(d, r, big_r):
    # circle-circle intersection area (standard geometry, e.g. Weisstein, MathWorld
    # "Circle-Circle Intersection"; from memory)
    if d >= r + big_r:
        return 0.0
    if d <= abs(big_r - r):
        return math.pi * min(r, big_r) ** 2
    return (r * r * math.acos((d * d + r * r - big_r * big_r) / (2 * d * r))
            + big_r * big_r * math.acos((d * d + big_r * big_r - r * r) / (2 * d * big_r))
            - 0.5 * math.sqrt((-d + r + big_r) * (d + r - big_r) * (d - r + big_r) * (d + r + big_r)))


@pytest.mark.parametrize("p", [0.05, 0.3, 1.0, 1.7, 8.0])
def test_uniform_lens_area(p):
    z = np.linspace(0.0, 1.1 * (1 + p), 57)
    ref = np.array([_lens_area_mathworld(zi, p, 1.0) for zi in z]) / math.pi
    assert np.allclose(occulted_fraction(z, p, "uniform", ()), ref, atol=1e-13, rtol=0)


def test_small_occultor_limit_mandel_agol():
    # Mandel & Agol 2002 (ApJ 580, L171): for p << 1 at disc centre the hidden fraction is
    # p^2 I(1) / <I>, with <I> / I(1) = 1 - u1/3 - u2/6 for the quadratic law.  The occultor
    # samples I over radius p, so the relative correction is O(p^2).
    u1, u2, p = 0.45, 0.2, 0.01
    expected = p * p / (1 - u1 / 3 - u2 / 6)
    got = occulted_fraction(0.0, p, "quadratic", (u1, u2))
    assert abs(got / expected - 1) < 2 * p * p


# ----------------------------------------------------------------------------------------------
# model_flux
# ----------------------------------------------------------------------------------------------
BASE = dict(period=2.7, t0=0.4, radius_sum=0.2, radius_ratio=0.7, inclination=88.0,
            surface_brightness_ratio=0.6, ld_law="quadratic", ld_primary=(0.4, 0.2), ld_secondary=(0.5, 0.15))


def test_uniform_total_and_annular_depths():
    # uniform discs, i = 90: star 2 (smaller) wholly behind star 1 at secondary (total eclipse),
    # depth L2 / (L1 + L2); annular primary hides k^2 of star 1, depth k^2 L1 / (L1 + L2)
    # (standard geometry of uniform discs; common practice)
    k, j = 0.5, 0.7
    kw = dict(BASE, radius_ratio=k, surface_brightness_ratio=j, inclination=90.0, ld_law="uniform",
              ld_primary=(), ld_secondary=())
    t1, t2 = conjunction_times(period=kw["period"], t0=kw["t0"], inclination=90.0)
    f = model_flux([t1, t2], **kw)
    l2 = light_ratio(k, j)
    assert abs((1 - f[1]) - l2 / (1 + l2)) < 1e-14
    assert abs((1 - f[0]) - k * k / (1 + l2)) < 1e-14


def test_light_ratio():
    # L2 / L1 = J k^2: our J is the disc-averaged surface brightness ratio, times the area ratio k^2
    assert light_ratio(0.8, 0.5) == pytest.approx(0.32, rel=1e-15)


@pytest.mark.parametrize("extra", [{}, dict(ecosw=0.15, esinw=-0.2, inclination=87.0),
                                   dict(radius_ratio=4.0, surface_brightness_ratio=0.2, ld_law="power-2",
                                        ld_primary=(0.6, 0.5), ld_secondary=(0.7, 0.6))])
def test_model_flux_vs_2d_integration(extra):
    # end to end: each in-eclipse point against the scipy.integrate reference at the projected
    # separation of the independent reference orbit (tests/_brute_force.py: Kepler's equation by
    # brentq, t0 at minimum separation); error in units of the total flux < 1 ppm (our requirement).
    # The package's conjunction_times and eclipse_properties only choose where to sample.
    kw = dict(BASE, **extra)
    t1, t2 = conjunction_times(period=kw["period"], t0=kw["t0"], ecosw=kw.get("ecosw", 0.0),
                               esinw=kw.get("esinw", 0.0), inclination=kw["inclination"])
    props = eclipse_properties(**{k: v for k, v in kw.items() if k != "t0"})
    t = np.concatenate([t1 + props["duration_primary"] * np.array([-0.45, -0.2, 0.0, 0.3]),
                        t2 + props["duration_secondary"] * np.array([-0.4, 0.1, 0.48])])
    # many extra points so the Chebyshev fast path is the one used
    dense = np.linspace(t1 - 0.5, t1 + 0.5, 3000)
    flux = model_flux(np.concatenate([t, dense]), **kw)[: len(t)]
    ecosw, esinw = kw.get("ecosw", 0.0), kw.get("esinw", 0.0)
    d, star1_behind = reference_separation(t, period=kw["period"], t0=kw["t0"], eccentricity=math.hypot(ecosw, esinw),
                                           omega=math.degrees(math.atan2(esinw, ecosw)) if ecosw or esinw else 90.0,
                                           inclination=kw["inclination"])
    star1_front = ~star1_behind
    k = kw["radius_ratio"]
    r1 = kw["radius_sum"] / (1 + k)
    l2 = kw["surface_brightness_ratio"] * k * k
    ref = []
    for di, front in zip(d, star1_front):
        if front:   # secondary eclipse: star 2 behind
            ref.append(1 - l2 / (1 + l2) * _hidden_reference(di / (k * r1), 1 / k, kw["ld_law"], kw["ld_secondary"]))
        else:
            ref.append(1 - 1 / (1 + l2) * _hidden_reference(di / r1, k, kw["ld_law"], kw["ld_primary"]))
    assert np.all(np.array(ref) < 1.0)
    assert np.max(np.abs(flux - np.array(ref))) < 1e-6


def test_flux_is_one_out_of_eclipse():
    # the discs overlap exactly when the projected separation of the reference orbit
    # (tests/_brute_force.py) is below r1 + r2 (geometry)
    kw = dict(BASE)
    t = np.linspace(0, 20, 20001)
    f = model_flux(t, **kw)
    d, _ = reference_separation(t, period=kw["period"], t0=kw["t0"], inclination=kw["inclination"])
    out = d >= kw["radius_sum"]
    assert out.sum() > 10000 and (~out).sum() > 1000
    assert np.all(f[out] == 1.0)          # exactly 1: no occultation, nothing computed
    assert np.all(f[~out] < 1.0)


def test_third_light_and_zero_surface_brightness():
    # third light l3 scales all depths by (1 - l3) (our definition of third light); J = 0: dark star 2,
    # no secondary eclipse (common practice)
    t = np.linspace(0, 2.7, 5001)
    f0 = model_flux(t, **BASE)
    f3 = model_flux(t, **dict(BASE, third_light=0.3))
    assert np.allclose(1 - f3, 0.7 * (1 - f0), atol=1e-15, rtol=1e-13)
    dark = model_flux(t, **dict(BASE, surface_brightness_ratio=0.0))
    _, t2 = conjunction_times(period=BASE["period"], t0=BASE["t0"], inclination=BASE["inclination"])
    near_sec = np.abs((t - t2 + 1.35) % 2.7 - 1.35) < 0.1
    assert np.all(dark[near_sec] == 1.0)
    assert dark.min() < 0.6


def test_swapping_the_stars():
    # relabelling the stars (k -> 1/k, J -> 1/J, limb darkening swapped) exchanges the eclipses of a
    # circular orbit: flux at t0 + x of one equals flux at t0 + P/2 + x of the other (symmetry)
    kw = dict(BASE)
    sw = dict(BASE, radius_ratio=1 / BASE["radius_ratio"],
              surface_brightness_ratio=1 / BASE["surface_brightness_ratio"],
              ld_primary=BASE["ld_secondary"], ld_secondary=BASE["ld_primary"])
    x = np.linspace(-0.15, 0.15, 301)
    a = model_flux(BASE["t0"] + x, **kw)
    b = model_flux(BASE["t0"] + 0.5 * BASE["period"] + x, **sw)
    assert np.max(np.abs(a - b)) < 1e-9
    assert np.allclose(a, a[::-1], atol=1e-12)   # circular orbit: eclipse symmetric about mid-eclipse


def test_exposure_smearing_converges():
    # supersample 101 vs 11 at a 30-minute exposure: < 10 ppm (our requirement).  Gauss-Legendre split at
    # the contacts converges spectrally: measured ~1e-9 at 11 nodes.
    t = np.linspace(0.2, 0.6, 801)
    kw = dict(BASE)
    f11 = model_flux(t, exposure_time=30 * u.min, supersample=11, **kw)
    f101 = model_flux(t, exposure_time=30 / 1440, supersample=101, **kw)
    f1 = model_flux(t, **kw)
    # self-convergence of the package's quadrature (a consistency test; the outside reference is
    # scipy.integrate in the next test)
    assert np.max(np.abs(f11 - f101)) < 10e-6
    assert np.max(np.abs(f11 - f101)) < 1e-7      # regression check of the measured level
    assert np.max(np.abs(f1 - f101)) > 1e-4       # the smearing is real at this cadence


def test_exposure_smearing_matches_time_average():
    # smeared flux = time average of the instantaneous model over the exposure (definition;
    # scipy.integrate.quad as reference)
    # the exposures chosen contain first contact, mid-eclipse and last contact.  Contacts of a circular
    # orbit: t0 -+ T14 / 2, T14 = (P / pi) asin(sqrt((r1 + r2)^2 - cos^2 i) / sin i) (Winn 2010,
    # "Transits and Occultations", with (R*/a)(1 + k) -> r1 + r2 and b R*/a -> cos i; from memory)
    texp = 0.02
    sini, cosi = math.sin(math.radians(BASE["inclination"])), math.cos(math.radians(BASE["inclination"]))
    half = BASE["period"] / (2 * math.pi) * math.asin(math.sqrt(BASE["radius_sum"] ** 2 - cosi ** 2) / sini)
    t1, t4 = BASE["t0"] - half, BASE["t0"] + half
    t = np.array([t1 + 0.003, 0.4, t4 - 0.006])
    smeared = model_flux(t, exposure_time=texp, supersample=7, **BASE)
    for ti, s in zip(t, smeared):
        ref = integrate.quad(lambda x: model_flux([x], **BASE)[0], ti - texp / 2, ti + texp / 2,
                             points=[t1, t4], epsabs=1e-11, epsrel=1e-11, limit=200)[0] / texp
        assert abs(s - ref) < 1e-6


def test_eclipse_properties():
    kw = {k: v for k, v in BASE.items() if k != "t0"}
    props = eclipse_properties(**kw)
    # circular orbit: T14 = (P / pi) asin(sqrt((r1 + r2)^2 - cos^2 i) / sin i), a = 1
    # (Winn 2010, "Transits and Occultations", total duration T14 with (R*/a)(1 + k) -> r1 + r2 and
    # b R*/a -> cos i; from memory)
    cosi = math.cos(math.radians(kw["inclination"]))
    t14 = kw["period"] / math.pi * math.asin(math.sqrt(kw["radius_sum"] ** 2 - cosi ** 2)
                                             / math.sin(math.radians(kw["inclination"])))
    assert props["duration_primary"] == pytest.approx(t14, rel=1e-12)
    assert props["duration_secondary"] == pytest.approx(t14, rel=1e-12)
    assert props["phase_secondary"] == pytest.approx(0.5, abs=1e-14)
    # depths at mid-eclipse (separation cos i in units of a, circular orbit) from the 2-D
    # scipy.integrate reference above; its tolerance 1e-11, the package's target 1 ppm
    k, j = kw["radius_ratio"], kw["surface_brightness_ratio"]
    r1 = kw["radius_sum"] / (1 + k)
    l2 = j * k * k
    d1 = _hidden_reference(cosi / r1, k, kw["ld_law"], kw["ld_primary"]) / (1 + l2)
    d2 = l2 / (1 + l2) * _hidden_reference(cosi / (k * r1), 1 / k, kw["ld_law"], kw["ld_secondary"])
    assert props["depth_primary"] == pytest.approx(d1, abs=1e-6)
    assert props["depth_secondary"] == pytest.approx(d2, abs=1e-6)
    # secondary phase at i = 90 deg against the exact formula (Sterne 1939, PNAS 25, 297; from memory)
    e = math.hypot(0.1, 0.3)
    exact = 0.5 + (math.atan(0.1 / math.sqrt(1 - e * e)) + 0.1 * math.sqrt(1 - e * e) / (1 - 0.3 ** 2)) / math.pi
    edge_on = eclipse_properties(**dict(kw, ecosw=0.1, esinw=0.3, inclination=90.0))
    assert edge_on["phase_secondary"] == pytest.approx(exact, abs=1e-12)
    ecc = eclipse_properties(**dict(kw, ecosw=0.1, esinw=0.3))
    # e sin w > 0: primary eclipse (nu = 90 - w) nearer periastron, faster motion, shorter eclipse:
    # e sin w ~ (D_sec - D_prim) / (D_sec + D_prim) to first order (classical; common practice)
    dp, ds = ecc["duration_primary"], ecc["duration_secondary"]
    assert (ds - dp) / (ds + dp) == pytest.approx(0.3, rel=0.05)
    none = eclipse_properties(**dict(kw, inclination=60.0))
    assert none["depth_primary"] == none["duration_primary"] == 0.0


@pytest.mark.parametrize("kwargs", [
    dict(radius_sum=1.0),                      # stars touch (circular)
    dict(radius_sum=0.5, ecosw=0.3, esinw=0.4),  # touch at periastron: 0.5 >= 1 - e
    dict(radius_sum=-0.1),
    dict(radius_ratio=-1.0),
    dict(ecosw=0.9, esinw=0.5),                # e >= 1
    dict(inclination=91.0),
    dict(inclination=-3.0),
    dict(ld_primary=(1.5, 0.5)),               # quadratic: I(0) = 1 - u1 - u2 < 0
    dict(ld_law="power-2", ld_primary=(1.2, 0.5), ld_secondary=(0.5, 0.5)),
    dict(third_light=1.0),
    dict(surface_brightness_ratio=-0.5),
])
def test_invalid_geometry_rejected(kwargs):
    with pytest.raises(GeometryError):
        model_flux([0.0, 0.1], **dict(BASE, **kwargs))


@pytest.mark.parametrize("kwargs,match", [
    (dict(ld_law="cubic"), "ld_law"),
    (dict(ld_primary=(0.4,)), "ld_primary"),
    (dict(supersample=0, exposure_time=0.01), "supersample"),
    (dict(exposure_time=-1.0), "exposure_time"),
    (dict(exposure_time=3 * u.m), "exposure_time"),
])
def test_bad_arguments_named(kwargs, match):
    with pytest.raises(InputError, match=match):
        model_flux([0.0, 0.1], **dict(BASE, **kwargs))


def test_unsorted_and_shaped_times():
    # the eclipse windows are found by binary search on sorted times, by phase otherwise: same result
    rng = np.random.default_rng(3)
    t = rng.uniform(-20.0, 20.0, 6000)
    kw = dict(BASE, ecosw=0.1, esinw=-0.05)
    f = model_flux(t, **kw)
    order = np.argsort(t)
    assert np.array_equal(model_flux(t[order], **kw), f[order])
    assert np.array_equal(model_flux(t.reshape(60, 100), **kw), f.reshape(60, 100))
    assert model_flux(np.array([]), **kw).shape == (0,)


@pytest.mark.parametrize("law,coeffs", LAWS + [("uniform", ())])
@pytest.mark.parametrize("p", [0.2, 1.0, 3.0])
def test_occulted_fraction_limits(law, coeffs, p):
    # no overlap -> 0; occultor covering the disc (p >= 1, z <= p - 1) -> 1 (geometry)
    assert occulted_fraction(1.0 + p + 1e-9, p, law, coeffs) == 0.0
    z = np.linspace(0.0, 1.0 + p, 1001)
    f = occulted_fraction(z, p, law, coeffs)
    assert np.all(np.diff(f) <= 1e-15)              # hides less as the discs separate
    assert np.all((f >= 0.0) & (f <= 1.0))
    if p >= 1.0:
        assert occulted_fraction(p - 1.0, p, law, coeffs) == 1.0


@pytest.mark.parametrize("p", [0.03, 0.3, 0.9, 0.999, 1.0, 1.01, 2.5, 12.0])
def test_fast_path_matches_quadrature(p):
    # internal twin check (no outside source): the Chebyshev interpolant in z used for many points
    # against the direct kink-aware quadrature, including points within 1e-12 of the contacts;
    # the quadrature itself is converged (64 vs 256 nodes) far below the 1 ppm target
    from eclipsekit import _occultation as occ
    z = np.concatenate([np.linspace(0.0, 1.0 + p, 400), abs(1 - p) + np.logspace(-12, -1, 40),
                        abs(1 - p) - np.logspace(-12, -1, 40), 1 + p - np.logspace(-12, -1, 40)])
    z = z[z >= 0]
    for law, coeffs in LAWS:
        a, beta = occ.intensity_terms(law, coeffs)
        slow = occ.hidden_fraction_quadrature(z, p, a, beta, 256)
        assert np.max(np.abs(occ.hidden_fraction_quadrature(z, p, a, beta) - slow)) < 1e-12
        assert np.max(np.abs(occ.HiddenFractionTable(p, a, beta)(z) - slow)) < 1e-9


def test_supersample_one_means_instantaneous():
    t = np.linspace(0.25, 0.55, 301)
    assert np.array_equal(model_flux(t, exposure_time=0.02, supersample=1, **BASE), model_flux(t, **BASE))
    with pytest.raises(InputError, match="exposure_time"):
        model_flux(t, exposure_time=1.0, supersample=5, **BASE)   # longer than P / 4


# ----------------------------------------------------------------------------------------------
# many parameter sets at once (model_flux_batch) and the piecewise tables behind it
# ----------------------------------------------------------------------------------------------
def _batch_sets(law):
    # radius ratios 0.3 .. 3, circular and eccentric orbits, partial / total / annular eclipses
    ld = {"quadratic": [(0.45, 0.2), (0.3, 0.3), (0.6, 0.1), (0.4, 0.25)],
          "power-2": [(0.6, 0.55), (0.7, 0.6), (0.5, 0.7), (0.65, 0.45)]}[law]
    return dict(period=np.array([2.7, 3.1, 4.2, 1.9]), t0=np.array([0.4, 1.3, -2.0, 2460101.3217]),
                radius_sum=np.array([0.2, 0.15, 0.25, 0.185]), radius_ratio=np.array([0.3, 3.0, 1.0, 0.78]),
                inclination=np.array([89.5, 88.0, 86.5, 88.1]),
                surface_brightness_ratio=np.array([0.6, 0.9, 0.5, 0.62]),
                ecosw=np.array([0.0, 0.15, 0.05, 0.012]), esinw=np.array([0.0, -0.1, 0.08, -0.035]),
                third_light=np.array([0.0, 0.1, 0.0, 0.0]), ld_law=law, ld_primary=ld, ld_secondary=ld[::-1])


def _one_set(kw, i):
    return {k: (v[i] if isinstance(v, (np.ndarray, list)) else v) for k, v in kw.items()}


def _eclipse_times(kw, n=40):
    # points spread over both eclipses (first to last contact and a little beyond)
    out = []
    t1, t2 = conjunction_times(period=kw["period"], t0=kw["t0"], ecosw=kw["ecosw"], esinw=kw["esinw"],
                               inclination=kw["inclination"])
    props = eclipse_properties(**{k: v for k, v in kw.items() if k != "t0"})
    for tc, dur in ((t1, props["duration_primary"]), (t2, props["duration_secondary"])):
        out.append(tc + 0.55 * dur * np.linspace(-1.0, 1.0, n))
    return np.concatenate(out)


@pytest.mark.parametrize("law", ["quadratic", "power-2"])
def test_batch_equals_single_calls(law):
    # consistency (no outside source): row i of the batch is model_flux of set i, to rounding
    from eclipsekit.eclipse import model_flux_batch
    kw = _batch_sets(law)
    t = np.sort(np.concatenate([_eclipse_times(_one_set(kw, i)) for i in range(4)] + [np.linspace(-3, 30, 3000)]))
    batch = model_flux_batch(t, **kw)
    assert batch.shape == (4, t.size)
    single = np.array([model_flux(t, **_one_set(kw, i)) for i in range(4)])
    assert np.all(np.any(single < 0.99, axis=1))          # every set eclipses
    assert np.max(np.abs(batch - single)) < 1e-12
    # a set's numbers do not depend on its companions: the same set alone, or twice, or reordered
    alone = model_flux_batch(t, **{k: (v[2:3] if isinstance(v, np.ndarray) else v[2:3] if isinstance(v, list) else v)
                                   for k, v in kw.items()})
    assert np.max(np.abs(alone[0] - batch[2])) < 1e-12
    # unsorted and shaped times give the same numbers
    order = np.random.default_rng(5).permutation(t.size)
    assert np.max(np.abs(model_flux_batch(t[order], **kw) - batch[:, order])) < 1e-12


@pytest.mark.parametrize("law", ["quadratic", "power-2"])
def test_batch_against_brute_force_grid(law):
    # independent reference: tests/_brute_force.py (Kepler by brentq, polar grid over the disc; its
    # worst-case error is ~7e-6 of a star's flux at a 200 x 400 grid, test_fitting.py, and second
    # order in the cell size, so ~3e-6 at the default 300 x 600 used here)
    from _brute_force import brute_force_flux
    from eclipsekit.eclipse import model_flux_batch
    kw = _batch_sets(law)
    for i in range(4):
        one = _one_set(kw, i)
        t = _eclipse_times(one, n=9)
        got = model_flux_batch(t, **kw)[i]
        e = math.hypot(one["ecosw"], one["esinw"])
        ref = brute_force_flux(t, period=one["period"], t0=one["t0"], radius_sum=one["radius_sum"],
                               radius_ratio=one["radius_ratio"], inclination=one["inclination"],
                               surface_brightness_ratio=one["surface_brightness_ratio"], eccentricity=e,
                               omega=math.degrees(math.atan2(one["esinw"], one["ecosw"])) if e else 90.0,
                               third_light=one["third_light"], ld_law=law, ld_primary=one["ld_primary"],
                               ld_secondary=one["ld_secondary"])
        assert np.min(ref) < 0.95
        assert np.max(np.abs(got - ref)) < 1e-5, i


def test_batch_arguments_checked():
    from eclipsekit.eclipse import model_flux_batch
    kw = _batch_sets("quadratic")
    with pytest.raises(InputError, match="different lengths"):
        model_flux_batch([0.0, 0.1], **dict(kw, radius_sum=np.array([0.2, 0.2])))
    with pytest.raises(GeometryError, match="parameter set 1"):
        model_flux_batch([0.0, 0.1], **dict(kw, inclination=np.array([89.0, 91.0, 88.0, 88.0])))
    with pytest.raises(InputError, match="ld_primary"):
        model_flux_batch([0.0, 0.1], **dict(kw, ld_primary=[(0.4, 0.2)] * 3))
    # scalars everywhere: one set
    one = model_flux_batch([0.4, 0.5], **dict(BASE))
    assert one.shape == (1, 2) and np.array_equal(one[0], model_flux([0.4, 0.5], **BASE))


@pytest.mark.parametrize("law,coeffs", LAWS)
def test_piece_table_matches_quadrature(law, coeffs):
    # internal twin check: the piecewise series against the direct kink-aware quadrature (256 nodes,
    # converged far below 1e-12), near the contacts too.  Tolerance: the series are built to 2e-11
    # from a 32-node quadrature whose own error is < 5e-11 (measured against 256 nodes).
    from eclipsekit import _occultation as occ
    ps = np.array([0.05, 0.3, 0.78, 0.999, 1.0, 1.28, 3.0, 12.0])
    rows = [(p, zm) for p in ps for zm in (0.0, 0.5 * abs(1 - p), abs(1 - p) + 0.01, 0.5 * (abs(1 - p) + 1 + p))]
    p = np.array([r[0] for r in rows])
    z_min = np.array([r[1] for r in rows])
    a, beta = occ.intensity_terms(law, coeffs)
    table = occ.piece_table(p, np.tile(a, (p.size, 1)), np.tile(beta, (p.size, 1)), z_min)
    z = np.array([np.concatenate([np.linspace(zm, 1.05 * (1 + pp), 200), abs(1 - pp) + np.logspace(-12, -1, 12),
                                  1 + pp - np.logspace(-12, -1, 12)]) for pp, zm in rows])
    z = np.maximum(z, z_min[:, None])
    got = occ.piece_table_eval(table, z)
    for i, (pp, _) in enumerate(rows):
        ref = occ.hidden_fraction_quadrature(z[i], pp, a, beta, 256)
        assert np.max(np.abs(got[i] - ref)) < 1e-10, (pp, rows[i][1])
        # and the row-wise quadrature is the same computation as the scalar one (rounding only)
        assert np.max(np.abs(occ.hidden_fraction_rows(z[i:i + 1], np.array([[pp]]), a[None], beta[None], 32)[0]
                             - occ.hidden_fraction_quadrature(z[i], pp, a, beta, 32))) < 1e-14


def test_model_flux_against_exact_path_at_large_times():
    # times near BJD 2.46e6: the phase is taken from exact differences with t0, so the model matches a
    # slow exact path computed on times relative to t0 (direct 256-node quadrature at separations from
    # this package's sky_separation with t0 = 0: an internal consistency check) at the 1e-11 level
    from eclipsekit import _occultation as occ
    from eclipsekit.orbit import sky_separation
    kw = dict(BASE, t0=2460101.3217, period=3.4713, ecosw=0.012, esinw=-0.035, radius_sum=0.185, radius_ratio=0.78,
              inclination=88.1)
    t = kw["t0"] + np.linspace(-20.0, 20.0, 40001)
    f = model_flux(t, **kw)
    d, star1_front = sky_separation(t - kw["t0"], period=kw["period"], t0=0.0, ecosw=kw["ecosw"], esinw=kw["esinw"],
                                    inclination=kw["inclination"])
    k, r1 = kw["radius_ratio"], kw["radius_sum"] / (1 + kw["radius_ratio"])
    l2 = kw["surface_brightness_ratio"] * k * k
    ref = np.ones_like(t)
    for front, r_back, p, ld, w in ((False, r1, k, kw["ld_primary"], 1 / (1 + l2)),
                                    (True, k * r1, 1 / k, kw["ld_secondary"], l2 / (1 + l2))):
        sel = (star1_front == front) & (d < kw["radius_sum"])
        a, beta = occ.intensity_terms("quadratic", ld)
        ref[sel] -= w * occ.hidden_fraction_quadrature(d[sel] / r_back, p, a, beta, 256)
    assert np.sum(ref < 1) > 4000            # ~4,650 points in eclipse
    assert np.max(np.abs(f - ref)) < 1e-11


@pytest.mark.parametrize("coeffs,ok", [((5.0, -5.0), False), ((4.0, -4.0), True), ((1.5, 0.5), False),
                                        ((0.8, 0.1), True), ((-0.5, 0.2), True)])
def test_limb_darkening_positivity_is_exact(coeffs, ok):
    # 1 - u1 x - u2 x^2 on 0 <= x <= 1: least value at an end or, for u2 < 0, at the vertex x = -u1 / (2 u2)
    # (calculus; common practice).  (5, -5) is negative only inside the disc (x = 1/2), (4, -4) touches 0.
    x = np.linspace(0.0, 1.0, 100001)
    assert (np.min(1 - coeffs[0] * x - coeffs[1] * x * x) >= 0.0) == ok     # dense-grid cross-check
    kw = dict(BASE, ld_primary=coeffs)
    if ok:
        assert np.all(np.isfinite(model_flux([0.4], **kw)))
    else:
        with pytest.raises(GeometryError, match="negative intensity"):
            model_flux([0.4], **kw)


def test_batch_with_exposure_smearing_equals_single_calls():
    # consistency (no outside source): the smeared batch is the smeared single calls, set by set
    from eclipsekit.eclipse import model_flux_batch
    base = _batch_sets("quadratic")
    t = np.sort(np.concatenate([_eclipse_times(_one_set(base, i), n=30) for i in range(4)]))
    kw = dict(base, exposure_time=0.02, supersample=5)
    batch = model_flux_batch(t, **kw)
    single = np.array([model_flux(t, **_one_set(kw, i)) for i in range(4)])
    assert np.max(np.abs(batch - single)) < 1e-12
    assert np.max(np.abs(batch - model_flux_batch(t, **dict(kw, supersample=1)))) > 1e-5   # smearing is real
